//! Matrix exponential of a small dense matrix by scaling and squaring with diagonal Padé
//! approximants (Higham 2005, SIAM J. Matrix Anal. Appl. 26, "The scaling and squaring method for
//! the matrix exponential revisited": degrees 3, 5, 7, 9, 13 and their 1-norm thresholds θ).
//!
//! `ode_solvers` re-exports nalgebra's vector types but not its square matrices, so the pools carry
//! their own exponential; it also works on reused buffers, which keeps the hourly step cheap.

use crate::error::{ModelError, Result};

/// Padé degrees and the largest 1-norm for which each is accurate to double precision (Higham
/// 2005, Table 2.3).
const DEGREES: [(usize, f64); 5] = [
    (3, 1.495_585_217_958_292e-2),
    (5, 2.539_398_330_063_23e-1),
    (7, 9.504_178_996_162_932e-1),
    (9, 2.097_847_961_257_068),
    (13, 5.371_920_351_148_152),
];

/// Reusable buffers for exponentials of m×m row-major matrices.
#[derive(Debug, Clone)]
pub(crate) struct Expm {
    m: usize,
    /// Padé coefficients for each entry of `DEGREES`.
    coefficients: Vec<Vec<f64>>,
    powers: Vec<Vec<f64>>,
    u: Vec<f64>,
    v: Vec<f64>,
    tmp: Vec<f64>,
    lu: Vec<f64>,
}

impl Expm {
    /// Buffers for m×m matrices.
    pub(crate) fn new(m: usize) -> Self {
        let z = vec![0.0; m * m];
        Expm {
            m,
            coefficients: DEGREES.iter().map(|&(p, _)| pade_coefficients(p)).collect(),
            powers: vec![z.clone(); 7],
            u: z.clone(),
            v: z.clone(),
            tmp: z.clone(),
            lu: z,
        }
    }

    /// Writes e^A into `out`; `a` and `out` are m×m row-major, and the last `zero_tail` columns of
    /// `a` must be zero (states that only accumulate, like the respiration totals). Then
    /// V − U = [[Q, 0], [R, I]] with Q of size m − zero_tail, so only Q needs factorising.
    pub(crate) fn exp(&mut self, a: &[f64], zero_tail: usize, out: &mut [f64]) -> Result<()> {
        // Sizes of pool networks with 1 to 8 pools get loops with constant bounds (the compiler
        // unrolls them); about twice as fast at hourly steps. Other sizes take the general path.
        match (self.m, zero_tail) {
            (5, 3) => self.exp_sized(a, 5, 3, out),
            (6, 3) => self.exp_sized(a, 6, 3, out),
            (7, 3) => self.exp_sized(a, 7, 3, out),
            (8, 3) => self.exp_sized(a, 8, 3, out),
            (9, 3) => self.exp_sized(a, 9, 3, out),
            (10, 3) => self.exp_sized(a, 10, 3, out),
            (11, 3) => self.exp_sized(a, 11, 3, out),
            (12, 3) => self.exp_sized(a, 12, 3, out),
            (m, q) => self.exp_sized(a, m, q, out),
        }
    }

