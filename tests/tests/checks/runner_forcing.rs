//! Checks of the weather-file reader: calendar facts, unit conversions against their definitions
//! and FAO-56, gap filling against interpolation done by hand here, and one test per bad input
//! asserting that the message points at the line, column and value.

use std::path::{Path, PathBuf};

use isodisc_runner::forcing::{
    DataErrorKind, ForcingConfig, ForcingError, ForcingReader, ForcingStep, LocalTime, PerVariable,
    Preset, TimestampMarks, Variable,
};

/// Exact arithmetic on short decimals (interpolation midpoints, unit scale factors).
const EXACT: f64 = 1e-9;
/// FAO-56 worked values are printed to 3 decimals.
const FAO_TOL: f64 = 1e-3;

/// Writes `csv` as `weather.csv` in a fresh temporary folder.
fn site_with(csv: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("weather.csv"), csv).expect("write csv");
    dir
}

/// Hourly, ISO time, with t_air (°C), rh (%), sw (W m⁻²) and precip (mm) mapped.
fn basic_config() -> ForcingConfig {
    ForcingConfig {
        path: PathBuf::from("weather.csv"),
        columns: PerVariable {
            t_air: Some("ta".into()),
            rh: Some("rh".into()),
            sw: Some("sw".into()),
            precip: Some("rain".into()),
            ..PerVariable::default()
        },
        ..ForcingConfig::default()
    }
}

fn read_all(
    config: &ForcingConfig,
    dir: &Path,
) -> Result<(Vec<ForcingStep>, ForcingReader), ForcingError> {
    let mut reader = ForcingReader::open(config, dir, 0.0, None, None)?;
    let steps = reader.by_ref().collect::<Result<Vec<_>, _>>()?;
    Ok((steps, reader))
}

/// Reads and expects a data error; returns it with its message.
fn data_error(config: &ForcingConfig, csv: &str) -> (ForcingError, String) {
    let dir = site_with(csv);
    let err = read_all(config, dir.path()).err().expect("an error");
    let msg = err.to_string();
    (err, msg)
}

fn assert_data_error(
    err: &ForcingError,
    msg: &str,
    want_line: u64,
    want_column: &str,
    want_number: usize,
    want_value: &str,
    want_kind: DataErrorKind,
) {
    match err {
        ForcingError::Data {
            line,
            column,
            column_number,
            value,
            kind,
            ..
        } => {
            assert_eq!(*line, want_line, "{msg}");
            assert_eq!(column, want_column, "{msg}");
            assert_eq!(*column_number, want_number, "{msg}");
            assert_eq!(value, want_value, "{msg}");
            assert_eq!(*kind, want_kind, "{msg}");
        }
        other => panic!("expected a data error, got {other}"),
    }
    assert!(msg.contains("weather.csv"), "{msg}");
    assert!(msg.contains(&format!("line {want_line}")), "{msg}");
    assert!(msg.contains(&format!("`{want_column}`")), "{msg}");
    assert!(msg.contains(&format!("no. {want_number}")), "{msg}");
    assert!(msg.contains(&format!("`{want_value}`")), "{msg}");
}

const HEADER: &str = "time,ta,rh,sw,rain\n";

#[test]
fn calendar_facts_and_round_trips() {
    // Calendar facts (Gregorian rules, common practice): 2024 is a leap year, 2025 is not.
    let t = |s: &str| LocalTime::parse_iso(s).unwrap();
    assert_eq!(t("2024-12-31T00:00").day_of_year(), 366);
    assert_eq!(t("2025-03-01T00:00").day_of_year(), 60);
    assert_eq!(t("2024-03-01T00:00").day_of_year(), 61);
    assert_eq!(t("2025-01-01T00:00").day_of_year(), 1);
    // The epoch and a count done by hand: 30 years from 1970 with 7 leap days (72..96) = 10957
    // days to 2000-01-01, then 31 + 29 days to 1 March.
    assert_eq!(t("1970-01-01T00:00").minutes(), 0);
    assert_eq!(t("2000-03-01T00:00").minutes(), (10957 + 60) * 1440);
    // 1900 is not a leap year, 2000 is (the century rule).
    assert!(LocalTime::from_ymdhm(1900, 2, 29, 0, 0).is_err());
    assert!(LocalTime::from_ymdhm(2000, 2, 29, 0, 0).is_ok());
    assert!(LocalTime::from_ymdhm(2025, 2, 29, 0, 0).is_err());
    // 1969-12-31T23:30 is 30 minutes before the epoch.
    assert_eq!(t("1969-12-31T23:30").minutes(), -30);

    // Round trips over every day of 1899–2101 (crosses the 1900, 2000 and 2100 century rules):
    // text → time → text and the fields agree, and consecutive days are 1440 minutes apart.
    let mut previous: Option<LocalTime> = None;
    for year in 1899..=2101 {
        for month in 1..=12u32 {
            for day in 1..=31u32 {
                let Ok(time) = LocalTime::from_ymdhm(year, month, day, 13, 45) else {
                    continue;
                };
                let text = format!("{year:04}-{month:02}-{day:02}T13:45");
                assert_eq!(time.to_string(), text);
                assert_eq!(t(&text), time);
                assert_eq!(t(&format!("{year:04}-{month:02}-{day:02} 13:45:00")), time);
                let compact = format!("{year:04}{month:02}{day:02}1345");
                assert_eq!(LocalTime::parse_yyyymmddhhmm(&compact).unwrap(), time);
                assert_eq!((time.year(), time.month(), time.day()), (year, month, day));
                assert!((time.hour_fraction() - 13.75).abs() < EXACT);
                assert_eq!(
                    LocalTime::parse_date(&text[..10]).unwrap(),
                    time.plus_minutes(-(13 * 60 + 45))
                );
                if let Some(p) = previous {
                    assert_eq!(time.minutes() - p.minutes(), 1440);
                }
                previous = Some(time);
            }
        }
    }
    for bad in [
        "2025-13-01T00:00",
        "2025-01-01T24:00",
        "2025-01-01",
        "2025-01-01T00:00:30",
    ] {
        assert!(LocalTime::parse_iso(bad).is_err(), "{bad}");
    }
}

#[test]
fn one_hour_gap_is_interpolated_and_counted() {
    // Linear interpolation by hand: halfway between 10 and 14 °C is 12 °C, between 60 and 70 % is
    // 65 %; rain in a gap is 0 by design.
    let csv = format!(
        "{HEADER}2025-06-01T00:00,10,60,0,1.5\n2025-06-01T01:00,,,0,\n2025-06-01T02:00,14,70,0,0.5\n"
    );
    let dir = site_with(&csv);
    let (steps, reader) = read_all(&basic_config(), dir.path()).unwrap();
    assert_eq!(steps.len(), 3);
    let gap = &steps[1];
    assert!((gap.t_air_c - 12.0).abs() < EXACT);
    let want_vpd = isodisc_model::water::vpd_from_rh_kpa(12.0, 65.0);
    assert!((gap.vpd_kpa - want_vpd).abs() < EXACT);
    assert_eq!(gap.precip_mm, 0.0);
    assert!(gap.filled && !gap.missing);
    assert!(!steps[0].filled && !steps[2].filled);
    let report = reader.report();
    assert_eq!(report.filled.get(&Variable::TAir), Some(&1));
    assert_eq!(report.filled.get(&Variable::Rh), Some(&1));
    assert_eq!(report.filled.get(&Variable::Precip), Some(&1));
    assert_eq!(report.missing_steps, 0);
    assert_eq!((report.rows_read, report.steps), (3, 3));
}

#[test]
fn two_hour_gap_is_interpolated_in_thirds() {
    // Two missing hours between 0 and 3 °C: 1 and 2 °C (linear in time, by hand).
    let csv = format!(
        "{HEADER}2025-06-01T00:00,0,50,0,0\n2025-06-01T01:00,,50,0,0\n\
         2025-06-01T02:00,-9999,50,0,0\n2025-06-01T03:00,3,50,0,0\n"
    );
    let dir = site_with(&csv);
    let (steps, _) = read_all(&basic_config(), dir.path()).unwrap();
    assert!((steps[1].t_air_c - 1.0).abs() < EXACT);
    assert!((steps[2].t_air_c - 2.0).abs() < EXACT);
}

