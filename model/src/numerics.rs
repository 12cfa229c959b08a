//! Small numerical tools shared by the processes: a bracketing root finder and a stable quadratic.

/// The smaller real root of a·x² + b·x + c = 0 (a may be 0: then the linear root). Uses the
/// cancellation-free form. Returns NaN when there is no real root.
pub(crate) fn smaller_root(a: f64, b: f64, c: f64) -> f64 {
    if a == 0.0 {
        return -c / b;
    }
    let disc = b * b - 4.0 * a * c;
    if disc < 0.0 {
        // Round-off can push a double root slightly negative.
        if disc > -1e-12 * b * b {
            return -b / (2.0 * a);
        }
        return f64::NAN;
    }
    let q = -0.5 * (b + b.signum() * disc.sqrt());
    let (r1, r2) = if q == 0.0 { (0.0, 0.0) } else { (q / a, c / q) };
    r1.min(r2)
}

/// Brent's method on [lo, hi] where f(lo) and f(hi) differ in sign (or one is zero). Never leaves the
/// bracket, so it cannot diverge. Returns the root to within `tol` in x.
pub(crate) fn brent(
    mut f: impl FnMut(f64) -> f64,
    lo: f64,
    hi: f64,
    flo: f64,
    fhi: f64,
    tol: f64,
    max_iter: usize,
) -> Option<f64> {
    let (mut a, mut b, mut fa, mut fb) = (lo, hi, flo, fhi);
    if fa == 0.0 {
        return Some(a);
    }
    if fb == 0.0 {
        return Some(b);
    }
    if fa.signum() == fb.signum() || !fa.is_finite() || !fb.is_finite() {
        return None;
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..max_iter {
        if fb.signum() == fc.signum() {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol1 = 2.0 * f64::EPSILON * b.abs() + 0.5 * tol;
        let xm = 0.5 * (c - b);
        if xm.abs() <= tol1 || fb == 0.0 {
            return Some(b);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * xm * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * xm * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            }
            p = p.abs();
            if 2.0 * p < (3.0 * xm * q - (tol1 * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = xm;
                e = d;
            }
        } else {
            d = xm;
            e = d;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol1 {
            d
        } else {
            tol1 * xm.signum()
        };
        fb = f(b);
        if !fb.is_finite() {
            return None;
        }
    }
    Some(b)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quadratic_roots_match_factored_forms() {
        // (x − 2)(x − 5) = x² − 7x + 10 (common practice: factored form).
        assert!((smaller_root(1.0, -7.0, 10.0) - 2.0).abs() < 1e-14);
        // Negative leading coefficient: −(x − 1)(x − 3).
        assert!((smaller_root(-1.0, 4.0, -3.0) - 1.0).abs() < 1e-14);
        assert!((smaller_root(0.0, 2.0, -4.0) - 2.0).abs() < 1e-14);
        assert!(smaller_root(1.0, 0.0, 1.0).is_nan());
    }

    #[test]
    fn brent_finds_cube_root_of_two() {
        let f = |x: f64| x * x * x - 2.0;
        let r = brent(f, 0.0, 2.0, f(0.0), f(2.0), 1e-13, 100).unwrap();
        assert!((r - 2f64.cbrt()).abs() < 1e-12);
        assert!(brent(f, 2.0, 3.0, f(2.0), f(3.0), 1e-12, 100).is_none());
    }
}
