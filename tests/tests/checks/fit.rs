//! Calibration (docs/fit.md): the diagnostics on known sequences, the Goodman & Weare sampler on
//! problems with known answers, the likelihood by hand, and `isodisc fit` end to end.

use indicatif::ProgressBar;
use isodisc_runner::ensemble::spec::{Dist, EnsembleSpec};
use isodisc_runner::fit::diagnostics::{ess_bulk, ess_of, split_rhat, split_rhat_raw};
use isodisc_runner::fit::sampler::{Chain, Eval, SamplerSettings, sample};
use isodisc_runner::fit::{Likelihood, ln_prior};
use rand::SeedableRng;
use rand::distr::Distribution as _;
use rand::rngs::StdRng;
use statrs::distribution::{ContinuousCDF, Normal};
use statrs::statistics::Distribution as _;

/// Tolerance in Monte-Carlo standard errors for sampled moments (common practice: 4 SE makes a
/// false alarm rare, about 1 in 16 000 per comparison under normality).
const MC_SE: f64 = 4.0;

fn iid_normal(seed: u64, chains: usize, n: usize) -> Vec<Vec<f64>> {
    let mut rng = StdRng::seed_from_u64(seed);
    let d = Normal::standard();
    (0..chains)
        .map(|_| (0..n).map(|_| d.sample(&mut rng)).collect())
        .collect()
}

#[test]
fn split_rhat_by_hand() {
    // Hand-worked: chains (1,2,3,4) and (2,3,4,5) split into (1,2) (3,4) (2,3) (4,5); chain means
    // 1.5, 3.5, 2.5, 4.5; W = 0.5; B/N = var(means) = 5/3; N = 2;
    // R = sqrt((0.5·W + B/N)/W) = sqrt(3.8333) = 1.95789 (checked with numpy).
    let r = split_rhat_raw(&[vec![1.0, 2.0, 3.0, 4.0], vec![2.0, 3.0, 4.0, 5.0]]);
    assert!((r - 1.957_890_020_745_121_8).abs() < 1e-12, "{r}");
}

#[test]
fn iid_normal_gives_rhat_one_and_ess_n() {
    // Vehtari et al. 2021: independent draws have R-hat near 1 and ESS near the number of draws.
    let chains = iid_normal(7, 4, 1000);
    let r = split_rhat(&chains);
    assert!((r - 1.0).abs() < 0.01, "R-hat {r}");
    let ess = ess_bulk(&chains);
    assert!((ess / 4000.0 - 1.0).abs() < 0.15, "ESS {ess} of 4000");
}

#[test]
fn ar1_ess_matches_its_autocorrelation_time() {
    // An AR(1) sequence x_t = φ x_{t−1} + e_t has integrated autocorrelation time (1 + φ)/(1 − φ)
    // (from memory; any time-series text), so ESS ≈ N (1 − φ)/(1 + φ) = N/3 for φ = 0.5.
    let phi = 0.5;
    let noise = iid_normal(11, 4, 5000);
    let chains: Vec<Vec<f64>> = noise
        .iter()
        .map(|e| {
            let mut x = 0.0;
            e.iter()
                .map(|v| {
                    x = phi * x + v;
                    x
                })
                .collect()
        })
        .collect();
    let ess = ess_of(&chains);
    let expected = 20000.0 * (1.0 - phi) / (1.0 + phi);
    assert!((ess / expected - 1.0).abs() < 0.15, "ESS {ess}, expected {expected}");
}

#[test]
fn stuck_chains_give_a_large_rhat() {
    // Chains around different means have not mixed: R-hat far above 1.01 (Vehtari et al. 2021).
    let mut chains = iid_normal(3, 4, 500);
    for v in &mut chains[0] {
        *v += 3.0;
    }
    assert!(split_rhat(&chains) > 1.1);
}

fn settings(walkers: usize, seed: u64, max_evaluations: u64, target_ess: f64) -> SamplerSettings {
    SamplerSettings {
        walkers,
        warmup_steps: 100,
        target_ess,
        max_evaluations,
        check_every: 50,
        payload_steps: 16,
        seed,
        start_tries: 100,
    }
}

fn in_pool<T: Send>(threads: usize, f: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(f)
}

