//! Correlation helpers: Pearson's product-moment r, Spearman's rank correlation and the two-sided
//! p-value of the usual t test, t = r·sqrt((n − 2)/(1 − r²)) with n − 2 degrees of freedom
//! (Student's t; any statistics textbook, e.g. Sokal & Rohlf, *Biometry*).
//!
//! statrs has no correlation function, so these live here; the ensemble summaries reuse them.
//! Pairs in which either value is NaN are skipped.

use statrs::distribution::{ContinuousCDF, StudentsT};
use statrs::statistics::{Data, OrderStatistics, RankTieBreaker};

use crate::error::{ModelError, Result};

/// A correlation coefficient with its sample size and two-sided p-value (dimensionless).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Correlation {
    /// Number of pairs used (pairs with a NaN are skipped).
    pub n: usize,
    /// Correlation coefficient in [−1, 1]; NaN when n < 3 or one variable is constant.
    pub r: f64,
    /// Two-sided p-value of H0: no correlation (t test with n − 2 degrees of freedom); NaN when
    /// `r` is NaN.
    pub p_value: f64,
}

/// Pearson's product-moment correlation of `x` and `y` (any units), skipping NaN pairs.
///
/// Errors when the slices differ in length.
pub fn pearson(x: &[f64], y: &[f64]) -> Result<Correlation> {
    check_same_length("x", x, "y", y)?;
    Ok(pearson_pairs(x.iter().copied().zip(y.iter().copied())))
}

/// Spearman's rank correlation of `x` and `y` (any units), skipping NaN pairs: Pearson's r of the
/// ranks, ties given their average rank. The p-value uses the same t approximation as Pearson's,
/// which is adequate from about n = 10.
///
/// Errors when the slices differ in length.
pub fn spearman(x: &[f64], y: &[f64]) -> Result<Correlation> {
    check_same_length("x", x, "y", y)?;
    let (fx, fy): (Vec<f64>, Vec<f64>) = x
        .iter()
        .zip(y)
        .filter(|(a, b)| !a.is_nan() && !b.is_nan())
        .map(|(a, b)| (*a, *b))
        .unzip();
    let rx = Data::new(fx).ranks(RankTieBreaker::Average);
    let ry = Data::new(fy).ranks(RankTieBreaker::Average);
    Ok(pearson_pairs(rx.into_iter().zip(ry)))
}

/// Two-sided p-value (dimensionless) of a correlation `r` from `n` pairs, from
/// t = r·sqrt((n − 2)/(1 − r²)) with n − 2 degrees of freedom. NaN when n < 3 or `r` is NaN;
/// 0 when |r| = 1.
pub fn correlation_p_value(r: f64, n: usize) -> f64 {
    if n < 3 || r.is_nan() {
        return f64::NAN;
    }
    let one_minus_r2 = 1.0 - r * r;
    if one_minus_r2 <= 0.0 {
        return 0.0;
    }
    let df = (n - 2) as f64;
    let t = r.abs() * (df / one_minus_r2).sqrt();
    match StudentsT::new(0.0, 1.0, df) {
        // sf rather than 1 − cdf keeps small p-values accurate.
        Ok(dist) => 2.0 * dist.sf(t),
        Err(_) => f64::NAN,
    }
}

/// The `p` quantile (dimensionless) of Student's t with `df` degrees of freedom, e.g.
/// `student_t_quantile(0.975, 8.0)` = 2.306 for a 95 % interval. NaN when `df` ≤ 0 or `p` is
/// outside (0, 1).
pub fn student_t_quantile(p: f64, df: f64) -> f64 {
    if !(p > 0.0 && p < 1.0) {
        return f64::NAN;
    }
    match StudentsT::new(0.0, 1.0, df) {
        Ok(dist) => dist.inverse_cdf(p),
        Err(_) => f64::NAN,
    }
}

/// Pearson's r over pairs from a re-iterable source, skipping pairs with a NaN. Two passes (means,
/// then centred sums) so that large offsets such as δ13C·CO2 do not cost precision.
pub(crate) fn pearson_pairs<I>(pairs: I) -> Correlation
where
    I: Iterator<Item = (f64, f64)> + Clone,
{
    let valid = |&(a, b): &(f64, f64)| !a.is_nan() && !b.is_nan();
    let (mut n, mut sum_x, mut sum_y) = (0usize, 0.0, 0.0);
    for (a, b) in pairs.clone().filter(valid) {
        n += 1;
        sum_x += a;
        sum_y += b;
    }
    if n < 3 {
        return Correlation {
            n,
            r: f64::NAN,
            p_value: f64::NAN,
        };
    }
    let (mx, my) = (sum_x / n as f64, sum_y / n as f64);
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for (a, b) in pairs.filter(valid) {
        let (dx, dy) = (a - mx, b - my);
        sxx += dx * dx;
        syy += dy * dy;
        sxy += dx * dy;
    }
    // Round-off can push |r| a hair past 1 for exactly linear data.
    let r = (sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0);
    Correlation {
        n,
        r,
        p_value: correlation_p_value(r, n),
    }
}

/// Errors unless two paired slices have the same length.
pub(crate) fn check_same_length(
    name_a: &str,
    a: &[f64],
    name_b: &str,
    b: &[f64],
) -> Result<()> {
    if a.len() == b.len() {
        Ok(())
    } else {
        Err(ModelError::InvalidConfig(format!(
            "`{name_a}` has {} values but `{name_b}` has {}; they must be paired",
            a.len(),
            b.len()
        )))
    }
}
