//! Observations (docs/science.md): Keeling plots, Miller–Tans, York regression, scores, lag
//! analysis and correlations, against exact mixtures, scipy fixtures (made by
//! `tests/fixtures/make_keeling_fixtures.py`, versions in each file's header), the Pearson/York
//! worked example and hand arithmetic.

use std::collections::BTreeMap;
use std::path::PathBuf;

use isodisc_model::ModelError;
use isodisc_model::observations::regression::{self, YorkSettings};
use isodisc_model::observations::{
    BestLagRule, Bootstrap, KeelingData, KeelingFlags, KeelingMethod, KeelingSettings, LagSettings,
    correlation_p_value, lag_analysis, pearson, scores, spearman, student_t_quantile,
};

/// Exact arithmetic (mixtures, hand examples): round-off only.
const EXACT: f64 = 1e-9;
/// Against scipy's closed forms: same formulas, different summation order.
const SCIPY_REL: f64 = 1e-9;
/// Against scipy.odr, an iterative solver stopped at its own tolerance.
const ODR_REL: f64 = 1e-6;

const ALL_METHODS: [KeelingMethod; 4] = [
    KeelingMethod::Ols,
    KeelingMethod::GeometricMean,
    KeelingMethod::York,
    KeelingMethod::MillerTans,
];

fn assert_rel(what: &str, got: f64, want: f64, rel: f64) {
    let err = (got - want).abs() / want.abs().max(1e-300);
    assert!(
        err <= rel,
        "{what}: got {got}, want {want} (relative error {err:e} > {rel:e})"
    );
}

fn assert_abs(what: &str, got: f64, want: f64, tol: f64) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, want {want} (tolerance {tol:e})"
    );
}

fn fixture(name: &str) -> csv::Reader<std::fs::File> {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name);
    csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_path(&path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()))
}

/// Rows of a fixture as maps from column name to number.
fn fixture_rows(name: &str) -> Vec<BTreeMap<String, f64>> {
    let mut rdr = fixture(name);
    let headers = rdr.headers().unwrap().clone();
    rdr.records()
        .map(|rec| {
            let rec = rec.unwrap();
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.parse::<f64>().unwrap()))
                .collect()
        })
        .collect()
}

/// Samples of a two-column fixture grouped by its `group` column.
fn fixture_groups(name: &str, a: &str, b: &str) -> BTreeMap<usize, (Vec<f64>, Vec<f64>)> {
    let mut groups: BTreeMap<usize, (Vec<f64>, Vec<f64>)> = BTreeMap::new();
    for row in fixture_rows(name) {
        let g = groups.entry(row["group"] as usize).or_default();
        g.0.push(row[a]);
        g.1.push(row[b]);
    }
    groups
}

/// Exact two-end-member mixture of 400 µmol mol⁻¹ at −8.5‰ with `added` µmol mol⁻¹ of a source
/// at −26‰ (docs/science.md): c = 400 + x, δ = (400·(−8.5) + x·(−26))/c.
fn mixture(added: &[f64]) -> (Vec<f64>, Vec<f64>) {
    added
        .iter()
        .map(|x| (400.0 + x, (400.0 * -8.5 + x * -26.0) / (400.0 + x)))
        .unzip()
}

