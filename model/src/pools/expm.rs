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
            powers: vec![z.clone(); 7],
            u: z.clone(),
            v: z.clone(),
            tmp: z.clone(),
            lu: z,
        }
    }

    /// Writes e^A into `out`; `a` and `out` are m×m row-major.
    pub(crate) fn exp(&mut self, a: &[f64], out: &mut [f64]) -> Result<()> {
        let m = self.m;
        debug_assert_eq!(a.len(), m * m);
        let norm = norm1(a, m);
        if !norm.is_finite() {
            return Err(ModelError::Numerical(
                "matrix exponential of a non-finite matrix".into(),
            ));
        }
        let (degree, squarings) = match DEGREES.iter().find(|&&(_, theta)| norm <= theta) {
            Some(&(p, _)) => (p, 0),
            None => (13, (norm / DEGREES[4].1).log2().ceil().max(0.0) as i32),
        };
        let scale = 0.5_f64.powi(squarings);
        // powers[0] = I, powers[1] = A², powers[k] = A^(2k), all of the scaled A.
        let [p0, rest @ ..] = &mut self.powers[..] else {
            unreachable!("seven power buffers")
        };
        identity(p0, m);
        let a2 = &mut rest[0];
        matmul_scaled(a, a, scale * scale, a2, m);
        for k in 1..degree / 2 {
            let (lo, hi) = rest.split_at_mut(k);
            matmul_scaled(&lo[k - 1], &lo[0], 1.0, &mut hi[0], m);
        }
        let b = pade_coefficients(degree);
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
        matmul_scaled(a, &self.tmp, scale, &mut self.u, m);
        // Solve (V − U) X = (V + U).
        for i in 0..m * m {
            let (v, u) = (self.v[i], self.u[i]);
            self.lu[i] = v - u;
            out[i] = v + u;
        }
        solve_in_place(&mut self.lu, out, m)?;
        for _ in 0..squarings {
            self.tmp.copy_from_slice(out);
            matmul_scaled(&self.tmp, &self.tmp, 1.0, out, m);
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

/// out = s·(x·y), all m×m row-major.
fn matmul_scaled(x: &[f64], y: &[f64], s: f64, out: &mut [f64], m: usize) {
    out.fill(0.0);
    for i in 0..m {
        let row = &mut out[i * m..(i + 1) * m];
        for k in 0..m {
            let xik = s * x[i * m + k];
            if xik != 0.0 {
                for (o, yk) in row.iter_mut().zip(&y[k * m..(k + 1) * m]) {
                    *o += xik * yk;
                }
            }
        }
    }
}

/// Solves A·X = B in place by Gaussian elimination with partial pivoting: `a` (m×m) is destroyed,
/// `b` (m×m) becomes X.
pub(crate) fn solve_in_place(a: &mut [f64], b: &mut [f64], m: usize) -> Result<()> {
    let cols = b.len() / m;
    for c in 0..m {
        let piv = (c..m)
            .max_by(|&i, &j| a[i * m + c].abs().total_cmp(&a[j * m + c].abs()))
            .unwrap_or(c);
        let pv = a[piv * m + c];
        if pv == 0.0 || !pv.is_finite() {
            return Err(ModelError::Numerical(
                "singular matrix in a linear solve".into(),
            ));
        }
        if piv != c {
            for k in 0..m {
                a.swap(c * m + k, piv * m + k);
            }
            for k in 0..cols {
                b.swap(c * cols + k, piv * cols + k);
            }
        }
        for r in c + 1..m {
            let f = a[r * m + c] / pv;
            if f != 0.0 {
                for k in c..m {
                    a[r * m + k] -= f * a[c * m + k];
                }
                for k in 0..cols {
                    b[r * cols + k] -= f * b[c * cols + k];
                }
            }
        }
    }
    for c in (0..m).rev() {
        let pv = a[c * m + c];
        for k in 0..cols {
            let mut s = b[c * cols + k];
            for j in c + 1..m {
                s -= a[c * m + j] * b[j * cols + k];
            }
            b[c * cols + k] = s / pv;
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
        Expm::new(m).exp(a, &mut out).unwrap();
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
    fn two_pool_chain_matches_closed_form() {
        // y1' = −a y1, y2' = a y1 − b y2: e^{Mt}[1][0] = a (e^{−at} − e^{−bt}) / (b − a) (analytic).
        let (a, b, t) = (1.0, 1.0 / 30.0, 365.0);
        let e = exp_of(&[-a * t, 0.0, a * t, -b * t], 2);
        let want = a * ((-a * t).exp() - (-b * t).exp()) / (b - a);
        assert!((e[2] - want).abs() < 1e-13 * want.abs().max(1.0));
        assert!((e[3] - (-b * t).exp()).abs() < 1e-15);
    }
}