#[test]
fn three_hour_gap_leaves_steps_missing() {
    // max_gap_hours defaults to 2: a 3-hour run of missing temperatures is not filled.
    let csv = format!(
        "{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:00,,60,0,0\n\
         2025-06-01T02:00,NA,60,0,0\n2025-06-01T03:00,,60,0,0\n2025-06-01T04:00,14,60,0,0\n"
    );
    let dir = site_with(&csv);
    let (steps, reader) = read_all(&basic_config(), dir.path()).unwrap();
    assert_eq!(steps.len(), 5);
    for s in &steps[1..4] {
        assert!(
            s.missing && s.t_air_c.is_nan() && s.vpd_kpa.is_nan(),
            "{s:?}"
        );
    }
    assert!(!steps[0].missing && !steps[4].missing);
    let report = reader.report();
    assert_eq!(report.missing_steps, 3);
    assert_eq!(report.filled.get(&Variable::TAir), None);
}

#[test]
fn unit_conversions_against_definitions_and_fao56() {
    // Kelvin to Celsius by definition (T°C = T K − 273.15); 1 kPa = 10 hPa.
    let dir = site_with("time,tk,vpd_h,sw\n2025-06-01T12:00,298.15,12.5,500\n");
    let mut config = ForcingConfig {
        path: "weather.csv".into(),
        columns: PerVariable {
            t_air: Some("tk".into()),
            vpd: Some("vpd_h".into()),
            sw: Some("sw".into()),
            ..PerVariable::default()
        },
        units: PerVariable {
            t_air: Some("K".into()),
            vpd: Some("hPa".into()),
            ..PerVariable::default()
        },
        ..ForcingConfig::default()
    };
    let (steps, _) = read_all(&config, dir.path()).unwrap();
    assert!((steps[0].t_air_c - 25.0).abs() < EXACT);
    assert!((steps[0].vpd_kpa - 1.25).abs() < EXACT);
    // PPFD from shortwave at the default 2.1 µmol J⁻¹ (common practice, from memory).
    assert!((steps[0].ppfd_umol_m2_s - 1050.0).abs() < EXACT);
    // Sea-level pressure from elevation 0 m: FAO-56 eq. 7 gives 101.3 kPa.
    assert!((steps[0].pressure_kpa - 101.3).abs() < FAO_TOL);

    // FAO-56 (Allen et al. 1998): es(25 °C) = 3.168 kPa, so RH 50 % leaves VPD = 1.584 kPa;
    // also given as an RH fraction of 0.5.
    let dir = site_with("time,ta,rh,sw\n2025-06-01T12:00,25,50,500\n");
    config.columns = PerVariable {
        t_air: Some("ta".into()),
        rh: Some("rh".into()),
        sw: Some("sw".into()),
        ..PerVariable::default()
    };
    config.units = PerVariable::default();
    let (steps, _) = read_all(&config, dir.path()).unwrap();
    assert!((steps[0].vpd_kpa - 1.584).abs() < FAO_TOL);
    let dir = site_with("time,ta,rh,sw\n2025-06-01T12:00,25,0.5,500\n");
    config.units.rh = Some("fraction".into());
    let (steps, _) = read_all(&config, dir.path()).unwrap();
    assert!((steps[0].vpd_kpa - 1.584).abs() < FAO_TOL);
}

#[test]
fn shortwave_from_ppfd_is_the_inverse() {
    // SW = PPFD / ppfd_per_sw; with 2.0 µmol J⁻¹, 1000 µmol m⁻² s⁻¹ is 500 W m⁻² (arithmetic).
    let dir = site_with("time,ta,vpd,par\n2025-06-01T12:00,20,1,1000\n");
    let config = ForcingConfig {
        path: "weather.csv".into(),
        ppfd_per_sw: Some(2.0),
        columns: PerVariable {
            t_air: Some("ta".into()),
            vpd: Some("vpd".into()),
            ppfd: Some("par".into()),
            ..PerVariable::default()
        },
        ..ForcingConfig::default()
    };
    let (steps, _) = read_all(&config, dir.path()).unwrap();
    assert!((steps[0].sw_w_m2 - 500.0).abs() < EXACT);
    assert!((steps[0].ppfd_umol_m2_s - 1000.0).abs() < EXACT);
}

#[test]
fn timestamp_marking_interval_end_is_moved_to_its_start() {
    // A half-hour row stamped 00:30 at its end covers 00:00–00:30 (definition of the setting).
    let dir = site_with("time,ta,vpd,sw\n2025-06-01T00:30,10,1,0\n2025-06-01T01:00,11,1,0\n");
    let config = ForcingConfig {
        path: "weather.csv".into(),
        step_minutes: Some(30),
        timestamp_marks: Some(TimestampMarks::End),
        columns: PerVariable {
            t_air: Some("ta".into()),
            vpd: Some("vpd".into()),
            sw: Some("sw".into()),
            ..PerVariable::default()
        },
        ..ForcingConfig::default()
    };
    let (steps, _) = read_all(&config, dir.path()).unwrap();
    assert_eq!(steps[0].time.to_string(), "2025-06-01T00:00");
    assert_eq!(steps[1].time.to_string(), "2025-06-01T00:30");
}

#[test]
fn from_and_to_select_a_period() {
    // Rows 00:00–04:00; [01:00, 03:00) is two steps; the 01:00 gap is still filled from 00:00.
    let csv = format!(
        "{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:00,,60,0,0\n\
         2025-06-01T02:00,14,60,0,0\n2025-06-01T03:00,15,60,0,0\n2025-06-01T04:00,16,60,0,0\n"
    );
    let dir = site_with(&csv);
    let t = |s: &str| Some(LocalTime::parse_iso(s).unwrap());
    let reader = ForcingReader::open(
        &basic_config(),
        dir.path(),
        0.0,
        t("2025-06-01T01:00"),
        t("2025-06-01T03:00"),
    )
    .unwrap();
    let steps: Vec<_> = reader.map(Result::unwrap).collect();
    assert_eq!(steps.len(), 2);
    assert!((steps[0].t_air_c - 12.0).abs() < EXACT);
    let mut empty = ForcingReader::open(
        &basic_config(),
        dir.path(),
        0.0,
        t("2026-01-01T00:00"),
        None,
    )
    .unwrap();
    assert!(matches!(
        empty.next(),
        Some(Err(ForcingError::EmptyPeriod { .. }))
    ));
}

#[test]
fn flux_tower_demo_reads_with_the_preset_alone() {
    // The demo tower file uses flux-tower names and units; the preset alone must read it. The
    // values are checked against the file read independently with the csv crate: VPD_F is hPa
    // (÷10 to kPa), TA_F is °C, −9999 is missing (filled, never passed through).
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/tower");
    let config = ForcingConfig {
        path: "halfhourly.csv".into(),
        preset: Some(Preset::FluxTower),
        ..ForcingConfig::default()
    };
    let (steps, reader) = read_all(&config, &demo).unwrap();
    let mut raw = csv::Reader::from_path(demo.join("halfhourly.csv")).unwrap();
    let headers = raw.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let (ta, vpd, start) = (col("TA_F"), col("VPD_F"), col("TIMESTAMP_START"));
    let mut rows = 0;
    let mut checked = 0;
    for (record, step) in raw.records().map(Result::unwrap).zip(&steps) {
        rows += 1;
        assert_eq!(
            step.time,
            LocalTime::parse_yyyymmddhhmm(&record[start]).unwrap()
        );
        let ta_raw: f64 = record[ta].parse().unwrap();
        let vpd_raw: f64 = record[vpd].parse().unwrap();
        if ta_raw != -9999.0 && vpd_raw != -9999.0 {
            assert!((step.t_air_c - ta_raw).abs() < EXACT);
            assert!((step.vpd_kpa - vpd_raw / 10.0).abs() < EXACT);
            checked += 1;
        } else {
            assert!(step.filled && step.t_air_c > -50.0 && step.vpd_kpa >= 0.0);
        }
        assert!(step.wind_m_s.is_some() && step.co2_umol_mol.is_none());
    }
    assert_eq!(rows, steps.len());
    assert!(checked > 1000, "{checked}");
    let report = reader.report();
    assert_eq!(report.step_minutes, 30);
    assert!(report.filled.values().sum::<usize>() > 0, "{report}");
}

