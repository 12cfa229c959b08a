//! Helpers shared by the checks that drive the `isodisc` command.

use clap::Parser;
use isodisc_runner::cli::Cli;

/// Runs `isodisc ARGS…` in-process; the error is the message chain the user would see.
pub fn run(args: &[&str]) -> Result<(), String> {
    let cli = Cli::try_parse_from(std::iter::once("isodisc").chain(args.iter().copied()))
        .map_err(|e| e.to_string())?;
    isodisc_runner::run(cli).map_err(|e| e.chain())
}

/// A file of the invented demo site, `forcing-demo/REL`.
pub fn demo_path(rel: &str) -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../forcing-demo")
        .join(rel)
}

/// Runs `isodisc run SITE --out OUT --quiet` in-process.
pub fn run_quiet(site: &std::path::Path, out: &std::path::Path) -> Result<(), String> {
    run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ])
}

/// Proptest settings shared by every module: `cases` random cases; failures are persisted in
/// `tests/proptest-regressions/<module>.txt` (committed with the fix, replayed first on every run)
/// except in CI (the `CI` variable set), where a failure is reported with its seed in the log and
/// nothing is written into the checkout. See DEVELOPERS.md.
pub fn proptest_config(module: &'static str, cases: u32) -> proptest::prelude::ProptestConfig {
    use proptest::test_runner::FileFailurePersistence;
    let persistence: Option<Box<dyn proptest::test_runner::FailurePersistence>> =
        if std::env::var_os("CI").is_some() {
            None
        } else {
            let path: &'static str =
                Box::leak(format!("proptest-regressions/{module}.txt").into_boxed_str());
            Some(Box::new(FileFailurePersistence::Direct(path)))
        };
    proptest::prelude::ProptestConfig {
        cases,
        failure_persistence: persistence,
        ..proptest::prelude::ProptestConfig::default()
    }
}