    #[inline(always)]
    fn exp_sized(&mut self, a: &[f64], m: usize, zero_tail: usize, out: &mut [f64]) -> Result<()> {
        debug_assert_eq!(a.len(), m * m);
        debug_assert!((0..m).all(|i| {
            a[i * m + m - zero_tail..(i + 1) * m]
                .iter()
                .all(|&v| v == 0.0)
        }));
        let norm = norm1(a, m);
        if !norm.is_finite() {
            return Err(ModelError::Numerical(
                "matrix exponential of a non-finite matrix".into(),
            ));
        }
        let (which, squarings) = match DEGREES.iter().position(|&(_, theta)| norm <= theta) {
            Some(i) => (i, 0),
            None => (4, (norm / DEGREES[4].1).log2().ceil().max(0.0) as i32),
        };
        let degree = DEGREES[which].0;
        let p = m - zero_tail;
        let scale = 0.5_f64.powi(squarings);
        // powers[0] = I, powers[1] = A², powers[k] = A^(2k), all of the scaled A.
        let [p0, rest @ ..] = &mut self.powers[..] else {
            unreachable!("seven power buffers")
        };
        identity(p0, m);
        let a2 = &mut rest[0];
        matmul_scaled(a, a, scale * scale, a2, m, p);
        for k in 1..degree / 2 {
            let (lo, hi) = rest.split_at_mut(k);
            matmul_scaled(&lo[k - 1], &lo[0], 1.0, &mut hi[0], m, p);
        }
        let b = &self.coefficients[which];
        // V = Σ even b_j A^j; the odd part's cofactor W = Σ odd b_j A^(j−1), then U = A·W.
        self.v.fill(0.0);
        self.tmp.fill(0.0);
        for (j, &bj) in b.iter().enumerate() {
            let pw = &self.powers[j / 2];
            let target = if j % 2 == 0 {
                &mut self.v
            } else {
                &mut self.tmp
            };
            for (t, p) in target.iter_mut().zip(pw) {
                *t += bj * p;
            }
        }
        // U's tail columns are A·(b1·e_tail) = 0, so only the first p columns are computed.
        matmul_scaled(a, &self.tmp, scale, &mut self.u, m, p);
        // Solve (V − U) X = (V + U).
        for (((lu, o), v), u) in self
            .lu
            .iter_mut()
            .zip(out.iter_mut())
            .zip(&self.v)
            .zip(&self.u)
        {
            *lu = v - u;
            *o = v + u;
        }
        solve_in_place(&mut self.lu, m, out, m, p, p)?;
        // Bottom rows: X_bottom = (V + U)_bottom − R·X_top, on the first p columns (the tail
        // columns of both blocks are already right: 0 on top, I below).
        for r in p..m {
            for c in 0..p {
                let mut acc = out[r * m + c];
                for k in 0..p {
                    acc -= self.lu[r * m + k] * out[k * m + c];
                }
                out[r * m + c] = acc;
            }
        }
        for _ in 0..squarings {
            self.tmp.copy_from_slice(out);
            matmul_scaled(&self.tmp, &self.tmp, 1.0, out, m, m);
        }
        Ok(())
    }
}

/// Coefficients b_j of the degree-p diagonal Padé approximant of e^x, normalised to b_0 = 1:
/// b_j = (2p − j)! p! / ((2p)! j! (p − j)!).
fn pade_coefficients(p: usize) -> Vec<f64> {
    let mut b = vec![1.0; p + 1];
    for j in 1..=p {
        b[j] = b[j - 1] * (p - j + 1) as f64 / (j * (2 * p - j + 1)) as f64;
    }
    b
}