#[test]
fn keeling_exact_mixture_every_method_returns_the_source() {
    // docs/science.md: 400 at −8.5‰ plus 50 of source at −26‰ → −10.444‰.
    let (_, d) = mixture(&[50.0]);
    assert_abs("mixed δ for 50 added", d[0], -10.444, 5e-4);

    let (co2, d13c) = mixture(&[0.0, 10.0, 25.0, 50.0, 100.0, 200.0]);
    let co2_sd = vec![0.2; co2.len()];
    let d13c_sd = vec![0.03; co2.len()];
    let plain = KeelingData::new(&co2, &d13c)
        .unwrap()
        .with_sd(&co2_sd, &d13c_sd)
        .unwrap();
    let with_bg = plain.with_background(400.0, -8.5).unwrap();
    let settings = KeelingSettings::default();
    for data in [plain, with_bg] {
        for method in ALL_METHODS {
            let fit = data.fit(method, &settings).unwrap();
            assert_abs(method.name(), fit.source_d13c_permil, -26.0, EXACT);
            assert_eq!(fit.n, 6);
            assert_abs("co2 range", fit.co2_range_umol_mol, 200.0, EXACT);
            assert!(
                fit.flags.is_empty(),
                "{}: flags {:?}",
                method.name(),
                fit.flags
            );
            assert!(fit.ci95_low_permil <= -26.0 + EXACT && fit.ci95_high_permil >= -26.0 - EXACT);
        }
    }
}

#[test]
fn keeling_ols_matches_scipy_linregress() {
    // Reference: scipy.stats.linregress on x = 1/c (fixture, versions in its header); the 95 %
    // half-width is scipy.stats.t.ppf(0.975, n − 2) times the intercept SE.
    let groups = fixture_groups("keeling_samples.csv", "co2_umol_mol", "d13c_permil");
    let refs = fixture_rows("keeling_reference.csv");
    assert_eq!(groups.len(), refs.len());
    for r in &refs {
        let (co2, d13c) = &groups[&(r["group"] as usize)];
        let fit = KeelingData::new(co2, d13c)
            .unwrap()
            .fit(KeelingMethod::Ols, &KeelingSettings::default())
            .unwrap();
        assert_eq!(fit.n as f64, r["n"]);
        assert_rel(
            "ols intercept",
            fit.source_d13c_permil,
            r["ols_intercept"],
            SCIPY_REL,
        );
        assert_rel(
            "ols intercept se",
            fit.source_se_permil,
            r["ols_intercept_se"],
            SCIPY_REL,
        );
        assert_rel("ols slope", fit.slope, r["ols_slope"], SCIPY_REL);
        assert_rel("ols slope se", fit.slope_se, r["ols_slope_se"], SCIPY_REL);
        assert_rel("ols r2", fit.r2, r["ols_r2"], SCIPY_REL);
        let half = fit.ci95_high_permil - fit.source_d13c_permil;
        assert_rel(
            "ci95 half-width",
            half,
            r["t975"] * r["ols_intercept_se"],
            SCIPY_REL,
        );
        assert_rel(
            "ci95 symmetric",
            fit.source_d13c_permil - fit.ci95_low_permil,
            half,
            SCIPY_REL,
        );
    }
}

#[test]
fn keeling_gmr_matches_scipy_odr_and_documented_se() {
    // Estimate: scipy.odr with constant sx = sd(x), sy = sd(y), whose slope is sign(r)·sd(y)/sd(x)
    // exactly. Standard errors: the fixture script's numpy evaluation of
    // SE(b) = |b|·sqrt((1−r²)/(n − 2)) (Sokal & Rohlf 1995, from memory) and
    // SE(a) = SE(b)·sqrt(x̄² + Sxx/n) (Pataki et al. 2003, from memory).
    let groups = fixture_groups("keeling_samples.csv", "co2_umol_mol", "d13c_permil");
    for r in fixture_rows("keeling_reference.csv") {
        let (co2, d13c) = &groups[&(r["group"] as usize)];
        let fit = KeelingData::new(co2, d13c)
            .unwrap()
            .fit(KeelingMethod::GeometricMean, &KeelingSettings::default())
            .unwrap();
        assert_rel(
            "gmr intercept (odr)",
            fit.source_d13c_permil,
            r["gmr_intercept_odr"],
            ODR_REL,
        );
        assert_rel("gmr slope (odr)", fit.slope, r["gmr_slope_odr"], ODR_REL);
        assert_rel(
            "gmr intercept",
            fit.source_d13c_permil,
            r["gmr_intercept"],
            SCIPY_REL,
        );
        assert_rel("gmr slope", fit.slope, r["gmr_slope"], SCIPY_REL);
        assert_rel(
            "gmr intercept se",
            fit.source_se_permil,
            r["gmr_intercept_se"],
            SCIPY_REL,
        );
        assert_rel("gmr slope se", fit.slope_se, r["gmr_slope_se"], SCIPY_REL);
    }
}

