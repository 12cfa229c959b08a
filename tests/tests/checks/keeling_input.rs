//! `isodisc keeling` reading a samples file in blocks on all threads: the groups and fits do not
//! depend on how the file is cut, quoted group names are read as an RFC 4180 reader reads them,
//! and a bad sample deep in a long file is named by its line.

use std::fs;

use crate::common::run;

/// 30,000 samples of 300 groups: the same fits whether the group names are quoted or not and the
/// line breaks are CRLF or LF (RFC 4180 allows both spellings of the same table).
#[test]
fn quoted_names_and_crlf_give_the_same_fits() {
    let dir = tempfile::tempdir().unwrap();
    let (mut plain, mut quoted) = (
        String::from("group,time,co2,d13c\n"),
        String::from("\"group\",time,co2,d13c\r\n"),
    );
    for i in 0..30_000 {
        let (g, k) = (i / 100, i % 100);
        let co2 = 410.0 + (k as f64 * 7.3) % 120.0;
        let frac = (co2 - 410.0) / co2;
        let d13c = (1.0 - frac) * -8.5 + frac * (-22.0 - (g % 8) as f64);
        let cells = format!(
            "2020-{:02}-{:02}T{:02}:{:02},{co2:.2},{d13c:.3}",
            1 + g / 28 % 12,
            1 + g % 28,
            k / 12,
            (k % 12) * 5
        );
        plain.push_str(&format!("n{g},{cells}\n"));
        quoted.push_str(&format!("\"n{g}\",{cells}\r\n"));
    }
    let fits = |text: &str, name: &str| {
        let input = dir.path().join(format!("{name}.csv"));
        fs::write(&input, text).unwrap();
        let out = dir.path().join(format!("{name}_fits.csv"));
        run(&[
            "keeling",
            input.to_str().unwrap(),
            "--by",
            "group",
            "--out",
            out.to_str().unwrap(),
        ])
        .unwrap();
        fs::read_to_string(out).unwrap()
    };
    let a = fits(&plain, "plain");
    assert_eq!(a.lines().count(), 1 + 2 * 300);
    assert_eq!(a, fits(&quoted, "quoted"));
}

/// A sample out of range on line 25,002 of a long file is named by that line (common practice).
#[test]
fn a_bad_sample_deep_in_the_file_is_named_by_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("time,co2,d13c\n");
    for i in 0..30_000 {
        let co2 = if i == 25_000 {
            -5.0
        } else {
            410.0 + (i % 50) as f64
        };
        text.push_str(&format!(
            "2020-01-01T{:02}:{:02},{co2},-9\n",
            i / 60 % 24,
            i % 60
        ));
    }
    let input = dir.path().join("air.csv");
    fs::write(&input, text).unwrap();
    let err = run(&["keeling", input.to_str().unwrap()]).unwrap_err();
    assert!(
        err.contains("air.csv: line 25002, column 2 (co2): `-5` must be > 0"),
        "{err}"
    );
}
