//! `isodisc ensemble SITE.toml --spec SPEC.toml --members N --seed S --out DIR`: a parameter
//! ensemble of one site. The weather is read once; members run in parallel on a local pool of
//! `--threads` threads; `members.csv`, `quantiles_monthly.csv`, `quantiles_annual.csv`,
//! `sensitivity.csv` and `run.json` are written into a temporary folder that replaces DIR only
//! when all are written. Member i depends only on (seed, i), so the files (all but `run.json`)
//! are byte-identical for any thread count.

use std::path::{Path, PathBuf};
use std::time::Instant;

use indicatif::ProgressBar;

use crate::cli::EnsembleArgs;
use crate::commands::{Period, parse_period};
use crate::ensemble::spec::EnsembleSpec;
use crate::ensemble::summary::{write_members, write_quantiles, write_sensitivity};
use crate::ensemble::{Member, MemberStatus, run_members};
use crate::error::{Context, Error, Result};
use crate::forcing::{ForcingReport, ForcingStep};

use crate::output::{check_out_dir, fnv1a64, inputs_json, write_folder, write_json};
use crate::site::Site;

/// Reads a site's weather once into memory, for every member to replay.
pub(crate) fn read_steps(site: &Site, period: Period) -> Result<(Vec<ForcingStep>, ForcingReport)> {
    let mut reader = site
        .weather(period.0, period.1)
        .with_context(|| format!("site {}", site.path.display()))?;
    let steps = reader
        .by_ref()
        .collect::<std::result::Result<Vec<_>, _>>()
        .with_context(|| format!("site {}", site.path.display()))?;
    Ok((steps, reader.report()))
}

/// Most members an ensemble may have: ten million members keep the per-member results (a few
/// kB each) within the memory of a large node; more is almost certainly a typo.
pub const MAX_MEMBERS: usize = 10_000_000;

/// Checks `--members`: 1 to [`MAX_MEMBERS`].
pub(crate) fn check_members(members: usize) -> Result<()> {
    if members == 0 || members > MAX_MEMBERS {
        return Err(Error::msg(format!(
            "--members {members}: use 1 to {MAX_MEMBERS}"
        )));
    }
    Ok(())
}

/// Most worker threads a command takes: far above any node's cores, low enough that a typo
/// (100000000) is refused instead of exhausting the system.
pub const MAX_THREADS: usize = 1024;

/// Checks `--threads`: 1 to [`MAX_THREADS`].
pub(crate) fn check_threads(threads: Option<usize>) -> Result<()> {
    match threads {
        Some(t) if t == 0 || t > MAX_THREADS => {
            Err(Error::msg(format!("--threads {t}: use 1 to {MAX_THREADS}")))
        }
        _ => Ok(()),
    }
}

/// A rayon pool of `threads` threads (None: one per core).
pub(crate) fn thread_pool(threads: Option<usize>) -> Result<rayon::ThreadPool> {
    check_threads(threads)?;
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads.unwrap_or(0))
        .build()
        .map_err(|e| Error::msg(format!("cannot start the worker threads: {e}")))
}

/// Checks that every path of the spec names a parameter of the site.
pub(crate) fn check_spec_paths(spec: &EnsembleSpec, site: &Site) -> Result<()> {
    for p in &spec.params {
        if site.param_value(&p.path).is_none() {
            // set_param's error names the closest known path.
            let mut probe = site.clone();
            let why = probe
                .set_param(&p.path, f64::NAN)
                .err()
                .map_or_else(|| "not a parameter of this site".into(), |e| e.chain());
            return Err(Error::msg(format!(
                "{}: line {}: [param.\"{}\"]: {why}",
                spec.path.display(),
                p.line,
                p.path
            )));
        }
    }
    Ok(())
}

/// Members that did not run, as JSON for run logs.
pub(crate) fn failures_json(members: &[Member]) -> serde_json::Value {
    members
        .iter()
        .enumerate()
        .filter_map(|(i, m)| match &m.status {
            MemberStatus::Ok(_) => None,
            MemberStatus::Invalid(e) => {
                Some(serde_json::json!({"member": i, "status": "invalid", "message": e}))
            }
            MemberStatus::Failed(e) => {
                Some(serde_json::json!({"member": i, "status": "failed", "message": e}))
            }
        })
        .collect()
}

