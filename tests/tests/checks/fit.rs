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
    assert!(
        (ess / expected - 1.0).abs() < 0.15,
        "ESS {ess}, expected {expected}"
    );
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
        assert!(
            (m - mean[j]).abs() < MC_SE * sd[j] / ess.sqrt(),
            "mean {j}: {m} vs {}",
            mean[j]
        );
        // SE of a sample sd ≈ sd/√(2 ESS) (normal theory, from memory).
        assert!(
            (s - sd[j]).abs() < MC_SE * sd[j] / (2.0 * ess).sqrt(),
            "sd {j}: {s} vs {}",
            sd[j]
        );
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
        assert!(
            (m - m0).abs() < MC_SE * s0 / ess.sqrt(),
            "{}: mean {m} vs {m0}",
            spec.params[j].path
        );
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
    assert_eq!(
        Likelihood::Gaussian.ln_density(y, f64::NAN, s),
        f64::NEG_INFINITY
    );
}

// ---- `isodisc fit` end to end -------------------------------------------------------------

use std::fs;
use std::path::Path;

use crate::common::{demo_path, run};
use isodisc_runner::fit::streams::Stream;

/// One month of hourly steps keeps every model run short.
const FROM: &str = "2025-01-01";
const TO: &str = "2025-01-31";

fn p(path: &Path) -> &str {
    path.to_str().unwrap()
}

/// The demo site with its weather file addressed from `dir` (a copy of site.toml whose forcing
/// and history paths point back at the demo folder).
fn demo_site(dir: &Path) -> std::path::PathBuf {
    let text = fs::read_to_string(demo_path("site.toml"))
        .unwrap()
        .replace(
            "path = \"weather.csv\"",
            &format!("path = \"{}\"", demo_path("weather.csv").display()),
        )
        .replace(
            "history = \"atmosphere_history.csv\"",
            &format!(
                "history = \"{}\"",
                demo_path("atmosphere_history.csv").display()
            ),
        );
    let site = dir.join("site.toml");
    fs::write(&site, text).unwrap();
    site
}

/// `isodisc run SITE --out OUT` over the month fitted.
fn run_month(site: &Path, out: &Path) {
    run(&[
        "run",
        p(site),
        "--out",
        p(out),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
}

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let h = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(String::from).collect())
        .collect();
    (h, rows)
}

const LEAKINESS_PRIOR: &str =
    "[param.\"vegetation.c4.leakiness\"]\ndistribution = \"uniform\"\nmin = 0.15\nmax = 0.45\n";

fn fit_args<'a>(
    site: &'a str,
    spec: &'a str,
    obs: &'a str,
    out: &'a str,
    seed: &'a str,
) -> Vec<&'a str> {
    vec![
        "fit",
        site,
        "--spec",
        spec,
        "--observed",
        obs,
        "--variable",
        "discrimination",
        "--out",
        out,
        "--seed",
        seed,
        "--from",
        FROM,
        "--to",
        TO,
        "--warmup",
        "15",
        "--max-evaluations",
        "400",
        "--quiet",
    ]
}

