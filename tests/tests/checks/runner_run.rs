//! `isodisc run` end to end: flux weighting, agreement with the leaf model, the demo's published
//! ranges, bad input and atomic output.

use std::fs;
use std::path::{Path, PathBuf};

use isodisc_model::leaf::{C3Params, LeafConditions, LeafOptions, solve_c3};

use crate::common::{run, run_quiet};

/// A table read back: header and rows of numbers (NaN for empty cells), keyed by column name.
struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    fn read(path: &Path) -> Self {
        let mut r = csv::Reader::from_path(path).unwrap();
        let header = r.headers().unwrap().iter().map(String::from).collect();
        let rows = r
            .records()
            .map(|x| x.unwrap().iter().map(String::from).collect())
            .collect();
        Self { header, rows }
    }
    fn num(&self, row: usize, col: &str) -> f64 {
        let i = self
            .header
            .iter()
            .position(|h| h == col)
            .unwrap_or_else(|| panic!("no column {col}"));
        self.rows[row][i].parse().unwrap_or(f64::NAN)
    }
}

const SITE_TEMPLATE: &str = r#"
[site]
name = "test"
latitude = 0.0
longitude = 0.0
elevation_m = 0
utc_offset_h = 0

[vegetation.c3]
cover = COVER3
lai = LAI3
params = { g0 = 0.0, g1 = 4.0 }

VEG4

[soil]
field_capacity = 0.3
wilting_point = 0.1
root_depth_m = 1.0
initial_water = 1.0

[atmosphere]
co2 = 400.0
d13c_co2 = -8.5

[forcing]
path = "weather.csv"
step_minutes = 60

[forcing.columns]
t_air = "t"
vpd = "vpd"
ppfd = "ppfd"
precip = "p"
"#;

fn write_site(
    dir: &Path,
    cover3: f64,
    lai3: f64,
    c4: Option<(f64, f64)>,
    weather: &str,
) -> PathBuf {
    let veg4 = c4.map_or(String::new(), |(c, l)| {
        format!("[vegetation.c4]\ncover = {c}\nlai = {l}\nparams = {{ g0 = 0.0 }}\n")
    });
    let text = SITE_TEMPLATE
        .replace("COVER3", &cover3.to_string())
        .replace("LAI3", &lai3.to_string())
        .replace("VEG4", &veg4);
    let site = dir.join("site.toml");
    fs::write(&site, text).unwrap();
    fs::write(dir.join("weather.csv"), weather).unwrap();
    site
}

#[test]
fn canopy_discrimination_equals_the_leaf_at_the_same_conditions() {
    // With g0 = 0 and no boundary layer, Medlyn fixes ci/ca = g1/(g1 + √D) whatever the light, so
    // every leaf of a canopy has the leaf model's Δ at the same T, D and ca (Medlyn et al. 2011;
    // Farquhar et al. 1982). A very small LAI keeps the canopy a single leaf layer.
    let dir = tempfile::tempdir().unwrap();
    let weather =
        "time,t,vpd,ppfd,p\n2025-03-21T11:00,25,1.5,1500,0\n2025-03-21T12:00,25,1.5,1500,0\n";
    let site = write_site(dir.path(), 1.0, 0.01, None, weather);
    // An infinite mesophyll conductance keeps cc = ci, so Δ does not depend on each leaf's light.
    let text = fs::read_to_string(&site).unwrap();
    fs::write(&site, text.replace("g1 = 4.0 }", "g1 = 4.0, gm = inf }")).unwrap();
    let out = dir.path().join("out");
    run_quiet(&site, &out).unwrap();
    let steps = Table::read(&out.join("steps.csv"));
    let leaf = solve_c3(
        &C3Params::with_overrides([("g0", 0.0), ("g1", 4.0), ("gm", f64::INFINITY)]).unwrap(),
        &LeafOptions::default(),
        &LeafConditions {
            t_leaf_c: 25.0,
            vpd_kpa: 1.5,
            ca_umol_mol: 400.0,
            // FAO-56 pressure at 0 m, as the site uses with no pressure column.
            pressure_kpa: 101.3,
            d13c_air_permil: -8.5,
            ..LeafConditions::default()
        },
    )
    .unwrap();
    for r in 0..2 {
        let d = steps.num(r, "discrimination_c3");
        assert!(
            (d - leaf.discrimination).abs() < 1e-5,
            "{d} vs {}",
            leaf.discrimination
        );
        assert!((steps.num(r, "ci_ca_c3") - leaf.ci_ca).abs() < 1e-5);
        assert!(
            steps.rows[r][steps
                .header
                .iter()
                .position(|h| h == "discrimination_c4")
                .unwrap()]
            .is_empty(),
            "absent pathway gives empty cells, not zeros"
        );
    }
}

