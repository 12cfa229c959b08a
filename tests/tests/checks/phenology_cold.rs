//! Vegetation presets, the Growing Season Index phenology and the cold rule: the GSI's ramps against
//! hand values from the definition of Jolly, Nemani & Running (2005), synthetic sites (a temperate
//! deciduous forest, a boreal conifer stand, a tropical grassland with a dry season) run end to end,
//! and the site file's presets, `lai` values, `inf` and spellings.

use std::f64::consts::PI;
use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};

use isodisc_model::phenology::{
    BUDBURST_FORCING_DEGREE_DAYS, ColdState, Phenology, PhenologyKind, PhenologySettings,
    daily_gsi, forcing_season, index_photoperiod, index_tmin, index_vpd,
};
use isodisc_model::presets::PRESETS;
use isodisc_runner::site::Site;
use proptest::prelude::*;

use crate::common::{run, run_quiet};

/// Tolerance of the hand values (exact ramps: round-off only).
const TOL: f64 = 1e-12;

#[test]
fn gsi_ramps_match_hand_values_from_the_definition() {
    // Jolly, Nemani & Running 2005, Global Change Biol.: iTmin 0 at ≤ −2 °C, 1 at ≥ 5 °C; iVPD 1 at
    // ≤ 0.9 kPa, 0 at ≥ 4.1 kPa; iPhoto 0 at ≤ 10 h, 1 at ≥ 11 h; linear between; iGSI = product.
    // Hand values: (x − lo)/(hi − lo), e.g. (1.5 + 2)/7 = 0.5 and 1 − (2.5 − 0.9)/3.2 = 0.5.
    let table: &[(&str, f64, f64)] = &[
        ("tmin", -10.0, 0.0),
        ("tmin", -2.0, 0.0),
        ("tmin", 1.5, 0.5),
        ("tmin", 3.25, 0.75),
        ("tmin", 5.0, 1.0),
        ("tmin", 30.0, 1.0),
        ("vpd", 0.2, 1.0),
        ("vpd", 0.9, 1.0),
        ("vpd", 2.5, 0.5),
        ("vpd", 3.3, 0.25),
        ("vpd", 4.1, 0.0),
        ("vpd", 6.0, 0.0),
        ("photo", 8.0, 0.0),
        ("photo", 10.0, 0.0),
        ("photo", 10.25, 0.25),
        ("photo", 11.0, 1.0),
        ("photo", 16.0, 1.0),
    ];
    for &(which, x, expected) in table {
        let got = match which {
            "tmin" => index_tmin(x),
            "vpd" => index_vpd(x),
            _ => index_photoperiod(x),
        };
        assert!((got - expected).abs() < TOL, "{which}({x}) = {got}");
    }
    // Product of the three: 0.5 · 0.5 · 0.25 (hand value).
    assert!((daily_gsi(1.5, 2.5, 10.25) - 0.0625).abs() < TOL);
}

/// One year of hourly weather (2025) from a seasonal mean temperature `t_mean + amp·season` with a
/// diurnal swing of ±`diurnal` °C, VPD from the temperature (humid air, rising by day), PPFD from
/// a sine day, and rain from `rain(day)` mm at 15:00. `season` is −1 in mid-January, +1 in
/// mid-July. `cold_hours` (hour of the year, °C) replace the temperature of those hours.
fn year_of_weather(
    t_mean: f64,
    amp: f64,
    diurnal: f64,
    vpd_scale: impl Fn(u32) -> f64,
    rain: impl Fn(u32) -> f64,
    cold_hours: &[(usize, f64)],
) -> String {
    let mut w = String::from("time,t,vpd,ppfd,p\n");
    let mut h = 0usize;
    for doy in 1..=365u32 {
        let (month, day) = month_day(doy);
        let season = -(2.0 * PI * (f64::from(doy) - 15.0) / 365.0).cos();
        for hour in 0..24u32 {
            let day_sine = (PI * (f64::from(hour) - 6.0) / 12.0).sin();
            let mut t = t_mean + amp * season + diurnal * day_sine;
            if let Some(&(_, tc)) = cold_hours.iter().find(|(i, _)| *i == h) {
                t = tc;
            }
            let vpd = (vpd_scale(doy) * (0.3 + 0.5 * day_sine.max(0.0)) * (t.max(-20.0) + 25.0)
                / 45.0)
                .max(0.05);
            let ppfd = (1800.0 * (0.75 + 0.25 * season) * day_sine).max(0.0);
            let p = if hour == 15 { rain(doy) } else { 0.0 };
            writeln!(
                w,
                "2025-{month:02}-{day:02}T{hour:02}:00,{t:.3},{vpd:.4},{ppfd:.2},{p}"
            )
            .unwrap();
            h += 1;
        }
    }
    w
}