/// The spec as JSON for run logs.
pub(crate) fn spec_json(spec: &EnsembleSpec) -> serde_json::Value {
    serde_json::json!({
        "file": spec.path.display().to_string(),
        "fnv1a64": fnv1a64(spec.text.as_bytes()),
        "sampling": spec.sampling.as_str(),
        "params": spec.params.iter().map(|p| (p.path.clone(), format!("{:?}", p.dist).into()))
            .collect::<serde_json::Map<String, serde_json::Value>>(),
    })
}

/// Writes the ensemble files of one site into `dir`.
pub(crate) fn write_ensemble_files(
    dir: &Path,
    spec: &EnsembleSpec,
    members: &[Member],
) -> Result<()> {
    write_members(&dir.join("members.csv"), spec, members)?;
    write_quantiles(&dir.join("quantiles_monthly.csv"), members, false)?;
    write_quantiles(&dir.join("quantiles_annual.csv"), members, true)?;
    write_sensitivity(&dir.join("sensitivity.csv"), spec, members)
}

/// A validated `isodisc ensemble`.
#[derive(Debug)]
pub struct EnsemblePlan {
    site: Site,
    spec: EnsembleSpec,
    /// With --posterior: the posterior's draws (rows of posterior.csv, spec order).
    draws: Option<Vec<Vec<f64>>>,
    members: usize,
    seed: u64,
    out: PathBuf,
    threads: Option<usize>,
    period: Period,
    overwrite: bool,
    quiet: bool,
    command: String,
}

impl EnsemblePlan {
    /// Reads and validates the site, the spec and the flags before any work starts.
    pub fn from_args(args: &EnsembleArgs) -> Result<Self> {
        let site = Site::load(&args.site)?;
        let (spec, draws) = match (&args.spec, &args.posterior) {
            (Some(spec), _) => (EnsembleSpec::load(spec)?, None),
            (None, Some(dir)) => {
                let (spec, draws) = read_posterior(dir)?;
                (spec, Some(draws))
            }
            (None, None) => return Err(Error::msg("give --spec or --posterior")),
        };
        check_spec_paths(&spec, &site)?;
        check_members(args.members)?;
        check_threads(args.threads)?;
        let mut inputs: Vec<PathBuf> = site.input_files().into_iter().map(|f| f.1).collect();
        inputs.push(spec.path.clone());
        check_out_dir(&args.out, args.overwrite, &inputs)?;
        Ok(Self {
            site,
            spec,
            draws,
            members: args.members,
            seed: args.seed,
            out: args.out.clone(),
            threads: args.threads,
            period: parse_period(&args.period)?,
            overwrite: args.overwrite,
            quiet: args.quiet,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        })
    }

    /// Runs the members and writes the results.
    pub fn run(&self) -> Result<()> {
        let started = Instant::now();
        let summary = write_folder(&self.out, self.overwrite, "ensemble", |tmp| {
            self.run_into(tmp, started)
        })?;
        if !self.quiet {
            print!("{summary}");
        }
        Ok(())
    }

    fn run_into(&self, dir: &Path, started: Instant) -> Result<String> {
        let (steps, report) = read_steps(&self.site, self.period)?;
        let pool = thread_pool(self.threads)?;
        let progress = if self.quiet {
            ProgressBar::hidden()
        } else {
            ProgressBar::new(self.members as u64)
        };
        let members = pool.install(|| match &self.draws {
            None => run_members(
                &self.site,
                &steps,
                report.step_minutes,
                &self.spec,
                self.members,
                self.seed,
                &progress,
            ),
            Some(draws) => crate::ensemble::run_members_drawn(
                &self.site,
                &steps,
                report.step_minutes,
                &self.spec,
                self.members,
                &progress,
                |i| posterior_draw(draws, self.seed, i),
            ),
        });
        progress.finish_and_clear();
        drop(steps);
        write_ensemble_files(dir, &self.spec, &members)?;
        let ok = members.iter().filter(|m| m.periods().is_some()).count();
        if ok == 0 {
            let first = failures_json(&members);
            return Err(Error::msg(format!(
                "no member ran; the first failure: {}",
                first[0]["message"]
            )));
        }
        let log = serde_json::json!({
            "isodisc_version": env!("CARGO_PKG_VERSION"),
            "command": self.command,
            "inputs": inputs_json(&self.site.input_files())?,
            "site_file": {"path": self.site.path.display().to_string(), "fnv1a64": fnv1a64(self.site.text.as_bytes())},
            "forcing": {"path": report.path.display().to_string(),
                "steps": report.steps, "first_step": report.first.map(|t| t.to_string()),
                "last_step": report.last.map(|t| t.to_string())},
            "spec": spec_json(&self.spec),
            "posterior": self.draws.as_ref().map(|d| serde_json::json!({
                "file": self.spec.path.display().to_string(), "draws": d.len(),
                "members": "member i takes the draw of index u64 % draws, u64 from the stream (seed, i)"})),
            "members": self.members,
            "seed": self.seed,
            "threads": pool.current_num_threads(),
            "members_ok": ok,
            "members_not_run": failures_json(&members),
            "quantiles": "R type 8 (Hyndman & Fan 1996), statrs Data::quantile; sd with n - 1",
            "sensitivity": "Spearman rank correlation with annual discrimination and d13c_respiration; t-test p-value",
            "wall_time_s": started.elapsed().as_secs_f64(),
        });
        write_json(&dir.join("run.json"), &log)?;
        Ok(format!(
            "isodisc ensemble: {} members of {} ({} ran, {} not) in {:.1} s on {} threads\nresults: {}\n",
            self.members,
            self.site.file.site.name,
            ok,
            self.members - ok,
            started.elapsed().as_secs_f64(),
            pool.current_num_threads(),
            self.out.display()
        ))
    }
}

