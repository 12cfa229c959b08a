//! Convergence diagnostics of Vehtari, Gelman, Simpson, Carpenter & Bürkner (2021, Bayesian
//! Analysis 16, 667–718): split R-hat and the bulk effective sample size, both on rank-normalised
//! draws. Each walker of the ensemble counts as one chain. The effective sample size follows
//! their eq. 10 with Geyer's (1992) initial monotone sequence to truncate the autocorrelations.

use statrs::distribution::{ContinuousCDF, Normal};
use statrs::statistics::{Data, Median, OrderStatistics, RankTieBreaker};

/// R-hat above this draws a warning (Vehtari et al. 2021 recommend 1.01).
pub const RHAT_WARN: f64 = 1.01;

/// Splits every chain into its first and second half (the middle draw of an odd length dropped).
pub fn split_chains(chains: &[Vec<f64>]) -> Vec<Vec<f64>> {
    chains
        .iter()
        .flat_map(|c| {
            let h = c.len() / 2;
            [c[..h].to_vec(), c[c.len() - h..].to_vec()]
        })
        .collect()
}

/// Rank-normalises the draws of all chains together: z = Φ⁻¹((r − 3/8)/(S + 1/4)), average ranks
/// for ties (Vehtari et al. 2021, eq. 14).
pub fn rank_normalise(chains: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let all: Vec<f64> = chains.iter().flatten().copied().collect();
    let s = all.len() as f64;
    let ranks = Data::new(all).ranks(RankTieBreaker::Average);
    let std = Normal::standard();
    let mut it = ranks.into_iter();
    chains
        .iter()
        .map(|c| {
            c.iter()
                .map(|_| {
                    std.inverse_cdf((it.next().expect("one rank per draw") - 0.375) / (s + 0.25))
                })
                .collect()
        })
        .collect()
}

fn mean(x: &[f64]) -> f64 {
    x.iter().sum::<f64>() / x.len() as f64
}

/// Sample variance with n − 1.
fn var(x: &[f64]) -> f64 {
    let m = mean(x);
    x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (x.len() as f64 - 1.0)
}

/// Classic R-hat of equal-length chains (Gelman et al. 2013, BDA3 eq. 11.4):
/// sqrt(((N − 1)/N · W + B/N) / W). NaN for fewer than 2 chains or 2 draws.
pub fn rhat_of(chains: &[Vec<f64>]) -> f64 {
    let n = chains.first().map_or(0, Vec::len);
    if chains.len() < 2 || n < 2 {
        return f64::NAN;
    }
    let means: Vec<f64> = chains.iter().map(|c| mean(c)).collect();
    let w = mean(&chains.iter().map(|c| var(c)).collect::<Vec<_>>());
    let b_over_n = var(&means);
    let nf = n as f64;
    (((nf - 1.0) / nf * w + b_over_n) / w).sqrt()
}

/// Split R-hat on the raw draws (no rank normalisation).
pub fn split_rhat_raw(chains: &[Vec<f64>]) -> f64 {
    rhat_of(&split_chains(chains))
}

/// Rank-normalised split R-hat: the larger of the bulk value and the value of the folded draws
/// |θ − median| (Vehtari et al. 2021, section 4.2). A sequence that never moves gives NaN.
pub fn split_rhat(chains: &[Vec<f64>]) -> f64 {
    let split = split_chains(chains);
    let bulk = rhat_of(&rank_normalise(&split));
    let all: Vec<f64> = split.iter().flatten().copied().collect();
    let median = Data::new(all).median();
    let folded: Vec<Vec<f64>> = split
        .iter()
        .map(|c| c.iter().map(|v| (v - median).abs()).collect())
        .collect();
    let tail = rhat_of(&rank_normalise(&folded));
    bulk.max(tail)
}

/// Autocovariance of `x` at lags 0..n (divided by n), by direct sums.
fn autocov(x: &[f64], lag: usize) -> f64 {
    let m = mean(x);
    let n = x.len();
    (0..n - lag)
        .map(|i| (x[i] - m) * (x[i + lag] - m))
        .sum::<f64>()
        / n as f64
}

/// Effective sample size of equal-length chains (Vehtari et al. 2021, eq. 10; the algorithm of
/// Stan and of the R package posterior): the chains' combined autocorrelations truncated by
/// Geyer's initial monotone sequence, τ̂ = −1 + 2 Σ ρ̂ₜ, ESS = M·N/τ̂ (τ̂ ≥ 1/log10(M·N)).
pub fn ess_of(chains: &[Vec<f64>]) -> f64 {
    let m = chains.len();
    let n = chains.first().map_or(0, Vec::len);
    // Six draws per chain let the truncation below look at one pair of lags at least.
    if m == 0 || n < 6 {
        return f64::NAN;
    }
    let acov_mean = |lag: usize| mean(&chains.iter().map(|c| autocov(c, lag)).collect::<Vec<_>>());
    let nf = n as f64;
    let mean_var = acov_mean(0) * nf / (nf - 1.0);
    let mut var_plus = mean_var * (nf - 1.0) / nf;
    if m > 1 {
        var_plus += var(&chains.iter().map(|c| mean(c)).collect::<Vec<_>>());
    }
    if var_plus.is_nan() || var_plus <= 0.0 {
        return f64::NAN;
    }
    let rho_at = |lag: usize| 1.0 - (mean_var - acov_mean(lag)) / var_plus;
    let mut rho = vec![0.0; n + 1];
    rho[0] = 1.0;
    let mut even = 1.0;
    let mut odd = rho_at(1);
    rho[1] = odd;
    let mut t = 0;
    while t + 5 < n && even + odd > 0.0 {
        t += 2;
        even = rho_at(t);
        odd = if t + 1 < n { rho_at(t + 1) } else { 0.0 };
        if even + odd >= 0.0 {
            rho[t] = even;
            rho[t + 1] = odd;
        }
    }
    let max_t = t;
    if even > 0.0 {
        rho[max_t] = even;
    }
    // Geyer's initial monotone sequence: the pair sums may not grow.
    let mut t = 0;
    while t + 4 <= max_t {
        t += 2;
        if rho[t] + rho[t + 1] > rho[t - 2] + rho[t - 1] {
            rho[t] = (rho[t - 2] + rho[t - 1]) / 2.0;
            rho[t + 1] = rho[t];
        }
    }
    let total = (m * n) as f64;
    let tau = (-1.0 + 2.0 * rho[..max_t].iter().sum::<f64>() + rho[max_t]).max(1.0 / total.log10());
    total / tau
}

/// Bulk ESS: [`ess_of`] on the rank-normalised split chains.
pub fn ess_bulk(chains: &[Vec<f64>]) -> f64 {
    ess_of(&rank_normalise(&split_chains(chains)))
}