/// Month and day of a day of 2025 (not a leap year).
fn month_day(doy: u32) -> (u32, u32) {
    let lengths = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let mut d = doy;
    for (m, len) in lengths.iter().enumerate() {
        if d <= *len {
            return (m as u32 + 1, d);
        }
        d -= len;
    }
    unreachable!("day {doy} of 2025")
}

/// A site file with one vegetation block `veg` (its text, under `[vegetation.c3]` or `.c4`).
fn site_text(latitude: f64, veg: &str) -> String {
    format!(
        r#"[site]
name = "synthetic"
latitude = {latitude}
longitude = 0.0
elevation_m = 0
utc_offset_h = 0

{veg}

[soil]
field_capacity = 0.3
wilting_point = 0.1
root_depth_m = 1.0
initial_water = 1.0

[atmosphere]
co2 = 420.0
d13c_co2 = -8.5

[forcing]
path = "weather.csv"
step_minutes = 60

[forcing.columns]
t_air = "t"
vpd = "vpd"
ppfd = "ppfd"
precip = "p"
"#
    )
}

/// Writes the site and weather into a fresh folder and runs it; returns the folder and the results.
fn run_site(site: &str, weather: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    fs::write(dir.path().join("site.toml"), site).unwrap();
    fs::write(dir.path().join("weather.csv"), weather).unwrap();
    let out = dir.path().join("out");
    run_quiet(&dir.path().join("site.toml"), &out).unwrap();
    (dir, out)
}

/// A column of a results CSV as numbers (NaN for empty cells), with the first column as labels.
fn column(path: &Path, name: &str) -> (Vec<String>, Vec<f64>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let i = r
        .headers()
        .unwrap()
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name} in {}", path.display()));
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            (rec[0].to_string(), rec[i].parse().unwrap_or(f64::NAN))
        })
        .unzip()
}

#[test]
fn deciduous_preset_is_leafless_in_a_cold_winter_and_in_full_leaf_in_summer() {
    // Temperate site at 45° N: January means near −5 °C, July near 21 °C. The GSI (Jolly et al.
    // 2005) is 0 through a winter of frost and short days and 1 in a mild, humid summer, so LAI goes
    // from lai_min = 0 to lai_max (5.1 m2 m-2, the preset's value) — common knowledge of temperate
    // deciduous forest.
    let site = site_text(
        45.0,
        "[vegetation.c3]\npreset = \"deciduous-broadleaf\"\ncover = 1.0",
    );
    let weather = year_of_weather(
        8.0,
        13.0,
        5.0,
        |_| 1.0,
        |d| if d % 4 == 0 { 8.0 } else { 0.0 },
        &[],
    );
    let (_dir, out) = run_site(&site, &weather);
    let (time, lai) = column(&out.join("steps.csv"), "lai_c3");
    let at = |stamp: &str| lai[time.iter().position(|t| t.starts_with(stamp)).unwrap()];
    assert_eq!(at("2025-01-20T12"), 0.0, "leafless in January");
    assert_eq!(at("2025-02-10T12"), 0.0, "leafless in February");
    assert!(
        (at("2025-07-20T12") - 5.1).abs() < 0.05,
        "{}",
        at("2025-07-20T12")
    );
    // And no GPP while leafless.
    let (_, gpp) = column(&out.join("steps.csv"), "gpp");
    let jan: f64 = gpp[..31 * 24].iter().sum();
    assert_eq!(jan, 0.0);
}

