//! Straight-line fits used by the Keeling and Miller–Tans methods, on any x and y:
//!
//! - ordinary least squares (OLS) of y on x, with the textbook standard errors
//!   SE(b) = sqrt(s²/Sxx) and SE(a) = SE(b)·sqrt(x̄² + Sxx/n), s² = SSE/(n − 2);
//! - geometric-mean (model II, "reduced major axis") regression: b = sign(r)·sd(y)/sd(x),
//!   a = ȳ − b·x̄, with the standard error of the slope taken equal to that of the OLS slope,
//!   SE(b) = sqrt(SSE/((n − 2)·Sxx)) = |b|·sqrt((1 − r²)/(n − 2)) (Sokal & Rohlf 1995, Biometry,
//!   3rd ed., model II regression; from memory), and for the intercept
//!   SE(a) = SE(b)·sqrt(Σxᵢ²/n) = SE(b)·sqrt(x̄² + Sxx/n), the pair Pataki et al. (2003, Global
//!   Biogeochem. Cycles 17, 1022) give for Keeling-plot intercepts (from memory). Ricker's (1973)
//!   large-sample SE(b) = |b|·sqrt((1 − r²)/n), used before, is √(n/(n − 2)) smaller: 10% too
//!   small against a Monte Carlo spread at n = 12 (a check in the test suite), 28% at n = 5;
//! - York regression with errors in both variables (York 1966, Can. J. Phys.; York, Evensen,
//!   Martínez López & De Basabe Delgado 2004, Am. J. Phys. 72, 367), uncorrelated errors, solved by
//!   the 2004 paper's fixed-point iteration on the slope, with its standard errors
//!   σb² = 1/Σ Wᵢuᵢ², σa² = 1/Σ Wᵢ + x̄²σb².
//!
//! Here Sxx = Σ(xᵢ − x̄)², and r is Pearson's correlation. Fewer than 3 points give NaN fields.

use crate::error::{Result, check_range};
use crate::observations::stats::check_same_length;
use crate::observations::validate;

/// A fitted line y = intercept + slope·x with standard errors. The intercept is in the units of y,
/// the slope in units of y per unit of x; `r2` is the square of Pearson's r of the data
/// (dimensionless). Fields are NaN when the fit is undefined (n < 3, or x constant).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineFit {
    /// Number of points used.
    pub n: usize,
    /// Intercept (units of y).
    pub intercept: f64,
    /// Standard error of the intercept (units of y).
    pub intercept_se: f64,
    /// Slope (units of y per unit of x).
    pub slope: f64,
    /// Standard error of the slope (units of y per unit of x).
    pub slope_se: f64,
    /// Square of Pearson's correlation of x and y (dimensionless).
    pub r2: f64,
}

impl LineFit {
    /// A fit with every estimate NaN, for `n` points too few or too degenerate to fit.
    pub fn undefined(n: usize) -> Self {
        Self {
            n,
            intercept: f64::NAN,
            intercept_se: f64::NAN,
            slope: f64::NAN,
            slope_se: f64::NAN,
            r2: f64::NAN,
        }
    }
}

/// A York fit with the iteration count and whether the slope converged.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct YorkFit {
    /// The fitted line and its York et al. (2004) standard errors.
    pub line: LineFit,
    /// Number of slope updates made.
    pub iterations: usize,
    /// True when the relative change of the slope fell below the tolerance.
    pub converged: bool,
}

/// Settings of the York iteration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct YorkSettings {
    tolerance: f64,
    max_iterations: usize,
}

impl Default for YorkSettings {
    /// Relative slope tolerance 1e-12, at most 200 iterations (the Pearson–York example needs ~10).
    fn default() -> Self {
        Self {
            tolerance: 1e-12,
            max_iterations: 200,
        }
    }
}

impl YorkSettings {
    /// `tolerance` is the relative change of the slope that ends the iteration (dimensionless,
    /// 1e-15 to 1e-3); `max_iterations` is 1 to 100 000.
    pub fn new(tolerance: f64, max_iterations: usize) -> Result<Self> {
        check_range("york_tolerance", tolerance, 1e-15, 1e-3)?;
        check_range("york_max_iterations", max_iterations as f64, 1.0, 1e5)?;
        Ok(Self {
            tolerance,
            max_iterations,
        })
    }

    /// Relative slope tolerance (dimensionless).
    pub fn tolerance(&self) -> f64 {
        self.tolerance
    }

    /// Maximum number of slope updates.
    pub fn max_iterations(&self) -> usize {
        self.max_iterations
    }
}

/// OLS of `y` on `x` (any units). Errors on unequal lengths or a non-finite value (naming its index).
pub fn ols(x: &[f64], y: &[f64]) -> Result<LineFit> {
    check_xy(x, y)?;
    Ok(Sums::from_view(x.len(), |i| (x[i], y[i])).ols())
}