/// Mean and sd of parameter j over every kept draw.
fn moments<T>(c: &Chain<T>, j: usize) -> (f64, f64) {
    let x: Vec<f64> = c.positions.iter().skip(j).step_by(c.dim).copied().collect();
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let v = x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (n - 1.0);
    (m, v.sqrt())
}

#[test]
fn sampler_recovers_a_linear_gaussian_posterior() {
    // y_i = a + b x_i + N(0, σ²), priors a, b ~ N(0, τ²): the posterior is normal with precision
    // XᵀX/σ² + I/τ² and mean Σ Xᵀy/σ² (conjugate normal regression, BDA3 section 14.2).
    let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
    let ys = [1.1, 2.9, 5.2, 7.1, 8.8];
    let (sigma, tau) = (0.5f64, 10.0f64);
    let (mut sxx, mut sx, mut sy, mut sxy) = (0.0, 0.0, 0.0, 0.0);
    for (x, y) in xs.iter().zip(&ys) {
        sxx += x * x;
        sx += x;
        sy += y;
        sxy += x * y;
    }
    let n = xs.len() as f64;
    let (p11, p12, p22) = (
        n / sigma.powi(2) + 1.0 / tau.powi(2),
        sx / sigma.powi(2),
        sxx / sigma.powi(2) + 1.0 / tau.powi(2),
    );
    let det = p11 * p22 - p12 * p12;
    let (c11, c12, c22) = (p22 / det, -p12 / det, p11 / det);
    let (r1, r2) = (sy / sigma.powi(2), sxy / sigma.powi(2));
    let mean = [c11 * r1 + c12 * r2, c12 * r1 + c22 * r2];
    let sd = [c11.sqrt(), c22.sqrt()];
    let prior = Normal::new(0.0, tau).unwrap();
    let chain = in_pool(2, || {
        sample(
            &settings(16, 5, 200_000, 2000.0),
            |rng| vec![prior.sample(rng), prior.sample(rng)],
            |t: &[f64]| Eval {
                log_likelihood: xs
                    .iter()
                    .zip(&ys)
                    .map(|(x, y)| -0.5 * ((y - t[0] - t[1] * x) / sigma).powi(2))
                    .sum(),
                log_prior: -0.5 * (t[0] * t[0] + t[1] * t[1]) / (tau * tau),
                payload: (),
            },
            &ProgressBar::hidden(),
        )
        .unwrap()
    });
    let ess = chain.min_ess();
    assert!(ess >= 2000.0, "stopped at ESS {ess}");
    let rate = chain.acceptance_rate();
    assert!((0.2..0.9).contains(&rate), "acceptance {rate}");
    for j in 0..2 {
        let (m, s) = moments(&chain, j);
        assert!((m - mean[j]).abs() < MC_SE * sd[j] / ess.sqrt(), "mean {j}: {m} vs {}", mean[j]);
        // SE of a sample sd ≈ sd/√(2 ESS) (normal theory, from memory).
        assert!((s - sd[j]).abs() < MC_SE * sd[j] / (2.0 * ess).sqrt(), "sd {j}: {s} vs {}", sd[j]);
    }
}

const PRIOR_SPEC: &str = r#"
[param."a"]
distribution = "normal"
mean = 2.0
sd = 0.5
[param."b"]
distribution = "log-normal"
meanlog = 0.5
sdlog = 0.3
[param."c"]
distribution = "uniform"
min = -1.0
max = 3.0
[param."d"]
distribution = "truncated-normal"
mean = 1.0
sd = 1.0
min = 0.0
max = 4.0
"#;