#[test]
fn an_hour_at_minus_45_runs_and_fixes_nothing() {
    // The weather may hold any air temperature (−70 to 60 °C); the leaf's −30 °C floor is not applied
    // to it. The cold rule (Jolly et al. 2005 minimum-temperature ramp; frozen soil stops water
    // uptake, common practice) gives no photosynthesis at −45 °C. A constant-LAI evergreen canopy
    // (no phenology) so that only the cold rule can stop it; the cold hours fall at noon in
    // January and July.
    let jan_noon = 14 * 24 + 12;
    let jul_noon = 195 * 24 + 12;
    let weather = year_of_weather(
        8.0,
        13.0,
        5.0,
        |_| 1.0,
        |d| if d % 4 == 0 { 8.0 } else { 0.0 },
        &[(jan_noon, -45.0), (jul_noon, -45.0), (jul_noon + 1, -70.0)],
    );
    let site = site_text(45.0, "[vegetation.c3]\ncover = 1.0\nlai = 3.0");
    let (_dir, out) = run_site(&site, &weather);
    let (_, gpp) = column(&out.join("steps.csv"), "gpp");
    let (_, t) = column(&out.join("steps.csv"), "t_air");
    for i in [jan_noon, jul_noon, jul_noon + 1] {
        assert!(t[i] <= -45.0, "hour {i} is the cold one: {}", t[i]);
        assert_eq!(gpp[i], 0.0, "hour {i} at {} °C", t[i]);
    }
    // The same July hour a day earlier fixes carbon: the check can fail.
    assert!(gpp[jul_noon - 24] > 1.0, "{}", gpp[jul_noon - 24]);
    // The frost holds photosynthesis back for the next 24 h (the ramp is on the 24-h minimum).
    assert_eq!(gpp[jul_noon + 20], 0.0);
}

#[test]
fn cold_months_carry_under_2_percent_of_annual_gpp() {
    // Issue check (validation against published relationships): at a cold site, months with mean
    // air temperature below 0 °C carry < 2% of annual GPP. Boreal conifers keep their needles but
    // do not photosynthesise in frozen winters (common knowledge of boreal forest; Jolly et al.
    // 2005's minimum-temperature ramp, frozen soil). Synthetic site at 62° N: annual mean −1 °C,
    // amplitude 18 °C, so five months are below 0 °C.
    let site = site_text(
        62.0,
        "[vegetation.c3]\npreset = \"evergreen-needleleaf\"\ncover = 1.0",
    );
    let weather = year_of_weather(
        -1.0,
        18.0,
        4.0,
        |_| 0.8,
        |d| if d % 3 == 0 { 5.0 } else { 0.0 },
        &[],
    );
    let (_dir, out) = run_site(&site, &weather);
    let (_, gpp) = column(&out.join("monthly.csv"), "gpp");
    let (_, t) = column(&out.join("monthly.csv"), "t_air");
    let total: f64 = gpp.iter().sum();
    let cold: f64 = gpp
        .iter()
        .zip(&t)
        .filter(|(_, t)| **t < 0.0)
        .map(|(g, _)| g)
        .sum();
    let n_cold = t.iter().filter(|t| **t < 0.0).count();
    assert!(n_cold >= 4, "{n_cold} cold months: {t:?}");
    assert!(total > 100.0, "annual GPP {total}");
    assert!(cold < 0.02 * total, "cold months {cold} of {total} gC m-2");
}

#[test]
fn c4_grass_preset_is_dormant_in_the_dry_season() {
    // A C4 grass goes dormant in the dry season (common knowledge of tropical grasslands): at 12° N
    // with rain only from June to September and a dry, high-VPD rest of the year, the preset's
    // phenology (GSI times soil water) keeps LAI near 0 in the late dry season and near the
    // preset's lai_max in the wet season.
    let site = site_text(12.0, "[vegetation.c4]\npreset = \"c4-grass\"\ncover = 1.0");
    let wet = |d: u32| (152..=273).contains(&d);
    let weather = year_of_weather(
        26.0,
        2.0,
        6.0,
        |d| if wet(d) { 0.6 } else { 3.5 },
        |d| if wet(d) && d % 2 == 0 { 15.0 } else { 0.0 },
        &[],
    );
    let (_dir, out) = run_site(&site, &weather);
    let (time, lai) = column(&out.join("steps.csv"), "lai_c4");
    let at = |stamp: &str| lai[time.iter().position(|t| t.starts_with(stamp)).unwrap()];
    assert!(
        at("2025-05-25T12") < 0.1,
        "dry season LAI {}",
        at("2025-05-25T12")
    );
    let lai_max = PRESETS
        .iter()
        .find(|p| p.name == "c4-grass")
        .and_then(|p| p.value("lai_max"))
        .unwrap();
    assert!(
        at("2025-08-20T12") > 0.8 * lai_max,
        "wet season LAI {} of lai_max {lai_max}",
        at("2025-08-20T12")
    );
}