/// Reads `DIR/posterior.csv` of `isodisc fit`: its site-parameter columns (those between `step`
/// and `log_likelihood`, model-error SDs `error.*` left out) as a spec whose every parameter is
/// uniform over the draws' range (only for the members' table and the sensitivities), and the
/// draws.
pub(crate) fn read_posterior(dir: &Path) -> Result<(EnsembleSpec, Vec<Vec<f64>>)> {
    let path = dir.join("posterior.csv");
    let table = crate::table::CsvTable::read(&path)?;
    let text = std::fs::read_to_string(&path)?;
    let header: Vec<String> = text
        .lines()
        .next()
        .unwrap_or_default()
        .split(',')
        .map(|h| h.trim().to_string())
        .collect();
    if header.get(..2) != Some(&["walker".to_string(), "step".to_string()][..])
        || !header.iter().any(|h| h == "log_likelihood")
    {
        return Err(Error::msg(format!(
            "{}: not a posterior of `isodisc fit` (header walker,step,...,log_likelihood,log_prior)",
            path.display()
        )));
    }
    let names: Vec<&String> = header[2..]
        .iter()
        .take_while(|h| *h != "log_likelihood")
        .filter(|h| !h.starts_with(crate::commands::fit::ERROR_PREFIX))
        .collect();
    let columns = names
        .iter()
        .map(|n| table.numbers(table.column(n)?))
        .collect::<Result<Vec<_>>>()?;
    let rows = columns.first().map_or(0, Vec::len);
    if rows == 0 || names.is_empty() {
        return Err(Error::msg(format!("{}: no draws", path.display())));
    }
    let mut params = Vec::new();
    for (n, c) in names.iter().zip(&columns) {
        let (lo, hi) = c
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(*v), b.max(*v))
            });
        if !lo.is_finite() || !hi.is_finite() {
            return Err(Error::msg(format!(
                "{}: column {n} has empty cells",
                path.display()
            )));
        }
        params.push(crate::ensemble::spec::ParamSpec {
            path: (*n).clone(),
            dist: if lo < hi {
                crate::ensemble::spec::Dist::Uniform { min: lo, max: hi }
            } else {
                crate::ensemble::spec::Dist::Fixed { value: lo }
            },
            line: 1,
        });
    }
    let draws = (0..rows)
        .map(|i| columns.iter().map(|c| c[i]).collect())
        .collect();
    let spec = EnsembleSpec {
        path,
        text,
        sampling: crate::ensemble::spec::Sampling::Random,
        params,
    };
    Ok((spec, draws))
}

/// Member i's values from a posterior's draws: the row chosen by its own stream (seed, i), so
/// independent of the thread count (shared by `ensemble --posterior` and `batch --posterior`).
pub(crate) fn posterior_draw(draws: &[Vec<f64>], seed: u64, i: usize) -> Vec<f64> {
    use rand::Rng;
    let mut rng = crate::ensemble::sample::stream(seed, TAG_POSTERIOR, i as u64);
    draws[(rng.next_u64() % draws.len() as u64) as usize].clone()
}

/// Stream tag of the posterior draws' choice.
const TAG_POSTERIOR: u64 = 0x706f_7374; // "post"
