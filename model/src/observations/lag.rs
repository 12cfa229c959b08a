//! Lag between a driver and an observed response: for k = 0…K days, Pearson's r between the
//! observation on day d and the mean of the driver over the W days ending on day d − k, with its
//! two-sided t-test p-value (see [`stats`](super::stats)). Used to find the delay between weather
//! or predicted Δ and the δ13C of ecosystem respiration, reported as a few days to about ten days
//! (Ekblad & Högberg 2001, Oecologia; Bowling et al. 2002, Oecologia; from memory).

use crate::error::{Result, check_range};
use crate::observations::stats::{correlation_p_value, pearson_pairs};

/// How the best lag is chosen among the lags with a defined r.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BestLagRule {
    /// Largest |r| (default): the expected sign depends on the driver — δR falls as Δ rises but
    /// rises with VPD — so the strength of the link, not its sign, picks the lag.
    #[default]
    LargestAbsolute,
    /// Largest r, for a driver expected to correlate positively.
    MostPositive,
    /// Most negative r, for a driver expected to correlate negatively (e.g. predicted Δ vs δR).
    MostNegative,
}

/// Settings of a lag analysis, validated at construction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LagSettings {
    max_lag_days: usize,
    window_days: usize,
    rule: BestLagRule,
}

impl Default for LagSettings {
    /// Lags 0 to 14 days, a one-day window, best by largest |r|.
    fn default() -> Self {
        Self {
            max_lag_days: 14,
            window_days: 1,
            rule: BestLagRule::LargestAbsolute,
        }
    }
}

impl LagSettings {
    /// Lags 0 to `max_lag_days` (days, 0 to 3650) with a driver window of `window_days`
    /// (days, 1 to 366) ending k days before each observation; best lag by largest |r|.
    pub fn new(max_lag_days: usize, window_days: usize) -> Result<Self> {
        check_range("max_lag_days", max_lag_days as f64, 0.0, 3650.0)?;
        check_range("window_days", window_days as f64, 1.0, 366.0)?;
        Ok(Self {
            max_lag_days,
            window_days,
            rule: BestLagRule::LargestAbsolute,
        })
    }

    /// Sets how the best lag is chosen.
    pub fn with_rule(mut self, rule: BestLagRule) -> Self {
        self.rule = rule;
        self
    }

    /// Largest lag tried (days).
    pub fn max_lag_days(&self) -> usize {
        self.max_lag_days
    }

    /// Length of the driver window (days).
    pub fn window_days(&self) -> usize {
        self.window_days
    }

    /// Rule that picks the best lag.
    pub fn rule(&self) -> BestLagRule {
        self.rule
    }
}

/// The correlation at one lag.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LagCorrelation {
    /// Lag k (days): the driver window ends k days before the observation.
    pub lag_days: usize,
    /// Number of days with both an observation and a complete driver window.
    pub n: usize,
    /// Pearson's r (dimensionless); NaN when n < 3.
    pub r: f64,
    /// Two-sided p-value of r (dimensionless).
    pub p_value: f64,
}

/// The correlations at every lag and the best one.
#[derive(Debug, Clone, PartialEq)]
pub struct LagAnalysis {
    /// One entry per lag, k = 0…K in order.
    pub lags: Vec<LagCorrelation>,
    /// The best lag (days) by the settings' rule; `None` when no lag has a defined r.
    pub best_lag_days: Option<usize>,
}

/// Correlates daily `observed` values (any units, NaN = missing) with the daily `driver`
/// (any units, NaN = missing), both indexed by day from the same first day; the slices may differ
/// in length. A driver window with any missing day is missing, so no mean comes from partial
/// data.
pub fn lag_analysis(observed: &[f64], driver: &[f64], settings: &LagSettings) -> LagAnalysis {
    let w = settings.window_days;
    // window_mean[e] = mean of driver[e + 1 − w ..= e].
    let window_mean: Vec<f64> = (0..driver.len())
        .map(|e| {
            if e + 1 < w {
                f64::NAN
            } else {
                // A NaN in the window propagates: the window is missing.
                driver[e + 1 - w..=e].iter().sum::<f64>() / w as f64
            }
        })
        .collect();
    let lags: Vec<LagCorrelation> = (0..=settings.max_lag_days)
        .map(|k| {
            let pairs = (k..observed.len()).map(|d| {
                let x = window_mean.get(d - k).copied().unwrap_or(f64::NAN);
                (x, observed[d])
            });
            let c = pearson_pairs(pairs);
            LagCorrelation {
                lag_days: k,
                n: c.n,
                r: c.r,
                p_value: correlation_p_value(c.r, c.n),
            }
        })
        .collect();
    let score = |l: &LagCorrelation| match settings.rule {
        BestLagRule::LargestAbsolute => l.r.abs(),
        BestLagRule::MostPositive => l.r,
        BestLagRule::MostNegative => -l.r,
    };
    let best_lag_days = lags
        .iter()
        .filter(|l| l.r.is_finite())
        .max_by(|a, b| score(a).total_cmp(&score(b)))
        .map(|l| l.lag_days);
    LagAnalysis {
        lags,
        best_lag_days,
    }
}
