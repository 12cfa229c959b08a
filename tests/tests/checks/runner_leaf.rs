//! `isodisc leaf` end to end: the command agrees with the model, reads sweeps, and reports bad input
//! with the file, line and column (common practice for command-line tools).

use std::fs;
use std::path::Path;

use isodisc_model::leaf::{C3Params, LeafConditions, LeafOptions, solve_c3};

use crate::common::run;

fn read_rows(path: &Path) -> Vec<csv::StringRecord> {
    let mut r = csv::Reader::from_path(path).unwrap();
    r.records().map(|x| x.unwrap()).collect()
}

#[test]
fn single_leaf_json_matches_the_model() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("leaf.json");
    run(&[
        "leaf",
        "--t-leaf",
        "28",
        "--vpd",
        "1.8",
        "--format",
        "json",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let v: serde_json::Value = serde_json::from_str(&fs::read_to_string(&out).unwrap()).unwrap();
    let c = LeafConditions {
        t_leaf_c: 28.0,
        vpd_kpa: 1.8,
        ..LeafConditions::default()
    };
    let s = solve_c3(&C3Params::default(), &LeafOptions::default(), &c).unwrap();
    for (key, want) in [
        ("a_net", s.a_net),
        ("g_s", s.g_s),
        ("discrimination", s.discrimination),
    ] {
        let got = v[key].as_f64().unwrap();
        assert!((got - want).abs() < 1e-5, "{key}: {got} vs {want}");
    }
    assert_eq!(v["limitation"], s.limitation.as_str());
}

#[test]
fn sweep_file_gives_one_row_per_input_row_with_parameter_columns() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("sweep.csv");
    fs::write(&input, "ca,vcmax25,rh\n200,40,50\n400,,\n800,90,80\n").unwrap();
    let out = dir.path().join("out.csv");
    run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--format",
        "csv",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let rows = read_rows(&out);
    assert_eq!(rows.len(), 3);
    // Row 2 takes the flag defaults for empty cells (vcmax25 default 60, VPD default 1 kPa).
    let c = LeafConditions {
        ca_umol_mol: 400.0,
        ..LeafConditions::default()
    };
    let s = solve_c3(&C3Params::default(), &LeafOptions::default(), &c).unwrap();
    let header = csv::Reader::from_path(&out)
        .unwrap()
        .headers()
        .unwrap()
        .clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let a: f64 = rows[1][col("a_net")].parse().unwrap();
    assert!((a - s.a_net).abs() < 1e-5);
    // A rises with CO2 along the sweep (FvCB; common practice).
    let a0: f64 = rows[0][col("a_net")].parse().unwrap();
    let a2: f64 = rows[2][col("a_net")].parse().unwrap();
    assert!(a0 < a && a < a2);
    // RH 50 % at 25 °C → VPD 1.584 kPa (FAO-56 es = 3.168 kPa).
    let vpd: f64 = rows[0][col("vpd")].parse().unwrap();
    assert!((vpd - 1.584).abs() < 0.001, "{vpd}");
}

#[test]
fn bad_cells_name_file_line_column_and_value() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("bad.csv");
    fs::write(&input, "t_leaf,vpd\n25,1\n25,abc\n").unwrap();
    let err = run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--format",
        "csv",
    ])
    .unwrap_err();
    assert!(
        err.contains("bad.csv")
            && err.contains("line 3")
            && err.contains("column 2")
            && err.contains("abc"),
        "{err}"
    );
    fs::write(&input, "t_leaf,vpd\n25,1\n25,-3\n").unwrap();
    let err = run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--format",
        "csv",
    ])
    .unwrap_err();
    assert!(
        err.contains("line 3") && err.contains("column 2") && err.contains("-3"),
        "{err}"
    );
    fs::write(&input, "t_leaf,vpdd\n25,1\n").unwrap();
    let err = run(&["leaf", "--input", input.to_str().unwrap()]).unwrap_err();
    assert!(
        err.contains("vpdd") && err.contains("did you mean `vpd`"),
        "{err}"
    );
}