/// Maximum absolute column sum.
#[inline(always)]
fn norm1(a: &[f64], m: usize) -> f64 {
    (0..m)
        .map(|j| (0..m).map(|i| a[i * m + j].abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

fn identity(out: &mut [f64], m: usize) {
    out.fill(0.0);
    for i in 0..m {
        out[i * m + i] = 1.0;
    }
}

/// out = s·(x·y), all m×m row-major, where only the first `p` columns of y can be non-zero.
#[inline(always)]
fn matmul_scaled(x: &[f64], y: &[f64], s: f64, out: &mut [f64], m: usize, p: usize) {
    out.fill(0.0);
    for i in 0..m {
        let row = &mut out[i * m..i * m + p];
        for k in 0..m {
            let xik = s * x[i * m + k];
            if xik != 0.0 {
                for (o, yk) in row.iter_mut().zip(&y[k * m..k * m + p]) {
                    *o += xik * yk;
                }
            }
        }
    }
}

/// Solves A·X = B in place by Gaussian elimination with partial pivoting, for the leading n×n
/// block of `a` (row stride `lda`, destroyed) and the leading n×`cols` block of `b` (row stride
/// `ldb`, becomes X).
#[inline(always)]
pub(crate) fn solve_in_place(
    a: &mut [f64],
    lda: usize,
    b: &mut [f64],
    ldb: usize,
    n: usize,
    cols: usize,
) -> Result<()> {
    for c in 0..n {
        let piv = (c..n)
            .max_by(|&i, &j| a[i * lda + c].abs().total_cmp(&a[j * lda + c].abs()))
            .unwrap_or(c);
        let pv = a[piv * lda + c];
        if pv == 0.0 || !pv.is_finite() {
            return Err(ModelError::Numerical(
                "singular matrix in a linear solve".into(),
            ));
        }
        if piv != c {
            for k in 0..n {
                a.swap(c * lda + k, piv * lda + k);
            }
            for k in 0..cols {
                b.swap(c * ldb + k, piv * ldb + k);
            }
        }
        for r in c + 1..n {
            let f = a[r * lda + c] / pv;
            if f != 0.0 {
                for k in c..n {
                    a[r * lda + k] -= f * a[c * lda + k];
                }
                for k in 0..cols {
                    b[r * ldb + k] -= f * b[c * ldb + k];
                }
            }
        }
    }
    for c in (0..n).rev() {
        let pv = a[c * lda + c];
        for k in 0..cols {
            let mut s = b[c * ldb + k];
            for j in c + 1..n {
                s -= a[c * lda + j] * b[j * ldb + k];
            }
            b[c * ldb + k] = s / pv;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    const TOL: f64 = 1e-13;

    fn exp_of(a: &[f64], m: usize) -> Vec<f64> {
        let mut out = vec![0.0; m * m];
        Expm::new(m).exp(a, 0, &mut out).unwrap();
        out
    }

    #[test]
    fn pade_degree_three_matches_higham() {
        // Higham (2005): p = 3 numerator coefficients 120, 60, 12, 1.
        let b = pade_coefficients(3);
        for (got, want) in b.iter().zip([1.0, 0.5, 0.1, 1.0 / 120.0]) {
            assert!((got - want).abs() < TOL);
        }
    }

    #[test]
    fn rotation_generator_gives_cos_sin() {
        // exp([[0, −t], [t, 0]]) = [[cos t, −sin t], [sin t, cos t]] (analytic), for every degree
        // and with squaring (t = 20 needs it).
        for t in [0.01, 0.2, 0.9, 2.0, 5.0, 20.0] {
            let e = exp_of(&[0.0, -t, t, 0.0], 2);
            let want = [t.cos(), -t.sin(), t.sin(), t.cos()];
            for (g, w) in e.iter().zip(want) {
                assert!((g - w).abs() < 1e-12, "t = {t}: {g} vs {w}");
            }
        }
    }

    #[test]
    fn zero_tail_shortcut_matches_the_full_solve() {
        // The block shortcut must give the same matrix as the plain Padé solve (common practice:
        // compare a fast path with the general one). Norms span no-squaring and squaring cases.
        let m = 5;
        for scale in [0.01, 0.3, 3.0, 40.0] {
            let mut a = vec![0.0; m * m];
            for i in 0..m {
                for j in 0..3 {
                    a[i * m + j] = scale * (((i * 7 + j * 3) % 5) as f64 - 2.0) / 3.0;
                }
            }
            let full = exp_of(&a, m);
            let mut fast = vec![0.0; m * m];
            Expm::new(m).exp(&a, 2, &mut fast).unwrap();
            for (f, g) in fast.iter().zip(&full) {
                assert!(
                    (f - g).abs() < 1e-12 * g.abs().max(1.0),
                    "scale {scale}: {f} vs {g}"
                );
            }
        }
    }

    #[test]
    fn two_pool_chain_matches_closed_form() {
        // y1' = −a y1, y2' = a y1 − b y2: e^{Mt}[1][0] = a (e^{−at} − e^{−bt}) / (b − a) (analytic).
        let (a, b, t) = (1.0, 1.0 / 30.0, 365.0);
        let e = exp_of(&[-a * t, 0.0, a * t, -b * t], 2);
        let want = a * ((-a * t).exp() - (-b * t).exp()) / (b - a);
        assert!((e[2] - want).abs() < 1e-13 * want.abs().max(1.0));
        assert!((e[3] - (-b * t).exp()).abs() < 1e-15);
    }
}