// ---- One test per bad input: the message must name the line, the column and the value. ----

#[test]
fn missing_file_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let err = read_all(&basic_config(), dir.path()).err().unwrap();
    assert!(matches!(err, ForcingError::FileNotFound { .. }));
    assert!(err.to_string().contains("weather.csv"), "{err}");
}

#[test]
fn unparsable_number_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:00,12..5,60,0,0\n"),
    );
    assert_data_error(&err, &msg, 3, "ta", 2, "12..5", DataErrorKind::Number);
}

#[test]
fn unparsable_time_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-31T01:00,12,60,0,0\n"),
    );
    assert_data_error(
        &err,
        &msg,
        3,
        "time",
        1,
        "2025-06-31T01:00",
        DataErrorKind::Time,
    );
}

#[test]
fn time_going_backwards_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!(
            "{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:00,12,60,0,0\n\
             2025-06-01T00:00,12,60,0,0\n"
        ),
    );
    assert_data_error(
        &err,
        &msg,
        4,
        "time",
        1,
        "2025-06-01T00:00",
        DataErrorKind::TimeOrder,
    );
    assert!(msg.contains("line 3"), "names the earlier line: {msg}");
}

#[test]
fn repeated_time_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T00:00,12,60,0,0\n"),
    );
    assert_data_error(
        &err,
        &msg,
        3,
        "time",
        1,
        "2025-06-01T00:00",
        DataErrorKind::TimeOrder,
    );
    assert!(msg.contains("repeats"), "{msg}");
}

#[test]
fn irregular_step_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:30,12,60,0,0\n"),
    );
    assert_data_error(
        &err,
        &msg,
        3,
        "time",
        1,
        "2025-06-01T01:30",
        DataErrorKind::IrregularStep,
    );
    assert!(msg.contains("90 min") && msg.contains("60 min"), "{msg}");
}

#[test]
fn relative_humidity_above_105_percent_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,104.9,0,0\n2025-06-01T01:00,12,180,0,0\n"),
    );
    assert_data_error(&err, &msg, 3, "rh", 3, "180", DataErrorKind::Range);
}

#[test]
fn kelvin_in_a_celsius_column_is_located_with_a_hint() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,293.4,60,0,0\n"),
    );
    assert_data_error(&err, &msg, 2, "ta", 2, "293.4", DataErrorKind::Range);
    assert!(
        msg.contains("kelvin") && msg.contains("units.t_air = \"K\""),
        "{msg}"
    );
}

#[test]
fn strongly_negative_radiation_is_located_and_night_offsets_are_zeroed() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,-3.5,0\n2025-06-01T01:00,10,60,-120,0\n"),
    );
    assert_data_error(&err, &msg, 3, "sw", 4, "-120", DataErrorKind::Range);

    let dir = site_with(&format!(
        "{HEADER}2025-06-01T00:00,10,60,-3.5,0\n2025-06-01T01:00,10,60,-0.2,0\n\
         2025-06-01T02:00,10,60,4,0\n"
    ));
    let (steps, reader) = read_all(&basic_config(), dir.path()).unwrap();
    assert_eq!(steps[0].sw_w_m2, 0.0);
    assert_eq!(steps[0].ppfd_umol_m2_s, 0.0);
    assert_eq!(steps[2].sw_w_m2, 4.0);
    assert_eq!(reader.report().night_radiation_zeroed, 2);
}

#[test]
fn mapped_column_not_in_header_names_the_closest() {
    let dir = site_with("time,TA_1_1_1,rh,sw,rain\n2025-06-01T00:00,10,60,0,0\n");
    let mut config = basic_config();
    config.columns.t_air = Some("TA_1_1".into());
    let err = read_all(&config, dir.path()).err().unwrap();
    let msg = err.to_string();
    assert!(matches!(err, ForcingError::MissingColumn { .. }), "{msg}");
    assert!(
        msg.contains("`TA_1_1`") && msg.contains("`TA_1_1_1`"),
        "{msg}"
    );
}

#[test]
fn wrong_field_count_is_located() {
    let (err, msg) = data_error(
        &basic_config(),
        &format!("{HEADER}2025-06-01T00:00,10,60,0,0\n2025-06-01T01:00,10,60\n"),
    );
    assert!(
        matches!(
            err,
            ForcingError::Data {
                line: 3,
                kind: DataErrorKind::Csv,
                ..
            }
        ),
        "{msg}"
    );
}

#[test]
fn settings_errors_name_the_setting() {
    // Unknown variable and unknown unit, as the site file would give them (JSON here, same serde).
    let unknown_var: Result<ForcingConfig, _> =
        serde_json::from_str(r#"{"path": "w.csv", "columns": {"tair": "TA"}}"#);
    let msg = unknown_var.unwrap_err().to_string();
    assert!(msg.contains("tair"), "{msg}");
    let unknown_key: Result<ForcingConfig, _> =
        serde_json::from_str(r#"{"path": "w.csv", "max_gap": 3}"#);
    assert!(unknown_key.unwrap_err().to_string().contains("max_gap"));

    let parsed: ForcingConfig = serde_json::from_str(
        r#"{"path": "w.csv", "preset": "flux-tower", "units": {"t_air": "Fahrenheit"}}"#,
    )
    .unwrap();
    let msg = parsed.validate().unwrap_err().to_string();
    assert!(msg.contains("Fahrenheit") && msg.contains("t_air"), "{msg}");

    let mut no_humidity = basic_config();
    no_humidity.columns.rh = None;
    let msg = no_humidity.validate().unwrap_err().to_string();
    assert!(msg.contains("vpd") && msg.contains("rh"), "{msg}");

    let mut bad_gap = basic_config();
    bad_gap.max_gap_hours = Some(f64::NAN);
    let msg = bad_gap.validate().unwrap_err().to_string();
    assert!(msg.contains("max_gap_hours"), "{msg}");
}

// ---- Weather files as they come: layouts, units, typical years, checks by the reader. ----

/// The committed fixtures of these checks (written by `make_forcing_fixtures.py` beside them).
fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/forcing")
}

/// A `[forcing]` block given as JSON (the site file's TOML goes through the same serde).
fn config(json: &str) -> ForcingConfig {
    serde_json::from_str(json).unwrap_or_else(|e| panic!("{json}: {e}"))
}

/// Two steps agree: same time and flags, every value within `tol` (NaN equals NaN).
fn assert_same_steps(a: &[ForcingStep], b: &[ForcingStep], tol: f64, what: &str) {
    assert_eq!(a.len(), b.len(), "{what}: step count");
    let same = |x: f64, y: f64| (x.is_nan() && y.is_nan()) || (x - y).abs() <= tol;
    for (x, y) in a.iter().zip(b) {
        let at = format!("{what} at {}", x.time);
        assert_eq!(x.time, y.time, "{at}");
        assert_eq!((x.filled, x.missing), (y.filled, y.missing), "{at}");
        for (name, u, v) in [
            ("t_air", x.t_air_c, y.t_air_c),
            ("vpd", x.vpd_kpa, y.vpd_kpa),
            ("sw", x.sw_w_m2, y.sw_w_m2),
            ("ppfd", x.ppfd_umol_m2_s, y.ppfd_umol_m2_s),
            ("pressure", x.pressure_kpa, y.pressure_kpa),
            ("precip", x.precip_mm, y.precip_mm),
            (
                "wind",
                x.wind_m_s.unwrap_or(-1.0),
                y.wind_m_s.unwrap_or(-1.0),
            ),
        ] {
            assert!(same(u, v), "{at}: {name} {u} vs {v}");
        }
    }
}

const PLAIN: &str = r#"{"path": "plain.csv",
    "columns": {"t_air": "t_air", "rh": "rh", "sw": "sw", "precip": "precip",
                "pressure": "pressure", "wind": "wind"}}"#;

