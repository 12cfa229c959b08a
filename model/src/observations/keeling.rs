//! Source δ13C from canopy-air samples by mixing lines.
//!
//! **Keeling plot** (Keeling 1958, Geochim. Cosmochim. Acta): mixing a background (cbg, δbg) with a
//! source δs gives δ = δs + cbg(δbg − δs)/c, a straight line in 1/c whose intercept is δs. The line
//! is fitted by OLS, geometric-mean (model II) regression (recommended by Pataki et al. 2003, Global
//! Biogeochem. Cycles) or York regression with errors in both 1/c and δ (York et al. 2004, Am. J.
//! Phys.; the least biased per Wehr & Saleska 2017, Biogeosciences). See
//! [`regression`](super::regression) for the estimators and their standard errors.
//!
//! **Miller–Tans** (Miller & Tans 2003, Tellus B): δ·c − δbg·cbg = δs·(c − cbg), so the *slope* of
//! δ·c − δbg·cbg against c − cbg is δs; with a per-sample background this holds even when the
//! background drifts. Without a background, δ·c is regressed on c. Fitted by OLS.
//!
//! Every fit reports the source δ with its analytic standard error, a 95 % interval from
//! Student's t with n − 2 degrees of freedom, and quality flags (see [`KeelingFlags`]). A bootstrap
//! standard error (resampling samples with replacement, seeded) is available for every method.

use std::sync::OnceLock;

use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};

use crate::error::{ModelError, Result, check_input, check_range};
use crate::observations::regression::{LineFit, Point, Sums, YorkSettings, york_view};
use crate::observations::stats::{check_same_length, student_t_quantile};
use crate::observations::validate;

/// The line-fitting method of a Keeling or Miller–Tans fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum KeelingMethod {
    /// Keeling plot, OLS of δ on 1/c.
    Ols,
    /// Keeling plot, geometric-mean (model II) regression of δ on 1/c.
    GeometricMean,
    /// Keeling plot, York regression with σ(1/c) = σc/c² and σδ; needs per-sample SDs.
    York,
    /// Miller–Tans, OLS of δ·c (minus δbg·cbg when a background is given) on c (minus cbg).
    MillerTans,
}

impl KeelingMethod {
    /// Short lower-case name for output files: `ols`, `gmr`, `york`, `miller_tans`.
    pub fn name(self) -> &'static str {
        match self {
            KeelingMethod::Ols => "ols",
            KeelingMethod::GeometricMean => "gmr",
            KeelingMethod::York => "york",
            KeelingMethod::MillerTans => "miller_tans",
        }
    }
}

/// CO2 ranges (max − min, µmol mol⁻¹) at or below this count as constant: a tenth of the
/// 0.01 µmol mol⁻¹ resolution of common CO2 analysers (common practice), so no real gradient is
/// this small.
pub const CONSTANT_CO2_RANGE_UMOL_MOL: f64 = 1e-3;

/// Quality flags of a fit, as a small bitset.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct KeelingFlags(u8);

impl KeelingFlags {
    /// Fewer than 3 samples: every estimate is NaN.
    pub const TOO_FEW_POINTS: Self = Self(1);
    /// CO2 range (max − min) below the settings' threshold (default 40 µmol mol⁻¹): intercepts
    /// are biased and uncertain (Zobitz et al. 2006, Agric. For. Meteorol.).
    pub const SMALL_CO2_RANGE: Self = Self(2);
    /// One sample dominates: leaving it out moves the source δ by more than twice the fit's
    /// analytic standard error, and by more than 0.001‰ (far below isotope-ratio precision, so
    /// that round-off on exact data never counts). Tested from 4 samples up.
    pub const INFLUENTIAL_POINT: Self = Self(4);
    /// The York iteration did not converge within its iteration limit.
    pub const NOT_CONVERGED: Self = Self(8);
    /// CO2 is constant within [`CONSTANT_CO2_RANGE_UMOL_MOL`]: the line is undefined (its slope
    /// would divide by a spread of round-off), so every estimate is NaN rather than a number
    /// like 1e14‰.
    pub const CONSTANT_CO2: Self = Self(16);