#[test]
fn aggregates_are_gpp_weighted_not_unweighted_or_cover_weighted() {
    // Flux weighting (docs/science.md; Lloyd & Farquhar 1994 weight Δ by assimilation): over time
    // Δ̄ = Σ GPP·Δ / Σ GPP, and over pathways by each pathway's GPP, never by cover.
    let dir = tempfile::tempdir().unwrap();
    // Two daytime steps of very different light and VPD, so GPP and Δ differ between them.
    let weather =
        "time,t,vpd,ppfd,p\n2025-03-21T10:00,22,0.6,1800,0\n2025-03-21T11:00,32,4.5,150,0\n";
    let site = write_site(dir.path(), 0.3, 2.0, Some((0.6, 2.0)), weather);
    let out = dir.path().join("out");
    run_quiet(&site, &out).unwrap();
    let steps = Table::read(&out.join("steps.csv"));
    let daily = Table::read(&out.join("daily.csv"));
    let (mut w, mut wd, mut sum_d) = (0.0, 0.0, 0.0);
    for r in 0..2 {
        let (g3, g4, g) = (
            steps.num(r, "gpp_c3"),
            steps.num(r, "gpp_c4"),
            steps.num(r, "gpp"),
        );
        let (d3, d4, d) = (
            steps.num(r, "discrimination_c3"),
            steps.num(r, "discrimination_c4"),
            steps.num(r, "discrimination"),
        );
        assert!((g3 + g4 - g).abs() < 1e-5);
        assert!(
            (d - (g3 * d3 + g4 * d4) / g).abs() < 1e-5,
            "step {r}: GPP-weighted over pathways"
        );
        let cover_weighted = (0.3 * d3 + 0.6 * d4) / 0.9;
        assert!(
            (d - cover_weighted).abs() > 0.1,
            "cover weighting must differ here"
        );
        w += g;
        wd += g * d;
        sum_d += d;
    }
    let day = daily.num(0, "discrimination");
    assert!(
        (day - wd / w).abs() < 1e-4,
        "daily {day} vs weighted {}",
        wd / w
    );
    assert!(
        (day - sum_d / 2.0).abs() > 0.05,
        "the unweighted mean differs and is not written"
    );
    // The daily GPP sum in gC m⁻²: µmol m⁻² s⁻¹ × 3600 s × 12.011e-6 gC µmol⁻¹ (common practice).
    assert!((daily.num(0, "gpp") - w * 3600.0 * 12.011e-6).abs() < 1e-4);
}

#[test]
fn demo_site_lies_in_the_published_ranges() {
    // C3 ecosystems ≈ 17–22‰ and C4 ≈ 2–6‰ flux-weighted over a year (common practice; Lloyd &
    // Farquhar 1994 give 17.8‰ and 3.6‰ as global means). The ecosystem value is the GPP-weighted
    // mixture, so it lies between them, and it moves toward C3 only when the C4 share falls.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let site = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/site.toml");
    run_quiet(&site, &out).unwrap();
    let annual = Table::read(&out.join("annual.csv"));
    let (d3, d4, d) = (
        annual.num(0, "discrimination_c3"),
        annual.num(0, "discrimination_c4"),
        annual.num(0, "discrimination"),
    );
    assert!((17.0..=22.0).contains(&d3), "C3 {d3}");
    assert!((2.0..=6.0).contains(&d4), "C4 {d4}");
    assert!(d4 < d && d < d3);
    let monthly = Table::read(&out.join("monthly.csv"));
    for m in 0..monthly.rows.len() {
        let share = monthly.num(m, "c4_share");
        let (m3, m4, me) = (
            monthly.num(m, "discrimination_c3"),
            monthly.num(m, "discrimination_c4"),
            monthly.num(m, "discrimination"),
        );
        assert!(
            (me - (share * m4 + (1.0 - share) * m3)).abs() < 1e-4,
            "month {m}"
        );
    }
    let run_json: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    assert!(
        run_json["gaps"]["missing_steps"].as_u64().unwrap() > 0,
        "the demo's long gap is reported"
    );
    assert_eq!(
        run_json["units"]["steps.csv"]["gpp"]["unit"],
        "umol m-2 s-1"
    );
}