#[test]
fn bad_flags_name_the_flag_and_range_and_write_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("leaf.csv");
    let err = run(&["leaf", "--ppfd", "5000", "--output", out.to_str().unwrap()]).unwrap_err();
    assert!(err.contains("--ppfd") && err.contains("3000"), "{err}");
    let err = run(&["leaf", "--set", "g1=99"]).unwrap_err();
    assert!(err.contains("g1") && err.contains("20"), "{err}");
    assert!(!out.exists());
    assert_eq!(
        fs::read_dir(dir.path()).unwrap().count(),
        0,
        "no temporary file left"
    );
}

#[test]
fn list_params_names_every_parameter_the_issue_requires() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("p.csv");
    run(&[
        "leaf",
        "--list-params",
        "--format",
        "csv",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let names: Vec<String> = read_rows(&out).iter().map(|r| r[0].to_string()).collect();
    for n in [
        "vcmax25", "jmax25", "rd25", "theta", "alpha", "g0", "g1", "gm", "a", "b", "ab", "es",
        "al", "e", "f",
    ] {
        assert!(names.iter().any(|x| x == n), "C3 lacks {n}");
    }
    let out4 = dir.path().join("p4.csv");
    run(&[
        "leaf",
        "--pathway",
        "c4",
        "--list-params",
        "--format",
        "csv",
        "--output",
        out4.to_str().unwrap(),
    ])
    .unwrap();
    let names: Vec<String> = read_rows(&out4).iter().map(|r| r[0].to_string()).collect();
    for n in ["leakiness", "b3", "s", "vmax25", "k25", "g1"] {
        assert!(names.iter().any(|x| x == n), "C4 lacks {n}");
    }
}

#[test]
fn list_params_gives_every_default_a_source_and_resolves_auto_values() {
    // Every default carries its source (project rule); "auto" defaults show the value in use:
    // Kc 272.38 (cc basis, Bernacchi et al. 2002) by default, 404.9 (ci basis, Bernacchi et al.
    // 2001) with gm = inf; Jmax25 = (2.59 − 0.035·10)·60 = 134.4 at a growth temperature of 10 °C
    // → held at 11 °C: (2.59 − 0.385)·60 = 132.3 (Kattge & Knorr 2007; hand calculation).
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("p.csv");
    let list = |extra: &[&str]| {
        let mut args = vec![
            "leaf",
            "--list-params",
            "--format",
            "csv",
            "--output",
            out.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        run(&args).unwrap();
        read_rows(&out)
    };
    let value = |rows: &[csv::StringRecord], name: &str| -> String {
        rows.iter().find(|r| &r[0] == name).unwrap()[2].to_string()
    };
    let rows = list(&[]);
    for r in &rows {
        assert!(!r[7].trim().is_empty(), "{} has no source", &r[0]);
        assert_ne!(&r[2], "auto", "{} has no value in use", &r[0]);
    }
    assert_eq!(value(&rows, "kc25"), "272.38");
    assert_eq!(value(&rows, "gm"), "0.25");
    let rows = list(&["--set", "gm=inf", "--t-growth", "10"]);
    assert_eq!(value(&rows, "kc25"), "404.9");
    assert_eq!(value(&rows, "jmax25"), "132.3");
    let rows = list(&["--pathway", "c4"]);
    for r in &rows {
        assert!(!r[7].trim().is_empty(), "{} has no source", &r[0]);
    }
}

#[test]
fn inf_is_accepted_in_set_and_in_input_cells() {
    // `inf` for a conductance or tpu25 means no resistance / no limit (README); with gm = inf,
    // cc = ci (definition of gm).
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("leaf.json");
    run(&[
        "leaf",
        "--set",
        "gm=inf",
        "--set",
        "tpu25=inf",
        "--set",
        "gb=inf",
        "--format",
        "json",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let v: serde_json::Value = serde_json::from_str(&fs::read_to_string(&out).unwrap()).unwrap();
    assert_eq!(v["c_c"].as_f64(), v["c_i"].as_f64());
    let input = dir.path().join("sweep.csv");
    fs::write(&input, "gm,gb\ninf,inf\n0.2,1.5\n").unwrap();
    let csv_out = dir.path().join("sweep_out.csv");
    run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--format",
        "csv",
        "--output",
        csv_out.to_str().unwrap(),
    ])
    .unwrap();
    let rows = read_rows(&csv_out);
    let header = csv::Reader::from_path(&csv_out)
        .unwrap()
        .headers()
        .unwrap()
        .clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    assert_eq!(rows[0][col("c_c")], rows[0][col("c_i")]);
    let (ci, cc): (f64, f64) = (
        rows[1][col("c_i")].parse().unwrap(),
        rows[1][col("c_c")].parse().unwrap(),
    );
    assert!(cc < ci);
    // Where the range is closed, inf is refused with the parameter's name.
    let err = run(&["leaf", "--set", "g1=inf"]).unwrap_err();
    assert!(err.contains("g1"), "{err}");
}

#[test]
fn growth_temperature_set_and_substrate_flags_reach_the_model() {
    // The flags agree with the model called directly (Kattge & Knorr 2007 acclimation; apparent e′
    // of Wingate et al. 2007; g1 scaled with Γ*, Medlyn et al. 2011) — and each flag changes the
    // answer, so none is inert. A C4 leaf refuses the Γ* scaling.
    use isodisc_model::leaf::{G1Temperature, TemperatureSet};
    let dir = tempfile::tempdir().unwrap();
    let leaf_json = |extra: &[&str]| -> serde_json::Value {
        let out = dir.path().join("l.json");
        let mut args = vec![
            "leaf",
            "--t-leaf",
            "35",
            "--format",
            "json",
            "--output",
            out.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        run(&args).unwrap();
        serde_json::from_str(&fs::read_to_string(&out).unwrap()).unwrap()
    };
    let base = LeafConditions {
        t_leaf_c: 35.0,
        ..LeafConditions::default()
    };
    let options = |set: TemperatureSet, g1: G1Temperature| LeafOptions {
        temperature_set: set,
        g1_temperature: g1,
        ..LeafOptions::default()
    };
    let acclimated = options(TemperatureSet::Acclimated, G1Temperature::Constant);
    let cases: [(&[&str], LeafConditions, LeafOptions); 4] = [
        (
            &["--t-growth", "15"],
            LeafConditions {
                t_growth_c: 15.0,
                ..base
            },
            acclimated,
        ),
        (
            &["--temperature-set", "fixed"],
            base,
            options(TemperatureSet::Fixed, G1Temperature::Constant),
        ),
        (
            &["--d13c-substrate", "-20"],
            LeafConditions {
                d13c_substrate_permil: Some(-20.0),
                ..base
            },
            acclimated,
        ),
        (
            &["--g1-temperature", "gamma-star"],
            base,
            options(TemperatureSet::Acclimated, G1Temperature::GammaStar),
        ),
    ];
    let plain = leaf_json(&[]);
    for (flags, c, opts) in cases {
        let v = leaf_json(flags);
        let s = solve_c3(&C3Params::default(), &opts, &c).unwrap();
        for (key, want) in [("a_net", s.a_net), ("discrimination", s.discrimination)] {
            let got = v[key].as_f64().unwrap();
            assert!(
                (got - want).abs() < 1e-5,
                "{flags:?} {key}: {got} vs {want}"
            );
        }
        assert_ne!(v["discrimination"], plain["discrimination"], "{flags:?}");
    }
    assert_eq!(plain["t_growth"].as_f64(), Some(25.0));
    let err = run(&["leaf", "--pathway", "c4", "--g1-temperature", "gamma-star"]).unwrap_err();
    assert!(
        err.contains("--g1-temperature") && err.contains("C3"),
        "{err}"
    );
}