#[test]
fn york_reproduces_pearson_data_with_york_weights() {
    // Pearson (1901) data with York (1966) weights; York et al. (2004, Am. J. Phys.) give
    // a = 5.4799 ± 0.2950, b = −0.48053 ± 0.05799 (from memory).
    let x = [0.0, 0.9, 1.8, 2.6, 3.3, 4.4, 5.2, 6.1, 6.5, 7.4];
    let y = [5.9, 5.4, 4.4, 4.6, 3.5, 3.7, 2.8, 2.8, 2.4, 1.5];
    let wx = [
        1000.0, 1000.0, 500.0, 800.0, 200.0, 80.0, 60.0, 20.0, 1.8, 1.0,
    ];
    let wy = [1.0, 1.8, 4.0, 8.0, 20.0, 20.0, 70.0, 70.0, 100.0, 500.0];
    let sx: Vec<f64> = wx.iter().map(|w: &f64| 1.0 / w.sqrt()).collect();
    let sy: Vec<f64> = wy.iter().map(|w: &f64| 1.0 / w.sqrt()).collect();
    let fit = regression::york(&x, &y, &sx, &sy, &YorkSettings::default()).unwrap();
    assert!(fit.converged);
    assert_abs("york intercept", fit.line.intercept, 5.4799, 1e-4);
    assert_abs("york slope", fit.line.slope, -0.48053, 1e-5);
    assert_abs("york intercept se", fit.line.intercept_se, 0.2950, 1e-3);
    assert_abs("york slope se", fit.line.slope_se, 0.05799, 1e-4);
}

#[test]
fn york_with_negligible_x_errors_is_ols() {
    // Analytic limit: with σx → 0 and equal σy the York weights are all equal and its estimating
    // equation is OLS's, so the line must equal scipy's linregress line (fixture).
    let groups = fixture_groups("keeling_samples.csv", "co2_umol_mol", "d13c_permil");
    for r in fixture_rows("keeling_reference.csv") {
        let (co2, d13c) = &groups[&(r["group"] as usize)];
        let co2_sd = vec![1e-9; co2.len()];
        let d13c_sd = vec![0.1; co2.len()];
        let fit = KeelingData::new(co2, d13c)
            .unwrap()
            .with_sd(&co2_sd, &d13c_sd)
            .unwrap()
            .fit(KeelingMethod::York, &KeelingSettings::default())
            .unwrap();
        assert_rel(
            "york→ols intercept",
            fit.source_d13c_permil,
            r["ols_intercept"],
            1e-7,
        );
        assert_rel("york→ols slope", fit.slope, r["ols_slope"], 1e-7);
    }
}

#[test]
fn miller_tans_recovers_source_under_drifting_background() {
    // Miller & Tans (2003): δc − δbg·cbg = δs(c − cbg) holds sample by sample, so a drifting
    // background does not bias the slope. Each sample: its own background plus x of source at −26‰.
    let n = 12;
    let bg_co2: Vec<f64> = (0..n).map(|i| 395.0 + 2.5 * i as f64).collect();
    let bg_d13c: Vec<f64> = (0..n).map(|i| -8.2 - 0.06 * i as f64).collect();
    let added: Vec<f64> = (0..n).map(|i| 15.0 + 17.0 * ((i * 7) % n) as f64).collect();
    let co2: Vec<f64> = (0..n).map(|i| bg_co2[i] + added[i]).collect();
    let d13c: Vec<f64> = (0..n)
        .map(|i| (bg_co2[i] * bg_d13c[i] + added[i] * -26.0) / co2[i])
        .collect();
    let data = KeelingData::new(&co2, &d13c)
        .unwrap()
        .with_background_series(&bg_co2, &bg_d13c)
        .unwrap();
    let settings = KeelingSettings::default();
    let mt = data.fit(KeelingMethod::MillerTans, &settings).unwrap();
    assert_abs("miller-tans source", mt.source_d13c_permil, -26.0, EXACT);
    assert_abs("miller-tans intercept", mt.intercept, 0.0, 1e-6);
    // The same samples through a Keeling plot are biased by the drift: this is why the
    // background matters, and it shows the check above can fail.
    let ols = data.fit(KeelingMethod::Ols, &settings).unwrap();
    assert!(
        (ols.source_d13c_permil + 26.0).abs() > 0.1,
        "{}",
        ols.source_d13c_permil
    );
}

