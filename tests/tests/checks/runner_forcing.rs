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
