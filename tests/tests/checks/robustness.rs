//! Nothing lost, nothing silently wrong: every command is attacked with bad inputs and awkward
//! folders. None may panic, delete or mix up data, resume stale results, or answer with a message
//! that does not say what and where. The standard for each check is common practice for
//! command-line tools that write results (outputs appear whole or not at all; inputs are never
//! written over; errors name the file, line and column), unless a comment names another source.

use std::fs;
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};

use clap::Parser;
use isodisc_runner::cli::Cli;
use isodisc_runner::output::{AtomicFile, FolderLock, LOCK_FILE, MARKER, undo_pending_in};

use crate::common::run;

/// One month of the demo keeps each run short.
const FROM: &str = "2025-01-01";
const TO: &str = "2025-01-31";

use crate::common::demo_path as demo;

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// A copy of the demo site (site file, weather, atmospheric history, batch manifest and its
/// weather, observations) in `dir`.
fn copy_demo(dir: &Path) {
    for rel in [
        "site.toml",
        "weather.csv",
        "atmosphere_history.csv",
        "ensemble.toml",
        "batch/manifest.toml",
        "batch/weather_warm_dry.csv",
        "observations/canopy_air.csv",
        "observations/d13c_respiration_observed.csv",
    ] {
        let to = dir.join(rel);
        fs::create_dir_all(to.parent().unwrap()).unwrap();
        fs::copy(demo(rel), to).unwrap();
    }
}

/// Every file under `dir` with its bytes (for "nothing changed" checks).
fn snapshot(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push((p.clone(), fs::read(&p).unwrap()));
            }
        }
    }
    out.sort();
    out
}

/// Runs `isodisc ARGS` in-process and turns a panic into a test failure that says which
/// command panicked.
fn attempt(args: &[&str]) -> Result<(), String> {
    match catch_unwind(AssertUnwindSafe(|| run(args))) {
        Ok(r) => r,
        Err(_) => panic!("isodisc {} panicked", args.join(" ")),
    }
}

/// A bad input must give an error that contains every needle (file, line, column, flag, value).
fn refused(args: &[&str], needles: &[&str]) -> String {
    let e = attempt(args).expect_err(&format!("isodisc {} was accepted", args.join(" ")));
    for n in needles {
        assert!(
            e.contains(n),
            "isodisc {}: `{e}` lacks `{n}`",
            args.join(" ")
        );
    }
    e
}

#[test]
fn outputs_never_replace_inputs_and_overwrite_only_replaces_isodisc_folders() {
    let t = tempfile::tempdir().unwrap();
    let x = t.path().join("x");
    copy_demo(&x);
    let before = snapshot(&x);
    let site = x.join("site.toml");
    // `run X/site.toml --out X --overwrite` once replaced X, inputs and all, and exited 0.
    refused(
        &["run", s(&site), "--out", s(&x), "--overwrite", "--quiet"],
        &["contains the input", "site.toml"],
    );
    refused(
        &[
            "run",
            s(&site),
            "--out",
            s(&x.join("weather.csv")),
            "--overwrite",
        ],
        &["is the input"],
    );
    refused(
        &[
            "run",
            s(&site),
            "--out",
            s(&x.join("site.toml/inner")),
            "--overwrite",
        ],
        &["lies inside the input"],
    );
    // The same folder reached through `..` is still the input's folder.
    let dotted = x.join("observations/..");
    refused(
        &["run", s(&site), "--out", s(&dotted), "--overwrite"],
        &["contains the input"],
    );
    refused(
        &[
            "ensemble",
            s(&site),
            "--spec",
            s(&x.join("ensemble.toml")),
            "--members",
            "2",
            "--seed",
            "1",
            "--out",
            s(&x),
            "--overwrite",
        ],
        &["contains the input"],
    );
    refused(
        &["batch", s(&x.join("batch/manifest.toml")), "--out", s(&x)],
        &["contains the input"],
    );
    refused(
        &["merge", s(&x), "--out", s(&x), "--overwrite"],
        &["is the input"],
    );
    assert_eq!(snapshot(&x), before, "a refused command changed its inputs");

    // A folder isodisc did not write is never replaced, whatever --overwrite says.
    let mine = t.path().join("mine");
    fs::create_dir(&mine).unwrap();
    fs::write(mine.join("thesis.tex"), "years of work").unwrap();
    refused(
        &["run", s(&site), "--out", s(&mine), "--overwrite"],
        &["did not write", MARKER],
    );
    assert_eq!(
        fs::read_to_string(mine.join("thesis.tex")).unwrap(),
        "years of work"
    );

    // The README's set-up command works on a fresh folder and again on its own results.
    let results = t.path().join("results");
    for _ in 0..2 {
        attempt(&[
            "run",
            s(&site),
            "--out",
            s(&results),
            "--overwrite",
            "--quiet",
            "--from",
            FROM,
            "--to",
            TO,
        ])
        .unwrap();
        assert!(results.join(MARKER).is_file());
    }
    // run.json records the checksum of every input file, the history included.
    let log: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(results.join("run.json")).unwrap()).unwrap();
    for role in ["site_file", "forcing", "atmosphere_history"] {
        assert_eq!(
            log["inputs"][role]["fnv1a64"].as_str().map(str::len),
            Some(16),
            "run.json lacks the checksum of {role}"
        );
    }
    // Figures may not go where they would hide an input either.
    refused(
        &[
            "plot",
            s(&results),
            "--out",
            s(&x.join("observations")),
            "--observed",
            s(&x.join("observations/d13c_respiration_observed.csv")),
        ],
        &["contains the input"],
    );
}