#[test]
fn every_layout_reads_to_the_same_steps_as_the_plain_file() {
    // Each fixture holds the numbers of plain.csv in another layout or unit (written so by the
    // generator); unit factors are definitions: °F = °C·9/5 + 32, 1 inch = 25.4 mm, 1 km h⁻¹ =
    // 1/3.6 m s⁻¹, 1 mbar = 1 hPa = 0.1 kPa, J m⁻² over an hour ÷ 3600 s = W m⁻².
    let dir = fixtures();
    let (plain, _) = read_all(&config(PLAIN), &dir).unwrap();
    assert_eq!(plain.len(), 48);
    assert!(plain.iter().any(|s| s.filled), "the fixture has gaps");
    let layouts = [
        (
            "pattern_semicolon",
            r##"{"path": "pattern_semicolon.csv", "delimiter": ";", "comment": "#",
                "time_column": "stamp", "time_format": "%d.%m.%Y %H:%M",
                "missing": ["-999"],
                "columns": {"t_air": "ta", "rh": "rh", "sw": "sw", "precip": "rain",
                            "pressure": "pa", "wind": "ws"}}"##,
        ),
        (
            "date_time_hour_ending",
            r#"{"path": "date_time_hour_ending.csv", "header_line": 2,
                "date_column": "date", "date_format": "%m/%d/%Y",
                "time_column": "hour", "time_format": "%H:%M", "timestamp_marks": "end",
                "columns": {"t_air": "temp_f", "rh": "rh", "sw": "sw_j_m2", "precip": "rain_in",
                            "pressure": "pres_mbar", "wind": "wind_kmh"},
                "units": {"t_air": "degF", "sw": "J m-2", "precip": "inch",
                          "pressure": "mbar", "wind": "km h-1"}}"#,
        ),
        (
            "fields_doy",
            r#"{"path": "fields_doy.csv", "year_column": "yr", "doy_column": "doy",
                "hour_column": "hr", "timestamp_marks": "end",
                "missing": {"all": ["-9999", ""], "t_air": [-9900], "precip": ["-9900"],
                            "wind": ["-8888"]},
                "columns": {"t_air": "ta_tenths", "rh": "rh", "sw": "sw", "precip": "rain_tenths",
                            "pressure": "pa_hpa", "wind": "ws"},
                "units": {"pressure": "hPa"},
                "scale": {"t_air": 0.1, "precip": 0.1}}"#,
        ),
        (
            "precip_totals",
            r#"{"path": "precip_totals.csv", "time_column": "TS", "time_format": "yyyymmddhhmm",
                "precip_period_column": "rain_hours",
                "columns": {"t_air": "ta", "rh": "rh", "sw": "sw", "precip": "rain",
                            "pressure": "pa", "wind": "ws"}}"#,
        ),
        (
            "sensors",
            r#"{"path": "sensors.csv", "preset": "flux-tower-sensors", "step_minutes": 60}"#,
        ),
    ];
    for (name, json) in layouts {
        let (steps, reader) =
            read_all(&config(json), &dir).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_same_steps(&plain, &steps, 1e-9, name);
        let report = reader.report();
        if name == "sensors" {
            // Two wind and one temperature value carry flag 3 > qc_max 1: refused, then filled.
            assert_eq!(report.qc_refused.get(&Variable::TAir), Some(&1), "{report}");
            assert_eq!(report.qc_refused.get(&Variable::Wind), Some(&2), "{report}");
        }
        if name == "precip_totals" {
            // 0.9 mm over 3 h is 0.3 mm in each hour (arithmetic); plain.csv has 0.3 there.
            assert_eq!(report.precip_totals_spread, 1);
            assert!((steps[10].precip_mm - 0.3).abs() < EXACT);
        }
    }
}

#[test]
fn typical_year_runs_as_it_comes_like_its_cleaned_twin() {
    // 8,760 hours with a metadata line, split date and time, hour-ending 01:00–24:00, months from
    // different years, −9900 codes and tenths, against the same numbers cleaned by hand (written
    // together by the generator): `isodisc run` must give the same annual and monthly results.
    let dir = fixtures();
    let out = tempfile::tempdir().unwrap();
    let mut tables = Vec::new();
    for site in ["typical_raw.toml", "typical_clean.toml"] {
        let o = out.path().join(site);
        let site = dir.join(site);
        crate::common::run_quiet(&site, &o).unwrap();
        let read = |f: &str| std::fs::read_to_string(o.join(f)).unwrap();
        tables.push((read("annual.csv"), read("monthly.csv")));
    }
    let rows = |text: &str| -> Vec<Vec<String>> {
        text.lines()
            .map(|l| l.split(',').map(str::to_string).collect())
            .collect()
    };
    for (raw, clean) in [(&tables[0].0, &tables[1].0), (&tables[0].1, &tables[1].1)] {
        let (a, b) = (rows(raw), rows(clean));
        assert_eq!(a.len(), b.len());
        for (ra, rb) in a.iter().zip(&b) {
            for (x, y) in ra.iter().zip(rb) {
                match (x.parse::<f64>(), y.parse::<f64>()) {
                    // Tenths times 0.1 differ from the decimal in the last bits only.
                    (Ok(u), Ok(v)) => {
                        assert!((u - v).abs() <= 1e-9 * v.abs().max(1.0), "{x} vs {y}")
                    }
                    _ => assert_eq!(x, y),
                }
            }
        }
    }
    let annual = rows(&tables[0].0);
    let col = |name: &str| annual[0].iter().position(|h| h == name).unwrap();
    assert_eq!(annual[1][0], "2001");
    assert_eq!(annual[1][col("steps")], "8760");
    assert_eq!(annual[1][col("complete")], "1");
    let precip: f64 = annual[1][col("precip")].parse().unwrap();
    assert!(
        (0.0..5000.0).contains(&precip),
        "no −9900 reached the run: {precip}"
    );
}

#[test]
fn more_units_convert_by_their_definitions() {
    // Definitions: 1 Pa = 1e-3 kPa; J m⁻² over a 30-min step ÷ 1800 s = W m⁻²; 1 MJ = 1e6 J;
    // kg m⁻² s⁻¹ × 1800 s = mm per step; 2 mm h⁻¹ for half an hour = 1 mm.
    let dir = site_with("time,ta,rh,sw,p,pa\n2025-06-01T12:00,25,50,900000,0.0005,101300\n");
    let mut c = config(
        r#"{"path": "weather.csv", "step_minutes": 30,
            "columns": {"t_air": "ta", "rh": "rh", "sw": "sw", "precip": "p", "pressure": "pa"},
            "units": {"sw": "J m-2", "precip": "kg m-2 s-1", "pressure": "Pa"}}"#,
    );
    let (steps, _) = read_all(&c, dir.path()).unwrap();
    assert!((steps[0].sw_w_m2 - 500.0).abs() < EXACT);
    assert!((steps[0].precip_mm - 0.9).abs() < EXACT);
    assert!((steps[0].pressure_kpa - 101.3).abs() < EXACT);
    let dir = site_with("time,ta,rh,sw,p,pa\n2025-06-01T12:00,25,50,0.9,2,1013\n");
    c.units = PerVariable {
        sw: Some("MJ m-2".into()),
        precip: Some("mm h-1".into()),
        pressure: Some("hPa".into()),
        ..PerVariable::default()
    };
    let (steps, _) = read_all(&c, dir.path()).unwrap();
    assert!((steps[0].sw_w_m2 - 500.0).abs() < EXACT);
    assert!((steps[0].precip_mm - 1.0).abs() < EXACT);
    assert!((steps[0].pressure_kpa - 101.3).abs() < EXACT);
}

#[test]
fn vapour_pressure_and_specific_humidity_give_the_fao56_vpd() {
    // FAO-56 (Allen et al. 1998): es(25 °C) = 3.168 kPa, so a vapour pressure of 1.584 kPa leaves
    // VPD = 1.584 kPa. Specific humidity q = 0.622·e/(p − 0.378·e) (definition) for e = 1.584 kPa
    // at p = 100 kPa gives the same VPD.
    let e = 1.584_f64;
    let q = 0.622 * e / (100.0 - 0.378 * e);
    let dir = site_with(&format!(
        "time,ta,ea,q,sw,pa\n2025-06-01T12:00,25,15.84,{q},500,100\n"
    ));
    let ea = config(
        r#"{"path": "weather.csv", "columns": {"t_air": "ta", "vapour_pressure": "ea", "sw": "sw"},
            "units": {"vapour_pressure": "hPa"}}"#,
    );
    let (steps, reader) = read_all(&ea, dir.path()).unwrap();
    assert!((steps[0].vpd_kpa - 1.584).abs() < FAO_TOL);
    assert!(
        reader
            .report()
            .notes
            .iter()
            .any(|n| n.contains("vapour pressure"))
    );
    let sh = config(
        r#"{"path": "weather.csv",
            "columns": {"t_air": "ta", "specific_humidity": "q", "sw": "sw", "pressure": "pa"}}"#,
    );
    let (steps, _) = read_all(&sh, dir.path()).unwrap();
    assert!(
        (steps[0].vpd_kpa - 1.584).abs() < FAO_TOL,
        "{}",
        steps[0].vpd_kpa
    );
}