#[test]
fn planted_leakiness_is_recovered() {
    // Planted truth (common practice for samplers): daily Δ simulated with leakiness 0.30, plus
    // N(0, 0.3‰) noise from three seeds; each fit's 90% interval (p05–p95) should cover 0.30
    // (nominal coverage 0.9 each: all three or two of three, with probability 0.97), and the
    // posterior sd is far below the prior's (uniform on [0.15, 0.45]: sd 0.087).
    let tmp = tempfile::tempdir().unwrap();
    let site = demo_site(tmp.path());
    let truth = 0.30;
    let planted = fs::read_to_string(&site)
        .unwrap()
        .replace("leakiness = 0.3 }", &format!("leakiness = {truth} }}"));
    let planted_site = tmp.path().join("planted.toml");
    fs::write(&planted_site, planted).unwrap();
    let run_dir = tmp.path().join("truth");
    run_month(&planted_site, &run_dir);
    let (h, rows) = read_csv(&run_dir.join("daily.csv"));
    let (c_period, c_d) = (
        h.iter().position(|x| x == "period").unwrap(),
        h.iter().position(|x| x == "discrimination").unwrap(),
    );
    let spec = tmp.path().join("spec.toml");
    fs::write(&spec, LEAKINESS_PRIOR).unwrap();
    let noise = Normal::new(0.0, 0.3).unwrap();
    let mut covered = 0;
    for seed in 1..=3u64 {
        let mut rng = StdRng::seed_from_u64(100 + seed);
        let mut text = String::from("date,discrimination,sd\n");
        for r in &rows {
            let d: f64 = r[c_d].parse().unwrap();
            text += &format!("{},{:.4},0.3\n", r[c_period], d + noise.sample(&mut rng));
        }
        let obs = tmp.path().join(format!("obs{seed}.csv"));
        fs::write(&obs, text).unwrap();
        let out = tmp.path().join(format!("fit{seed}"));
        let seed_s = seed.to_string();
        run(&fit_args(p(&site), p(&spec), p(&obs), p(&out), &seed_s)).unwrap();
        let (h, rows) = read_csv(&out.join("summary.csv"));
        assert_eq!(
            h,
            [
                "parameter",
                "mean",
                "sd",
                "p05",
                "p50",
                "p95",
                "rhat",
                "ess"
            ]
        );
        let v = |c: usize| rows[0][c].parse::<f64>().unwrap();
        if (v(3)..=v(5)).contains(&truth) {
            covered += 1;
        }
        assert!(
            v(2) < 0.25 * 0.087,
            "posterior sd {} not below a quarter of the prior's",
            v(2)
        );
        assert!(out.join("best/daily.csv").is_file());
        let (h, pred) = read_csv(&out.join("predictive_discrimination.csv"));
        assert_eq!(h[..3], ["date", "observed", "sd"]);
        assert_eq!(pred.len(), 31);
    }
    assert!(
        covered >= 2,
        "the 90% interval covered the truth in {covered} of 3 fits"
    );
}

#[test]
fn fit_files_do_not_depend_on_the_thread_count() {
    // Per-walker generators and walker-ordered updates (sampler.rs): byte-identical outputs.
    let tmp = tempfile::tempdir().unwrap();
    let site = demo_site(tmp.path());
    let spec = tmp.path().join("spec.toml");
    fs::write(&spec, LEAKINESS_PRIOR).unwrap();
    let obs = tmp.path().join("obs.csv");
    fs::write(
        &obs,
        "date,discrimination\n2025-01-05,9.1\n2025-01-20,8.7\n",
    )
    .unwrap();
    let mut outs = Vec::new();
    for threads in ["1", "2"] {
        let out = tmp.path().join(format!("t{threads}"));
        let mut a = fit_args(p(&site), p(&spec), p(&obs), p(&out), "4");
        a.extend(["--threads", threads, "--sd", "0.5"]);
        run(&a).unwrap();
        outs.push(out);
    }
    for f in [
        "posterior.csv",
        "summary.csv",
        "predictive_discrimination.csv",
        "best/daily.csv",
    ] {
        assert_eq!(
            fs::read(outs[0].join(f)).unwrap(),
            fs::read(outs[1].join(f)).unwrap(),
            "{f}"
        );
    }
}

#[test]
fn stream_log_likelihood_by_hand() {
    // Two observations with SD 0.2 and 0.4 and a model-error SD of 0.3:
    // Σ −½ ln(2π s²) − ½ ((y − m)/s)², s² = sd² + σ² (the formula of docs/fit.md).
    let tmp = tempfile::tempdir().unwrap();
    let f = tmp.path().join("obs.csv");
    fs::write(
        &f,
        "date,d13c_respiration,sd\n2025-01-01,-18.0,0.2\n2025-01-02,-17.0,0.4\n",
    )
    .unwrap();
    let s = Stream::read(&f, "d13c_respiration", None, 1).unwrap();
    let m = [-18.5, -17.1];
    let ll = s.log_likelihood(&m, 0.3, &Likelihood::Gaussian);
    let term = |y: f64, m: f64, sd: f64| {
        let s2 = sd * sd + 0.09;
        -0.5 * (2.0 * std::f64::consts::PI * s2).ln() - 0.5 * (y - m) * (y - m) / s2
    };
    let hand = term(-18.0, -18.5, 0.2) + term(-17.0, -17.1, 0.4);
    assert!((ll - hand).abs() < 1e-12, "{ll} vs {hand}");
}

