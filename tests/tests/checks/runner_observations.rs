//! `isodisc keeling`, `compare` and `plot` end to end: exact two-end-member mixtures (Keeling 1958;
//! docs/science.md), the three ways of grouping, flagged and bad input, hand-computed scores, a
//! planted lag, and SVG figures that carry their axis labels.

use std::fs;
use std::path::{Path, PathBuf};

/// Source δ13C from an exact mixture, written with six decimals: the CSV's own resolution is
/// 5e-7 ‰, so this bounds the fit's error on the way (the written value is compared).
const TOL_SOURCE_PERMIL: f64 = 1e-9;
/// Scores written as JSON (six decimals).
const TOL_SCORE: f64 = 1e-6;

use crate::common::run;

fn p(path: &Path) -> &str {
    path.to_str().unwrap()
}

/// A CSV file read back, cells by column name.
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
    fn cell(&self, row: usize, col: &str) -> &str {
        let i = self.header.iter().position(|h| h == col).unwrap();
        &self.rows[row][i]
    }
    fn num(&self, row: usize, col: &str) -> f64 {
        self.cell(row, col).parse().unwrap_or(f64::NAN)
    }
    /// (group, n) of the rows of one method, in output order.
    fn groups(&self, method: &str) -> Vec<(String, usize)> {
        (0..self.rows.len())
            .filter(|&i| self.cell(i, "method") == method)
            .map(|i| (self.cell(i, "group").to_string(), self.num(i, "n") as usize))
            .collect()
    }
}

/// δ13C (‰) of background air (cbg µmol mol⁻¹ at δbg) plus `added` µmol mol⁻¹ of a source at δs:
/// the 13C mass balance in δ units, δ = (cbg·δbg + a·δs)/(cbg + a), from which Keeling's line
/// δ = δs + cbg(δbg − δs)/c follows exactly (Keeling 1958).
fn mixture(cbg: f64, dbg: f64, added: f64, ds: f64) -> (f64, f64) {
    let c = cbg + added;
    (c, (cbg * dbg + added * ds) / c)
}

/// Samples of two exact mixtures, groups A (source −26 ‰) and B (source −12 ‰), over 400 at
/// −8.5 ‰, with SD and background columns so every method runs.
fn write_mixture_samples(path: &Path) {
    let mut text = String::from("time,group,co2,d13c,co2_sd,d13c_sd,co2_bg,d13c_bg\n");
    for (g, ds) in [("A", -26.0), ("B", -12.0)] {
        for (i, a) in [0.0, 20.0, 50.0, 80.0, 120.0, 200.0].iter().enumerate() {
            let (c, d) = mixture(400.0, -8.5, *a, ds);
            text.push_str(&format!(
                "2025-06-01T{:02}:00,{g},{c:.17},{d:.17},0.2,0.05,400,-8.5\n",
                20 + i % 4
            ));
        }
    }
    fs::write(path, text).unwrap();
}

