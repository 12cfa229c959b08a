//! Ensembles, batches and priors (docs/science.md): fixed members reproduce the single run, Latin
//! hypercube strata and moments, Spearman sensitivities, thread-count independence, sharding,
//! merging and resuming, and the NetCDF priors against the CSV.

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};

use clap::Parser;
use isodisc_runner::cli::Cli;
use isodisc_runner::ensemble::sample::Design;
use isodisc_runner::ensemble::spec::EnsembleSpec;
use isodisc_runner::priors::{PriorsGrid, read_priors_csv, read_priors_nc};

/// Relative tolerance of sample moments against the analytic ones (Latin hypercube, n = 4000).
const MOMENT_TOL: f64 = 0.01;
/// A short period keeps the runs quick (two months of hourly steps).
const FROM: &str = "2025-01-01";
const TO: &str = "2025-02-28";

use crate::common::run;

fn demo(rel: &str) -> String {
    crate::common::demo_path(rel).display().to_string()
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Every file under `dir` except `run.json` (the invocation's log) and isodisc's hidden
/// bookkeeping (`.isodisc-output`, which says which command wrote the folder, and a batch's
/// `.isodisc-lock`), by relative path.
fn files(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else if p.file_name().unwrap() != "run.json"
                && !p.file_name().unwrap().to_string_lossy().starts_with('.')
            {
                out.insert(
                    p.strip_prefix(dir).unwrap().to_path_buf(),
                    fs::read(&p).unwrap(),
                );
            }
        }
    }
    out
}

fn csv_rows(path: &Path) -> Vec<BTreeMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let h: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            h.iter()
                .cloned()
                .zip(rec.unwrap().iter().map(String::from))
                .collect()
        })
        .collect()
}

const SPEC_VARIED: &str = r#"
sampling = "latin-hypercube"
[param."vegetation.c4.leakiness"]
distribution = "uniform"
min = 0.2
max = 0.35
[param."pools.soil.turnover_years"]
distribution = "log-normal"
meanlog = 3.4
sdlog = 0.3
"#;

