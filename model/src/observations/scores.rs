//! Agreement between predictions and observations on matched times: n, bias, mean absolute error,
//! root-mean-square error, Pearson's r and r², and the Nash–Sutcliffe efficiency
//! NSE = 1 − Σ(pᵢ − oᵢ)² / Σ(oᵢ − ō)² (Nash & Sutcliffe 1970, J. Hydrol.). Pairs with a NaN are
//! skipped.

use crate::error::Result;
use crate::observations::stats::{check_same_length, pearson_pairs};

/// Scores of predictions against observations, in the units of the data (e.g. ‰ for δ13C)
/// unless stated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scores {
    /// Number of pairs used (pairs with a NaN are skipped).
    pub n: usize,
    /// Mean of prediction − observation (units of the data).
    pub bias: f64,
    /// Mean absolute error (units of the data).
    pub mae: f64,
    /// Root-mean-square error (units of the data).
    pub rmse: f64,
    /// Pearson's r (dimensionless); NaN for n < 3.
    pub r: f64,
    /// r², the square of Pearson's r (dimensionless) — not 1 − SSE/SST, which is `nse`.
    pub r2: f64,
    /// Nash–Sutcliffe efficiency (dimensionless, ≤ 1; 1 is perfect, 0 is no better than the
    /// observed mean); NaN when the observations do not vary.
    pub nse: f64,
}

/// Scores `predicted` against `observed` (same units), pair by pair, skipping pairs with a NaN.
/// Errors when the slices differ in length; with no valid pair every score is NaN and n = 0.
pub fn scores(predicted: &[f64], observed: &[f64]) -> Result<Scores> {
    check_same_length("predicted", predicted, "observed", observed)?;
    let pairs = predicted
        .iter()
        .copied()
        .zip(observed.iter().copied())
        .filter(|(p, o)| !p.is_nan() && !o.is_nan());
    let (mut n, mut sum_err, mut sum_abs, mut sum_sq, mut sum_obs) = (0usize, 0.0, 0.0, 0.0, 0.0);
    for (p, o) in pairs.clone() {
        n += 1;
        let e = p - o;
        sum_err += e;
        sum_abs += e.abs();
        sum_sq += e * e;
        sum_obs += o;
    }
    let nf = n as f64;
    let obs_mean = sum_obs / nf;
    let obs_ss: f64 = pairs.clone().map(|(_, o)| (o - obs_mean).powi(2)).sum();
    let corr = pearson_pairs(pairs);
    let nse = if n > 0 && obs_ss > 0.0 {
        1.0 - sum_sq / obs_ss
    } else {
        f64::NAN
    };
    Ok(Scores {
        n,
        bias: sum_err / nf,
        mae: sum_abs / nf,
        rmse: (sum_sq / nf).sqrt(),
        r: corr.r,
        r2: corr.r * corr.r,
        nse,
    })
}