    const NAMES: [(Self, &'static str); 5] = [
        (Self::TOO_FEW_POINTS, "too_few_points"),
        (Self::SMALL_CO2_RANGE, "small_co2_range"),
        (Self::INFLUENTIAL_POINT, "influential_point"),
        (Self::NOT_CONVERGED, "not_converged"),
        (Self::CONSTANT_CO2, "constant_co2"),
    ];

    /// No flag set.
    pub fn is_empty(self) -> bool {
        self.0 == 0
    }

    /// True when every flag of `other` is set in `self`.
    pub fn contains(self, other: Self) -> bool {
        self.0 & other.0 == other.0
    }

    /// Sets the flags of `other`.
    pub fn insert(&mut self, other: Self) {
        self.0 |= other.0;
    }

    /// Names of the set flags (`too_few_points`, `small_co2_range`, `influential_point`,
    /// `not_converged`), for output files.
    pub fn names(self) -> impl Iterator<Item = &'static str> {
        Self::NAMES
            .into_iter()
            .filter(move |(f, _)| self.contains(*f))
            .map(|(_, name)| name)
    }
}

/// Bootstrap settings: number of resamples and the seed of `StdRng::seed_from_u64`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Bootstrap {
    resamples: usize,
    seed: u64,
}

impl Bootstrap {
    /// `resamples` from 10 to 1 000 000; any `seed`. The same seed gives the same result.
    pub fn new(resamples: usize, seed: u64) -> Result<Self> {
        check_range("bootstrap_resamples", resamples as f64, 10.0, 1e6)?;
        Ok(Self { resamples, seed })
    }

    /// Number of resamples.
    pub fn resamples(&self) -> usize {
        self.resamples
    }

    /// Seed of the random stream.
    pub fn seed(&self) -> u64 {
        self.seed
    }
}

/// Settings shared by all methods, validated when set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeelingSettings {
    min_co2_range_umol_mol: f64,
    bootstrap: Option<Bootstrap>,
    york: YorkSettings,
}

impl Default for KeelingSettings {
    /// Small-range threshold 40 µmol mol⁻¹ (common practice: 40–75 is the usual minimum), no
    /// bootstrap, default York iteration.
    fn default() -> Self {
        Self {
            min_co2_range_umol_mol: 40.0,
            bootstrap: None,
            york: YorkSettings::default(),
        }
    }
}

impl KeelingSettings {
    /// Sets the CO2 range (µmol mol⁻¹, 0 to 10 000) below which a fit is flagged
    /// [`KeelingFlags::SMALL_CO2_RANGE`].
    pub fn with_min_co2_range(mut self, min_co2_range_umol_mol: f64) -> Result<Self> {
        self.min_co2_range_umol_mol =
            check_range("min_co2_range_umol_mol", min_co2_range_umol_mol, 0.0, 1e4)?;
        Ok(self)
    }

    /// Adds a bootstrap standard error of the source δ to every fit.
    pub fn with_bootstrap(mut self, bootstrap: Bootstrap) -> Self {
        self.bootstrap = Some(bootstrap);
        self
    }

    /// Sets the York iteration's tolerance and limit.
    pub fn with_york(mut self, york: YorkSettings) -> Self {
        self.york = york;
        self
    }

    /// CO2 range threshold of the small-range flag (µmol mol⁻¹).
    pub fn min_co2_range_umol_mol(&self) -> f64 {
        self.min_co2_range_umol_mol
    }

    /// Bootstrap settings, if any.
    pub fn bootstrap(&self) -> Option<Bootstrap> {
        self.bootstrap
    }
}

/// The background air of a Miller–Tans fit.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Background<'a> {
    None,
    Constant { co2: f64, d13c: f64 },
    Series { co2: &'a [f64], d13c: &'a [f64] },
}

/// One group of canopy-air samples, validated: CO2 (µmol mol⁻¹, > 0), δ13C (‰), optional
/// per-sample standard deviations and an optional background (used by Miller–Tans only).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeelingData<'a> {
    co2: &'a [f64],
    d13c: &'a [f64],
    sd: Option<(&'a [f64], &'a [f64])>,
    background: Background<'a>,
}

impl<'a> KeelingData<'a> {
    /// Pairs CO2 mole fractions `co2_umol_mol` (µmol mol⁻¹) with their δ13C `d13c_permil`
    /// (‰ VPDB). Errors on unequal lengths, on a CO2 that is not a finite value > 0 or a δ13C that
    /// is not finite, naming the sample index and the value.
    pub fn new(co2_umol_mol: &'a [f64], d13c_permil: &'a [f64]) -> Result<Self> {
        check_same_length("co2_umol_mol", co2_umol_mol, "d13c_permil", d13c_permil)?;
        validate::positive_series("co2_umol_mol", co2_umol_mol)?;
        validate::finite_series("d13c_permil", d13c_permil)?;
        Ok(Self {
            co2: co2_umol_mol,
            d13c: d13c_permil,
            sd: None,
            background: Background::None,
        })
    }

