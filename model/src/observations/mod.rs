//! Comparing predictions with observations (docs/science.md):
//!
//! - [`keeling`]: source δ13C from canopy-air samples — Keeling plots (Keeling 1958) by OLS,
//!   geometric-mean or York regression, and Miller–Tans (2003) — with standard errors, 95 %
//!   intervals, an optional bootstrap and quality flags;
//! - [`regression`]: the straight-line estimators behind them (OLS, geometric mean, York et al.
//!   2004), usable on any x and y;
//! - [`scores`](mod@scores): bias, MAE, RMSE, r, r² and Nash–Sutcliffe efficiency;
//! - [`lag`](mod@lag): the lag at which a driver best correlates with an observed series;
//! - [`stats`]: Pearson and Spearman correlations with p-values, shared with the ensembles.
//!
//! Pure functions on slices: no allocation per sample in the Keeling fits, so millions of samples
//! in thousands of groups fit in well under a second.

pub mod keeling;
pub mod lag;
pub mod regression;
pub mod scores;
pub mod stats;
mod validate;

pub use keeling::{
    Bootstrap, KeelingData, KeelingFit, KeelingFlags, KeelingMethod, KeelingSettings,
};
pub use lag::{BestLagRule, LagAnalysis, LagCorrelation, LagSettings, lag_analysis};
pub use regression::{LineFit, YorkFit, YorkSettings};
pub use scores::{Scores, scores};
pub use stats::{Correlation, correlation_p_value, pearson, spearman, student_t_quantile};