#[test]
fn fewer_than_three_samples_give_a_flagged_nan_result() {
    // Common practice: a line through two points has no error estimate.
    let co2 = [400.0, 450.0];
    let d13c = [-8.5, -10.44];
    let sd = [0.1, 0.1];
    for m in 0..=2 {
        let data = KeelingData::new(&co2[..m], &d13c[..m])
            .unwrap()
            .with_sd(&sd[..m], &sd[..m])
            .unwrap();
        for method in ALL_METHODS {
            let fit = data.fit(method, &KeelingSettings::default()).unwrap();
            assert_eq!(fit.n, m);
            assert!(fit.flags.contains(KeelingFlags::TOO_FEW_POINTS));
            assert!(fit.source_d13c_permil.is_nan() && fit.source_se_permil.is_nan());
            assert!(fit.ci95_low_permil.is_nan() && fit.r2.is_nan());
        }
    }
}

#[test]
fn non_positive_or_missing_co2_is_an_error_naming_index_and_value() {
    for bad in [0.0, -3.0, f64::NAN] {
        let co2 = [400.0, 420.0, bad, 450.0];
        let d13c = [-8.5, -9.0, -9.5, -10.0];
        match KeelingData::new(&co2, &d13c) {
            Err(ModelError::InvalidInput { name, value, .. }) => {
                assert_eq!(name, "co2_umol_mol[2]");
                assert!(value.is_nan() && bad.is_nan() || value == bad);
            }
            other => panic!("expected an input error for CO2 {bad}, got {other:?}"),
        }
    }
    // Unequal lengths and York without SDs are configuration errors, not panics.
    assert!(KeelingData::new(&[400.0, 410.0], &[-8.5]).is_err());
    let (co2, d13c) = mixture(&[0.0, 50.0, 100.0]);
    let data = KeelingData::new(&co2, &d13c).unwrap();
    assert!(
        data.fit(KeelingMethod::York, &KeelingSettings::default())
            .is_err()
    );
}

#[test]
fn small_co2_range_is_flagged_at_the_set_threshold() {
    // Threshold 40 µmol mol⁻¹ by default (common practice, docs/science.md).
    let (co2, d13c) = mixture(&[0.0, 10.0, 20.0, 30.0]);
    let data = KeelingData::new(&co2, &d13c).unwrap();
    let default = data
        .fit(KeelingMethod::Ols, &KeelingSettings::default())
        .unwrap();
    assert!(default.flags.contains(KeelingFlags::SMALL_CO2_RANGE));
    let loose = KeelingSettings::default().with_min_co2_range(25.0).unwrap();
    let fit = data.fit(KeelingMethod::Ols, &loose).unwrap();
    assert!(!fit.flags.contains(KeelingFlags::SMALL_CO2_RANGE));
    assert!(
        KeelingSettings::default()
            .with_min_co2_range(f64::NAN)
            .is_err()
    );
}