#[test]
fn a_failed_run_leaves_the_folder_as_it_was() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    fs::create_dir(&out).unwrap();
    fs::write(out.join("keep.txt"), "earlier results").unwrap();
    // Earlier results of isodisc: its marker lets --overwrite replace the folder.
    fs::write(out.join(isodisc_runner::output::MARKER), "{}").unwrap();
    // Line 4 repeats a timestamp: an error naming line and column.
    let weather = "time,t,vpd,ppfd,p\n2025-03-21T10:00,22,0.6,1800,0\n2025-03-21T11:00,22,0.6,1800,0\n2025-03-21T11:00,22,0.6,1800,0\n";
    let site = write_site(dir.path(), 1.0, 2.0, None, weather);
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--overwrite",
    ])
    .unwrap_err();
    assert!(err.contains("line 4"), "{err}");
    assert_eq!(
        fs::read_to_string(out.join("keep.txt")).unwrap(),
        "earlier results"
    );
    assert_eq!(fs::read_dir(&out).unwrap().count(), 2);
    // Without --overwrite a non-empty folder is refused before any work.
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(err.contains("--overwrite"), "{err}");
    let leftovers: Vec<_> = fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(
        leftovers.is_empty(),
        "temporary folders left: {leftovers:?}"
    );
}

#[test]
fn unknown_site_keys_name_key_line_and_closest_known_key() {
    let dir = tempfile::tempdir().unwrap();
    let site = write_site(dir.path(), 1.0, 2.0, None, "time,t,vpd,ppfd,p\n");
    let text = fs::read_to_string(&site)
        .unwrap()
        .replace("root_depth_m", "root_dept_m");
    fs::write(&site, text.clone()).unwrap();
    let line = text
        .lines()
        .position(|l| l.starts_with("root_dept_m"))
        .unwrap()
        + 1;
    let out = dir.path().join("out");
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(
        err.contains("site.toml") && err.contains(&format!("line {line}")),
        "{err}"
    );
    assert!(
        err.contains("root_dept_m") && err.contains("did you mean `root_depth_m`"),
        "{err}"
    );
    // A bad parameter value names the key and its line.
    let text = text
        .replace("root_dept_m", "root_depth_m")
        .replace("g1 = 4.0", "g1 = 40.0");
    fs::write(&site, text).unwrap();
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(err.contains("g1") && err.contains("line 12"), "{err}");
    assert!(!out.exists());
}

/// Runs the demo site, optionally with its text edited, into a fresh folder; returns the folder.
fn run_demo(edit: impl Fn(String) -> String) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo");
    for f in ["weather.csv", "atmosphere_history.csv"] {
        fs::copy(demo.join(f), dir.path().join(f)).unwrap();
    }
    let text = edit(fs::read_to_string(demo.join("site.toml")).unwrap());
    let site = dir.path().join("site.toml");
    fs::write(&site, text).unwrap();
    let out = dir.path().join("out");
    run_quiet(&site, &out).unwrap();
    (dir, out)
}

#[test]
fn demo_respiration_lags_the_assimilate_by_days_and_old_carbon_is_less_depleted() {
    // Reported lags between weather and δR are a few days to about ten (Ekblad & Högberg 2001;
    // Bowling et al. 2002 — from memory).
    let (_keep, out) = run_demo(|t| t);
    let log: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    let lag = log["pools"]["effective_lag_days"]
        .as_u64()
        .expect("a lag is found");
    assert!((1..=10).contains(&lag), "effective lag {lag} days");
    assert!(log["pools"]["mean_age_respired_days"].as_f64().unwrap() > 1.0);
    // Under a falling atmospheric δ13C (the Suess effect) old carbon was fixed from a less
    // depleted atmosphere, so heterotrophic respiration is less depleted than new assimilate
    // (docs/science.md: a pool fed by δ falling at r ‰/yr settles at δR − δP = r·τ; r < 0 → D > 0).
    let annual = Table::read(&out.join("annual.csv"));
    let soil_diseq = annual.num(0, "d13c_rh") - annual.num(0, "d13c_assimilate");
    assert!(soil_diseq > 0.0, "soil disequilibrium {soil_diseq}");
    // Without the history the slow pools start at today's atmosphere: less disequilibrium.
    let (_keep2, flat) = run_demo(|t| t.replace("history = \"atmosphere_history.csv\"", ""));
    let flat_annual = Table::read(&flat.join("annual.csv"));
    let flat_diseq = flat_annual.num(0, "d13c_rh") - flat_annual.num(0, "d13c_assimilate");
    assert!(
        soil_diseq > flat_diseq + 0.05,
        "{soil_diseq} vs {flat_diseq}"
    );
    // Reco = Ra + Rh, and NEE = Reco − GPP, in every month (definitions).
    let monthly = Table::read(&out.join("monthly.csv"));
    for m in 0..monthly.rows.len() {
        let (reco, ra, rh) = (
            monthly.num(m, "reco"),
            monthly.num(m, "ra"),
            monthly.num(m, "rh"),
        );
        assert!((reco - ra - rh).abs() < 1e-4 * reco.max(1.0), "month {m}");
        assert!((monthly.num(m, "nee") - (reco - monthly.num(m, "gpp"))).abs() < 1e-3);
    }
    // pools_daily.csv has one row per day with C and δ per pool.
    let pools = Table::read(&out.join("pools_daily.csv"));
    assert_eq!(pools.rows.len(), 365);
    assert!(pools.header.iter().any(|h| h == "d13c_soil"));
}