/// A one-site manifest on the copied demo, for batch checks.
fn one_site_manifest(dir: &Path) -> PathBuf {
    let m = dir.join("one.toml");
    fs::write(
        &m,
        "template = \"site.toml\"\n[[site]]\nid = \"miombo\"\nweight = 1.0\n",
    )
    .unwrap();
    m
}

fn batch_log(out: &Path) -> serde_json::Value {
    serde_json::from_str(&fs::read_to_string(out.join("run.json")).unwrap()).unwrap()
}

/// `isodisc batch MANIFEST --out OUT [EXTRA] --from FROM --to TO --quiet`.
fn batch(manifest: &Path, out: &Path, extra: &[&str]) -> Result<(), String> {
    let mut a = vec!["batch", s(manifest), "--out", s(out)];
    a.extend_from_slice(extra);
    a.extend(["--from", FROM, "--to", TO, "--quiet"]);
    attempt(&a)
}

#[test]
fn a_changed_history_file_is_not_resumed() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let manifest = one_site_manifest(t.path());
    let out = t.path().join("b");
    let batch = || batch(&manifest, &out, &[]).unwrap();
    batch();
    let first = fs::read_to_string(out.join("priors.csv")).unwrap();
    batch();
    assert_eq!(
        batch_log(&out)["skipped_as_done"],
        1,
        "unchanged inputs re-ran"
    );
    // Only the atmospheric history changes: its old δ13C shifts by −1‰ (the pools' old carbon
    // carries it, so δR must move).
    let hist = t.path().join("atmosphere_history.csv");
    let text = fs::read_to_string(&hist).unwrap();
    let mut lines = text.lines();
    let header = lines.next().unwrap().to_string();
    let cols: Vec<&str> = header.split(',').collect();
    let d = cols.iter().position(|c| *c == "d13c").unwrap();
    let mut changed = header.clone() + "\n";
    for l in lines {
        let mut cells: Vec<String> = l.split(',').map(String::from).collect();
        if let Ok(v) = cells[d].parse::<f64>() {
            cells[d] = format!("{}", v - 1.0);
        }
        changed += &(cells.join(",") + "\n");
    }
    fs::write(&hist, changed).unwrap();
    batch();
    assert_eq!(batch_log(&out)["ran"], 1, "a changed history was resumed");
    let second = fs::read_to_string(out.join("priors.csv")).unwrap();
    assert_ne!(first, second, "the priors did not follow the new history");
}