#[test]
fn keeling_exact_mixture_returns_the_source_for_every_method() {
    // docs/science.md worked example: 400 µmol mol⁻¹ at −8.5 ‰ plus 50 of source at −26 ‰ gives
    // −10.444 ‰ (checks the mixture used below).
    let (c, d) = mixture(400.0, -8.5, 50.0, -26.0);
    assert_eq!(c, 450.0);
    assert!((d - -10.444).abs() < 5e-4, "mixture {d}");

    let dir = tempfile::tempdir().unwrap();
    let samples = dir.path().join("samples.csv");
    let out = dir.path().join("fits.csv");
    write_mixture_samples(&samples);
    run(&["keeling", p(&samples), "--out", p(&out)]).unwrap();
    let t = Table::read(&out);
    // Two groups × OLS, GMR, York (SD columns) and Miller–Tans (background columns).
    assert_eq!(t.rows.len(), 8);
    for i in 0..t.rows.len() {
        let expected = if t.cell(i, "group") == "A" {
            -26.0
        } else {
            -12.0
        };
        let got = t.num(i, "intercept");
        assert!(
            (got - expected).abs() <= TOL_SOURCE_PERMIL,
            "group {} method {}: {got} vs {expected}",
            t.cell(i, "group"),
            t.cell(i, "method")
        );
        assert_eq!(t.num(i, "n"), 6.0);
        assert_eq!(t.num(i, "co2_range"), 200.0);
        assert_eq!(t.cell(i, "flags"), "", "exact data carry no flag");
    }
    let methods: Vec<&str> = (0..4).map(|i| t.cell(i, "method")).collect();
    assert_eq!(methods, ["ols", "gmr", "york", "miller-tans"]);

    // The flag-given background replaces the columns; Miller–Tans still returns the source.
    let out2 = dir.path().join("fits2.csv");
    run(&[
        "keeling",
        p(&samples),
        "--background-co2",
        "400",
        "--background-d13c",
        "-8.5",
        "--out",
        p(&out2),
    ])
    .unwrap();
    let t2 = Table::read(&out2);
    let mt = (0..t2.rows.len())
        .find(|&i| t2.cell(i, "method") == "miller-tans" && t2.cell(i, "group") == "A")
        .unwrap();
    assert!((t2.num(mt, "intercept") - -26.0).abs() <= TOL_SOURCE_PERMIL);
}

/// Samples at the given local times, each an exact −26 ‰ mixture, no group column.
fn write_timed_samples(path: &Path, times: &[&str]) {
    let mut text = String::from("time,co2,d13c\n");
    for (i, t) in times.iter().enumerate() {
        let (c, d) = mixture(400.0, -8.5, 15.0 * (i % 7) as f64, -26.0);
        text.push_str(&format!("{t},{c},{d}\n"));
    }
    fs::write(path, text).unwrap();
}

#[test]
fn keeling_groups_by_column_window_and_night() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fits.csv");

    // By column, and by default when the column exists: groups in order of first appearance.
    let samples = dir.path().join("grouped.csv");
    write_mixture_samples(&samples);
    for extra in [&["--by", "group"][..], &[][..]] {
        let mut args = vec!["keeling", p(&samples), "--out", p(&out)];
        args.extend_from_slice(extra);
        run(&args).unwrap();
        let g = Table::read(&out).groups("ols");
        assert_eq!(g, [("A".to_string(), 6), ("B".to_string(), 6)]);
    }

    let times = [
        "2025-06-01T01:00",
        "2025-06-01T05:59",
        "2025-06-01T06:00",
        "2025-06-01T11:30",
        "2025-06-01T20:00",
        "2025-06-01T23:00",
        "2025-06-02T02:00",
        "2025-06-02T05:30",
        "2025-06-02T12:00",
        "2025-06-02T21:00",
    ];
    let samples = dir.path().join("timed.csv");
    write_timed_samples(&samples, &times);

    // Windows of 6 h from local midnight: [00,06), [06,12), [18,24) of day 1; [00,06), [12,18),
    // [18,24) of day 2 (counted by hand from the list above).
    run(&[
        "keeling",
        p(&samples),
        "--by",
        "window",
        "--window",
        "6h",
        "--out",
        p(&out),
    ])
    .unwrap();
    let g = Table::read(&out).groups("ols");
    let expected: Vec<(String, usize)> = [
        ("2025-06-01T00:00", 2),
        ("2025-06-01T06:00", 2),
        ("2025-06-01T18:00", 2),
        ("2025-06-02T00:00", 2),
        ("2025-06-02T12:00", 1),
        ("2025-06-02T18:00", 1),
    ]
    .iter()
    .map(|(s, n)| (s.to_string(), *n))
    .collect();
    assert_eq!(g, expected);
    run(&[
        "keeling",
        p(&samples),
        "--by",
        "window",
        "--window",
        "1d",
        "--out",
        p(&out),
    ])
    .unwrap();
    let g = Table::read(&out).groups("gmr");
    assert_eq!(
        g,
        [
            ("2025-06-01T00:00".to_string(), 6),
            ("2025-06-02T00:00".to_string(), 4)
        ]
    );

    // Night hours 19–6: a night is named by its evening; morning hours belong to the night before,
    // 06:00 and midday are day.
    run(&[
        "keeling",
        p(&samples),
        "--by",
        "night",
        "--night-hours",
        "19-6",
        "--out",
        p(&out),
    ])
    .unwrap();
    let g = Table::read(&out).groups("ols");
    assert_eq!(
        g,
        [
            ("2025-05-31".to_string(), 2),
            ("2025-06-01".to_string(), 4),
            ("2025-06-02".to_string(), 1)
        ]
    );

    // Sunset to sunrise from the site file: at the equator on Greenwich time near the March
    // equinox the Sun sets a little after 18:00 and rises a little after 06:00 (day ≈ 12 h;
    // common practice). Only [site] latitude, longitude and utc_offset_h are read.
    let site = dir.path().join("site.toml");
    fs::write(
        &site,
        "[site]\nname = \"equator\"\nlatitude = 0.0\nlongitude = 0.0\nelevation_m = 10\n\
         utc_offset_h = 0\n\n[soil]\nanything = 1\n",
    )
    .unwrap();
    let equinox = [
        "2025-03-20T12:00",
        "2025-03-20T17:30",
        "2025-03-20T18:45",
        "2025-03-20T23:00",
        "2025-03-21T03:00",
        "2025-03-21T05:30",
        "2025-03-21T06:45",
    ];
    write_timed_samples(&samples, &equinox);
    run(&[
        "keeling",
        p(&samples),
        "--by",
        "night",
        "--site",
        p(&site),
        "--out",
        p(&out),
    ])
    .unwrap();
    let t = Table::read(&out);
    assert_eq!(t.groups("ols"), [("2025-03-20".to_string(), 4)]);
    assert_eq!(t.cell(0, "start"), "2025-03-20T18:45");
    assert_eq!(t.cell(0, "end"), "2025-03-21T05:30");
}