/// Writes a site file into a fresh folder (no weather needed to load it) and loads it.
fn load(site: &str) -> (tempfile::TempDir, Result<Site, String>) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.toml");
    fs::write(&path, site).unwrap();
    let r = Site::load(&path).map_err(|e| e.chain());
    (dir, r)
}

/// The error of loading a site at 45° N whose vegetation block is `veg`.
fn load_error(veg: &str) -> String {
    load(&site_text(45.0, veg)).1.unwrap_err()
}

#[test]
fn keys_and_params_override_the_preset() {
    // Precedence (common practice for layered settings): leaf defaults < preset < the block's keys
    // and params. The preset's values are those `isodisc presets` lists.
    let (_d, site) = load(&site_text(
        45.0,
        "[vegetation.c3]\npreset = \"deciduous-broadleaf\"\ncover = 1.0\nkn = 0.4\n\
         params = { vcmax25 = 70.0 }",
    ));
    let site = site.unwrap();
    let v = &site.settings.vegetation[0];
    assert_eq!(v.leaf.get("vcmax25"), Some(70.0), "params override");
    assert_eq!(v.leaf.get("jmax25"), Some(96.4), "preset value kept");
    assert_eq!(v.leaf.get("g1"), Some(4.45));
    assert_eq!(v.canopy.kn(), 0.4, "key overrides");
    assert_eq!(v.canopy.radiation().clumping(), 0.7);
    assert_eq!(v.leaf_width_m, 0.05);
    let p = v
        .phenology
        .expect("a preset defaults to lai = \"phenology\"");
    assert_eq!((p.lai_min_m2_m2(), p.lai_max_m2_m2()), (0.0, 5.1));
    // lai = a number overrides the phenology; lai_max overrides the preset's range.
    let (_d, site) = load(&site_text(
        45.0,
        "[vegetation.c3]\npreset = \"deciduous-broadleaf\"\ncover = 1.0\nlai = 2.5",
    ));
    let site = site.unwrap();
    assert!(site.settings.vegetation[0].phenology.is_none());
    assert_eq!(site.settings.vegetation[0].lai_m2_m2, 2.5);
    let (_d, site) = load(&site_text(
        45.0,
        "[vegetation.c3]\npreset = \"evergreen-needleleaf\"\ncover = 1.0\nlai_max = 6.0",
    ));
    let mut site = site.unwrap();
    let p = site.settings.vegetation[0].phenology.unwrap();
    assert_eq!((p.lai_min_m2_m2(), p.lai_max_m2_m2()), (3.0, 6.0));
    // Ensembles and batches set the range by its dotted path; a constant LAI is refused there.
    site.set_param("vegetation.c3.lai_max", 7.0).unwrap();
    assert_eq!(site.param_value("vegetation.c3.lai_max"), Some(7.0));
    assert_eq!(site.param_value("vegetation.c3.lai"), None);
    assert!(site.set_param("vegetation.c3.lai", 2.0).is_err());
    let e = site
        .set_param("vegetation.c3.lai_min", 8.0)
        .unwrap_err()
        .chain();
    assert!(e.contains("lai_min"), "{e}");
}

#[test]
fn preset_errors_suggest_the_closest_name_and_the_right_block() {
    // Unknown names suggest the closest known one (edit distance; common practice).
    let e = load_error("[vegetation.c3]\npreset = \"decidous-broadleaf\"\ncover = 1.0");
    assert!(
        e.contains("did you mean \"deciduous-broadleaf\"") && e.contains("line 9"),
        "{e}"
    );
    // A C4 preset in a C3 block names the key and the block it belongs in.
    let e = load_error("[vegetation.c3]\npreset = \"c4-grass\"\ncover = 1.0");
    assert!(
        e.contains("preset") && e.contains("[vegetation.c4]") && e.contains("line 9"),
        "{e}"
    );
    // A wrong lai value says what the key takes.
    let e = load_error("[vegetation.c3]\ncover = 1.0\nlai = \"phenolgy\"");
    assert!(
        e.contains("\"forcing\"") && e.contains("\"phenology\"") && e.contains("number"),
        "{e}"
    );
    assert!(!e.contains("untagged"), "{e}");
    // lai = "phenology" without a preset needs its range and kind.
    let e = load_error("[vegetation.c3]\ncover = 1.0\nlai = \"phenology\"");
    assert!(e.contains("lai_max") && e.contains("gsi"), "{e}");
    // And with them it loads.
    let (_d, r) = load(&site_text(
        45.0,
        "[vegetation.c3]\ncover = 1.0\nlai = \"phenology\"\nphenology = \"gsi\"\nlai_max = 4.0",
    ));
    assert!(r.is_ok(), "{r:?}");
}