#[test]
fn one_batch_at_a_time_per_folder_and_stale_locks_are_taken_over() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let manifest = one_site_manifest(t.path());
    let out = t.path().join("b");
    let args = [
        "batch",
        s(&manifest),
        "--out",
        s(&out),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ];
    {
        // Another batch holds the folder (an OS lock, flock(2), as a second process would).
        let _held = FolderLock::acquire(&out).unwrap();
        refused(&args, &["in use by another isodisc batch"]);
        assert!(!out.join("sites/miombo").exists(), "the refused batch ran");
    }
    // A lock file left by a killed batch holds no OS lock: the next batch takes it over.
    fs::write(out.join(LOCK_FILE), "pid 4000000\n").unwrap();
    attempt(&args).unwrap();
    assert!(out.join("sites/miombo/done.json").is_file());
}

#[test]
fn merge_refuses_cut_short_sites_and_folders_that_are_not_shards() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let manifest = t.path().join("batch/manifest.toml");
    let shards: Vec<PathBuf> = (1..=2).map(|k| t.path().join(format!("s{k}"))).collect();
    for (k, d) in shards.iter().enumerate() {
        batch(&manifest, d, &["--shard", &format!("{}/2", k + 1)]).unwrap();
    }
    let merged = t.path().join("m");
    let merge = |extra: &[&str]| {
        let mut a = vec!["merge", s(&shards[0]), s(&shards[1])];
        a.extend_from_slice(extra);
        a.extend(["--out", s(&merged), "--overwrite", "--quiet"]);
        attempt(&a)
    };
    merge(&[]).unwrap();
    // A site file cut short (a disk filled, a copy interrupted) is named, not merged.
    let priors = shards[0].join("sites/miombo/priors.csv");
    let text = fs::read_to_string(&priors).unwrap();
    fs::write(&priors, &text[..text.len() / 2]).unwrap();
    let e = merge(&[]).unwrap_err();
    assert!(e.contains("priors.csv") && e.contains("cut short"), "{e}");
    // The batch itself re-runs the damaged site instead of keeping it.
    batch(&manifest, &shards[0], &["--shard", "1/2"]).unwrap();
    assert_eq!(fs::read_to_string(&priors).unwrap(), text);
    merge(&[]).unwrap();
    // A folder that is not a shard says so.
    let plain = t.path().join("plain");
    fs::create_dir(&plain).unwrap();
    let e = merge(&[s(&plain)]).unwrap_err();
    assert!(e.contains("not a batch shard"), "{e}");
}

#[test]
fn member_counts_are_bounded_and_never_panic() {
    let site = demo("site.toml");
    let spec = demo("ensemble.toml");
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("e");
    // 2^32 members once truncated to 0 in a u32 and panicked on an index.
    for n in ["4294967296", "10000001", "0"] {
        refused(
            &[
                "ensemble",
                s(&site),
                "--spec",
                s(&spec),
                "--members",
                n,
                "--seed",
                "1",
                "--out",
                s(&out),
            ],
            &["--members", "10000000"],
        );
        refused(
            &[
                "batch",
                s(&demo("batch/manifest.toml")),
                "--spec",
                s(&spec),
                "--members",
                n,
                "--seed",
                "1",
                "--out",
                s(&out),
            ],
            &["--members"],
        );
    }
    assert!(!out.exists());
    // The largest array a Slurm environment could claim is an error or a shard, never an
    // overflow (`MAX + 1` once panicked).
    let huge = |name: &str| match name {
        "SLURM_ARRAY_TASK_ID" | "SLURM_ARRAY_TASK_MAX" => Some(usize::MAX.to_string()),
        "SLURM_ARRAY_TASK_MIN" => Some("0".to_string()),
        _ => None,
    };
    let shard = catch_unwind(|| isodisc_runner::commands::batch::shard_from_env(huge));
    assert!(shard.is_ok(), "shard_from_env panicked");
}