#[test]
fn bad_fit_input_is_located() {
    // Common practice: errors name the file, line, column or flag and the value.
    let tmp = tempfile::tempdir().unwrap();
    let site = demo_site(tmp.path());
    let spec = tmp.path().join("spec.toml");
    fs::write(&spec, LEAKINESS_PRIOR).unwrap();
    let out = tmp.path().join("out");
    let go = |obs: &Path, spec: &Path| {
        run(&fit_args(p(&site), p(spec), p(obs), p(&out), "1")).unwrap_err()
    };
    // Observations outside the period.
    let late = tmp.path().join("late.csv");
    fs::write(&late, "date,discrimination,sd\n2025-06-01,9.0,0.3\n").unwrap();
    let e = go(&late, &spec);
    assert!(
        e.contains("late.csv") && e.contains("falls within the period"),
        "{e}"
    );
    // SD <= 0, with its line and column.
    let zero = tmp.path().join("zero.csv");
    fs::write(
        &zero,
        "date,discrimination,sd\n2025-01-02,9.0,0.3\n2025-01-03,9.0,0\n",
    )
    .unwrap();
    let e = go(&zero, &spec);
    assert!(e.contains("zero.csv: line 3, column 3 (sd)"), "{e}");
    // An unknown parameter path, with the spec's line.
    let bad_spec = tmp.path().join("bad.toml");
    fs::write(
        &bad_spec,
        "\n[param.\"vegetation.c4.leakyness\"]\ndistribution = \"uniform\"\nmin = 0.1\nmax = 0.4\n",
    )
    .unwrap();
    let obs = tmp.path().join("obs.csv");
    fs::write(&obs, "date,discrimination,sd\n2025-01-02,9.0,0.3\n").unwrap();
    let e = go(&obs, &bad_spec);
    assert!(
        e.contains("bad.toml: line 2") && e.contains("leakyness"),
        "{e}"
    );
    // A model-error term for a variable no stream has.
    fs::write(
        &bad_spec,
        format!(
            "{LEAKINESS_PRIOR}[param.\"error.gpp\"]\ndistribution = \"uniform\"\nmin = 0\nmax = 1\n"
        ),
    )
    .unwrap();
    let e = go(&obs, &bad_spec);
    assert!(e.contains("error.gpp") && e.contains("no stream"), "{e}");
    assert!(!out.exists());
}

/// A short fit of the leakiness (one observation of Δ) in `out`; returns the site and spec files.
fn small_fit(dir: &Path, out: &Path) -> (std::path::PathBuf, std::path::PathBuf) {
    let site = demo_site(dir);
    let spec = dir.join("spec.toml");
    fs::write(&spec, LEAKINESS_PRIOR).unwrap();
    let obs = dir.join("obs.csv");
    fs::write(&obs, "date,discrimination,sd\n2025-01-05,9.1,0.5\n").unwrap();
    run(&fit_args(p(&site), p(&spec), p(&obs), p(out), "2")).unwrap();
    (site, spec)
}