#[test]
fn every_preset_lists_its_values_units_and_sources() {
    // The issue names eight presets; each sets capacity, g1, leaf width, clumping, kn and the LAI
    // range, with a unit and a source for every value.
    let names = [
        "deciduous-broadleaf",
        "evergreen-needleleaf",
        "evergreen-broadleaf-tropical",
        "c3-grass",
        "c4-grass",
        "tundra-shrub",
        "c3-crop",
        "c4-crop",
    ];
    for name in names {
        let p = PRESETS.iter().find(|p| p.name == name).expect(name);
        let capacity = if p.pathway.as_str() == "c3" {
            "vcmax25"
        } else {
            "vmax25"
        };
        for key in [
            capacity,
            "g1",
            "leaf_width_m",
            "clumping",
            "kn",
            "lai_min",
            "lai_max",
        ] {
            let v = p.values.iter().find(|v| v.key == key);
            let v = v.unwrap_or_else(|| panic!("{name} sets no {key}"));
            assert!(!v.unit.is_empty() && !v.source.is_empty(), "{name} {key}");
        }
        let (_d, site) = load(&site_text(
            0.0,
            &format!(
                "[vegetation.{}]\npreset = \"{name}\"\ncover = 1.0",
                p.pathway.as_str()
            ),
        ));
        assert!(site.is_ok(), "{name}: {site:?}");
    }
    assert_eq!(PRESETS.len(), names.len());
    // `isodisc presets --format csv` writes them (a run of the command; the table is the model's).
    run(&["presets", "--format", "csv"]).unwrap();
    let e = run(&["presets", "tundra-shrubs"]).unwrap_err();
    assert!(e.contains("did you mean \"tundra-shrub\""), "{e}");
}

#[test]
fn inf_and_the_lloyd_taylor_spelling_are_accepted() {
    // The README: conductances and tpu25 take inf (no limit); TOML has inf floats, and the string
    // "inf" is accepted too. temperature_response is spelt "lloyd-taylor" (README); the older
    // "lloyd_taylor" is still read.
    for value in ["inf", "\"inf\""] {
        let (_d, site) = load(&site_text(
            45.0,
            &format!(
                "[vegetation.c3]\ncover = 1.0\nlai = 3.0\nparams = {{ gm = {value}, tpu25 = {value} }}"
            ),
        ));
        let site = site.unwrap();
        assert_eq!(
            site.settings.vegetation[0].leaf.get("gm"),
            Some(f64::INFINITY)
        );
        assert_eq!(
            site.settings.vegetation[0].leaf.get("tpu25"),
            Some(f64::INFINITY)
        );
    }
    // inf is refused where the range is finite, with the parameter's name.
    let e = load_error("[vegetation.c3]\ncover = 1.0\nlai = 3.0\nparams = { g1 = inf }");
    assert!(e.contains("g1") && e.contains("line 11"), "{e}");
    run(&["leaf", "--set", "gm=inf", "--format", "json"]).unwrap();
    // ... and `--input` cells: an infinite gm gives cc = ci (no mesophyll drawdown).
    let dir = tempfile::tempdir().unwrap();
    let (input, output) = (dir.path().join("in.csv"), dir.path().join("out.csv"));
    fs::write(&input, "gm\ninf\n0.3\n").unwrap();
    run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--output",
        output.to_str().unwrap(),
        "--format",
        "csv",
    ])
    .unwrap();
    let (_, ci) = column(&output, "c_i");
    let (_, cc) = column(&output, "c_c");
    assert_eq!(ci[0], cc[0]);
    assert!(cc[1] < ci[1] - 1.0, "finite gm draws cc below ci");
    for spelling in ["lloyd-taylor", "lloyd_taylor"] {
        let (_d, site) = load(&format!(
            "{}\n[pools]\ntemperature_response = \"{spelling}\"\n",
            site_text(45.0, "[vegetation.c3]\ncover = 1.0\nlai = 3.0")
        ));
        assert!(site.is_ok(), "{spelling}: {site:?}");
    }
}

/// A `gsi-budburst` phenology (lai_min 0, lai_max 4 m2 m-2) at `latitude_deg`.
fn budburst_phenology(latitude_deg: f64) -> Phenology {
    let s = PhenologySettings::new(PhenologyKind::GsiBudburst, 0.0, 4.0).unwrap();
    Phenology::new(s).at_latitude(latitude_deg)
}