    /// Adds per-sample standard deviations of CO2 (µmol mol⁻¹) and δ13C (‰), each > 0; York
    /// regression needs them.
    pub fn with_sd(
        mut self,
        co2_sd_umol_mol: &'a [f64],
        d13c_sd_permil: &'a [f64],
    ) -> Result<Self> {
        check_same_length("co2_umol_mol", self.co2, "co2_sd_umol_mol", co2_sd_umol_mol)?;
        check_same_length("d13c_permil", self.d13c, "d13c_sd_permil", d13c_sd_permil)?;
        validate::positive_series("co2_sd_umol_mol", co2_sd_umol_mol)?;
        validate::positive_series("d13c_sd_permil", d13c_sd_permil)?;
        self.sd = Some((co2_sd_umol_mol, d13c_sd_permil));
        Ok(self)
    }

    /// Adds a constant background: CO2 (µmol mol⁻¹, > 0) and δ13C (‰), for Miller–Tans.
    pub fn with_background(mut self, co2_bg_umol_mol: f64, d13c_bg_permil: f64) -> Result<Self> {
        check_input(
            "co2_bg_umol_mol",
            co2_bg_umol_mol,
            f64::MIN_POSITIVE,
            f64::MAX,
        )?;
        check_input("d13c_bg_permil", d13c_bg_permil, f64::MIN, f64::MAX)?;
        self.background = Background::Constant {
            co2: co2_bg_umol_mol,
            d13c: d13c_bg_permil,
        };
        Ok(self)
    }

    /// Adds a per-sample background: CO2 (µmol mol⁻¹, > 0) and δ13C (‰) paired with the samples,
    /// for Miller–Tans with a drifting background.
    pub fn with_background_series(
        mut self,
        co2_bg_umol_mol: &'a [f64],
        d13c_bg_permil: &'a [f64],
    ) -> Result<Self> {
        check_same_length("co2_umol_mol", self.co2, "co2_bg_umol_mol", co2_bg_umol_mol)?;
        check_same_length("co2_umol_mol", self.co2, "d13c_bg_permil", d13c_bg_permil)?;
        validate::positive_series("co2_bg_umol_mol", co2_bg_umol_mol)?;
        validate::finite_series("d13c_bg_permil", d13c_bg_permil)?;
        self.background = Background::Series {
            co2: co2_bg_umol_mol,
            d13c: d13c_bg_permil,
        };
        Ok(self)
    }

    /// Number of samples.
    pub fn len(&self) -> usize {
        self.co2.len()
    }

    /// True when there are no samples.
    pub fn is_empty(&self) -> bool {
        self.co2.is_empty()
    }

    /// Fits the group by `method`. Errors only when York is asked for without standard deviations;
    /// too few samples give a flagged result with NaN estimates.
    pub fn fit(&self, method: KeelingMethod, settings: &KeelingSettings) -> Result<KeelingFit> {
        if method == KeelingMethod::York && self.sd.is_none() {
            return Err(ModelError::InvalidConfig(
                "York regression needs per-sample standard deviations: call `with_sd` with \
                 co2_sd_umol_mol and d13c_sd_permil"
                    .to_string(),
            ));
        }
        let n = self.len();
        let (co2_min, co2_max) = self
            .co2
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &c| {
                (lo.min(c), hi.max(c))
            });
        let (co2_min, co2_max) = if n == 0 {
            (f64::NAN, f64::NAN)
        } else {
            (co2_min, co2_max)
        };
        let co2_range = co2_max - co2_min;
        let mut flags = KeelingFlags::default();
        if co2_range < settings.min_co2_range_umol_mol || n == 0 {
            flags.insert(KeelingFlags::SMALL_CO2_RANGE);
        }
        if n < 3 {
            flags.insert(KeelingFlags::TOO_FEW_POINTS);
        }