#[test]
fn a_dominating_sample_is_flagged() {
    // Definition (documented in KeelingFlags): dropping one sample moves the source by > 2·SE.
    // Twelve samples of a −26‰ mixture with ±0.05‰ alternating noise, then one low-CO2 sample
    // pushed 1.5‰ off the line at the far end of 1/c.
    let added: Vec<f64> = (0..12).map(|i| 60.0 + 20.0 * i as f64).collect();
    let (mut co2, mut d13c) = mixture(&added);
    for (i, d) in d13c.iter_mut().enumerate() {
        *d += if i % 2 == 0 { 0.05 } else { -0.05 };
    }
    let settings = KeelingSettings::default();
    let sd = vec![0.1; 13];
    for method in ALL_METHODS {
        let clean = KeelingData::new(&co2, &d13c)
            .unwrap()
            .with_sd(&sd[..12], &sd[..12])
            .unwrap();
        let fit = clean.fit(method, &settings).unwrap();
        assert!(
            !fit.flags.contains(KeelingFlags::INFLUENTIAL_POINT),
            "{}",
            method.name()
        );
    }
    co2.push(402.0);
    d13c.push((400.0 * -8.5 + 2.0 * -26.0) / 402.0 + 1.5);
    for method in ALL_METHODS {
        let bad = KeelingData::new(&co2, &d13c)
            .unwrap()
            .with_sd(&sd, &sd)
            .unwrap();
        let fit = bad.fit(method, &settings).unwrap();
        assert!(
            fit.flags.contains(KeelingFlags::INFLUENTIAL_POINT),
            "{}",
            method.name()
        );
        assert!(fit.flags.names().any(|n| n == "influential_point"));
    }
}

#[test]
fn bootstrap_se_is_seeded_and_near_the_analytic_se() {
    // Common practice: for independent homoscedastic errors the pairs bootstrap SE of a regression
    // coefficient approaches the analytic SE; a factor of 1.5 either way allows for 40 samples.
    let groups = fixture_groups("keeling_samples.csv", "co2_umol_mol", "d13c_permil");
    let (co2, d13c) = &groups[&4];
    let data = KeelingData::new(co2, d13c).unwrap();
    let settings = KeelingSettings::default().with_bootstrap(Bootstrap::new(2000, 7).unwrap());
    for method in [KeelingMethod::Ols, KeelingMethod::GeometricMean] {
        let a = data.fit(method, &settings).unwrap();
        let b = data.fit(method, &settings).unwrap();
        assert_eq!(
            a.bootstrap_se_permil, b.bootstrap_se_permil,
            "same seed, same answer"
        );
        let ratio = a.bootstrap_se_permil / a.source_se_permil;
        assert!(
            (1.0 / 1.5..1.5).contains(&ratio),
            "{}: ratio {ratio}",
            method.name()
        );
    }
    let other = KeelingSettings::default().with_bootstrap(Bootstrap::new(2000, 8).unwrap());
    let (a, b) = (
        data.fit(KeelingMethod::Ols, &settings).unwrap(),
        data.fit(KeelingMethod::Ols, &other).unwrap(),
    );
    assert_ne!(a.bootstrap_se_permil, b.bootstrap_se_permil);
    assert!(Bootstrap::new(3, 1).is_err());
}

#[test]
fn scores_hand_example() {
    // Pairs (pred, obs): (2,1) (4,5) (6,5) (NaN,7 skipped) (9,11) → errors +1, −1, +1, −2.
    // bias = −1/4; MAE = 5/4; RMSE = sqrt(7/4); ō = 22/4 = 5.5,
    // Σ(o−ō)² = 20.25 + 0.25 + 0.25 + 30.25 = 51 → NSE = 1 − 7/51 = 44/51.
    // p̄ = 21/4 = 5.25; Σdp·do = 14.625 + 0.625 − 0.375 + 20.625 = 35.5;
    // Σdp² = 10.5625 + 1.5625 + 0.5625 + 14.0625 = 26.75 → r = 35.5/sqrt(26.75·51).
    let s = scores(&[2.0, 4.0, 6.0, f64::NAN, 9.0], &[1.0, 5.0, 5.0, 7.0, 11.0]).unwrap();
    assert_eq!(s.n, 4);
    assert_abs("bias", s.bias, -0.25, EXACT);
    assert_abs("mae", s.mae, 1.25, EXACT);
    assert_abs("rmse", s.rmse, (7.0f64 / 4.0).sqrt(), EXACT);
    assert_abs("nse", s.nse, 44.0 / 51.0, EXACT);
    let r = 35.5 / (26.75f64 * 51.0).sqrt();
    assert_abs("r", s.r, r, EXACT);
    assert_abs("r2", s.r2, r * r, EXACT);
    assert!(scores(&[1.0], &[1.0, 2.0]).is_err());
}