/// Geometric-mean (model II) regression of `y` on `x` (any units). Errors as [`ols`].
pub fn geometric_mean(x: &[f64], y: &[f64]) -> Result<LineFit> {
    check_xy(x, y)?;
    Ok(Sums::from_view(x.len(), |i| (x[i], y[i])).geometric_mean())
}

/// York regression of `y` on `x` with standard deviations `sigma_x` and `sigma_y` (units of x and
/// y, each > 0), uncorrelated errors. Errors on unequal lengths, non-finite values or
/// non-positive standard deviations, naming the index.
pub fn york(
    x: &[f64],
    y: &[f64],
    sigma_x: &[f64],
    sigma_y: &[f64],
    settings: &YorkSettings,
) -> Result<YorkFit> {
    check_xy(x, y)?;
    check_same_length("x", x, "sigma_x", sigma_x)?;
    check_same_length("y", y, "sigma_y", sigma_y)?;
    validate::positive_series("sigma_x", sigma_x)?;
    validate::positive_series("sigma_y", sigma_y)?;
    Ok(york_view(
        x.len(),
        |i| Point {
            x: x[i],
            y: y[i],
            sx: sigma_x[i],
            sy: sigma_y[i],
        },
        settings,
    ))
}

fn check_xy(x: &[f64], y: &[f64]) -> Result<()> {
    check_same_length("x", x, "y", y)?;
    validate::finite_series("x", x)?;
    validate::finite_series("y", y)
}

/// One point with its standard deviations, as seen by the fitting kernels.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Point {
    pub x: f64,
    pub y: f64,
    pub sx: f64,
    pub sy: f64,
}

/// Means and centred sums of squares and products of n points.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Sums {
    pub n: usize,
    pub mean_x: f64,
    pub mean_y: f64,
    pub sxx: f64,
    pub syy: f64,
    pub sxy: f64,
}

impl Sums {
    /// Two passes over a view of the points (means, then centred sums): O(n), no allocation, and
    /// exact enough for the large offsets of x = 1/c or y = δ·c.
    pub fn from_view(n: usize, view: impl Fn(usize) -> (f64, f64)) -> Self {
        let (mut sx, mut sy) = (0.0, 0.0);
        for i in 0..n {
            let (x, y) = view(i);
            sx += x;
            sy += y;
        }
        let nf = n as f64;
        let (mean_x, mean_y) = (sx / nf, sy / nf);
        let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
        for i in 0..n {
            let (x, y) = view(i);
            let (dx, dy) = (x - mean_x, y - mean_y);
            sxx += dx * dx;
            syy += dy * dy;
            sxy += dx * dy;
        }
        Self {
            n,
            mean_x,
            mean_y,
            sxx,
            syy,
            sxy,
        }
    }

    /// The sums with point (x, y) removed, by the usual downdating identities
    /// (Sxx' = Sxx − n/(n−1)·(x − x̄)², and likewise for Syy and Sxy).
    pub fn without(&self, x: f64, y: f64) -> Self {
        let nf = self.n as f64;
        let (dx, dy) = (x - self.mean_x, y - self.mean_y);
        let k = nf / (nf - 1.0);
        Self {
            n: self.n - 1,
            mean_x: self.mean_x - dx / (nf - 1.0),
            mean_y: self.mean_y - dy / (nf - 1.0),
            sxx: self.sxx - k * dx * dx,
            syy: self.syy - k * dy * dy,
            sxy: self.sxy - k * dx * dy,
        }
    }

    /// Square of Pearson's r.
    pub fn r2(&self) -> f64 {
        self.sxy * self.sxy / (self.sxx * self.syy)
    }

    /// OLS (intercept, slope) alone, for the leave-one-out test.
    pub fn ols_line(&self) -> (f64, f64) {
        let slope = self.sxy / self.sxx;
        (self.mean_y - slope * self.mean_x, slope)
    }

    /// Geometric-mean (intercept, slope) alone, for the leave-one-out test.
    pub fn geometric_mean_line(&self) -> (f64, f64) {
        let slope = self.sxy.signum() * (self.syy / self.sxx).sqrt();
        (self.mean_y - slope * self.mean_x, slope)
    }

    /// Ordinary least squares of y on x.
    pub fn ols(&self) -> LineFit {
        if self.n < 3 {
            return LineFit::undefined(self.n);
        }
        let nf = self.n as f64;
        let (intercept, slope) = self.ols_line();
        // SSE = Syy − Sxy²/Sxx; round-off can make it a hair negative for exact lines.
        let sse = (self.syy - slope * self.sxy).max(0.0);
        let slope_se = (sse / (nf - 2.0) / self.sxx).sqrt();
        LineFit {
            n: self.n,
            intercept,
            intercept_se: slope_se * (self.mean_x * self.mean_x + self.sxx / nf).sqrt(),
            slope,
            slope_se,
            r2: self.r2(),
        }
    }