        let (line, converged, sums) = self.fit_view(method, n, |i| i, settings);
        if !converged {
            flags.insert(KeelingFlags::NOT_CONVERGED);
        }
        let (mut source, mut source_se) = source_of(method, &line);
        let mut line = line;
        let constant = n >= 2 && co2_range <= CONSTANT_CO2_RANGE_UMOL_MOL;
        if constant || !(source.is_finite() && source_se.is_finite()) && n >= 3 {
            if constant {
                flags.insert(KeelingFlags::CONSTANT_CO2);
            }
            source = f64::NAN;
            source_se = f64::NAN;
            line = LineFit {
                n: line.n,
                intercept: f64::NAN,
                intercept_se: f64::NAN,
                slope: f64::NAN,
                slope_se: f64::NAN,
                r2: f64::NAN,
            };
        } else if n >= 4 && self.has_influential_point(method, &line, sums.as_ref(), settings) {
            flags.insert(KeelingFlags::INFLUENTIAL_POINT);
        }
        let half_width = if n >= 3 {
            t975(n - 2) * source_se
        } else {
            f64::NAN
        };
        let bootstrap_se_permil = match settings.bootstrap {
            Some(b) if n >= 3 && source.is_finite() => self.bootstrap_se(method, settings, b),
            _ => f64::NAN,
        };
        Ok(KeelingFit {
            method,
            n,
            co2_min_umol_mol: co2_min,
            co2_max_umol_mol: co2_max,
            co2_range_umol_mol: co2_range,
            source_d13c_permil: source,
            source_se_permil: source_se,
            ci95_low_permil: source - half_width,
            ci95_high_permil: source + half_width,
            bootstrap_se_permil,
            intercept: line.intercept,
            intercept_se: line.intercept_se,
            slope: line.slope,
            slope_se: line.slope_se,
            r2: line.r2,
            flags,
        })
    }

    /// The point of sample `i` in the method's coordinates.
    fn point(&self, method: KeelingMethod, i: usize) -> Point {
        let (c, d) = (self.co2[i], self.d13c[i]);
        let (sc, sd) = self.sd.map_or((0.0, 0.0), |(sc, sd)| (sc[i], sd[i]));
        match method {
            KeelingMethod::MillerTans => {
                let (cb, db) = match self.background {
                    Background::None => (0.0, 0.0),
                    Background::Constant { co2, d13c } => (co2, d13c),
                    Background::Series { co2, d13c } => (co2[i], d13c[i]),
                };
                Point {
                    x: c - cb,
                    y: d * c - db * cb,
                    sx: sc,
                    sy: sd,
                }
            }
            // x = 1/c, so σx = σc/c² to first order.
            _ => Point {
                x: 1.0 / c,
                y: d,
                sx: sc / (c * c),
                sy: sd,
            },
        }
    }

    /// Fits `m` points, point j being sample `index(j)`; returns the line, whether it converged,
    /// and for the closed forms the sums it came from.
    fn fit_view(
        &self,
        method: KeelingMethod,
        m: usize,
        index: impl Fn(usize) -> usize,
        settings: &KeelingSettings,
    ) -> (LineFit, bool, Option<Sums>) {
        let xy = |j: usize| {
            let p = self.point(method, index(j));
            (p.x, p.y)
        };
        match method {
            KeelingMethod::Ols | KeelingMethod::MillerTans => {
                let sums = Sums::from_view(m, xy);
                (sums.ols(), true, Some(sums))
            }
            KeelingMethod::GeometricMean => {
                let sums = Sums::from_view(m, xy);
                (sums.geometric_mean(), true, Some(sums))
            }
            KeelingMethod::York => {
                let fit = york_view(m, |j| self.point(method, index(j)), &settings.york);
                (fit.line, fit.converged || m < 3, None)
            }
        }
    }

    /// Leave-one-out test: does dropping any one sample move the source δ by more than 2·SE?
    /// Closed forms downdate the full fit's `sums` (O(n) in all); York refits each subset
    /// (O(n²) per iteration).
    fn has_influential_point(
        &self,
        method: KeelingMethod,
        line: &LineFit,
        sums: Option<&Sums>,
        settings: &KeelingSettings,
    ) -> bool {
        let (source, source_se) = source_of(method, line);
        if !source.is_finite() || !source_se.is_finite() {
            return false;
        }
        let n = self.len();
        let limit = (2.0 * source_se).max(INFLUENCE_FLOOR_PERMIL);
        let shifted = |loo_source: f64| (loo_source - source).abs() > limit;
        match (method, sums) {
            // Refitting York once per left-out sample would cost O(n²) per group: York's
            // influence is judged on the OLS line of the same points (x = 1/c, y = δ), whose
            // leave-one-out fits cost O(1) each from the sums, against York's own SE.
            (KeelingMethod::York, _) => {
                let ols = Sums::from_view(n, |i| {
                    let p = self.point(KeelingMethod::Ols, i);
                    (p.x, p.y)
                });
                let full = ols.ols_line().0;
                (0..n).any(|i| {
                    let p = self.point(KeelingMethod::Ols, i);
                    (ols.without(p.x, p.y).ols_line().0 - full).abs() > limit
                })
            }
            (_, None) => (0..n).any(|skip| {
                let index = |j: usize| if j < skip { j } else { j + 1 };
                let (loo, _, _) = self.fit_view(method, n - 1, index, settings);
                shifted(source_of(method, &loo).0)
            }),
            (_, Some(sums)) => (0..n).any(|i| {
                let p = self.point(method, i);
                let loo = sums.without(p.x, p.y);
                let (intercept, slope) = match method {
                    KeelingMethod::GeometricMean => loo.geometric_mean_line(),
                    _ => loo.ols_line(),
                };
                shifted(if method == KeelingMethod::MillerTans {
                    slope
                } else {
                    intercept
                })
            }),
        }
    }

    /// Standard deviation of the source δ over bootstrap resamples of the samples (pairs kept
    /// together with their SDs and background). Resamples whose fit is undefined are skipped.
    fn bootstrap_se(
        &self,
        method: KeelingMethod,
        settings: &KeelingSettings,
        bootstrap: Bootstrap,
    ) -> f64 {
        let n = self.len();
        let mut rng = StdRng::seed_from_u64(bootstrap.seed);
        let mut picks = vec![0usize; n];
        let (mut count, mut mean, mut m2) = (0usize, 0.0, 0.0);
        for _ in 0..bootstrap.resamples {
            for p in picks.iter_mut() {
                *p = rng.random_range(0..n);
            }
            let (line, _, _) = self.fit_view(method, n, |j| picks[j], settings);
            let s = source_of(method, &line).0;
            if s.is_finite() {
                // Welford's running variance.
                count += 1;
                let delta = s - mean;
                mean += delta / count as f64;
                m2 += delta * (s - mean);
            }
        }
        if count < 2 {
            f64::NAN
        } else {
            (m2 / (count - 1) as f64).sqrt()
        }
    }
}