#[test]
fn keeling_small_groups_are_flagged_and_bad_input_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let samples = dir.path().join("s.csv");
    let out = dir.path().join("fits.csv");
    // Group "tiny" has two samples: a flagged row with no estimate, not an error.
    fs::write(
        &samples,
        "time,group,co2,d13c\n2025-06-01T20:00,tiny,400,-8.5\n2025-06-01T21:00,tiny,450,-10.44\n\
         2025-06-01T20:00,ok,400,-8.5\n2025-06-01T21:00,ok,450,-10.444444\n\
         2025-06-01T22:00,ok,500,-11.9\n",
    )
    .unwrap();
    run(&["keeling", p(&samples), "--out", p(&out)]).unwrap();
    let t = Table::read(&out);
    let tiny = (0..t.rows.len())
        .find(|&i| t.cell(i, "group") == "tiny")
        .unwrap();
    assert_eq!(t.num(tiny, "n"), 2.0);
    assert!(t.cell(tiny, "flags").contains("too_few_points"));
    assert!(
        t.num(tiny, "intercept").is_nan(),
        "no estimate from 2 samples"
    );
    let ok = (0..t.rows.len())
        .find(|&i| t.cell(i, "group") == "ok")
        .unwrap();
    // CO2 range 100 ≥ 40: no small-range flag (common practice threshold, docs/science.md).
    assert!(!t.cell(ok, "flags").contains("small_co2_range"));

    // Zero CO2 on the 3rd line (header = line 1): the message names file, line, column, value.
    fs::write(
        &samples,
        "time,co2,d13c\n2025-06-01T20:00,400,-8.5\n2025-06-01T21:00,0,-9\n",
    )
    .unwrap();
    let e = run(&["keeling", p(&samples), "--out", p(&out)]).unwrap_err();
    for part in ["s.csv", "line 3", "co2", "`0`"] {
        assert!(e.contains(part), "{part} missing from: {e}");
    }
    fs::write(
        &samples,
        "time,co2,d13c\n2025-06-01 20:00,400,-8.5\nnoon,410,-9\n",
    )
    .unwrap();
    let e = run(&["keeling", p(&samples)]).unwrap_err();
    for part in ["s.csv", "line 3", "time", "`noon`"] {
        assert!(e.contains(part), "{part} missing from: {e}");
    }
    fs::write(&samples, "time,co2,d13c\n2025-06-01T20:00,-5,-8.5\n").unwrap();
    let e = run(&["keeling", p(&samples)]).unwrap_err();
    assert!(e.contains("line 2") && e.contains("`-5`"), "{e}");
    fs::write(&samples, "time,co2,d13c\n2025-06-01T20:00,abc,-8.5\n").unwrap();
    let e = run(&["keeling", p(&samples)]).unwrap_err();
    assert!(e.contains("line 2") && e.contains("not a number"), "{e}");
}