#[test]
fn every_bad_weather_input_names_line_and_column_and_leaves_the_folder_as_it_was() {
    // One case per bad input the weather reader refuses (common practice for data files): the
    // message names the line and column, and an earlier result folder survives untouched.
    let good = "2025-03-21T10:00,22,0.6,1800,0\n2025-03-21T11:00,23,0.7,1700,0\n";
    let cases: &[(&str, &str, &str)] = &[
        (
            "unparsable number",
            "2025-03-21T12:00,2x3,0.7,1700,0\n",
            "(no. 2)",
        ),
        (
            "unparsable time",
            "2025-03-21T1200,23,0.7,1700,0\n",
            "(no. 1)",
        ),
        (
            "time going backwards",
            "2025-03-21T09:00,23,0.7,1700,0\n",
            "(no. 1)",
        ),
        (
            "repeated time",
            "2025-03-21T11:00,23,0.7,1700,0\n",
            "(no. 1)",
        ),
        (
            "irregular step",
            "2025-03-21T12:30,23,0.7,1700,0\n",
            "(no. 1)",
        ),
        (
            "kelvin-looking temperature",
            "2025-03-21T12:00,296.2,0.7,1700,0\n",
            "(no. 2)",
        ),
        (
            "strongly negative radiation",
            "2025-03-21T12:00,23,0.7,-400,0\n",
            "(no. 4)",
        ),
    ];
    for (what, bad_row, column) in cases {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        fs::create_dir(&out).unwrap();
        fs::write(out.join("keep.txt"), "earlier results").unwrap();
        fs::write(out.join(isodisc_runner::output::MARKER), "{}").unwrap();
        let weather = format!("time,t,vpd,ppfd,p\n{good}{bad_row}");
        let site = write_site(dir.path(), 1.0, 2.0, None, &weather);
        let err = run(&[
            "run",
            site.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--overwrite",
        ])
        .expect_err(what);
        assert!(
            err.contains("line 4") && err.contains(column),
            "{what}: {err}"
        );
        assert_eq!(
            fs::read_dir(&out).unwrap().count(),
            2,
            "{what}: folder changed"
        );
        assert_eq!(
            fs::read_to_string(out.join("keep.txt")).unwrap(),
            "earlier results"
        );
    }
    // RH above 105 % needs an RH column.
    let dir = tempfile::tempdir().unwrap();
    let site = write_site(
        dir.path(),
        1.0,
        2.0,
        None,
        "time,t,rh,ppfd,p\n2025-03-21T10:00,22,60,1800,0\n2025-03-21T11:00,22,120,1800,0\n",
    );
    let text = fs::read_to_string(&site)
        .unwrap()
        .replace("vpd = \"vpd\"", "rh = \"rh\"");
    fs::write(&site, text).unwrap();
    let out = dir.path().join("out");
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(
        err.contains("line 3") && err.contains("(no. 3)") && err.contains("120"),
        "{err}"
    );
    assert!(!out.exists());
}

#[test]
fn a_period_inside_or_outside_the_weather_is_run_or_named() {
    // Common practice: a run of part of a year starts its pools there (the demo's history ends in
    // the run's year, and its last value holds after it); a period with no weather is an error
    // that says so, not a failure of some later stage.
    let dir = tempfile::tempdir().unwrap();
    let site = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/site.toml");
    let out = dir.path().join("june");
    run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--from",
        "2025-06-01",
        "--to",
        "2025-06-30",
        "--quiet",
    ])
    .unwrap();
    let daily = Table::read(&out.join("daily.csv"));
    assert_eq!(daily.rows.len(), 30);
    assert!(daily.num(29, "d13c_respiration").is_finite());
    let err = run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        dir.path().join("none").to_str().unwrap(),
        "--from",
        "2026-06-01",
        "--to",
        "2026-06-30",
    ])
    .unwrap_err();
    assert!(err.contains("no step between 2026-06-01"), "{err}");
}