#[test]
fn outputs_are_all_or_nothing_and_leftovers_of_killed_runs_are_cleaned() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let results = t.path().join("results");
    attempt(&[
        "run",
        s(&t.path().join("site.toml")),
        "--out",
        s(&results),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    let samples = t.path().join("observations/canopy_air.csv");
    let fits = t.path().join("fits.csv");
    attempt(&[
        "keeling",
        s(&samples),
        "--by",
        "night",
        "--site",
        s(&t.path().join("site.toml")),
        "--out",
        s(&fits),
    ])
    .unwrap();
    let figures = t.path().join("figures");
    attempt(&["plot", s(&results), "--out", s(&figures)]).unwrap();
    let before = snapshot(&figures);
    // A bad --groups value fails after the first figures are drawn (with observations, so they
    // differ from the old ones): the folder keeps its old figures, none changed, added or removed.
    let e = attempt(&[
        "plot",
        s(&results),
        "--out",
        s(&figures),
        "--observed",
        s(&t.path().join("observations/d13c_respiration_observed.csv")),
        "--keeling",
        s(&fits),
        "--samples",
        s(&samples),
        "--groups",
        "no-such-night",
    ])
    .unwrap_err();
    assert!(e.contains("no-such-night"), "{e}");
    assert_eq!(
        snapshot(&figures),
        before,
        "a failed plot changed the figures"
    );

    // `leaf --output` with a bad row: no file, no temporary file.
    let input = t.path().join("leaves.csv");
    fs::write(&input, "t_leaf,ppfd\n25,1500\n25,abc\n").unwrap();
    let output = t.path().join("leaves_out.csv");
    refused(
        &[
            "leaf",
            "--input",
            s(&input),
            "--output",
            s(&output),
            "--format",
            "csv",
        ],
        &["line 3", "abc"],
    );
    let left: Vec<String> = fs::read_dir(t.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains("leaves_out"))
        .collect();
    assert!(left.is_empty(), "left behind: {left:?}");

    // An interruption (what the Ctrl-C/SIGTERM handler calls, here limited to this test's
    // folder as other tests run in parallel) removes the temporary files.
    let target = t.path().join("half.csv");
    let f = AtomicFile::create(&target).unwrap();
    assert_eq!(undo_pending_in(t.path()), 1);
    let stray: Vec<String> = fs::read_dir(t.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains("half.csv"))
        .collect();
    assert!(stray.is_empty(), "left behind: {stray:?}");
    drop(f);

    // A process killed between moving the old results aside and moving the new ones in left
    // `.results.old-PID` and no `results`; a killed process also left a temporary folder. The
    // next run into the same place restores the results, then cleans up. PID 2^31 − 1 is above
    // Linux's largest PID (4194304, proc(5)), so no such process runs.
    let old = t.path().join(".results.old-2147483647");
    fs::rename(&results, &old).unwrap();
    let tmp = t.path().join(".results.tmp-2147483647");
    fs::create_dir(&tmp).unwrap();
    fs::write(tmp.join("steps.csv"), "half").unwrap();
    let e = attempt(&[
        "run",
        s(&t.path().join("site.toml")),
        "--out",
        s(&results),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap_err();
    // Restored: so the folder is not empty, and without --overwrite the run is refused.
    assert!(e.contains("--overwrite"), "{e}");
    assert!(results.join("daily.csv").is_file(), "results not restored");
    assert!(!old.exists() && !tmp.exists(), "stale siblings left");
}

#[test]
fn shards_without_sites_and_more_shards_than_sites() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let manifest = one_site_manifest(t.path());
    let script = t.path().join("submit.sh");
    refused(
        &[
            "cluster-script",
            s(&manifest),
            "--shards",
            "3",
            "--results",
            s(&t.path().join("r")),
            "--out",
            s(&script),
        ],
        &["--shards 3", "1 site"],
    );
    assert!(!script.exists());
    // Shard 2 of 2 of a one-site manifest holds no site: a valid, empty shard that merge takes.
    let shards: Vec<PathBuf> = (1..=2).map(|k| t.path().join(format!("s{k}"))).collect();
    for (k, d) in shards.iter().enumerate() {
        batch(&manifest, d, &["--shard", &format!("{}/2", k + 1)]).unwrap();
    }
    assert_eq!(
        fs::read_to_string(shards[1].join("priors.csv"))
            .unwrap()
            .lines()
            .count(),
        1,
        "an empty shard's priors.csv is its header"
    );
    let merged = t.path().join("m");
    attempt(&[
        "merge",
        s(&shards[0]),
        s(&shards[1]),
        "--out",
        s(&merged),
        "--quiet",
    ])
    .unwrap();
    assert!(merged.join("priors.nc").is_file());
}

#[test]
fn cluster_scripts_cannot_run_injected_commands() {
    let t = tempfile::tempdir().unwrap();
    let manifest = demo("batch/manifest.toml");
    let script = t.path().join("submit.sh");
    let base = |flag: &'static str, value: &str| -> Result<(), String> {
        let results = t.path().join("r");
        let mut a = vec![
            "cluster-script",
            s(&manifest),
            "--shards",
            "2",
            "--results",
            s(&results),
            "--out",
            s(&script),
        ];
        let value = value.to_string();
        let v: &str = &value;
        if flag == "--results" {
            a[5] = v;
        } else {
            a.extend([flag, v]);
        }
        attempt(&a)
    };
    for (flag, value) in [
        ("--partition", "short\ntouch /tmp/owned"),
        ("--partition", "short;reboot"),
        ("--account", "a$(id)"),
        ("--account", "x`id`"),
        ("--results", "/tmp/r\"; rm -rf ~; \""),
        ("--results", "/tmp/r\ntouch /tmp/owned"),
        ("--isodisc", "/opt/$(id)/isodisc"),
    ] {
        let e = base(flag, value).expect_err(&format!("{flag} {value:?} was accepted"));
        assert!(e.contains(flag), "{e}");
        assert!(
            !script.exists(),
            "a script was written for {flag} {value:?}"
        );
    }
    base("--partition", "short,long").unwrap();
    let ok = std::process::Command::new("bash")
        .arg("-n")
        .arg(&script)
        .status()
        .unwrap();
    assert!(ok.success());
}

#[test]
fn absurd_numbers_are_refused_where_read_and_constant_co2_gives_no_number() {
    let t = tempfile::tempdir().unwrap();
    let p = |name: &str, text: &str| {
        let f = t.path().join(name);
        fs::write(&f, text).unwrap();
        f
    };
    let head = "time,co2,d13c\n2025-01-01T20:00,420,-8\n";
    // Ranges: CO2 in (0, 100000] µmol mol⁻¹, δ13C in [−100, 50] ‰ (docs/observations.md).
    for (cell_line, needles) in [
        (
            "2025-01-01T21:00,1e300,-9\n",
            &["line 3", "column 2 (co2)", "1e300"][..],
        ),
        ("2025-01-01T21:00,inf,-9\n", &["line 3", "column 2", "inf"]),
        ("2025-01-01T21:00,NaN,-9\n", &["line 3", "NaN"]),
        (
            "2025-01-01T21:00,430,1e14\n",
            &["line 3", "column 3 (d13c)", "1e14"],
        ),
        ("2025-01-01T21:00,430,-150\n", &["line 3", "-150"]),
    ] {
        let f = p("bad.csv", &format!("{head}{cell_line}"));
        refused(&["keeling", s(&f)], needles);
    }
    // Constant CO2: the line is undefined. Empty intercept cells and a flag, never 1e14‰.
    let flat = p(
        "flat.csv",
        "time,co2,d13c\n2025-01-01T20:00,420,-8\n2025-01-01T21:00,420,-9\n\
         2025-01-01T22:00,420.0000001,-10\n2025-01-01T23:00,420,-11\n",
    );
    let fits = t.path().join("flat_fits.csv");
    attempt(&["keeling", s(&flat), "--out", s(&fits)]).unwrap();
    let mut rdr = csv::Reader::from_path(&fits).unwrap();
    let h = rdr.headers().unwrap().clone();
    let col = |n: &str| h.iter().position(|x| x == n).unwrap();
    let mut rows = 0;
    for r in rdr.records() {
        let r = r.unwrap();
        rows += 1;
        for c in [
            "intercept",
            "intercept_se",
            "ci95_low",
            "ci95_high",
            "slope",
        ] {
            assert_eq!(
                &r[col(c)],
                "",
                "{c} of a constant-CO2 group: {}",
                &r[col(c)]
            );
        }
        assert!(r[col("flags")].contains("constant_co2"), "{:?}", &r);
    }
    assert_eq!(rows, 2, "OLS and GMR rows");

    // compare: a non-finite or impossible observation names its line and column.
    let pred = p(
        "daily.csv",
        "period,d13c_respiration\n2025-01-01,-20\n2025-01-02,-21\n2025-01-03,-22\n",
    );
    for (cell, needle) in [("inf", "inf"), ("-1e9", "-1e9"), ("nan", "nan")] {
        let obs = p(
            "obs.csv",
            &format!("date,d13c_respiration\n2025-01-01,-20\n2025-01-02,{cell}\n"),
        );
        refused(
            &[
                "compare",
                "--predicted",
                s(&pred),
                "--observed",
                s(&obs),
                "--variable",
                "d13c_respiration",
            ],
            &["obs.csv", "line 3", "column 2", needle],
        );
    }
    // A 0-byte `leaf --input` is an error, not an empty result.
    let empty = p("empty.csv", "");
    refused(&["leaf", "--input", s(&empty)], &["empty.csv", "empty"]);
}

#[test]
fn messages_are_exact_and_outputs_feed_each_other() {
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    // No round-off tolerance in a range: covers summing to 1.2 are refused against [0, 1].
    let site = t.path().join("site.toml");
    let text = fs::read_to_string(&site).unwrap();
    let over = t.path().join("over.toml");
    fs::write(&over, text.replacen("cover = 0.5", "cover = 0.8", 1)).unwrap();
    let e = refused(
        &["run", s(&over), "--out", s(&t.path().join("o"))],
        &["[0, 1]"],
    );
    assert!(!e.contains("1.000000001"), "{e}");

    // `compare --help` lists only the formats compare writes.
    let help = Cli::try_parse_from(["isodisc", "compare", "--help"])
        .unwrap_err()
        .to_string();
    assert!(help.contains("table") && help.contains("json"), "{help}");
    assert!(
        !help.contains("csv:") && !help.contains("Comma-separated"),
        "{help}"
    );

    // The keeling output feeds `compare --observed` as it is (its `start` column is the time).
    let results = t.path().join("results");
    attempt(&[
        "run",
        s(&site),
        "--out",
        s(&results),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    let fits = t.path().join("keeling.csv");
    attempt(&[
        "keeling",
        s(&t.path().join("observations/canopy_air.csv")),
        "--by",
        "night",
        "--site",
        s(&site),
        "--out",
        s(&fits),
    ])
    .unwrap();
    // The run's δR against the nightly Keeling intercepts, with lags, as JSON and as a table.
    let compare = |extra: &[&str], out: &Path| {
        let daily = results.join("daily.csv");
        let mut a = vec![
            "compare",
            "--predicted",
            s(&daily),
            "--observed",
            s(&fits),
            "--variable",
            "d13c_respiration",
            "--observed-column",
            "intercept",
            "--lags",
            "2",
            "--out",
            s(out),
        ];
        a.extend_from_slice(extra);
        attempt(&a).unwrap();
    };
    let json = t.path().join("cmp.json");
    compare(&["--window", "1", "--format", "json"], &json);
    let v: serde_json::Value = serde_json::from_str(&fs::read_to_string(&json).unwrap()).unwrap();
    assert!(v["scores"]["n"].as_u64().unwrap() >= 20, "{v}");
    // "1 day", not "1 day(s)".
    let table = t.path().join("cmp.txt");
    compare(&[], &table);
    let text = fs::read_to_string(&table).unwrap();
    assert!(text.contains("averaged over 1 day ending"), "{text}");

    // An atmospheric history error names the file and the line.
    let hist = t.path().join("atmosphere_history.csv");
    let h = fs::read_to_string(&hist).unwrap();
    let mut lines: Vec<String> = h.lines().map(String::from).collect();
    let data = lines
        .iter()
        .position(|l| !l.starts_with('#') && l.starts_with(|c: char| c.is_ascii_digit()))
        .unwrap();
    let bad_line = data + 2; // the second data row, 1-based
    let cells: Vec<&str> = lines[data + 1].split(',').collect();
    let header: Vec<&str> = lines
        .iter()
        .find(|l| l.starts_with("year"))
        .unwrap()
        .split(',')
        .collect();
    let co2 = header.iter().position(|c| *c == "co2").unwrap();
    let mut cells: Vec<String> = cells.iter().map(|c| c.to_string()).collect();
    cells[co2] = "-5".into();
    lines[data + 1] = cells.join(",");
    fs::write(&hist, lines.join("\n") + "\n").unwrap();
    refused(
        &["run", s(&site), "--out", s(&t.path().join("h"))],
        &["atmosphere_history.csv", &format!("line {bad_line}")],
    );

    // `leaf --input` as a table keeps every cell apart: as many fields per row as names.
    let input = t.path().join("leaves.csv");
    fs::write(
        &input,
        "t_leaf,ppfd,vcmax25,jmax25\n25,1500,123.456789,234.567891\n-5.123456,2000.123456,150,250\n",
    )
    .unwrap();
    let out = t.path().join("leaves.txt");
    attempt(&["leaf", "--input", s(&input), "--output", s(&out)]).unwrap();
    let text = fs::read_to_string(&out).unwrap();
    let mut widths = text.lines().map(|l| l.split_whitespace().count());
    let n = widths.next().unwrap();
    assert!(widths.all(|w| w == n), "columns run together:\n{text}");
}

#[test]
fn every_bad_input_gets_a_clear_error_and_no_panic() {
    // The tally of this attack: each bad input must be refused with a message naming what is
    // wrong (a needle), without a panic, and without changing the demo copy it reads.
    let t = tempfile::tempdir().unwrap();
    copy_demo(t.path());
    let before = snapshot(t.path());
    let site = t.path().join("site.toml");
    let manifest = t.path().join("batch/manifest.toml");
    let spec = t.path().join("ensemble.toml");
    let air = t.path().join("observations/canopy_air.csv");
    let obs = t.path().join("observations/d13c_respiration_observed.csv");
    let elsewhere = tempfile::tempdir().unwrap();
    let out = elsewhere.path().join("out");
    let o = s(&out);
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec!["run", s(&site), "--out", s(t.path()), "--overwrite"],
            "input",
        ),
        (
            vec!["run", s(&site), "--out", o, "--from", "2025-02-30"],
            "--from",
        ),
        (
            vec![
                "run",
                s(&site),
                "--out",
                o,
                "--from",
                "2025-03-01",
                "--to",
                "2025-02-01",
            ],
            "--from",
        ),
        (
            vec!["run", "/no/such/site.toml", "--out", o],
            "/no/such/site.toml",
        ),
        (
            vec![
                "ensemble",
                s(&site),
                "--spec",
                s(&spec),
                "--members",
                "18446744073709551615",
                "--seed",
                "1",
                "--out",
                o,
            ],
            "--members",
        ),
        (
            vec![
                "ensemble",
                s(&site),
                "--spec",
                s(&spec),
                "--members",
                "2",
                "--seed",
                "1",
                "--out",
                o,
                "--threads",
                "0",
            ],
            "--threads",
        ),
        (
            vec!["batch", s(&manifest), "--out", o, "--shard", "0/2"],
            "--shard",
        ),
        (
            vec!["batch", s(&manifest), "--out", o, "--shard", "3/2"],
            "--shard",
        ),
        (
            vec![
                "batch",
                s(&manifest),
                "--out",
                o,
                "--shard",
                "18446744073709551616/2",
            ],
            "--shard",
        ),
        (
            vec!["merge", "/no/such/shard", "--out", o],
            "not a batch shard",
        ),
        (vec!["merge", s(t.path()), "--out", o], "not a batch shard"),
        (
            vec![
                "cluster-script",
                s(&manifest),
                "--shards",
                "0",
                "--results",
                "r",
                "--out",
                o,
            ],
            "--shards",
        ),
        (
            vec![
                "cluster-script",
                s(&manifest),
                "--shards",
                "99",
                "--results",
                "r",
                "--out",
                o,
            ],
            "--shards",
        ),
        (
            vec![
                "cluster-script",
                s(&manifest),
                "--shards",
                "2",
                "--results",
                "r",
                "--out",
                o,
                "--members",
                "0",
                "--spec",
                s(&spec),
            ],
            "--members",
        ),
        (
            vec![
                "cluster-script",
                s(&manifest),
                "--shards",
                "2",
                "--results",
                "r",
                "--out",
                o,
                "--mem",
                "2G;id",
            ],
            "--mem",
        ),
        (vec!["keeling", s(&site)], "no column"),
        (
            vec!["keeling", "/no/such/samples.csv"],
            "/no/such/samples.csv",
        ),
        (
            vec![
                "keeling",
                s(&air),
                "--by",
                "window",
                "--window",
                "99999999999999d",
            ],
            "--window",
        ),
        (
            vec![
                "keeling",
                s(&air),
                "--background-co2",
                "inf",
                "--background-d13c",
                "-8",
            ],
            "--background-co2",
        ),
        (
            vec!["keeling", s(&air), "--min-co2-range=-1"],
            "min_co2_range",
        ),
        (
            vec![
                "compare",
                "--predicted",
                s(&site),
                "--observed",
                s(&site),
                "--variable",
                "x",
            ],
            "site.toml",
        ),
        (
            vec![
                "compare",
                "--predicted",
                "/no/such.csv",
                "--observed",
                s(&site),
                "--variable",
                "x",
            ],
            "/no/such.csv",
        ),
        (vec!["leaf", "--t-leaf", "inf"], "t-leaf"),
        (vec!["leaf", "--set", "vcmax25=1e308"], "vcmax25=1e308"),
        (vec!["leaf", "--ppfd", "1e308"], "--ppfd = 1e308"),
        (
            vec![
                "keeling",
                s(&air),
                "--by",
                "window",
                "--window",
                "9000000000000000000d",
            ],
            "--window",
        ),
        (
            vec![
                "ensemble",
                s(&site),
                "--spec",
                s(&spec),
                "--members",
                "2",
                "--seed",
                "1",
                "--out",
                o,
                "--threads",
                "100000000",
            ],
            "--threads",
        ),
        (
            vec!["batch", s(&manifest), "--out", o, "--threads", "5000"],
            "--threads",
        ),
        (
            vec![
                "compare",
                "--predicted",
                s(&site),
                "--observed",
                s(&site),
                "--variable",
                "x",
                "--lags",
                "18446744073709551615",
            ],
            "--lags",
        ),
        (
            vec!["leaf", "--input", "/no/such/leaves.csv"],
            "/no/such/leaves.csv",
        ),
        (vec!["plot", s(t.path())], "daily.csv"),
        // Single-file outputs never replace an input either.
        (vec!["keeling", s(&air), "--out", s(&air)], "is the input"),
        (
            vec![
                "compare",
                "--predicted",
                s(&obs),
                "--observed",
                s(&obs),
                "--variable",
                "d13c_respiration",
                "--out",
                s(&obs),
            ],
            "is the input",
        ),
        (
            vec!["leaf", "--input", s(&air), "--output", s(&air)],
            "is the input",
        ),
        (
            vec![
                "cluster-script",
                s(&manifest),
                "--shards",
                "2",
                "--results",
                "r",
                "--out",
                s(&manifest),
            ],
            "is the input",
        ),
    ];
    // A panic fails the test inside `attempt`, so reaching the tally means none happened.
    let (mut tried, mut clear) = (0, 0);
    for (args, needle) in &cases {
        tried += 1;
        let e = attempt(args).expect_err(&format!("isodisc {} was accepted", args.join(" ")));
        assert!(
            e.contains(needle),
            "isodisc {}: `{e}` does not name `{needle}`",
            args.join(" ")
        );
        clear += 1;
    }
    assert_eq!(snapshot(t.path()), before, "data lost or changed");
    assert!(!out.exists(), "a refused command left an output");
    eprintln!("bad inputs tried: {tried}, clear errors: {clear}, panics: 0, data loss: 0");
    assert_eq!(tried, clear);
}