#[test]
fn posterior_ensemble_members_are_posterior_draws() {
    // `ensemble --posterior` (docs/fit.md): every member's parameters are one row of posterior.csv;
    // a folder without a posterior is refused with its path (common practice).
    let tmp = tempfile::tempdir().unwrap();
    let fit = tmp.path().join("fit");
    let (site, _) = small_fit(tmp.path(), &fit);
    let ens = tmp.path().join("ens");
    run(&[
        "ensemble",
        p(&site),
        "--posterior",
        p(&fit),
        "--members",
        "5",
        "--seed",
        "1",
        "--out",
        p(&ens),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    let (h, post) = read_csv(&fit.join("posterior.csv"));
    let c = h
        .iter()
        .position(|x| x == "vegetation.c4.leakiness")
        .unwrap();
    let draws: Vec<&str> = post.iter().map(|r| r[c].as_str()).collect();
    let (h, members) = read_csv(&ens.join("members.csv"));
    let m = h
        .iter()
        .position(|x| x == "vegetation.c4.leakiness")
        .unwrap();
    assert!(!members.is_empty());
    for r in &members {
        assert!(
            draws.contains(&r[m].as_str()),
            "{} is not a posterior draw",
            r[m]
        );
    }
    let e = run(&[
        "ensemble",
        p(&site),
        "--posterior",
        p(tmp.path()),
        "--members",
        "2",
        "--seed",
        "1",
        "--out",
        p(&tmp.path().join("x")),
        "--quiet",
    ])
    .unwrap_err();
    assert!(e.contains("posterior.csv"), "{e}");
}

// ---- bulk-leaf δ13C over a window -----------------------------------------------------------

use isodisc_runner::fit::streams::{BULK_LEAF, window_assimilate_d13c};
use isodisc_runner::simulate::{PERIOD_COLUMNS, PeriodRow, period_col};

/// A daily row with only `gpp` (gC m⁻²) and `d13c_assimilate` (‰) set.
fn day_row(key: &str, gpp: f64, d13c: f64) -> PeriodRow {
    let mut values = vec![f64::NAN; PERIOD_COLUMNS.len() - 1];
    values[period_col("gpp")] = gpp;
    values[period_col("d13c_assimilate")] = d13c;
    PeriodRow {
        key: key.to_string(),
        values,
    }
}

#[test]
fn bulk_leaf_window_is_gpp_weighted_assimilate_by_hand() {
    // Common practice: bulk leaf δ13C is compared with the GPP-weighted δ13C of the assimilate
    // of the days the leaves were built from. By hand over 1–4 January (the day without GPP has
    // no δ and no weight): (1·(−26) + 3·(−28) + 2·(−27)) / (1 + 3 + 2) = −164/6.
    let days = [
        day_row("2025-01-01", 1.0, -26.0),
        day_row("2025-01-02", 0.0, f64::NAN),
        day_row("2025-01-03", 3.0, -28.0),
        day_row("2025-01-04", 2.0, -27.0),
        day_row("2025-01-05", 4.0, -30.0),
    ];
    let hand = -164.0 / 6.0;
    assert!((window_assimilate_d13c(&days[..4]) - hand).abs() < 1e-12);
    let tmp = tempfile::tempdir().unwrap();
    let f = tmp.path().join("leaf.csv");
    fs::write(
        &f,
        "start,end,d13c_bulk_leaf,sd\n2025-01-01,2025-01-04,-27.0,0.5\n\
         2025-01-05,2025-01-05,-29.0,0.5\n2024-11-01,2024-12-15,-27.5,0.5\n",
    )
    .unwrap();
    let mut s = Stream::read(&f, BULK_LEAF, None, 1).unwrap();
    s.pair(&days, &[]).unwrap();
    assert_eq!(s.outside, 1, "the window wholly before the run is left out");
    let mut m = Vec::new();
    s.predictions(&days, &[], &mut m);
    assert!((m[0] - hand).abs() < 1e-12 && m[1] == -30.0, "{m:?}");
    // A window without GPP has no prediction: an error naming its line.
    fs::write(
        &f,
        "start,end,d13c_bulk_leaf,sd\n2025-01-02,2025-01-02,-27,0.5\n",
    )
    .unwrap();
    let e = Stream::read(&f, BULK_LEAF, None, 1)
        .unwrap()
        .pair(&days, &[])
        .unwrap_err()
        .chain();
    assert!(e.contains("line 2") && e.contains("no GPP"), "{e}");
}

#[test]
fn bulk_leaf_prediction_equals_the_daily_output_by_hand() {
    // End to end: with only a model-error SD sampled, every evaluation runs the site as given,
    // so the predictive median is the prediction itself; it must equal Σ gpp·d13c_assimilate /
    // Σ gpp over the window's rows of `isodisc run`'s daily.csv (by hand; daily.csv is rounded to
    // 6 decimals, hence the tolerance).
    let tmp = tempfile::tempdir().unwrap();
    let site = demo_site(tmp.path());
    let run_dir = tmp.path().join("run");
    run_month(&site, &run_dir);
    let (h, rows) = read_csv(&run_dir.join("daily.csv"));
    let col = |n: &str| h.iter().position(|x| x == n).unwrap();
    let (c_day, c_g, c_d) = (col("period"), col("gpp"), col("d13c_assimilate"));
    let (mut sum_g, mut sum_gd) = (0.0, 0.0);
    for r in rows
        .iter()
        .filter(|r| ("2025-01-10"..="2025-01-25").contains(&r[c_day].as_str()))
    {
        let (g, d): (f64, f64) = (r[c_g].parse().unwrap(), r[c_d].parse().unwrap());
        sum_g += g;
        sum_gd += g * d;
    }
    let hand = sum_gd / sum_g;
    let spec = tmp.path().join("spec.toml");
    fs::write(
        &spec,
        "[param.\"error.d13c_bulk_leaf\"]\ndistribution = \"uniform\"\nmin = 0\nmax = 1\n",
    )
    .unwrap();
    let obs = tmp.path().join("leaf.csv");
    fs::write(
        &obs,
        "start,end,d13c_bulk_leaf,d13c_bulk_leaf_sd\n2025-01-10,2025-01-25,-19.0,0.5\n",
    )
    .unwrap();
    let out = tmp.path().join("fit");
    let mut a = fit_args(p(&site), p(&spec), p(&obs), p(&out), "5");
    a[7] = BULK_LEAF;
    a[17] = "2";
    a[19] = "120";
    run(&a).unwrap();
    let (h, pred) = read_csv(&out.join("predictive_d13c_bulk_leaf.csv"));
    assert_eq!(h[..4], ["start", "end", "observed", "sd"]);
    assert_eq!(pred[0][..4], ["2025-01-10", "2025-01-25", "-19", "0.5"]);
    for c in 4..7 {
        let m: f64 = pred[0][c].parse().unwrap();
        assert!((m - hand).abs() < 2e-6, "{} {m} vs {hand}", h[c]);
    }
}

#[test]
fn bad_bulk_leaf_input_is_located() {
    // Common practice: errors name the file, line, column and value.
    let tmp = tempfile::tempdir().unwrap();
    let site = demo_site(tmp.path());
    let spec = tmp.path().join("spec.toml");
    fs::write(&spec, LEAKINESS_PRIOR).unwrap();
    let out = tmp.path().join("out");
    let go = |body: &str| {
        let obs = tmp.path().join("leaf.csv");
        fs::write(&obs, format!("start,end,d13c_bulk_leaf,sd\n{body}")).unwrap();
        let mut a = fit_args(p(&site), p(&spec), p(&obs), p(&out), "1");
        a[7] = BULK_LEAF;
        run(&a).unwrap_err()
    };
    // A window reaching past the period run (January).
    let e = go("2025-01-05,2025-01-20,-19,0.4\n2025-01-20,2025-02-10,-19,0.4\n");
    assert!(
        e.contains("leaf.csv: line 3") && e.contains("2025-01-20 to 2025-02-10"),
        "{e}"
    );
    assert!(
        e.contains("reaches outside the days run (2025-01-01 to 2025-01-31)"),
        "{e}"
    );
    // Every window outside the run.
    let e = go("2025-06-01,2025-06-30,-19,0.4\n");
    assert!(e.contains("falls within the period run"), "{e}");
    // The end before the start.
    let e = go("2025-01-05,2025-01-20,-19,0.4\n2025-01-20,2025-01-10,-19,0.4\n");
    assert!(
        e.contains("leaf.csv: line 3, column 2 (end): `2025-01-10` is before the window's start"),
        "{e}"
    );
    // An SD <= 0.
    let e = go("2025-01-05,2025-01-20,-19,-0.4\n");
    assert!(e.contains("leaf.csv: line 2, column 4 (sd)"), "{e}");
    // A start that is not a date.
    let e = go("2025-01-5,2025-01-20,-19,0.4\n");
    assert!(e.contains("line 2, column 1 (start)"), "{e}");
    assert!(!out.exists());
}

// ---- `batch --posterior` --------------------------------------------------------------------

#[test]
fn batch_site_posterior_equals_its_ensemble() {
    // `batch --posterior FITS` (docs/ensembles.md) draws a site's members as `ensemble SITE
    // --posterior FITS/<id>` does with the same seed: the site's files are byte for byte the
    // ensemble's (common practice: one computation, two entry points). A site without a fit
    // takes --spec, and without --spec is an error naming the file looked for.
    let tmp = tempfile::tempdir().unwrap();
    let fits = tmp.path().join("fits");
    fs::create_dir(&fits).unwrap();
    let (site, spec) = small_fit(tmp.path(), &fits.join("miombo"));
    let manifest = tmp.path().join("manifest.toml");
    fs::write(
        &manifest,
        "template = \"site.toml\"\n[[site]]\nid = \"miombo\"\n\
         [[site]]\nid = \"grassy\"\nc4_cover = 0.5\n",
    )
    .unwrap();
    let period = ["--from", FROM, "--to", TO, "--quiet"];
    let batch = tmp.path().join("batch");
    let mut a = vec![
        "batch",
        p(&manifest),
        "--out",
        p(&batch),
        "--posterior",
        p(&fits),
        "--spec",
        p(&spec),
        "--members",
        "6",
        "--seed",
        "3",
    ];
    a.extend(period);
    run(&a).unwrap();
    let ens = tmp.path().join("ens");
    let miombo_fit = fits.join("miombo");
    let mut e = vec![
        "ensemble",
        p(&site),
        "--posterior",
        p(&miombo_fit),
        "--members",
        "6",
        "--seed",
        "3",
        "--out",
        p(&ens),
    ];
    e.extend(period);
    run(&e).unwrap();
    for f in [
        "members.csv",
        "quantiles_monthly.csv",
        "quantiles_annual.csv",
        "sensitivity.csv",
    ] {
        assert_eq!(
            fs::read(batch.join("sites/miombo").join(f)).unwrap(),
            fs::read(ens.join(f)).unwrap(),
            "{f}"
        );
    }
    // The site without a fit drew from the spec (leakiness within its uniform prior).
    let (h, rows) = read_csv(&batch.join("sites/grassy/members.csv"));
    let c = h
        .iter()
        .position(|x| x == "vegetation.c4.leakiness")
        .unwrap();
    assert_eq!(rows.len(), 6);
    assert!(
        rows.iter()
            .all(|r| (0.15..=0.45).contains(&r[c].parse::<f64>().unwrap()))
    );
    // Without --spec the site without a fit is refused, naming the file looked for.
    let b2 = tmp.path().join("b2");
    let mut a = vec![
        "batch",
        p(&manifest),
        "--out",
        p(&b2),
        "--posterior",
        p(&fits),
        "--members",
        "6",
        "--seed",
        "3",
    ];
    a.extend(period);
    let err = run(&a).unwrap_err();
    assert!(
        err.contains("site `grassy`") && err.contains("grassy/posterior.csv"),
        "{err}"
    );
    // A --posterior folder that does not exist, and --members without --spec or --posterior.
    a[5] = "/nonexistent/fits";
    let err = run(&a).unwrap_err();
    assert!(
        err.contains("--posterior /nonexistent/fits: not a folder"),
        "{err}"
    );
    let err = run(&[
        "batch",
        p(&manifest),
        "--out",
        p(&tmp.path().join("b3")),
        "--members",
        "6",
        "--seed",
        "3",
    ])
    .unwrap_err();
    assert!(err.contains("--spec or --posterior"), "{err}");
}

// ---- per-site work shared across evaluations -------------------------------------------------

#[test]
fn shared_light_leaves_every_number_unchanged() {
    // `isodisc fit` computes each step's light once, at the site as given, and every evaluation
    // reuses it (docs/fit.md). A draw that changes the canopy (LAI, g1, cover) must give the very
    // numbers of a run that computes its own light (common practice: a cache never changes a
    // result), to the bit.
    use isodisc_runner::simulate::{NoSink, simulate, simulate_lit, step_lights};
    use isodisc_runner::site::Site;
    let site = Site::load(&demo_path("site.toml")).unwrap();
    let mut reader = site.weather(None, None).unwrap();
    let steps: Vec<_> = reader
        .by_ref()
        .take(62 * 24)
        .collect::<Result<_, _>>()
        .unwrap();
    let minutes = reader.report().step_minutes;
    let lights = step_lights(&site, &steps, minutes);
    assert_eq!(lights.len(), steps.len());
    for draw in [
        vec![("vegetation.c3.lai", 3.5), ("vegetation.c3.g1", 5.0)],
        vec![
            ("vegetation.c4.leakiness", 0.2),
            ("vegetation.c4.cover", 0.4),
        ],
    ] {
        let mut s = site.clone();
        s.set_params(&draw).unwrap();
        // The first draw's canopy has other light (its LAI): the shared light must be refused
        // and recomputed; the second's is the site's own.
        let differs = step_lights(&s, &steps, minutes) != lights;
        assert_eq!(differs, draw[0].0 == "vegetation.c3.lai", "{draw:?}");
        let own = simulate(&s, steps.iter().cloned().map(Ok), minutes, &mut NoSink).unwrap();
        let shared = simulate_lit(
            &s,
            steps.iter().cloned().map(Ok),
            minutes,
            &mut NoSink,
            &lights,
        )
        .unwrap();
        for (a, b) in own.periods.iter().zip(&shared.periods) {
            assert_eq!(a.len(), b.len());
            for (ra, rb) in a.iter().zip(b) {
                let bits = |r: &PeriodRow| r.values.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
                assert_eq!((&ra.key, bits(ra)), (&rb.key, bits(rb)), "{draw:?}");
            }
        }
    }
}
