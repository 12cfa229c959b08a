//! Fixed outputs: the bytes that the main commands write for the demo's files, compared with copies
//! kept in `tests/golden/`. Work that should not change any number (speed, refactoring) must leave
//! them byte for byte as they are; a deliberate change of method or default regenerates them with
//! `ISODISC_UPDATE_GOLDEN=1 cargo test -p isodisc-checks golden` and says so in its commit.
//! (Common practice: "golden file" regression checks.)
//!
//! `run.json` is left out (it records the program version and the command line), and so are
//! figures.

use crate::common::{demo_path, run};
use std::path::{Path, PathBuf};

fn golden_dir(case: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("golden")
        .join(case)
}

/// The CSV files of `dir` (not recursive), sorted by name.
fn csv_files(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "csv"))
        .collect();
    files.sort();
    files
}

/// Compares every CSV file of `produced` with `tests/golden/CASE/`, or rewrites the golden copies
/// when `ISODISC_UPDATE_GOLDEN` is set.
fn compare_with_golden(case: &str, produced: &Path) {
    let golden = golden_dir(case);
    let files = csv_files(produced);
    assert!(!files.is_empty(), "{case}: the command wrote no CSV file");
    if std::env::var_os("ISODISC_UPDATE_GOLDEN").is_some() {
        let _ = std::fs::remove_dir_all(&golden);
        std::fs::create_dir_all(&golden).unwrap();
        for f in &files {
            std::fs::copy(f, golden.join(f.file_name().unwrap())).unwrap();
        }
        return;
    }
    let expected = csv_files(&golden);
    let names = |v: &[PathBuf]| -> Vec<String> {
        v.iter()
            .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
            .collect()
    };
    assert_eq!(
        names(&files),
        names(&expected),
        "{case}: the set of files differs from tests/golden/{case}"
    );
    for (got, want) in files.iter().zip(&expected) {
        let got_bytes = std::fs::read(got).unwrap();
        let want_bytes = std::fs::read(want).unwrap();
        if got_bytes != want_bytes {
            let got_text = String::from_utf8_lossy(&got_bytes);
            let want_text = String::from_utf8_lossy(&want_bytes);
            let (line, (g, w)) = got_text
                .lines()
                .zip(want_text.lines())
                .enumerate()
                .find(|(_, (g, w))| g != w)
                .map(|(i, gw)| (i + 1, gw))
                .unwrap_or((0, ("(length differs)", "(length differs)")));
            panic!(
                "{case}/{}: differs from the golden copy at line {line}:\n  got:  {g}\n  want: {w}",
                got.file_name().unwrap().to_string_lossy()
            );
        }
    }
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

#[test]
fn leaf_input_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let sweep = demo_path("leaf_sweep.csv");
    let gas = demo_path("gas_exchange.csv");
    run(&[
        "leaf",
        "--input",
        s(&sweep),
        "--format",
        "csv",
        "--output",
        s(&tmp.path().join("leaf_sweep.csv")),
    ])
    .unwrap();
    run(&[
        "leaf",
        "--input",
        s(&gas),
        "--map",
        "t_leaf=Tleaf",
        "--map",
        "ppfd=PARi",
        "--map",
        "vpd=VPDleaf",
        "--map",
        "ca=CO2_ref",
        "--format",
        "csv",
        "--output",
        s(&tmp.path().join("gas_exchange.csv")),
    ])
    .unwrap();
    run(&[
        "leaf",
        "--input",
        s(&sweep),
        "--pathway",
        "c4",
        "--format",
        "csv",
        "--output",
        s(&tmp.path().join("leaf_sweep_c4.csv")),
    ])
    .unwrap();
    compare_with_golden("leaf_input", tmp.path());
}

#[test]
fn demo_run_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("demo");
    run(&[
        "run",
        s(&demo_path("site.toml")),
        "--out",
        s(&out),
        "--quiet",
    ])
    .unwrap();
    compare_with_golden("run_demo", &out);
}

#[test]
fn tower_run_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("tower");
    run(&[
        "run",
        s(&demo_path("tower/site.toml")),
        "--out",
        s(&out),
        "--quiet",
    ])
    .unwrap();
    compare_with_golden("run_tower", &out);
}

#[test]
fn keeling_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let samples = demo_path("observations/canopy_air.csv");
    let site = demo_path("site.toml");
    run(&[
        "keeling",
        s(&samples),
        "--by",
        "night",
        "--site",
        s(&site),
        "--out",
        s(&tmp.path().join("nights.csv")),
    ])
    .unwrap();
    run(&[
        "keeling",
        s(&samples),
        "--by",
        "window",
        "--window",
        "1d",
        "--bootstrap",
        "50",
        "--seed",
        "3",
        "--out",
        s(&tmp.path().join("days_bootstrap.csv")),
    ])
    .unwrap();
    compare_with_golden("keeling", tmp.path());
}

#[test]
fn ensemble_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("ensemble");
    run(&[
        "ensemble",
        s(&demo_path("site.toml")),
        "--spec",
        s(&demo_path("ensemble.toml")),
        "--members",
        "6",
        "--seed",
        "7",
        "--threads",
        "2",
        "--out",
        s(&out),
        "--quiet",
    ])
    .unwrap();
    compare_with_golden("ensemble", &out);
}