#[test]
fn budburst_forcing_sums_daily_means_above_5_c_like_a_hand_calculation() {
    // Thermal time to budburst: day-degrees above 5 °C of the daily mean air temperature
    // (Cannell & Smith 1983; Murray, Cannell & Smith 1989). Hand calculation, two steps a day:
    // day 1 (0, 2 °C): mean 1 → 0; day 2 (4, 10 °C): mean 7 → 2; day 3 (−3, 13 °C): mean 5 → 0;
    // day 4 (12, 19 °C): mean 15.5 → 10.5; day 5 (20, 24.5 °C): mean 22.25 → 17.25. Total 29.75
    // °C·d. A day counts once it is complete (at the first step of the next day).
    let mut p = budburst_phenology(48.0);
    let days: [(f64, f64); 5] = [
        (0.0, 2.0),
        (4.0, 10.0),
        (-3.0, 13.0),
        (12.0, 19.0),
        (20.0, 24.5),
    ];
    let after_day = [0.0, 2.0, 2.0, 12.5, 29.75];
    for (i, &(a, b)) in days.iter().enumerate() {
        let day = i as u32 + 1;
        p.step((2025, day), a, 0.5, 1.0, 14.0);
        p.step((2025, day), b, 0.5, 1.0, 14.0);
        if i > 0 {
            // Days 1..=i are complete.
            let f = p.forcing_degree_days();
            assert!((f - after_day[i - 1]).abs() < TOL, "day {day}: {f}");
        }
    }
    p.step((2025, 6), 0.0, 0.5, 1.0, 14.0);
    assert!((p.forcing_degree_days() - 29.75).abs() < TOL);
    // Far below F* = 200 °C·d: still leafless, although the last days were warm, long and humid
    // (the plain GSI would be in leaf).
    assert!(!p.budburst());
    assert_eq!(p.step((2025, 6), 20.0, 0.5, 1.0, 14.0), 0.0);
}

/// A synthetic warming spring: a constant day temperature of 0.25·(day of season) − 5 °C.
fn spring_temperature(day_of_season: u32) -> f64 {
    0.25 * f64::from(day_of_season) - 5.0
}

#[test]
fn leaf_out_on_a_synthetic_warming_spring_falls_on_the_hand_calculated_day() {
    // Daily mean T(d) = 0.25·d − 5 °C from 1 January; forcing above 5 °C starts on day 41
    // (0.25 °C·d), and Σ_{d=41..D} (0.25·d − 10) = (D − 40)(D − 39)/8: 195 °C·d at D = 79 and
    // 205 °C·d at D = 80 (hand calculation), so F* = 200 °C·d (Murray, Cannell & Smith 1989, from
    // memory) is reached on day 80 and the leaves are out from day 81 (set by completed days).
    // The GSI's window (days 60–80: minima ≥ 10 °C, 14 h days, humid air) is then 1 (Jolly et al.
    // 2005), so LAI jumps from lai_min = 0 to lai_max = 4.
    assert_eq!(BUDBURST_FORCING_DEGREE_DAYS, 200.0);
    let mut bud = budburst_phenology(48.0);
    let mut gsi = Phenology::new(PhenologySettings::new(PhenologyKind::Gsi, 0.0, 4.0).unwrap());
    let mut gsi_leaf_out = None;
    for day in 1..=81u32 {
        let t = spring_temperature(day);
        let lai = bud.step((2025, day), t, 0.5, 1.0, 14.0);
        if gsi.step((2025, day), t, 0.5, 1.0, 14.0) > 0.0 && gsi_leaf_out.is_none() {
            gsi_leaf_out = Some(day);
        }
        match day {
            80 => {
                assert_eq!(lai, 0.0, "day 80");
                assert!((bud.forcing_degree_days() - 195.0).abs() < TOL);
            }
            81 => {
                assert!((lai - 4.0).abs() < TOL, "day 81: {lai}");
                assert!((bud.forcing_degree_days() - 205.0).abs() < TOL);
            }
            _ if day < 80 => assert_eq!(lai, 0.0, "day {day}"),
            _ => {}
        }
    }
    // The plain GSI greens as soon as minima pass −2 °C (day 13: T = −1.75 °C on day 13, counted
    // from day 14), two months earlier: the gap the budburst closes.
    assert_eq!(gsi_leaf_out, Some(14));
}