#[test]
fn pearson_and_spearman_match_scipy() {
    // Reference: scipy.stats.pearsonr and spearmanr (fixture, versions in its header).
    let groups = fixture_groups("scores_correlation_samples.csv", "x", "y");
    for r in fixture_rows("scores_correlation_reference.csv") {
        let (x, y) = &groups[&(r["group"] as usize)];
        let p = pearson(x, y).unwrap();
        let s = spearman(x, y).unwrap();
        assert_eq!(p.n as f64, r["n"]);
        assert_rel("pearson r", p.r, r["pearson_r"], SCIPY_REL);
        assert_rel("pearson p", p.p_value, r["pearson_p"], 1e-7);
        assert_rel("spearman r", s.r, r["spearman_r"], SCIPY_REL);
        assert_rel("spearman p", s.p_value, r["spearman_p"], 1e-7);
    }
}

#[test]
fn t_quantile_and_p_value_match_t_tables() {
    // Student's t tables: t(0.975, 8 df) = 2.306, t(0.975, 1 df) = 12.706.
    assert_abs("t 8 df", student_t_quantile(0.975, 8.0), 2.306, 5e-4);
    assert_abs("t 1 df", student_t_quantile(0.975, 1.0), 12.706, 5e-4);
    // r whose t statistic is the 8-df critical value has p = 0.05: r = t/sqrt(df + t²).
    let t = student_t_quantile(0.975, 8.0);
    let r = t / (8.0 + t * t).sqrt();
    assert_abs("p at critical r", correlation_p_value(r, 10), 0.05, 1e-9);
    assert!(correlation_p_value(0.5, 2).is_nan());
}

/// Deterministic, roughly white series in [−1, 1): a 64-bit linear congruential generator
/// (Knuth's MMIX constants), so neighbouring days are nearly uncorrelated.
fn white_series(n: usize, seed: u64) -> Vec<f64> {
    let mut s = seed;
    (0..n)
        .map(|_| {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
        })
        .collect()
}

#[test]
fn lag_analysis_finds_a_planted_lag() {
    // obs(d) = −driver(d − 4) + 0.1·noise: the best |r| must be at k = 4 and negative.
    let days = 200;
    let driver = white_series(days, 1);
    let noise = white_series(days, 2);
    let obs: Vec<f64> = (0..days)
        .map(|d| {
            if d < 4 {
                f64::NAN
            } else {
                -driver[d - 4] + 0.1 * noise[d]
            }
        })
        .collect();
    let settings = LagSettings::new(10, 1).unwrap();
    let lag = lag_analysis(&obs, &driver, &settings);
    assert_eq!(lag.lags.len(), 11);
    assert_eq!(lag.best_lag_days, Some(4));
    let best = lag.lags[4];
    assert!(best.r < -0.98 && best.p_value < 1e-10, "{best:?}");
    assert_eq!(best.n, days - 4);
    // The other lags are noise: |r| well below the planted one.
    assert!(
        lag.lags
            .iter()
            .filter(|l| l.lag_days != 4)
            .all(|l| l.r.abs() < 0.3)
    );
    // Sign-aware rules: the most negative r is the planted lag, the most positive is not.
    let neg = lag_analysis(
        &obs,
        &driver,
        &settings.with_rule(BestLagRule::MostNegative),
    );
    assert_eq!(neg.best_lag_days, Some(4));
    let pos = lag_analysis(
        &obs,
        &driver,
        &settings.with_rule(BestLagRule::MostPositive),
    );
    assert_ne!(pos.best_lag_days, Some(4));
}

