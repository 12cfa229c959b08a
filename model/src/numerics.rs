//! Small numerical tools shared by the processes: bracketing root finders (Brent's method, and
//! Newton's method safeguarded by a bracket) and a stable quadratic.

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

/// Newton's method safeguarded by a bracket, for a function `f` giving (f(x), f′(x), what else is
/// wanted at x). `start` is (x, f, f′, extra) at a point of the bracket (lo, hi), where f(lo) < 0 <
/// f(hi) (lo may lie above hi; the ends themselves need not have been evaluated). A Newton step that would leave the bracket, is
/// not finite, or is longer than half the step before it (slow progress, e.g. at a kink) bisects
/// the bracket instead, as in the "rtsafe" of Numerical Recipes (Press et al. 2007, from memory),
/// so the search never leaves it and shrinks it at least geometrically; each new point replaces
/// the end of the bracket whose sign it shares. The search ends when the bracket is at most `tol`
/// wide, or when the Newton step from the answer is shorter than `step_tol` (≤ `tol`) and a point
/// `tol` beyond the answer towards the other end of the bracket confirms the sign change — so a root lies within `tol` of the answer (both tolerances plus four
/// ulps of the answer, so that neither is below the spacing of doubles). Returns the answer and its
/// extra, or None when f is not finite or `max_iter` steps do not end it.
pub(crate) fn newton_bracketed<T>(
    mut f: impl FnMut(f64) -> (f64, f64, T),
    start: (f64, f64, f64, T),
    (lo, hi): (f64, f64),
    tol: f64,
    step_tol: f64,
    max_iter: usize,
) -> Option<(f64, T)> {
    let (mut x, mut fx, mut dfx, mut extra) = start;
    // f < 0 at a, f > 0 at b; the start replaces the end whose sign it shares.
    let (mut a, mut b) = (lo, hi);
    if !(fx.is_finite() && a.min(b) <= x && x <= a.max(b)) {
        return None;
    }
    let mut eval = |x: f64, a: &mut f64, b: &mut f64| {
        let (fx, dfx, e) = f(x);
        if fx < 0.0 {
            *a = x;
        } else {
            *b = x;
        }
        (fx, dfx, e)
    };
    if fx < 0.0 {
        a = x;
    } else {
        b = x;
    }
    let ulps = |x: f64| 4.0 * f64::EPSILON * x.abs();
    let mut last_step = (b - a).abs();
    for _ in 0..max_iter {
        let tol_x = tol + ulps(x);
        if fx == 0.0 || (b - a).abs() <= tol_x {
            return Some((x, extra));
        }
        let step = x - fx / dfx;
        if (step - x).abs() <= step_tol + ulps(x) {
            // Newton would move x by less than step_tol: confirm the sign change within tol of
            // x, towards the other end of the bracket (x is one of its ends).
            let other = if x == a { b } else { a };
            let probe = x + tol_x.copysign(other - x);
            let (f_probe, df_probe, e_probe) = eval(probe, &mut a, &mut b);
            if !f_probe.is_finite() {
                return None;
            }
            if f_probe == 0.0 {
                return Some((probe, e_probe));
            }
            if (f_probe < 0.0) != (fx < 0.0) {
                return Some((x, extra));
            }
            // No sign change there: the root is further on; go on from the probe.
            (x, fx, dfx, extra) = (probe, f_probe, df_probe, e_probe);
            last_step = tol_x;
            continue;
        }
        let newton = step > a.min(b) && step < a.max(b) && 2.0 * (step - x).abs() <= last_step;
        let next = if newton { step } else { 0.5 * (a + b) };
        last_step = (next - x).abs();
        let (f_next, df_next, e_next) = eval(next, &mut a, &mut b);
        if !f_next.is_finite() {
            return None;
        }
        (x, fx, dfx, extra) = (next, f_next, df_next, e_next);
    }
    None
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

    /// Newton in a bracket: the cube root of two from either end, a root at a kink (where
    /// Newton alone would crawl) and a start outside the bracket (common practice: closed-form
    /// roots).
    #[test]
    fn bracketed_newton_finds_roots_within_tolerance() {
        let cube = |x: f64| (x * x * x - 2.0, 3.0 * x * x, ());
        let root = 2f64.cbrt();
        for start in [0.0, 2.0] {
            let s = cube(start);
            let (r, _) =
                newton_bracketed(cube, (start, s.0, s.1, ()), (0.0, 2.0), 1e-9, 1e-11, 100)
                    .unwrap();
            assert!((r - root).abs() < 1e-11, "{r}");
        }
        // f = x − 1 below 1 and 40(x − 1) above: the tangent from either side overshoots.
        let kink = |x: f64| {
            if x < 1.0 {
                (x - 1.0, 1.0, ())
            } else {
                (
                    40.0 * (x - 1.0) + (x - 1.0).powi(2),
                    40.0 + 2.0 * (x - 1.0),
                    (),
                )
            }
        };
        let s = kink(0.0);
        let (r, _) =
            newton_bracketed(kink, (0.0, s.0, s.1, ()), (0.0, 5.0), 1e-9, 1e-11, 200).unwrap();
        assert!((r - 1.0).abs() <= 1e-9, "{r}");
        // A start outside the bracket is refused.
        let none = newton_bracketed(cube, (2.5, 13.625, 18.75, ()), (0.0, 2.0), 1e-9, 1e-11, 100);
        assert!(none.is_none());
    }

    #[test]
    fn brent_finds_cube_root_of_two() {
        let f = |x: f64| x * x * x - 2.0;
        let r = brent(f, 0.0, 2.0, f(0.0), f(2.0), 1e-13, 100).unwrap();
        assert!((r - 2f64.cbrt()).abs() < 1e-12);
        assert!(brent(f, 2.0, 3.0, f(2.0), f(3.0), 1e-12, 100).is_none());
    }
}