#[test]
fn southern_hemisphere_forcing_counts_from_1_july() {
    // South of the equator the season of the budburst forcing starts on 1 July, half a year after
    // the northern 1 January (our convention, see docs/science.md). Hand values: 1 July 2025 is day
    // 182 (2025 is not a leap year), 1 July 2024 day 183 (leap year), so 30 June 2025 is
    // 366 − 183 + 181 = 364 days after 1 July 2024.
    assert_eq!(forcing_season((2025, 182), true), (2025, 0));
    assert_eq!(forcing_season((2025, 181), true), (2024, 364));
    assert_eq!(forcing_season((2025, 1), true), (2024, 184));
    assert_eq!(forcing_season((2025, 1), false), (2025, 0));
    assert_eq!(forcing_season((2024, 366), false), (2024, 365));

    // The synthetic warming spring of the northern check, shifted to start on 1 July 2025 at a
    // site at 35° S: leaf-out on day 81 of the season, i.e. day 181 + 81 = 262 of the year.
    let mut south = budburst_phenology(-35.0);
    // Start the run in the austral winter, a day before the season begins (cold: no forcing).
    south.step((2025, 181), -5.0, 0.5, 1.0, 9.0);
    for d in 1..=81u32 {
        let lai = south.step((2025, 181 + d), spring_temperature(d), 0.5, 1.0, 14.0);
        assert_eq!(lai > 0.0, d == 81, "season day {d}: {lai}");
    }
    assert!((south.forcing_degree_days() - 205.0).abs() < TOL);
    // A warm 1 January start differs by hemisphere: leafless in the north (nothing summed yet) and
    // in leaf in the south (the 184 days since 1 July 2024 counted at the first step's 20 °C,
    // 15 °C·d each).
    let mut north = budburst_phenology(35.0);
    assert_eq!(north.step((2025, 1), 20.0, 0.5, 1.0, 14.0), 0.0);
    assert!(!north.budburst());
    let mut south = budburst_phenology(-35.0);
    assert!((south.step((2025, 1), 20.0, 0.5, 1.0, 14.0) - 4.0).abs() < TOL);
    assert!((south.forcing_degree_days() - 184.0 * 15.0).abs() < TOL);
    // And the southern season is cleared on 1 July (day 182): once that day is complete (at the
    // step of day 183) the sum holds only its 15 °C·d and the leaves are off until F* is reached.
    for d in 2..=183u32 {
        south.step((2025, d), 20.0, 0.5, 1.0, 14.0);
    }
    assert!((south.forcing_degree_days() - 15.0).abs() < TOL);
    assert!(!south.budburst());
    assert_eq!(south.step((2025, 183), 20.0, 0.5, 1.0, 14.0), 0.0);
}

proptest! {
    #![proptest_config(crate::common::proptest_config("phenology_cold", 256))]
    /// Bounds that follow from the definitions (no source needed): LAI stays within
    /// [lai_min, lai_max]; the cold factor lies in [0, 1] and is 0 whenever the air is at or below
    /// −2 °C (the bottom of the ramp) or the soil's running mean is at or below 0 °C.
    #[test]
    fn lai_and_cold_factor_stay_in_their_bounds(
        lai_min in 0.0..3.0f64,
        extra in 0.0..5.0f64,
        which in 0..3usize,
        hours in proptest::collection::vec(
            (-70.0..45.0f64, 0.0..6.0f64, 0.0..1.0f64), 1..400,
        ),
    ) {
        let kind = PhenologyKind::ALL[which];
        let settings = PhenologySettings::new(kind, lai_min, lai_min + extra).unwrap();
        let mut phenology = Phenology::new(settings);
        let mut cold = ColdState::default();
        for (i, &(t, vpd, beta)) in hours.iter().enumerate() {
            let day = (i / 24) as u32 + 1;
            let lai = phenology.step((2025, day), t, vpd, beta, 12.0);
            prop_assert!(lai >= lai_min - 1e-12 && lai <= lai_min + extra + 1e-12);
            let c = cold.step(t, 1.0);
            prop_assert!((0.0..=1.0).contains(&c.factor));
            if t <= -2.0 || c.t_soil_c <= 0.0 {
                prop_assert_eq!(c.factor, 0.0);
            }
            prop_assert!(c.tmin_24h_c <= t);
        }
    }
}