fn read_json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn compare_scores_a_hand_computed_example() {
    let dir = tempfile::tempdir().unwrap();
    let pred = dir.path().join("daily.csv");
    let obs = dir.path().join("obs.csv");
    let out = dir.path().join("scores.json");
    // Predicted P = 1, 2, 3, 4 on four days (a fifth day is a gap); observed O = 2, 2, 4, 3, the
    // third day's 4 being the mean of two observations, plus a day without prediction.
    fs::write(
        &pred,
        "period,discrimination,d13c_respiration\n2025-06-01,20,1\n2025-06-02,20,2\n\
         2025-06-03,20,3\n2025-06-04,20,4\n2025-06-05,20,\n",
    )
    .unwrap();
    fs::write(
        &obs,
        "time,dR\n2025-06-01T22:00,2\n2025-06-02T22:00,2\n2025-06-03T21:00,3.5\n\
         2025-06-03T23:00,4.5\n2025-06-04T22:00,3\n2025-06-05T22:00,9\n2025-06-09T22:00,1\n",
    )
    .unwrap();
    run(&[
        "compare",
        "--predicted",
        p(&pred),
        "--observed",
        p(&obs),
        "--variable",
        "d13c_respiration",
        "--observed-column",
        "dR",
        "--format",
        "json",
        "--out",
        p(&out),
    ])
    .unwrap();
    let s = read_json(&out)["scores"].clone();
    // By hand: errors P − O = −1, 0, −1, 1 → bias −0.25, MAE 0.75, RMSE √0.75. Mean O = 2.75,
    // Σ(O − Ō)² = 2.75 → NSE = 1 − 3/2.75 (Nash & Sutcliffe 1970). Pearson: Σdp·do = 2.5,
    // Σdp² = 5, Σdo² = 2.75 → r = 2.5/√13.75.
    let r = 2.5 / 13.75f64.sqrt();
    let expected = [
        ("bias", -0.25),
        ("mae", 0.75),
        ("rmse", 0.75f64.sqrt()),
        ("nse", 1.0 - 3.0 / 2.75),
        ("r", r),
        ("r2", r * r),
    ];
    assert_eq!(s["n"], 4);
    for (name, v) in expected {
        let got = s[name].as_f64().unwrap();
        assert!((got - v).abs() < TOL_SCORE, "{name}: {got} vs {v}");
    }

    // A missing column is named, with the known ones.
    let e = run(&[
        "compare",
        "--predicted",
        p(&pred),
        "--observed",
        p(&obs),
        "--variable",
        "reco",
    ])
    .unwrap_err();
    assert!(
        e.contains("no column reco") && e.contains("known: period"),
        "{e}"
    );
}

/// The date `day` days after 2025-01-01 (2025 is not a leap year).
fn date_2025(day: usize) -> String {
    let lengths = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let mut d = day;
    for (m, len) in lengths.iter().enumerate() {
        if d < *len {
            return format!("2025-{:02}-{:02}", m + 1, d + 1);
        }
        d -= len;
    }
    panic!("day {day} is beyond 2025");
}

/// A deterministic, irregular daily driver (sum of incommensurate sines; no project code).
fn driver(day: usize) -> f64 {
    let t = day as f64;
    15.0 + 2.0 * (t * 0.9).sin() + 1.3 * (t * 0.37 + 1.0).sin() + 0.7 * (t * 2.3).cos()
}