#[test]
fn lag_analysis_window_mean_and_missing_days() {
    // obs(d) = mean of driver over days d−4 … d−2 (a 3-day window ending 2 days before): with
    // window 3, lag 2 correlates exactly (r = 1).
    let days = 120;
    let mut driver = white_series(days, 3);
    let obs: Vec<f64> = (0..days)
        .map(|d| {
            if d < 4 {
                f64::NAN
            } else {
                (driver[d - 4] + driver[d - 3] + driver[d - 2]) / 3.0
            }
        })
        .collect();
    let settings = LagSettings::new(6, 3).unwrap();
    let lag = lag_analysis(&obs, &driver, &settings);
    assert_eq!(lag.best_lag_days, Some(2));
    assert_abs("r at lag 2", lag.lags[2].r, 1.0, EXACT);
    // Lag 2 pairs day d with the window ending d − 2, complete from d = 4: n = 116.
    assert_eq!(lag.lags[2].n, days - 4);
    // One missing driver day removes the three windows that contain it.
    driver[50] = f64::NAN;
    let lag = lag_analysis(&obs, &driver, &settings);
    assert_eq!(lag.lags[2].n, days - 4 - 3);
    assert!(LagSettings::new(5, 0).is_err());
}

#[test]
fn gmr_intercept_se_matches_a_monte_carlo_spread() {
    // The GMR intercept's analytic standard error (Sokal & Rohlf 1995 slope SE with n − 2,
    // intercept SE as in Pataki et al. 2003; from memory) against the spread of the intercept
    // over 10,000 seeded replicates of Keeling groups (background 400 µmol mol⁻¹ at −8.5‰, source
    // −26‰, noise on δ and on CO2): the root mean square of the reported SE and the standard
    // deviation of the intercepts agree within 5% (the issue's criterion; the Monte Carlo's own
    // sampling error is about 1/√(2·10⁴) = 0.7%). Ricker's /n form was 10% low at n = 12.
    use crate::validation::SplitMix;
    // (n, δ noise sd ‰, CO2 noise sd µmol mol⁻¹, added CO2 range µmol mol⁻¹)
    let designs = [
        (5usize, 0.05, 0.2, (10.0, 120.0)),
        (12, 0.08, 0.3, (20.0, 60.0)),
        (40, 0.15, 1.0, (0.0, 300.0)),
    ];
    let reps = 10_000;
    for (k, &(n, sd_d, sd_c, (lo, hi))) in designs.iter().enumerate() {
        let mut rng = SplitMix(20_261_202 + k as u64);
        let added: Vec<f64> = (0..n)
            .map(|i| lo + (hi - lo) * (i as f64 + 0.5) / n as f64)
            .collect();
        let (mut sum, mut sum2, mut se2) = (0.0, 0.0, 0.0);
        for _ in 0..reps {
            let x: Vec<f64> = added
                .iter()
                .map(|a| 1.0 / (400.0 + a + sd_c * rng.normal()))
                .collect();
            let y: Vec<f64> = added
                .iter()
                .map(|a| (400.0 * -8.5 + a * -26.0) / (400.0 + a) + sd_d * rng.normal())
                .collect();
            let f = regression::geometric_mean(&x, &y).unwrap();
            sum += f.intercept;
            sum2 += f.intercept * f.intercept;
            se2 += f.intercept_se * f.intercept_se;
        }
        let r = reps as f64;
        let spread = (sum2 / r - (sum / r).powi(2)).sqrt();
        let rms_se = (se2 / r).sqrt();
        assert!(
            (rms_se / spread - 1.0).abs() < 0.05,
            "n = {n}: rms SE {rms_se:.4}‰ vs Monte Carlo spread {spread:.4}‰"
        );
    }
}