/// The 0.975 quantile of Student's t with `df` degrees of freedom. Values up to 512 df are
/// tabulated on first use: the inverse beta function behind the quantile costs more than a whole
/// 100-sample fit, and thousands of groups share a handful of sizes.
fn t975(df: usize) -> f64 {
    static TABLE: OnceLock<Vec<f64>> = OnceLock::new();
    let table = TABLE.get_or_init(|| {
        (1..=512)
            .map(|d| student_t_quantile(0.975, d as f64))
            .collect()
    });
    match df.checked_sub(1).and_then(|i| table.get(i)) {
        Some(&t) => t,
        None => student_t_quantile(0.975, df as f64),
    }
}

/// Smallest leave-one-out shift of the source δ (‰) that can flag a dominating sample.
const INFLUENCE_FLOOR_PERMIL: f64 = 1e-3;

/// The source δ (‰) and its standard error: the intercept of a Keeling line, the slope of a
/// Miller–Tans line.
fn source_of(method: KeelingMethod, line: &LineFit) -> (f64, f64) {
    match method {
        KeelingMethod::MillerTans => (line.slope, line.slope_se),
        _ => (line.intercept, line.intercept_se),
    }
}

/// The result of one Keeling or Miller–Tans fit. Estimates are NaN when the fit is undefined
/// (see `flags`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeelingFit {
    /// The method used.
    pub method: KeelingMethod,
    /// Number of samples.
    pub n: usize,
    /// Lowest CO2 of the group (µmol mol⁻¹).
    pub co2_min_umol_mol: f64,
    /// Highest CO2 of the group (µmol mol⁻¹).
    pub co2_max_umol_mol: f64,
    /// CO2 range, max − min (µmol mol⁻¹).
    pub co2_range_umol_mol: f64,
    /// Source δ13C (‰ VPDB): the Keeling intercept, or the Miller–Tans slope.
    pub source_d13c_permil: f64,
    /// Analytic standard error of the source δ13C (‰).
    pub source_se_permil: f64,
    /// Lower end of the 95 % interval of the source δ13C, Student's t with n − 2 df (‰).
    pub ci95_low_permil: f64,
    /// Upper end of the 95 % interval of the source δ13C (‰).
    pub ci95_high_permil: f64,
    /// Bootstrap standard error of the source δ13C (‰); NaN unless a bootstrap was requested.
    pub bootstrap_se_permil: f64,
    /// Intercept of the fitted line: ‰ for Keeling plots, ‰·µmol mol⁻¹ for Miller–Tans.
    pub intercept: f64,
    /// Standard error of `intercept` (its units).
    pub intercept_se: f64,
    /// Slope of the fitted line: ‰·µmol mol⁻¹ for Keeling plots (δ per 1/c), ‰ for Miller–Tans.
    pub slope: f64,
    /// Standard error of `slope` (its units).
    pub slope_se: f64,
    /// Square of Pearson's r of the fitted coordinates (dimensionless).
    pub r2: f64,
    /// Quality flags.
    pub flags: KeelingFlags,
}