#[test]
fn hour_24_ends_the_day_and_iso_accepts_it_in_files() {
    // 24:00 on 1 June is 00:00 on 2 June (the end of the day's last hour; common practice).
    let dir = site_with(
        "time,ta,rh,sw\n2025-06-01T23:00,10,50,0\n2025-06-01T24:00,11,50,0\n2025-06-02T01:00,12,50,0\n",
    );
    let c =
        config(r#"{"path": "weather.csv", "columns": {"t_air": "ta", "rh": "rh", "sw": "sw"}}"#);
    let (steps, _) = read_all(&c, dir.path()).unwrap();
    assert_eq!(steps[1].time.to_string(), "2025-06-02T00:00");
    assert_eq!(steps[1].line, 3);
}

#[test]
fn a_driver_missing_in_more_than_a_fifth_of_the_steps_is_warned_about() {
    // 3 of 10 wind values missing (30 % > 20 %): a warning naming the variable and the column.
    let mut csv = String::from("time,ta,rh,sw,ws\n");
    for h in 0..10 {
        let ws = if (3..6).contains(&h) { "" } else { "2" };
        csv.push_str(&format!("2025-06-01T{h:02}:00,10,50,0,{ws}\n"));
    }
    let dir = site_with(&csv);
    let c = config(
        r#"{"path": "weather.csv", "columns": {"t_air": "ta", "rh": "rh", "sw": "sw", "wind": "ws"}}"#,
    );
    let (_, reader) = read_all(&c, dir.path()).unwrap();
    let report = reader.report();
    assert_eq!(report.missing_values.get(&Variable::Wind), Some(&3));
    assert_eq!(report.warnings.len(), 1, "{report}");
    assert!(report.warnings[0].contains("wind") && report.warnings[0].contains("`ws`"));
    assert!(
        report.warnings[0].contains("30.0 %"),
        "{}",
        report.warnings[0]
    );
}

// ---- One test per new error: file, line, column and value. ----

fn basic_json(extra: &str) -> ForcingConfig {
    config(&format!(
        r#"{{"path": "weather.csv", {extra}
            "columns": {{"t_air": "ta", "rh": "rh", "sw": "sw", "precip": "rain"}}}}"#
    ))
}