#[test]
fn fixed_members_equal_the_single_run() {
    // Analytic: a member whose parameters are the site's own values is the single run.
    let t = tempfile::tempdir().unwrap();
    let spec = t.path().join("spec.toml");
    fs::write(
        &spec,
        "[param.\"vegetation.c3.g1\"]\ndistribution = \"fixed\"\nvalue = 4.1\n\
         [param.\"pools.cue\"]\ndistribution = \"fixed\"\nvalue = 0.5\n",
    )
    .unwrap();
    let (single, ens) = (t.path().join("single"), t.path().join("ens"));
    let site = demo("site.toml");
    run(&[
        "run",
        &site,
        "--out",
        s(&single),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    run(&[
        "ensemble",
        &site,
        "--spec",
        s(&spec),
        "--members",
        "3",
        "--seed",
        "1",
        "--out",
        s(&ens),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    let annual = &csv_rows(&single.join("annual.csv"))[0];
    let members = csv_rows(&ens.join("members.csv"));
    assert_eq!(members.len(), 3);
    for m in &members {
        assert_eq!(m["status"], "ok");
        assert_eq!(m["year"], annual["period"]);
        for k in isodisc_runner::ensemble::KEPT {
            assert_eq!(m[k], annual[k], "member {} column {k}", m["member"]);
        }
    }
    // With identical members the spread is exactly 0 and every quantile is the value.
    for q in csv_rows(&ens.join("quantiles_monthly.csv")) {
        assert_eq!(q["sd"], "0", "{q:?}");
        assert_eq!(q["p05"], q["mean"]);
        assert_eq!(q["p95"], q["mean"]);
    }
}

/// ∫ f over [a, b] by composite Simpson with n (even) intervals.
fn simpson(f: impl Fn(f64) -> f64, a: f64, b: f64, n: usize) -> f64 {
    let h = (b - a) / n as f64;
    let inner: f64 = (1..n)
        .map(|i| f(a + i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 })
        .sum();
    (f(a) + f(b) + inner) * h / 3.0
}

#[test]
fn latin_hypercube_strata_and_moments() {
    let text = r#"
[param.a_uniform]
distribution = "uniform"
min = 2.0
max = 5.0
[param.b_normal]
distribution = "normal"
mean = 10.0
sd = 2.0
[param.c_lognormal]
distribution = "log-normal"
meanlog = 1.0
sdlog = 0.25
[param.d_truncated]
distribution = "truncated-normal"
mean = 0.0
sd = 1.0
min = -1.0
max = 2.0
"#;
    let spec = EnsembleSpec::parse(Path::new("spec.toml"), text.into()).unwrap();
    let n = 4000;
    let design = Design::new(&spec, n, 42);
    let units: Vec<Vec<f64>> = (0..n).map(|i| design.unit(i, 4)).collect();
    let draws: Vec<Vec<f64>> = (0..n).map(|i| design.draw(&spec, i)).collect();
    // McKay et al. (1979): each of the n equal-probability strata holds exactly one draw.
    for j in 0..4 {
        let mut seen = vec![false; n];
        for u in &units {
            let k = (u[j] * n as f64).floor() as usize;
            assert!(!seen[k], "stratum {k} of parameter {j} drawn twice");
            seen[k] = true;
        }
    }
    // Textbook moments: uniform (a+b)/2, (b−a)/√12; normal μ, σ; log-normal e^(μ+σ²/2),
    // √((e^σ² − 1)·e^(2μ+σ²)); the truncated normal's by integrating its density (analytic, in
    // the test).
    let (mu, sg) = (1.0_f64, 0.25_f64);
    let phi = |z: f64| (-0.5 * z * z).exp();
    let z = simpson(phi, -1.0, 2.0, 2000);
    let tm = simpson(|x| x * phi(x), -1.0, 2.0, 2000) / z;
    let tv = simpson(|x| (x - tm).powi(2) * phi(x), -1.0, 2.0, 2000) / z;
    let expected = [
        (3.5, 3.0 / 12f64.sqrt()),
        (10.0, 2.0),
        (
            (mu + sg * sg / 2.0).exp(),
            ((sg * sg).exp_m1() * (2.0 * mu + sg * sg).exp()).sqrt(),
        ),
        (tm, tv.sqrt()),
    ];
    for (j, (m, sd)) in expected.iter().enumerate() {
        let x: Vec<f64> = draws.iter().map(|d| d[j]).collect();
        let mean = x.iter().sum::<f64>() / n as f64;
        let var = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        assert!(
            (mean - m).abs() <= MOMENT_TOL * m.abs().max(*sd),
            "param {j}: mean {mean} vs {m}"
        );
        assert!(
            (var.sqrt() - sd).abs() <= MOMENT_TOL * sd,
            "param {j}: sd {} vs {sd}",
            var.sqrt()
        );
    }
    assert!(draws.iter().all(|d| (-1.0..=2.0).contains(&d[3])));
    // Random sampling: member i's draw depends on (seed, i) only, not on the ensemble size.
    let rnd = EnsembleSpec::parse(
        Path::new("r.toml"),
        format!("sampling = \"random\"\n{text}"),
    )
    .unwrap();
    let (small, large) = (Design::new(&rnd, 10, 9), Design::new(&rnd, 1000, 9));
    assert_eq!(small.draw(&rnd, 7), large.draw(&rnd, 7));
}

#[test]
fn spec_errors_name_key_and_line() {
    let e = EnsembleSpec::parse(
        Path::new("x.toml"),
        "[param.\"vegetation.c3.g1\"]\ndistribution = \"normal\"\nmean = 4.0\nsdd = 1.0\n".into(),
    )
    .unwrap_err()
    .chain();
    assert!(
        e.contains("line 4") && e.contains("sdd") && e.contains("`sd`"),
        "{e}"
    );
    let e = EnsembleSpec::parse(
        Path::new("x.toml"),
        "[param.g]\ndistribution = \"normal\"\nmean = 4.0\nsd = 1.0\nvalue = 3.0\n".into(),
    )
    .unwrap_err()
    .chain();
    assert!(e.contains("line 5") && e.contains("`value`"), "{e}");
}

#[test]
fn spearman_sensitivities_and_thread_independence() {
    let t = tempfile::tempdir().unwrap();
    let spec = t.path().join("spec.toml");
    fs::write(&spec, SPEC_VARIED).unwrap();
    let n = 48;
    let out = |k: &str| t.path().join(format!("threads{k}"));
    for k in ["1", "2"] {
        run(&[
            "ensemble",
            &demo("site.toml"),
            "--spec",
            s(&spec),
            "--members",
            &n.to_string(),
            "--seed",
            "11",
            "--out",
            s(&out(k)),
            "--threads",
            k,
            "--from",
            FROM,
            "--to",
            "2025-01-31",
            "--quiet",
        ])
        .unwrap();
    }
    // Same seed, any thread count: byte-identical files.
    assert_eq!(files(&out("1")), files(&out("2")));
    let sens: BTreeMap<(String, String), f64> = csv_rows(&out("1").join("sensitivity.csv"))
        .into_iter()
        .map(|r| {
            (
                (r["parameter"].clone(), r["output"].clone()),
                r["spearman_r"].parse().unwrap(),
            )
        })
        .collect();
    let r = |p: &str, o: &str| sens[&(p.to_string(), o.to_string())];
    // Planted: Farquhar (1983) C4 Δ rises with leakiness (b3 − s > 0) and nothing else varies
    // with it, so Δ is a monotone function of it: Spearman = 1.
    assert!(r("vegetation.c4.leakiness", "discrimination") > 0.999);
    // Independent: soil turnover does not enter Δ; under H0 r has sd ≈ 1/√(n − 1), so |r| < 3/√n.
    let bound = 3.0 / (n as f64).sqrt();
    assert!(r("pools.soil.turnover_years", "discrimination").abs() < bound);
}

#[test]
fn shards_merge_to_the_one_shot_batch_and_resume() {
    let t = tempfile::tempdir().unwrap();
    let spec = t.path().join("spec.toml");
    fs::write(&spec, SPEC_VARIED).unwrap();
    let manifest = demo("batch/manifest.toml");
    let batch = |out: &Path, extra: &[&str]| {
        let mut a = vec![
            "batch",
            &manifest,
            "--out",
            s(out),
            "--spec",
            s(&spec),
            "--members",
            "4",
            "--seed",
            "3",
            "--from",
            FROM,
            "--to",
            "2025-01-31",
            "--quiet",
        ];
        a.extend_from_slice(extra);
        run(&a)
    };
    let one = t.path().join("one");
    batch(&one, &[]).unwrap();
    let shards: Vec<PathBuf> = (1..=3)
        .map(|k| t.path().join(format!("shard{k}")))
        .collect();
    for (k, d) in shards.iter().enumerate() {
        batch(d, &["--shard", &format!("{}/3", k + 1)]).unwrap();
    }
    let merged = t.path().join("merged");
    let sh: Vec<&str> = shards.iter().map(|d| s(d)).collect();
    let mut args = vec!["merge"];
    args.extend(&sh);
    args.extend(["--out", s(&merged), "--quiet"]);
    run(&args).unwrap();
    let expected = files(&one);
    // batch.json, priors.csv, priors.nc, and per site 4 ensemble files, priors.csv and done.json.
    assert_eq!(expected.len(), 3 + 4 * 6);
    assert_eq!(
        files(&merged),
        expected,
        "merged shards differ from the one-shot batch"
    );

    // Gaps and overlaps are refused.
    let gap = run(&[
        "merge",
        sh[0],
        sh[1],
        "--out",
        s(&t.path().join("g")),
        "--quiet",
    ])
    .unwrap_err();
    assert!(gap.contains("none of the shards"), "{gap}");
    let overlap = run(&[
        "merge",
        sh[0],
        sh[0],
        sh[1],
        sh[2],
        "--out",
        s(&t.path().join("o")),
        "--quiet",
    ])
    .unwrap_err();
    assert!(overlap.contains("more than one shard"), "{overlap}");

    // An interrupted batch: one site's folder never written. The re-run runs only that site and
    // ends with the same files.
    fs::remove_dir_all(one.join("sites/wet-woodland")).unwrap();
    fs::remove_file(one.join("priors.nc")).unwrap();
    batch(&one, &[]).unwrap();
    let log: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(one.join("run.json")).unwrap()).unwrap();
    assert_eq!(
        (log["ran"].as_u64(), log["skipped_as_done"].as_u64()),
        (Some(1), Some(3))
    );
    assert_eq!(files(&one), expected);

    // priors.nc read back with the netcdf3 crate holds the numbers of priors.csv.
    let csv = PriorsGrid::from_rows(&read_priors_csv(&one.join("priors.csv")).unwrap());
    let (nc, attrs) = read_priors_nc(&one.join("priors.nc")).unwrap();
    assert_eq!((&nc.sites, &nc.months), (&csv.sites, &csv.months));
    assert_eq!(nc.sites.len(), 4);
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    for (a, b) in [
        (&nc.lat, &csv.lat),
        (&nc.lon, &csv.lon),
        (&nc.utc_offset_h, &csv.utc_offset_h),
        (&nc.weight, &csv.weight),
    ] {
        assert_eq!(bits(a), bits(b));
    }
    for ((na, va), (nb, vb)) in nc.values.iter().zip(&csv.values) {
        assert_eq!(na, nb);
        assert_eq!(bits(va), bits(vb), "variable {na}");
        assert!(va.iter().any(|x| x.is_finite()), "variable {na} is empty");
    }
    assert!(attrs.contains(&("Conventions".into(), "CF-1.8".into())));
}

/// A lookup of environment variables from a fixed table.
fn env<'a>(vars: &'a [(&'static str, &'static str)]) -> impl Fn(&str) -> Option<String> + 'a {
    move |name: &str| {
        vars.iter()
            .find(|(k, _)| *k == name)
            .map(|(_, v)| v.to_string())
    }
}

#[test]
fn slurm_array_environment_gives_the_shard() {
    // Slurm's array-job variables (sbatch documentation, from memory): task IDs run from
    // SLURM_ARRAY_TASK_MIN to _MAX, SLURM_ARRAY_TASK_COUNT tasks in all.
    use isodisc_runner::commands::batch::shard_from_env;
    let four = [
        ("SLURM_ARRAY_TASK_ID", "3"),
        ("SLURM_ARRAY_TASK_COUNT", "4"),
        ("SLURM_ARRAY_TASK_MIN", "1"),
    ];
    assert_eq!(shard_from_env(env(&four)).unwrap(), (3, 4));
    // Arrays may start at 0: task 0 of 0-3 is shard 1 of 4.
    let zero = [
        ("SLURM_ARRAY_TASK_ID", "0"),
        ("SLURM_ARRAY_TASK_MIN", "0"),
        ("SLURM_ARRAY_TASK_MAX", "3"),
    ];
    assert_eq!(shard_from_env(env(&zero)).unwrap(), (1, 4));
    let missing: &[(&str, &str)] = &[];
    let err = shard_from_env(env(missing)).unwrap_err().chain();
    assert!(err.contains("SLURM_ARRAY_TASK_ID"), "{err}");
    let outside = [
        ("SLURM_ARRAY_TASK_ID", "9"),
        ("SLURM_ARRAY_TASK_COUNT", "4"),
    ];
    assert!(shard_from_env(env(&outside)).is_err());
}

#[test]
fn cluster_script_submits_an_array_and_a_dependent_merge() {
    // The script must be valid bash (bash -n, common practice) and hold the array job over the
    // shards, `--shard env`, and a merge that waits for every task (`--dependency=afterok`).
    let dir = tempfile::tempdir().unwrap();
    let script = dir.path().join("submit.sh");
    let manifest =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/batch/manifest.toml");
    let cli = Cli::try_parse_from([
        "isodisc",
        "cluster-script",
        manifest.to_str().unwrap(),
        "--shards",
        "4",
        "--results",
        dir.path().join("res").to_str().unwrap(),
        "--out",
        script.to_str().unwrap(),
        "--partition",
        "short",
        "--time",
        "00:30:00",
        "--mem",
        "3G",
    ])
    .unwrap();
    isodisc_runner::run(cli).unwrap();
    let text = fs::read_to_string(&script).unwrap();
    for needle in [
        "--array=1-$SHARDS",
        "SHARDS=4",
        "--shard env",
        "--dependency=afterok:$array_job",
        "#SBATCH --partition=short",
        "TIME=00:30:00",
        "MEM=3G",
        " merge ",
    ] {
        assert!(text.contains(needle), "script lacks {needle}:\n{text}");
    }
    let ok = std::process::Command::new("bash")
        .arg("-n")
        .arg(&script)
        .status()
        .unwrap();
    assert!(ok.success(), "bash -n refuses the script");
    let bad = Cli::try_parse_from([
        "isodisc",
        "cluster-script",
        manifest.to_str().unwrap(),
        "--shards",
        "4",
        "--results",
        "r",
        "--time",
        "3 hours",
    ])
    .unwrap();
    assert!(
        isodisc_runner::run(bad)
            .unwrap_err()
            .chain()
            .contains("--time")
    );
}

#[test]
fn cluster_script_passes_a_batch_posterior_to_its_tasks() {
    // Each array task runs `isodisc batch` with the flags a one-machine batch takes (common
    // practice: the script only splits the work), so `--posterior` reaches the tasks with the
    // members and seed, and the task's command parses as a batch command.
    let dir = tempfile::tempdir().unwrap();
    let script = dir.path().join("submit.sh");
    let fits = dir.path().join("fits");
    fs::create_dir_all(&fits).unwrap();
    let manifest =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo/batch/manifest.toml");
    let args = |extra: &[&str]| {
        let mut v = vec![
            "isodisc".to_string(),
            "cluster-script".to_string(),
            manifest.to_str().unwrap().to_string(),
            "--shards".to_string(),
            "2".to_string(),
            "--results".to_string(),
            dir.path().join("res").to_str().unwrap().to_string(),
            "--out".to_string(),
            script.to_str().unwrap().to_string(),
        ];
        v.extend(extra.iter().map(|e| e.to_string()));
        Cli::try_parse_from(v).unwrap()
    };
    let fits_s = fits.to_str().unwrap();
    isodisc_runner::run(args(&[
        "--posterior",
        fits_s,
        "--members",
        "3",
        "--seed",
        "5",
    ]))
    .unwrap();
    let text = fs::read_to_string(&script).unwrap();
    let line = text
        .lines()
        .find(|l| l.contains(" batch ") && l.contains("--shard env"))
        .unwrap_or_else(|| panic!("no task line:\n{text}"));
    let flags = format!(" --posterior {fits_s} --members 3 --seed 5");
    assert!(line.ends_with(&flags), "task line {line:?} lacks {flags:?}");
    Cli::try_parse_from([
        "isodisc",
        "batch",
        manifest.to_str().unwrap(),
        "--out",
        "shard_1",
        "--shard",
        "env",
        "--posterior",
        fits_s,
        "--members",
        "3",
        "--seed",
        "5",
    ])
    .expect("the task's flags are batch flags");
    // Without --members the posterior has nothing to draw: refused, naming the flags.
    let err = isodisc_runner::run(args(&["--posterior", fits_s])).unwrap_err();
    assert!(err.chain().contains("--members"), "{}", err.chain());
}

#[test]
fn an_ensemble_folder_plots_its_envelopes() {
    // `isodisc plot` reads what `isodisc ensemble` writes (common practice: the tools of one
    // package read each other's files); the envelope figure is valid SVG with its axis labels.
    let t = tempfile::tempdir().unwrap();
    let ens = t.path().join("ens");
    let figs = t.path().join("figs");
    run(&[
        "ensemble",
        &demo("site.toml"),
        "--spec",
        &demo("ensemble.toml"),
        "--members",
        "4",
        "--seed",
        "3",
        "--out",
        s(&ens),
        "--from",
        FROM,
        "--to",
        TO,
        "--quiet",
    ])
    .unwrap();
    run(&["plot", s(&ens), "--out", s(&figs)]).unwrap();
    let svg = fs::read_to_string(figs.join("ensemble_discrimination.svg")).unwrap();
    assert!(svg.trim_start().starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    assert!(
        svg.contains("month") && svg.contains("5–95 %"),
        "labels missing"
    );
}