#[test]
fn site_runs_acclimate_to_the_preceding_30_days() {
    // Kattge & Knorr 2007: a leaf grown warm keeps more of its capacity at 38 °C than one grown
    // cool. Thirty days at 12 °C or at 30 °C, then one hot day at 38 °C: the warm-grown canopy fixes
    // more at the hot noon (growth temperature = mean air temperature of the preceding 30 days).
    let noon_gpp = |t_before: f64| {
        let dir = tempfile::tempdir().unwrap();
        let mut weather = String::from("time,t,vpd,ppfd,p\n");
        for day in 0..31 {
            let t = if day < 30 { t_before } else { 38.0 };
            for h in 0..24 {
                let ppfd = if (7..17).contains(&h) { 1200 } else { 0 };
                let date = chrono_like_date(day);
                weather.push_str(&format!("{date}T{h:02}:00,{t},1.0,{ppfd},0\n"));
            }
        }
        let site = write_site(dir.path(), 1.0, 2.0, None, &weather);
        let out = dir.path().join("out");
        run_quiet(&site, &out).unwrap();
        let steps = Table::read(&out.join("steps.csv"));
        steps.num(30 * 24 + 12, "gpp_c3")
    };
    let (cool, warm) = (noon_gpp(12.0), noon_gpp(30.0));
    assert!(warm > cool * 1.05, "warm-grown {warm} vs cool-grown {cool}");
}

/// 2025-01-01 plus `day` days, as YYYY-MM-DD (January and February only).
fn chrono_like_date(day: u32) -> String {
    if day < 31 {
        format!("2025-01-{:02}", day + 1)
    } else {
        format!("2025-02-{:02}", day - 30)
    }
}

#[test]
fn after_spin_up_day_respiration_uses_the_leaf_labile_pool_as_substrate() {
    // Apparent e′ = e + δ(assimilate) − δ(substrate) (Wingate et al. 2007; Tcherkez et al. 2011;
    // from memory). Two identical years of weather: in the first the substrate is the current
    // assimilate (the pools start after it), in the second the leaf labile pool, whose δ lags the
    // diurnal course of the assimilate, so noon Δ differs slightly. Without day respiration
    // (rd25 = 0) the term vanishes (hand reasoning from the equation).
    let noon_delta = |params: &str| {
        let dir = tempfile::tempdir().unwrap();
        let mut weather = String::from("time,t,vpd,ppfd,p\n");
        for year in [2025, 2026] {
            for day in 0..365 {
                let date = day_of(year, day);
                for h in 0..24 {
                    let ppfd = (1500.0 * (std::f64::consts::PI * (h as f64 - 6.0) / 12.0).sin())
                        .max(0.0)
                        .round();
                    let rain = if h == 0 { 5 } else { 0 };
                    weather.push_str(&format!("{date}T{h:02}:00,22,1.2,{ppfd},{rain}\n"));
                }
            }
        }
        let site = write_site(dir.path(), 1.0, 2.0, None, &weather);
        let text = fs::read_to_string(&site).unwrap();
        fs::write(
            &site,
            text.replace("g1 = 4.0 }", &format!("g1 = 4.0{params} }}")),
        )
        .unwrap();
        let out = dir.path().join("out");
        run_quiet(&site, &out).unwrap();
        let steps = Table::read(&out.join("steps.csv"));
        let row = 100 * 24 + 12;
        (
            steps.num(row, "discrimination_c3"),
            steps.num(365 * 24 + row, "discrimination_c3"),
        )
    };
    // Without day respiration only the Sun's position a year later differs (≈1e-4‰ here).
    let (y1, y2) = noon_delta(", rd25 = 0.0");
    assert!((y1 - y2).abs() < 1e-3, "{y1} vs {y2}");
    // At noon the assimilate is the least depleted of the day, above the labile pool's daily
    // mixture: e′ = δp − δsub > 0 lowers Δ in the second year (≈0.007‰ here).
    let (y1, y2) = noon_delta("");
    assert!(y1 - y2 > 3e-3 && y1 - y2 < 0.5, "{y1} vs {y2}");
}