    /// Geometric-mean (model II) regression of y on x.
    pub fn geometric_mean(&self) -> LineFit {
        if self.n < 3 {
            return LineFit::undefined(self.n);
        }
        let nf = self.n as f64;
        let (intercept, slope) = self.geometric_mean_line();
        let r2 = self.r2();
        let slope_se = slope.abs() * ((1.0 - r2).max(0.0) / (nf - 2.0)).sqrt();
        LineFit {
            n: self.n,
            intercept,
            intercept_se: slope_se * (self.mean_x * self.mean_x + self.sxx / nf).sqrt(),
            slope,
            slope_se,
            r2,
        }
    }
}

/// York et al. (2004) iteration over a view of n points; O(n) work per iteration, no allocation.
pub(crate) fn york_view(
    n: usize,
    view: impl Fn(usize) -> Point,
    settings: &YorkSettings,
) -> YorkFit {
    let sums = Sums::from_view(n, |i| {
        let p = view(i);
        (p.x, p.y)
    });
    let start = sums.ols();
    if n < 3 || !start.slope.is_finite() {
        return YorkFit {
            line: LineFit::undefined(n),
            iterations: 0,
            converged: false,
        };
    }
    // Weighted means for slope b: Wᵢ = 1/(σyᵢ² + b²σxᵢ²) (York et al. 2004, eq. 13, rᵢ = 0).
    let weighted_means = |b: f64| {
        let (mut sw, mut swx, mut swy) = (0.0, 0.0, 0.0);
        for i in 0..n {
            let p = view(i);
            let w = 1.0 / (p.sy * p.sy + b * b * p.sx * p.sx);
            sw += w;
            swx += w * p.x;
            swy += w * p.y;
        }
        (sw, swx / sw, swy / sw)
    };
    // βᵢ = Wᵢ(Uᵢσyᵢ² + b·Vᵢσxᵢ²), the adjustment of xᵢ towards the line.
    let beta = |p: &Point, b: f64, xm: f64, ym: f64| {
        let w = 1.0 / (p.sy * p.sy + b * b * p.sx * p.sx);
        (
            w,
            w * ((p.x - xm) * p.sy * p.sy + b * (p.y - ym) * p.sx * p.sx),
        )
    };

    let mut b = start.slope;
    let mut iterations = 0;
    let mut converged = false;
    while iterations < settings.max_iterations {
        let (_, xm, ym) = weighted_means(b);
        let (mut num, mut den) = (0.0, 0.0);
        for i in 0..n {
            let p = view(i);
            let (w, bi) = beta(&p, b, xm, ym);
            num += w * bi * (p.y - ym);
            den += w * bi * (p.x - xm);
        }
        let b_new = num / den;
        iterations += 1;
        let change = (b_new - b).abs();
        b = b_new;
        if !b.is_finite() {
            break;
        }
        if change <= settings.tolerance * b.abs().max(f64::MIN_POSITIVE) {
            converged = true;
            break;
        }
    }
    if !b.is_finite() {
        return YorkFit {
            line: LineFit::undefined(n),
            iterations,
            converged: false,
        };
    }

    // Standard errors from the adjusted points xᵢ = X̄ + βᵢ (York et al. 2004, eqs. 13 and 15).
    let (sw, xm, ym) = weighted_means(b);
    let mut swbeta = 0.0;
    for i in 0..n {
        let (w, bi) = beta(&view(i), b, xm, ym);
        swbeta += w * bi;
    }
    let beta_mean = swbeta / sw;
    let mut swu2 = 0.0;
    for i in 0..n {
        let (w, bi) = beta(&view(i), b, xm, ym);
        swu2 += w * (bi - beta_mean) * (bi - beta_mean);
    }
    let x_adj_mean = xm + beta_mean;
    let slope_se = (1.0 / swu2).sqrt();
    YorkFit {
        line: LineFit {
            n,
            intercept: ym - b * xm,
            intercept_se: (1.0 / sw + x_adj_mean * x_adj_mean / swu2).sqrt(),
            slope: b,
            slope_se,
            r2: sums.r2(),
        },
        iterations,
        converged,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn downdated_sums_equal_sums_of_the_subset() {
        // Algebraic identity (derived in `Sums::without`): removing a point from the sums must
        // match recomputing them without it.
        let x = [1.0, 2.5, 3.0, 4.2, 7.0, 9.5];
        let y = [2.0, 2.9, 4.1, 3.7, 8.2, 9.0];
        let all = Sums::from_view(x.len(), |i| (x[i], y[i]));
        for skip in 0..x.len() {
            let idx = |j: usize| if j < skip { j } else { j + 1 };
            let sub = Sums::from_view(x.len() - 1, |j| (x[idx(j)], y[idx(j)]));
            let down = all.without(x[skip], y[skip]);
            for (a, b) in [
                (down.mean_x, sub.mean_x),
                (down.mean_y, sub.mean_y),
                (down.sxx, sub.sxx),
                (down.syy, sub.syy),
                (down.sxy, sub.sxy),
            ] {
                assert!((a - b).abs() < 1e-12, "{a} vs {b}");
            }
        }
    }
}