#[test]
fn without_data_the_sampler_returns_the_prior() {
    // Mean and sd of each prior from statrs (normal, log-normal, uniform); the truncated normal's
    // from Johnson, Kotz & Balakrishnan (1994), eq. 13.134: μ + σ(φ(α) − φ(β))/(Φ(β) − Φ(α)) and
    // its variance σ²[1 + (αφ(α) − βφ(β))/Z − ((φ(α) − φ(β))/Z)²].
    let spec = EnsembleSpec::parse(std::path::Path::new("prior.toml"), PRIOR_SPEC.into()).unwrap();
    let dists: Vec<Dist> = spec.params.iter().map(|p| p.dist).collect();
    let chain = in_pool(2, || {
        sample(
            &settings(16, 9, 400_000, 1500.0),
            |rng| {
                dists
                    .iter()
                    .map(|d| d.quantile(rand::Rng::next_u64(rng) as f64 / 2f64.powi(64)))
                    .collect()
            },
            |t: &[f64]| Eval {
                log_likelihood: 0.0,
                log_prior: dists.iter().zip(t).map(|(d, x)| ln_prior(d, *x)).sum(),
                payload: (),
            },
            &ProgressBar::hidden(),
        )
        .unwrap()
    });
    let ess = chain.min_ess();
    let n01 = Normal::standard();
    let expected: Vec<(f64, f64)> = dists
        .iter()
        .map(|d| match *d {
            Dist::Normal { mean, sd } => {
                let n = Normal::new(mean, sd).unwrap();
                (n.mean().unwrap(), n.std_dev().unwrap())
            }
            Dist::LogNormal { meanlog, sdlog } => {
                let n = statrs::distribution::LogNormal::new(meanlog, sdlog).unwrap();
                (n.mean().unwrap(), n.std_dev().unwrap())
            }
            Dist::Uniform { min, max } => {
                let n = statrs::distribution::Uniform::new(min, max).unwrap();
                (n.mean().unwrap(), n.std_dev().unwrap())
            }
            Dist::TruncatedNormal { mean, sd, min, max } => {
                let (a, b) = ((min - mean) / sd, (max - mean) / sd);
                let pdf = |x: f64| (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt();
                let z = n01.cdf(b) - n01.cdf(a);
                let r = (pdf(a) - pdf(b)) / z;
                let v = 1.0 + (a * pdf(a) - b * pdf(b)) / z - r * r;
                (mean + sd * r, sd * v.sqrt())
            }
            Dist::Fixed { .. } => unreachable!(),
        })
        .collect();
    for (j, (m0, s0)) in expected.iter().enumerate() {
        let (m, s) = moments(&chain, j);
        assert!((m - m0).abs() < MC_SE * s0 / ess.sqrt(), "{}: mean {m} vs {m0}", spec.params[j].path);
        // The sd's SE for a non-normal shape is larger than σ/√(2n): allow twice that.
        assert!(
            (s - s0).abs() < 2.0 * MC_SE * s0 / (2.0 * ess).sqrt(),
            "{}: sd {s} vs {s0}",
            spec.params[j].path
        );
    }
}

#[test]
fn sampler_draws_do_not_depend_on_the_thread_count() {
    // Per-walker generators and walker-ordered updates (the design in sampler.rs).
    let run = |threads| {
        in_pool(threads, || {
            sample(
                &settings(8, 3, 2000, 1e9),
                |rng| vec![Normal::standard().sample(rng)],
                |t: &[f64]| Eval {
                    log_likelihood: -0.5 * t[0] * t[0],
                    log_prior: 0.0,
                    payload: t[0],
                },
                &ProgressBar::hidden(),
            )
            .unwrap()
        })
    };
    let (a, b) = (run(1), run(2));
    assert_eq!(a.positions, b.positions);
    assert_eq!(a.log_likelihood, b.log_likelihood);
    assert_eq!(a.payloads, b.payloads);
    assert!(a.payloads.len() <= 17);
}

#[test]
fn likelihood_of_one_observation_by_hand() {
    // Gaussian: ln N(y | m, s) = −½ ln(2π s²) − ½ ((y − m)/s)²; Student-t with ν = 1 is the
    // Cauchy density 1/(π s (1 + ((y − m)/s)²)) (from memory; any statistics text).
    let (y, m, s) = (-18.2f64, -17.5f64, 0.4f64);
    let g = Likelihood::Gaussian.ln_density(y, m, s);
    let hand = -0.5 * (2.0 * std::f64::consts::PI * s * s).ln() - 0.5 * ((y - m) / s).powi(2);
    assert!((g - hand).abs() < 1e-12, "{g} vs {hand}");
    let t = Likelihood::StudentT { dof: 1.0 }.ln_density(y, m, s);
    let hand = -(std::f64::consts::PI * s * (1.0 + ((y - m) / s).powi(2))).ln();
    assert!((t - hand).abs() < 1e-12, "{t} vs {hand}");
    assert_eq!(Likelihood::Gaussian.ln_density(y, f64::NAN, s), f64::NEG_INFINITY);
}