/// The date `day` days after 1 January of `year` (not a leap year), as YYYY-MM-DD.
fn day_of(year: i32, mut day: u32) -> String {
    const DAYS: [u32; 12] = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let mut month = 0;
    while day >= DAYS[month] {
        day -= DAYS[month];
        month += 1;
    }
    format!("{year}-{:02}-{:02}", month + 1, day + 1)
}

#[test]
fn g1_temperature_is_chosen_by_name_in_the_site_file() {
    // Medlyn et al. 2011, g1 ∝ √(Γ*·λ): with g1_temperature = "gamma-star", a canopy at 15 °C with
    // g0 = 0, gm = inf and no boundary layer has ci/ca = g1·f/(g1·f + √D) with
    // f = √(Γ*(15 °C)/Γ*(25 °C)) = 0.76735 (hand calculation, Γ*'s 37,830 J mol⁻¹ of Bernacchi et
    // al. 2001). "gamma-star" in a C4 block and a misspelt name are errors naming the key.
    let weather =
        "time,t,vpd,ppfd,p\n2025-03-21T11:00,15,1.5,1500,0\n2025-03-21T12:00,15,1.5,1500,0\n";
    let ci_ca = |block: &str, key: &str| -> Result<f64, String> {
        let dir = tempfile::tempdir().unwrap();
        let c4 = (block == "c4").then_some((0.5, 1.0));
        let site = write_site(dir.path(), 0.5, 0.01, c4, weather);
        let text = fs::read_to_string(&site).unwrap().replace(
            &format!("[vegetation.{block}]\n"),
            &format!("[vegetation.{block}]\ng1_temperature = \"{key}\"\n"),
        );
        fs::write(&site, text.replace("g1 = 4.0 }", "g1 = 4.0, gm = inf }")).unwrap();
        let out = dir.path().join("out");
        run_quiet(&site, &out)?;
        Ok(Table::read(&out.join("steps.csv")).num(1, "ci_ca_c3"))
    };
    let g1 = 4.0 * 0.767_35;
    let want = g1 / (g1 + 1.5f64.sqrt());
    let got = ci_ca("c3", "gamma-star").unwrap();
    assert!((got - want).abs() < 2e-6, "{got} vs {want}");
    let constant = ci_ca("c3", "constant").unwrap();
    assert!(
        (constant - 4.0 / (4.0 + 1.5f64.sqrt())).abs() < 2e-6,
        "{constant}"
    );
    for (block, key) in [("c4", "gamma-star"), ("c3", "gammastar")] {
        let err = ci_ca(block, key).unwrap_err();
        assert!(
            err.contains("g1_temperature") && err.contains("\"constant\"") && err.contains(key),
            "{err}"
        );
    }
}

#[test]
fn temperature_set_is_chosen_by_name_in_the_site_file() {
    // The fixed set (Bernacchi et al. 2001 / Medlyn et al. 2002) stays selectable by name; at 38 °C
    // it keeps less capacity than the set acclimated to that growth temperature (38 °C, held at
    // 35 °C; Kattge & Knorr 2007), so the two runs differ; a misspelt name is an error naming the
    // key and the choices.
    let gpp = |set: &str| -> Result<f64, String> {
        let dir = tempfile::tempdir().unwrap();
        let mut weather = String::from("time,t,vpd,ppfd,p\n");
        for h in 0..24 {
            let ppfd = if (7..17).contains(&h) { 1200 } else { 0 };
            weather.push_str(&format!("2025-01-01T{h:02}:00,38,1.0,{ppfd},0\n"));
        }
        let site = write_site(dir.path(), 1.0, 2.0, None, &weather);
        let text = fs::read_to_string(&site).unwrap();
        let text = text.replace(
            "[vegetation.c3]\n",
            &format!("[vegetation.c3]\ntemperature_set = \"{set}\"\n"),
        );
        fs::write(&site, text).unwrap();
        let out = dir.path().join("out");
        run_quiet(&site, &out)?;
        Ok(Table::read(&out.join("steps.csv")).num(12, "gpp_c3"))
    };
    let (acclimated, fixed) = (gpp("acclimated").unwrap(), gpp("fixed").unwrap());
    assert!(acclimated > fixed * 1.1, "{acclimated} vs {fixed}");
    let err = gpp("acclimatised").unwrap_err();
    assert!(
        err.contains("temperature_set") && err.contains("\"fixed\""),
        "{err}"
    );
}