#[test]
fn header_on_another_line_names_the_line_taken_and_its_fields() {
    let dir = site_with(
        "Station 12 (invented),-15.4,28.3\ntime,ta,rh,sw,rain\n2025-06-01T00:00,10,60,0,0\n",
    );
    let err = read_all(&basic_config(), dir.path()).err().unwrap();
    let msg = err.to_string();
    assert!(matches!(err, ForcingError::MissingColumn { .. }), "{msg}");
    assert!(
        msg.contains("taken from line 1") && msg.contains("`Station 12 (invented)`"),
        "{msg}"
    );
    assert!(msg.contains("header_line"), "{msg}");
    // With header_line = 2 the same file reads.
    let (steps, _) = read_all(&basic_json(r#""header_line": 2,"#), dir.path()).unwrap();
    assert_eq!(steps.len(), 1);
}

#[test]
fn a_header_split_wrongly_suggests_the_delimiter() {
    let dir = site_with("time\tta\trh\tsw\train\n2025-06-01T00:00\t10\t60\t0\t0\n");
    let msg = read_all(&basic_config(), dir.path())
        .err()
        .unwrap()
        .to_string();
    assert!(msg.contains("delimiter = \"\\t\""), "{msg}");
    let dir = site_with("time;ta;rh;sw;rain\n2025-06-01T00:00;10;60;0;0\n");
    let msg = read_all(&basic_config(), dir.path())
        .err()
        .unwrap()
        .to_string();
    assert!(msg.contains("delimiter = \";\""), "{msg}");
}

#[test]
fn a_duplicated_column_names_both() {
    let dir = site_with("time,ta,rh,ta,sw,rain\n2025-06-01T00:00,10,60,11,0,0\n");
    let err = read_all(&basic_config(), dir.path()).err().unwrap();
    let msg = err.to_string();
    assert!(
        matches!(
            err,
            ForcingError::DuplicateColumn {
                numbers: (2, 4),
                ..
            }
        ),
        "{msg}"
    );
    assert!(
        msg.contains("line 1")
            && msg.contains("`ta`")
            && msg.contains("no. 2")
            && msg.contains("no. 4"),
        "{msg}"
    );
}

#[test]
fn comment_lines_keep_the_line_numbers_of_the_file() {
    // Line 4 (after a comment line) holds the bad value.
    let (err, msg) = data_error(
        &basic_json(r##""comment": "#","##),
        "time,ta,rh,sw,rain\n2025-06-01T00:00,10,60,0,0\n# a note\n2025-06-01T01:00,x,60,0,0\n",
    );
    assert_data_error(&err, &msg, 4, "ta", 2, "x", DataErrorKind::Number);
}

#[test]
fn a_time_not_matching_its_pattern_is_located() {
    let c = basic_json(r#""time_format": "%d.%m.%Y %H:%M","#);
    let (err, msg) = data_error(
        &c,
        "time,ta,rh,sw,rain\n01.06.2025 00:00,10,60,0,0\n2025-06-01 01:00,10,60,0,0\n",
    );
    assert_data_error(
        &err,
        &msg,
        3,
        "time",
        1,
        "2025-06-01 01:00",
        DataErrorKind::Time,
    );
    assert!(msg.contains("%d.%m.%Y %H:%M"), "{msg}");
}

#[test]
fn hour_24_with_minutes_is_located() {
    let c = basic_json(r#""date_column": "d", "date_format": "%m/%d/%Y","#);
    let (err, msg) = data_error(&c, "d,time,ta,rh,sw,rain\n06/01/2025,24:30,10,60,0,0\n");
    assert_data_error(&err, &msg, 2, "time", 2, "24:30", DataErrorKind::Time);
    assert!(msg.contains("minute 0"), "{msg}");
}

#[test]
fn a_separate_time_field_that_is_not_whole_is_located() {
    let c = basic_json(r#""year_column": "y", "doy_column": "j", "hour_column": "h","#);
    let (err, msg) = data_error(
        &c,
        "y,j,h,ta,rh,sw,rain\n2025,152,1,10,60,0,0\n2025,152,2.5,10,60,0,0\n",
    );
    assert_data_error(&err, &msg, 3, "h", 3, "2.5", DataErrorKind::Time);
}

#[test]
fn a_typical_year_with_a_month_out_of_order_is_located() {
    // Daily steps: January 1–31, then March 1 (February left out).
    let mut csv = String::from("time,ta,rh,sw,rain\n");
    for d in 1..=31 {
        csv.push_str(&format!("1990-01-{d:02}T00:00,10,60,0,0\n"));
    }
    csv.push_str("1996-03-01T00:00,10,60,0,0\n");
    let c = basic_json(r#""typical_year": 2001, "step_minutes": 1440,"#);
    let (err, msg) = data_error(&c, &csv);
    assert_data_error(
        &err,
        &msg,
        33,
        "time",
        1,
        "1996-03-01T00:00",
        DataErrorKind::IrregularStep,
    );
    assert!(msg.contains("January to December"), "{msg}");
}

#[test]
fn a_typical_year_not_starting_on_1_january_is_located() {
    let c = basic_json(r#""typical_year": 2001,"#);
    let (err, msg) = data_error(&c, "time,ta,rh,sw,rain\n1990-01-02T00:00,10,60,0,0\n");
    assert_data_error(
        &err,
        &msg,
        2,
        "time",
        1,
        "1990-01-02T00:00",
        DataErrorKind::TimeOrder,
    );
    assert!(msg.contains("1 January"), "{msg}");
}

#[test]
fn a_typical_year_ending_early_is_located() {
    let c = basic_json(r#""typical_year": 2001, "step_minutes": 1440,"#);
    let (err, msg) = data_error(
        &c,
        "time,ta,rh,sw,rain\n1990-01-01T00:00,10,60,0,0\n1990-01-02T00:00,10,60,0,0\n",
    );
    match &err {
        ForcingError::Data { line, column, .. } => {
            assert_eq!((*line, column.as_str()), (3, "time"), "{msg}");
        }
        other => panic!("{other}"),
    }
    assert!(msg.contains("31 December"), "{msg}");
}

#[test]
fn february_29_in_a_common_typical_year_is_located() {
    let mut csv = String::from("time,ta,rh,sw,rain\n");
    for d in 1..=31 {
        csv.push_str(&format!("1990-01-{d:02}T00:00,10,60,0,0\n"));
    }
    for d in 1..=29 {
        csv.push_str(&format!("1996-02-{d:02}T00:00,10,60,0,0\n"));
    }
    let c = basic_json(r#""typical_year": 2001, "step_minutes": 1440,"#);
    let (err, msg) = data_error(&c, &csv);
    assert_data_error(
        &err,
        &msg,
        61,
        "time",
        1,
        "1996-02-29T00:00",
        DataErrorKind::Time,
    );
    assert!(msg.contains("2001"), "{msg}");
}

#[test]
fn values_out_of_range_are_located_with_the_valid_range() {
    // Each row: the cell that must be refused and the range the message states (docs/forcing.md).
    let cases = [
        ("rain", "-0.5", "0…2000 mm"),
        ("rain", "-9900", "missing.precip"),
        ("ta", "-80", "-70…60 °C"),
        ("ws", "-1", "0…100 m s⁻¹"),
        ("pa", "1013", "30…110 kPa"),
        ("lai", "-0.1", "0…20 m² m⁻²"),
        ("swc", "35", "0…1 m³ m⁻³"),
        ("co2", "42", "100…5000 µmol mol⁻¹"),
        ("d13c", "8.5", "-30…0 ‰"),
        ("sw", "2500", "0…2000 W m⁻²"),
    ];
    let header = "time,ta,rh,sw,rain,ws,pa,lai,swc,co2,d13c";
    let good = ["10", "60", "0", "0", "2", "100", "2", "0.3", "420", "-8.5"];
    let c = config(
        r#"{"path": "weather.csv",
            "columns": {"t_air": "ta", "rh": "rh", "sw": "sw", "precip": "rain", "wind": "ws",
                        "pressure": "pa", "lai": "lai", "swc": "swc", "co2": "co2",
                        "d13c_co2": "d13c"}}"#,
    );
    let names: Vec<&str> = header.split(',').collect();
    for (column, value, expect) in cases {
        let number = names.iter().position(|n| *n == column).unwrap();
        let mut bad = good.to_vec();
        bad[number - 1] = value;
        let csv = format!(
            "{header}\n2025-06-01T00:00,{}\n2025-06-01T01:00,{}\n",
            good.join(","),
            bad.join(",")
        );
        let (err, msg) = data_error(&c, &csv);
        assert_data_error(
            &err,
            &msg,
            3,
            column,
            number + 1,
            value,
            DataErrorKind::Range,
        );
        assert!(msg.contains(expect), "{column}: {msg}");
    }
}

#[test]
fn a_quality_flag_that_is_not_a_number_is_located() {
    let c = basic_json(r#""qc_max": 1,"#);
    let (err, msg) = data_error(
        &c,
        "time,ta,ta_QC,rh,sw,rain\n2025-06-01T00:00,10,A,60,0,0\n",
    );
    assert_data_error(&err, &msg, 2, "ta_QC", 3, "A", DataErrorKind::Number);
}

#[test]
fn a_precipitation_total_over_rows_with_their_own_value_is_located() {
    let c = basic_json(r#""precip_period_column": "hrs","#);
    let (err, msg) = data_error(
        &c,
        "time,ta,rh,sw,rain,hrs\n2025-06-01T00:00,10,60,0,0,\n2025-06-01T01:00,10,60,0,,\n\
         2025-06-01T02:00,10,60,0,3,3\n",
    );
    assert_data_error(&err, &msg, 4, "rain", 5, "3", DataErrorKind::Range);
    assert!(
        msg.contains("line 2"),
        "names the row with its own value: {msg}"
    );
    let (err, msg) = data_error(
        &c,
        "time,ta,rh,sw,rain,hrs\n2025-06-01T00:00,10,60,0,1,1.5\n",
    );
    assert_data_error(&err, &msg, 2, "hrs", 6, "1.5", DataErrorKind::Range);
}

#[test]
fn new_settings_errors_name_the_setting() {
    for (json, expect) in [
        (r#""time_format": "%d.%q.%Y","#, "%q"),
        (r#""date_format": "%m/%d/%Y","#, "date_column"),
        (r#""doy_column": "j","#, "year_column"),
        (r#""header_line": 0,"#, "header_line"),
        (r###""comment": "##","###, "comment"),
        (r#""precip_period_column": "h","#, "precip"),
    ] {
        let text = format!(
            r#"{{"path": "weather.csv", {json} "columns": {{"t_air": "ta", "rh": "rh", "sw": "sw"}}}}"#
        );
        let msg = match serde_json::from_str::<ForcingConfig>(&text) {
            Ok(c) => c.validate().unwrap_err().to_string(),
            Err(e) => e.to_string(),
        };
        assert!(msg.contains(expect), "{json}: {msg}");
    }
    let c = config(
        r#"{"path": "w.csv", "scale": {"t_air": 0}, "columns": {"t_air": "ta", "rh": "rh", "sw": "sw"}}"#,
    );
    assert!(
        c.validate()
            .unwrap_err()
            .to_string()
            .contains("scale.t_air")
    );
    let bad: Result<ForcingConfig, _> =
        serde_json::from_str(r#"{"path": "w.csv", "missing": {"rain": ["-9900"]}}"#);
    assert!(bad.unwrap_err().to_string().contains("missing.rain"));
    let dir = site_with("only one line\n");
    let err = read_all(&basic_json(r#""header_line": 5,"#), dir.path())
        .err()
        .unwrap();
    assert!(err.to_string().contains("header_line = 5"), "{err}");
}

proptest::proptest! {
    #![proptest_config(crate::common::proptest_config("runner_forcing", 64))]
    #[test]
    fn the_reader_never_panics_on_arbitrary_bytes(
        bytes in proptest::collection::vec(proptest::prelude::any::<u8>(), 0..600),
        layout in 0usize..4,
    ) {
        // Any file, in any layout: an error or steps, never a panic.
        let dir = tempfile::tempdir().unwrap();
        let mut text = b"time,ta,rh,sw,rain,y,j,h\n".to_vec();
        text.extend_from_slice(&bytes);
        std::fs::write(dir.path().join("weather.csv"), &text).unwrap();
        let c = match layout {
            0 => basic_config(),
            1 => basic_json(r##""comment": "#", "header_line": 1, "time_format": "%d.%m.%Y %H:%M", "precip_period_column": "h","##),
            2 => basic_json(r#""year_column": "y", "doy_column": "j", "hour_column": "h", "typical_year": 2001, "qc_max": 0,"#),
            _ => basic_json(r#""header_line": 2, "timestamp_marks": "end", "scale": {"t_air": 0.1},"#),
        };
        if let Ok(reader) = ForcingReader::open(&c, dir.path(), 100.0, None, None) {
            for item in reader {
                if item.is_err() {
                    break;
                }
            }
        }
    }
}

/// `isodisc run ARGS…` in-process; the summary it would print, or the error chain.
fn run_summary(args: &[&str]) -> Result<String, String> {
    use clap::Parser;
    let cli = isodisc_runner::cli::Cli::try_parse_from(
        std::iter::once("isodisc").chain(args.iter().copied()),
    )
    .map_err(|e| e.to_string())?;
    let isodisc_runner::cli::Command::Run(run) = cli.command else {
        panic!("not a run: {args:?}");
    };
    isodisc_runner::commands::run::RunPlan::from_args(&run)
        .and_then(|p| p.execute())
        .map(|(summary, _)| summary)
        .map_err(|e| e.chain())
}

#[test]
fn a_period_outside_the_file_states_what_the_file_covers() {
    // The demo weather covers 2025 (hourly, from the file itself).
    let site = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/site.toml");
    let out = tempfile::tempdir().unwrap();
    let o = out.path().join("r");
    let err = run_summary(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        o.to_str().unwrap(),
        "--from",
        "2027-01-01",
    ])
    .unwrap_err();
    assert!(
        err.contains("the file covers the steps from 2025-01-01T00:00 to 2025-12-31T23:00"),
        "{err}"
    );
    assert!(!o.exists(), "a failed run writes nothing");
}

#[test]
fn a_partial_overlap_runs_the_overlap_and_labels_part_of_a_year() {
    // Asked: 2025-11-01 to 2026-02-28; the file ends 2025-12-31T23:00. The run covers
    // November–December 2025 (61 days · 24 steps = 1464 steps, arithmetic), says so, and labels
    // 2025 as part of a year while every day and both months are complete.
    let site = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/site.toml");
    let out = tempfile::tempdir().unwrap();
    let o = out.path().join("r");
    let summary = run_summary(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        o.to_str().unwrap(),
        "--from",
        "2025-11-01",
        "--to",
        "2026-02-28",
    ])
    .unwrap();
    assert!(
        summary.contains("part of 2025: 1464 steps of the year"),
        "{summary}"
    );
    assert!(
        summary.contains("period: the period asked for runs until 2026-03-01T00:00, beyond the file's last step 2025-12-31T23:00"),
        "{summary}"
    );
    assert!(
        summary.contains("written to ") && summary.contains("annual.csv, run.json"),
        "{summary}"
    );
    let table = |f: &str| {
        let text = std::fs::read_to_string(o.join(f)).unwrap();
        let rows: Vec<Vec<String>> = text
            .lines()
            .map(|l| l.split(',').map(str::to_string).collect())
            .collect();
        let c = rows[0].iter().position(|h| h == "complete").unwrap();
        rows[1..]
            .iter()
            .map(|r| (r[0].clone(), r[c].clone()))
            .collect::<Vec<_>>()
    };
    assert_eq!(
        table("annual.csv"),
        vec![("2025".to_string(), "0".to_string())]
    );
    assert_eq!(
        table("monthly.csv"),
        vec![
            ("2025-11".to_string(), "1".to_string()),
            ("2025-12".to_string(), "1".to_string())
        ]
    );
    let daily = table("daily.csv");
    assert_eq!(daily.len(), 61);
    assert!(daily.iter().all(|(_, c)| c == "1"));
    let log: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(o.join("run.json")).unwrap()).unwrap();
    assert_eq!(
        log["settings"]["forcing"]["period_beyond_file"]
            .as_array()
            .map(Vec::len),
        Some(1)
    );
}

#[test]
fn the_summary_says_what_the_run_assumed_in_the_right_number() {
    // The demo has RH, shortwave and no pressure column: VPD, PPFD and pressure are derived, and
    // the summary says so; the respired carbon's lag is 1 day (counted in the singular).
    let site = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/site.toml");
    let out = tempfile::tempdir().unwrap();
    let o = out.path().join("r");
    let summary =
        run_summary(&["run", site.to_str().unwrap(), "--out", o.to_str().unwrap()]).unwrap();
    for expect in [
        "assumed: VPD from relative humidity",
        "assumed: PPFD = shortwave",
        "assumed: no pressure column",
        "assumed: CO2 constant at 425",
        &format!("written to {}: steps.csv", o.display()),
    ] {
        assert!(summary.contains(expect), "{expect}: {summary}");
    }
    assert!(
        !summary.contains(" 1 days") && !summary.contains(" 1 steps"),
        "{summary}"
    );
    // English grammar: one day, two days, no values.
    use isodisc_runner::output::plural;
    assert_eq!(plural(1u64, "day"), "1 day");
    assert_eq!(plural(2u64, "day"), "2 days");
    assert_eq!(plural(0u64, "value"), "0 values");
    assert_eq!(plural(1u64, "step"), "1 step");
    assert_eq!(plural(3u64, "entry"), "3 entries");
}

#[test]
fn a_model_range_error_names_the_weather_files_line() {
    // 58 °C at 0 % RH passes the reader's checks but gives a VPD of about 18 kPa (FAO-56), beyond
    // the leaf model's 0–10 kPa: the model's error must come with the weather file and its line.
    let dir = tempfile::tempdir().unwrap();
    let site = std::fs::read_to_string(fixtures().join("typical_clean.toml"))
        .unwrap()
        .replace("typical_clean.csv", "hot.csv");
    std::fs::write(dir.path().join("site.toml"), site).unwrap();
    let mut csv = String::from("time,t_air_c,rh_percent,sw_w_m2,pressure_kpa,wind_m_s,precip_mm\n");
    for h in 0..24 {
        let (t, rh) = if h == 13 { ("58", "0") } else { ("25", "50") };
        let sw = if (7..18).contains(&h) { "600" } else { "0" };
        csv.push_str(&format!("2025-01-01T{h:02}:00,{t},{rh},{sw},89,2,0\n"));
    }
    std::fs::write(dir.path().join("hot.csv"), csv).unwrap();
    let site = dir.path().join("site.toml");
    let out = dir.path().join("out");
    let err = crate::common::run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    // Line 15: the header is line 1, 13:00 is the 14th data row.
    assert!(err.contains("hot.csv, line 15"), "{err}");
    assert!(err.contains("vpd"), "{err}");
}

#[test]
fn a_driver_mostly_missing_is_warned_about_in_the_summary_and_run_json() {
    // Wind missing in 12 of 48 steps (25 % > 20 %): the run's summary and run.json say so.
    let dir = tempfile::tempdir().unwrap();
    let site = std::fs::read_to_string(fixtures().join("typical_clean.toml"))
        .unwrap()
        .replace("typical_clean.csv", "windy.csv");
    std::fs::write(dir.path().join("site.toml"), site).unwrap();
    let mut csv = String::from("time,t_air_c,rh_percent,sw_w_m2,pressure_kpa,wind_m_s,precip_mm\n");
    for i in 0..48 {
        let h = i % 24;
        let sw = if (7..18).contains(&h) { "600" } else { "0" };
        let wind = if (10..22).contains(&i) { "" } else { "2" };
        csv.push_str(&format!(
            "2025-01-{:02}T{h:02}:00,25,50,{sw},89,{wind},0\n",
            1 + i / 24
        ));
    }
    std::fs::write(dir.path().join("windy.csv"), csv).unwrap();
    let site = dir.path().join("site.toml");
    let out = dir.path().join("out");
    let summary = run_summary(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap();
    assert!(
        summary.contains("warning: wind is missing in 25.0 % of the steps"),
        "{summary}"
    );
    let log: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    let warnings = log["warnings"].as_array().unwrap();
    assert_eq!(warnings.len(), 1, "{log}");
    assert!(warnings[0].as_str().unwrap().contains("`wind_m_s`"));
    assert_eq!(log["gaps"]["missing_values"]["wind"], 12);
}

/// The demo site file with its `[forcing]` table replaced by `forcing` (and the history given by
/// its absolute path), written into `dir`.
fn demo_site_with_forcing(dir: &Path, forcing: &str) -> PathBuf {
    let demo = crate::common::demo_path("site.toml");
    let text = std::fs::read_to_string(&demo).unwrap();
    let head = &text[..text.find("[forcing]").unwrap()];
    let history = crate::common::demo_path("atmosphere_history.csv");
    let head = head.replace(
        r#""atmosphere_history.csv""#,
        &format!("{:?}", history.to_str().unwrap()),
    );
    let path = dir.join("site.toml");
    std::fs::write(&path, format!("{head}{forcing}")).unwrap();
    path
}

fn site_netcdf_fixture(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/site_netcdf")
        .join(name)
        .to_str()
        .unwrap()
        .to_string()
}

/// The `[forcing]` table of the CSV copy and of the NetCDF copy in the same units.
fn csv_and_same_units_forcing() -> (String, String) {
    let columns = "[forcing.columns]\nt_air = \"t_air_c\"\nrh = \"rh_percent\"\nsw = \"sw_w_m2\"\n\
                   precip = \"precip_mm\"\nwind = \"wind_m_s\"\n";
    (
        format!(
            "[forcing]\npath = {:?}\ntime_column = \"time\"\nstep_minutes = 60\n{columns}",
            site_netcdf_fixture("weather.csv")
        ),
        format!(
            "[forcing]\npath = {:?}\nstep_minutes = 60\n{columns}",
            site_netcdf_fixture("weather_same_units.nc")
        ),
    )
}

/// Every output file of a run except `run.json` (which records the weather file's path).
fn run_outputs(out: &Path) -> Vec<(String, Vec<u8>)> {
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(out)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "csv"))
        .map(|p| {
            let name = p.file_name().unwrap().to_str().unwrap().to_string();
            (name, std::fs::read(&p).unwrap())
        })
        .collect();
    files.sort();
    files
}

/// A NetCDF copy of a CSV weather file holding the same numbers in the same units gives the same
/// run, byte for byte (common practice: the file format carries no information; the copy is made
/// by tests/fixtures/site_netcdf/make_site_netcdf.py from the CSV's text).
#[test]
fn netcdf_site_weather_gives_the_same_run_as_its_csv() {
    let tmp = tempfile::tempdir().unwrap();
    let (csv, nc) = csv_and_same_units_forcing();
    let (a, b) = (tmp.path().join("a"), tmp.path().join("b"));
    std::fs::create_dir_all(&a).unwrap();
    std::fs::create_dir_all(&b).unwrap();
    let site_csv = demo_site_with_forcing(&a, &csv);
    let site_nc = demo_site_with_forcing(&b, &nc);
    crate::common::run_quiet(&site_csv, &a.join("out")).unwrap();
    crate::common::run_quiet(&site_nc, &b.join("out")).unwrap();
    let (x, y) = (run_outputs(&a.join("out")), run_outputs(&b.join("out")));
    assert!(
        x.len() >= 3,
        "{:?}",
        x.iter().map(|f| &f.0).collect::<Vec<_>>()
    );
    assert_eq!(
        x.iter().map(|f| &f.0).collect::<Vec<_>>(),
        y.iter().map(|f| &f.0).collect::<Vec<_>>()
    );
    for ((name, p), (_, q)) in x.iter().zip(&y) {
        assert!(p == q, "{name} differs between the CSV and the NetCDF run");
    }
}

/// The NetCDF-4 copy in land-model units (K, kg kg-1, W/m^2, kg/m^2/s, Pa, m/s; dims (time, y, x)
/// with y = x = 1) gives the same steps as the CSV in °C, %, W m-2, mm: temperature exactly
/// shifted by 273.15 (to 1e-9 °C), rainfall rate × 3600 s = mm, and the VPD from specific
/// humidity and pressure equal to the VPD from RH (the fixture made the humidity from RH with
/// FAO-56 Tetens; to 1e-9 kPa).
#[test]
fn netcdf_site_weather_in_land_model_units_converts_as_the_csv_reader() {
    let tmp = tempfile::tempdir().unwrap();
    let (csv, _) = csv_and_same_units_forcing();
    let lsm = format!(
        "[forcing]\npath = {:?}\n[forcing.columns]\nt_air = \"Tair\"\n\
         specific_humidity = \"Qair\"\nsw = \"SWdown\"\nprecip = \"Rainf\"\npressure = \"PSurf\"\n\
         wind = \"Wind\"\n",
        site_netcdf_fixture("weather_lsm_units.nc")
    );
    let read = |forcing: &str, sub: &str| -> Vec<ForcingStep> {
        let dir = tmp.path().join(sub);
        std::fs::create_dir_all(&dir).unwrap();
        let site =
            isodisc_runner::site::Site::load(&demo_site_with_forcing(&dir, forcing)).unwrap();
        ForcingReader::open(
            &site.file.forcing,
            &site.dir(),
            site.file.site.elevation_m,
            None,
            None,
        )
        .unwrap()
        .collect::<Result<Vec<_>, _>>()
        .unwrap()
    };
    let a = read(&csv, "csv");
    let b = read(&lsm, "lsm");
    assert_eq!(a.len(), 59 * 24);
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x.time, y.time);
        assert!(
            (x.t_air_c - y.t_air_c).abs() <= EXACT,
            "{} {}",
            x.time,
            y.t_air_c
        );
        assert!(
            (x.vpd_kpa - y.vpd_kpa).abs() <= EXACT,
            "{} {} {}",
            x.time,
            x.vpd_kpa,
            y.vpd_kpa
        );
        assert!((x.sw_w_m2 - y.sw_w_m2).abs() <= EXACT);
        assert!((x.precip_mm - y.precip_mm).abs() <= EXACT, "{}", x.time);
        assert!((x.pressure_kpa - y.pressure_kpa).abs() <= EXACT);
        assert_eq!(x.wind_m_s, y.wind_m_s);
    }
}

/// Bad NetCDF site weather is refused with the file, variable and index (house rule): a mapped
/// variable the file lacks, a CSV-only key, a missing value at its time index.
#[test]
fn netcdf_site_weather_errors_name_file_variable_and_index() {
    let tmp = tempfile::tempdir().unwrap();
    let open = |forcing: &str| -> String {
        let site =
            isodisc_runner::site::Site::load(&demo_site_with_forcing(tmp.path(), forcing)).unwrap();
        match ForcingReader::open(&site.file.forcing, &site.dir(), 1100.0, None, None) {
            Ok(_) => panic!("no error"),
            Err(e) => e.to_string(),
        }
    };
    let nc = site_netcdf_fixture("weather_same_units.nc");
    let e = open(&format!(
        "[forcing]\npath = {nc:?}\n[forcing.columns]\nt_air = \"tas\"\nrh = \"rh_percent\"\n\
         sw = \"sw_w_m2\"\n"
    ));
    assert!(
        e.contains("weather_same_units.nc: no variable `tas`") && e.contains("`t_air_c`"),
        "{e}"
    );
    let e = open(&format!(
        "[forcing]\npath = {nc:?}\ntime_column = \"time\"\n[forcing.columns]\nt_air = \"t_air_c\"\n\
         rh = \"rh_percent\"\nsw = \"sw_w_m2\"\n"
    ));
    assert!(
        e.contains("forcing.time_column applies to CSV files only"),
        "{e}"
    );

    // A fill value at time index 30 of t_air (netcdf3 writes a classic copy with one hole).
    use netcdf3::{DataSet, FileWriter, Version};
    let n = 48;
    let mut ds = DataSet::new();
    ds.add_fixed_dim("time", n).unwrap();
    ds.add_var_f64("time", &["time"]).unwrap();
    ds.add_var_attr_string("time", "units", "hours since 2025-01-01")
        .unwrap();
    for (name, units) in [("ta", "degC"), ("rh", "%"), ("sw", "W m-2")] {
        ds.add_var_f32(name, &["time"]).unwrap();
        ds.add_var_attr_string(name, "units", units).unwrap();
    }
    ds.add_var_attr_f32("ta", "_FillValue", vec![-9999.0])
        .unwrap();
    let path = tmp.path().join("holes.nc");
    let mut w = FileWriter::open(&path).unwrap();
    w.set_def(&ds, Version::Classic, 0).unwrap();
    w.write_var_f64("time", &(0..n).map(|i| i as f64).collect::<Vec<_>>())
        .unwrap();
    let mut ta = vec![20.0f32; n];
    ta[30] = -9999.0;
    w.write_var_f32("ta", &ta).unwrap();
    w.write_var_f32("rh", &vec![50.0; n]).unwrap();
    w.write_var_f32("sw", &vec![100.0; n]).unwrap();
    w.close().unwrap();
    let e = open(
        "[forcing]\npath = \"holes.nc\"\n[forcing.columns]\nt_air = \"ta\"\nrh = \"rh\"\n\
         sw = \"sw\"\n",
    );
    assert!(
        e.contains("holes.nc, variable `ta`, time index 30 (2025-01-02T06:00): no value"),
        "{e}"
    );
}