#[test]
fn compare_lags_find_a_planted_lag() {
    let dir = tempfile::tempdir().unwrap();
    let pred = dir.path().join("daily.csv");
    let obs = dir.path().join("obs.csv");
    let out = dir.path().join("lags.json");
    let days = 150;
    let date = date_2025;
    let mut ptext = String::from("period,discrimination,d13c_respiration\n");
    for d in 0..days {
        ptext.push_str(&format!("{},{},-20\n", date(d), driver(d)));
    }
    fs::write(&pred, ptext).unwrap();
    // (lag, window): observed on day d = −0.4 × mean of the driver over `window` days ending
    // `lag` days earlier, minus 12 ‰. The planted lag must come out as the best k with r = −1.
    for (lag, window) in [(4usize, 1usize), (6, 3)] {
        let mut otext = String::from("date,d13c_respiration\n");
        for d in (lag + window - 1)..days {
            let mean: f64 =
                (d - lag + 1 - window..=d - lag).map(driver).sum::<f64>() / window as f64;
            otext.push_str(&format!("{},{}\n", date(d), -12.0 - 0.4 * mean));
        }
        fs::write(&obs, otext).unwrap();
        let w = window.to_string();
        run(&[
            "compare",
            "--predicted",
            p(&pred),
            "--observed",
            p(&obs),
            "--variable",
            "d13c_respiration",
            "--lags",
            "10",
            "--window",
            &w,
            "--format",
            "json",
            "--out",
            p(&out),
        ])
        .unwrap();
        let l = read_json(&out)["lags"].clone();
        assert_eq!(l["best_k"], lag, "window {window}");
        let table = l["table"].as_array().unwrap();
        assert_eq!(table.len(), 11);
        let at = &table[lag];
        assert!((at["r"].as_f64().unwrap() + 1.0).abs() < TOL_SCORE, "{at}");
        assert!(at["p"].as_f64().unwrap() < 1e-6);
    }
}

/// Checks that `text` is one well-nested XML element tree rooted at `<svg>`: tags balance, the
/// root is svg with the SVG namespace (enough of XML for a figure).
fn assert_svg(text: &str) {
    let body = text.trim();
    assert!(
        body.starts_with("<svg") && body.ends_with("</svg>"),
        "not an SVG document"
    );
    assert!(body.contains("xmlns=\"http://www.w3.org/2000/svg\""));
    let mut stack: Vec<&str> = Vec::new();
    let mut rest = body;
    while let Some(open) = rest.find('<') {
        let close = rest[open..].find('>').expect("unclosed tag") + open;
        let tag = &rest[open + 1..close];
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(stack.pop(), Some(name.trim()), "mismatched </{name}>");
        } else if !tag.ends_with('/') && !tag.starts_with('?') && !tag.starts_with('!') {
            stack.push(tag.split_whitespace().next().unwrap());
        }
        if stack.is_empty() {
            assert!(
                rest[close + 1..].trim().is_empty(),
                "content after the root"
            );
        }
        rest = &rest[close + 1..];
    }
    assert!(stack.is_empty(), "unclosed {stack:?}");
}

/// The text of every `<text>` element, trimmed.
fn svg_texts(text: &str) -> Vec<String> {
    text.split("<text")
        .skip(1)
        .filter_map(|s| {
            let start = s.find('>')? + 1;
            let end = s.find("</text>")?;
            Some(s[start..end].trim().to_string())
        })
        .collect()
}

#[test]
fn plot_writes_svg_figures_with_their_axis_labels() {
    let dir = tempfile::tempdir().unwrap();
    let run_dir = dir.path().join("results");
    fs::create_dir(&run_dir).unwrap();
    let mut daily = String::from(
        "period,discrimination,discrimination_c3,discrimination_c4,d13c_respiration\n",
    );
    for d in 0..60 {
        let c3 = 20.0 + (d as f64 * 0.2).sin();
        // Day 10 has no C4 value: a gap, not a zero.
        let c4 = if d == 10 {
            String::new()
        } else {
            "4.1".to_string()
        };
        daily.push_str(&format!("{},12,{c3},{c4},-25\n", date_2025(d)));
    }
    fs::write(run_dir.join("daily.csv"), daily).unwrap();
    let mut q = String::from("period,variable,mean,sd,p05,p25,p50,p75,p95\n");
    for m in 1..=12 {
        q.push_str(&format!("2025-{m:02},discrimination,15,1,13,14,15,16,17\n"));
    }
    fs::write(run_dir.join("quantiles_monthly.csv"), q).unwrap();
    let observed = dir.path().join("obs.csv");
    fs::write(
        &observed,
        "date,d13c_respiration\n2025-01-05,-24.8\n2025-01-20,-25.3\n",
    )
    .unwrap();
    let samples = dir.path().join("samples.csv");
    write_mixture_samples(&samples);
    let fits = dir.path().join("fits.csv");
    run(&["keeling", p(&samples), "--out", p(&fits)]).unwrap();

    let figs = dir.path().join("figs");
    run(&[
        "plot",
        p(&run_dir),
        "--out",
        p(&figs),
        "--keeling",
        p(&fits),
        "--samples",
        p(&samples),
        "--groups",
        "A,B",
        "--observed",
        p(&observed),
    ])
    .unwrap();
    // Typographic titles (checked in detail in plots.rs).
    let expected: [(&str, &[&str]); 5] = [
        (
            "discrimination_daily.svg",
            &[
                "Δ (‰)",
                "2025 (local standard time)",
                "ecosystem",
                "C₃",
                "C₄",
            ],
        ),
        (
            "d13c_respiration.svg",
            &[
                "δ¹³C of respiration (‰ VPDB)",
                "predicted",
                "observed (daily mean)",
            ],
        ),
        (
            "keeling_A.svg",
            &[
                "1/CO₂ (mol mmol⁻¹)",
                "δ¹³C of CO₂ (‰ VPDB)",
                "samples",
                "York: source −26.00 ‰",
            ],
        ),
        (
            "keeling_B.svg",
            &["1/CO₂ (mol mmol⁻¹)", "OLS: source −12.00 ‰"],
        ),
        (
            "ensemble_discrimination.svg",
            &["Δ (‰)", "2025", "5–95 %", "median", "Jan"],
        ),
    ];
    for (name, labels) in expected {
        let text = fs::read_to_string(figs.join(name)).unwrap_or_else(|_| panic!("{name}"));
        assert_svg(&text);
        let texts = svg_texts(&text);
        for l in labels {
            assert!(
                texts.iter().any(|t| t == l),
                "{name}: no text `{l}` in {texts:?}"
            );
        }
    }
    // Group A's figure has its own 6 samples plus the legend's marker, not B's samples taken at
    // the same times.
    let keeling_a = fs::read_to_string(figs.join("keeling_A.svg")).unwrap();
    // (Samples are grey crosses of two lines each.)
    assert_eq!(keeling_a.matches("stroke=\"#5A5A5A\"").count(), 2 * 7);
    // No temporary files left behind by the atomic writes: the figures and isodisc's marker.
    let names: Vec<PathBuf> = fs::read_dir(&figs)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    assert_eq!(names.len(), 6, "{names:?}");
    assert!(figs.join(isodisc_runner::output::MARKER).is_file());

    // Without δR and an ensemble, those figures are skipped, not failed.
    fs::remove_file(run_dir.join("quantiles_monthly.csv")).unwrap();
    fs::write(
        run_dir.join("daily.csv"),
        "period,discrimination\n2025-01-01,12\n2025-01-02,13\n",
    )
    .unwrap();
    let figs2 = dir.path().join("figs2");
    run(&["plot", p(&run_dir), "--out", p(&figs2)]).unwrap();
    let n = fs::read_dir(&figs2).unwrap().count();
    assert_eq!(n, 2, "one figure and isodisc's marker");
    assert!(figs2.join("discrimination_daily.svg").is_file());
}
