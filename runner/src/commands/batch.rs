//! `isodisc batch MANIFEST.toml --out DIR [--shard K/N] [--spec SPEC] [--posterior FITS]
//! [--members N --seed S]`: many sites, in parallel, each a single run or an ensemble — of a spec,
//! or drawn from the posterior of the site's own fit (`FITS/<site id>/posterior.csv`) — and the
//! monthly priors of them all.
//!
//! Layout of DIR (one shard's folder; shards on other machines write their own folders, which
//! `isodisc merge` joins):
//!
//! - `batch.json`: what the batch is (manifest and spec checksums, members, seed, period, every
//!   manifest site with its coordinates and weight) and which shard this folder holds;
//! - `sites/<id>/`: one finished site — `monthly.csv`, `annual.csv` (single run) or `members.csv`,
//!   `quantiles_*.csv`, `sensitivity.csv` (ensemble), its `priors.csv`, and `done.json`, the
//!   marker with the checksums of its inputs. A site folder is moved into place whole, so it
//!   exists only when finished; on a re-run a site whose marker matches is skipped;
//! - `priors.csv`, `priors.nc`: the shard's sites in manifest order; `run.json`: this invocation.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};
use std::time::Instant;

use indicatif::{ParallelProgressIterator, ProgressBar};
use rayon::prelude::*;

use super::ensemble::{
    check_members, check_spec_paths, check_threads, posterior_draw, read_posterior, read_steps,
    thread_pool, write_ensemble_files,
};
use crate::cli::BatchArgs;
use crate::commands::run::write_periods;
use crate::commands::{Period, parse_period};
use crate::ensemble::manifest::{Manifest, ManifestSite};
use crate::ensemble::spec::EnsembleSpec;
use crate::ensemble::{Member, MemberPeriods, MemberStatus, run_members, run_members_drawn};
use crate::error::{Context, Error, Result};
use crate::output::{
    FolderLock, check_not_input, clean_stale, fnv1a64, plural, replace_dir, sibling, track_temp,
    untrack, write_json, write_marker,
};
use crate::priors::{PriorRow, prior_rows, read_priors_csv, write_priors, write_priors_csv};
use crate::simulate::{NoSink, simulate};

/// The ensembles of the sites: each site's members drawn from its own fit's posterior where it
/// has one, else from the spec.
#[derive(Debug, Clone)]
pub(crate) struct SiteEnsemble {
    /// `--spec`: for every site without a fit.
    spec: Option<EnsembleSpec>,
    /// `--posterior DIR`, the folder of the sites' fits.
    posterior: Option<PathBuf>,
    /// The fits found there, by site id.
    fits: BTreeMap<String, SiteFit>,
    members: usize,
    seed: u64,
}

/// One site's fit: the posterior's parameters (as a spec, for the members' table) and its draws.
#[derive(Debug, Clone)]
struct SiteFit {
    spec: EnsembleSpec,
    draws: Vec<Vec<f64>>,
}

impl SiteEnsemble {
    /// Reads the spec and the sites' posteriors and checks every site's parameter paths; a site
    /// with neither a fit nor a spec is an error naming the file it looked for.
    fn load(
        manifest: &Manifest,
        spec: Option<&Path>,
        posterior: Option<&Path>,
        members: usize,
        seed: u64,
    ) -> Result<Self> {
        let spec = spec.map(EnsembleSpec::load).transpose()?;
        if let Some(dir) = posterior
            && !dir.is_dir()
        {
            return Err(Error::msg(format!(
                "--posterior {}: not a folder (it holds one fit per site: <site id>/posterior.csv)",
                dir.display()
            )));
        }
        let mut fits = BTreeMap::new();
        for s in &manifest.sites {
            let fit_dir = posterior.map(|d| d.join(&s.id));
            let site_spec = match fit_dir.filter(|d| d.join("posterior.csv").exists()) {
                Some(d) => {
                    let (spec, draws) =
                        read_posterior(&d).with_context(|| format!("manifest site `{}`", s.id))?;
                    &fits
                        .entry(s.id.clone())
                        .or_insert(SiteFit { spec, draws })
                        .spec
                }
                None => spec.as_ref().ok_or_else(|| {
                    Error::msg(format!(
                        "manifest site `{}`: no fit {} (write it with `isodisc fit ... --out \
                         {}`), and no --spec for sites without one",
                        s.id,
                        posterior
                            .unwrap_or(Path::new(""))
                            .join(&s.id)
                            .join("posterior.csv")
                            .display(),
                        posterior.unwrap_or(Path::new("")).join(&s.id).display()
                    ))
                })?,
            };
            check_spec_paths(site_spec, &s.site)
                .with_context(|| format!("manifest site `{}`", s.id))?;
        }
        if let Some(dir) = posterior
            && fits.is_empty()
        {
            return Err(Error::msg(format!(
                "--posterior {}: holds no fit of a manifest site (<site id>/posterior.csv, e.g. \
                 {})",
                dir.display(),
                dir.join(&manifest.sites[0].id)
                    .join("posterior.csv")
                    .display()
            )));
        }
        check_members(members)?;
        Ok(Self {
            spec,
            posterior: posterior.map(Path::to_path_buf),
            fits,
            members,
            seed,
        })
    }

    /// The input files: the spec and every posterior.csv.
    fn files(&self) -> Vec<PathBuf> {
        let spec = self.spec.iter().map(|s| s.path.clone());
        spec.chain(self.fits.values().map(|f| f.spec.path.clone()))
            .collect()
    }

    /// Checksum of what shapes site `id`'s members: its posterior.csv, else the spec.
    fn site_fnv1a64(&self, id: &str) -> Option<String> {
        match self.fits.get(id) {
            Some(f) => Some(fnv1a64(f.spec.text.as_bytes())),
            None => self.spec.as_ref().map(|s| fnv1a64(s.text.as_bytes())),
        }
    }
}

/// A validated `isodisc batch`.
#[derive(Debug)]
pub struct BatchPlan {
    manifest: Manifest,
    out: PathBuf,
    shard: (usize, usize),
    ensemble: Option<SiteEnsemble>,
    threads: Option<usize>,
    period: Period,
    from_to: (Option<String>, Option<String>),
    quiet: bool,
    command: String,
}

/// Parses `K/N` (1 ≤ K ≤ N), or `env`: the shard of a Slurm array task (see [`shard_from_env`]).
pub(crate) fn parse_shard(s: &str) -> Result<(usize, usize)> {
    if s == "env" {
        return shard_from_env(|name| std::env::var(name).ok());
    }
    let bad = || {
        Error::msg(format!(
            "--shard `{s}`: expected K/N with 1 <= K <= N, e.g. 2/3"
        ))
    };
    let (k, n) = s.split_once('/').ok_or_else(bad)?;
    let (k, n): (usize, usize) = (
        k.trim().parse().map_err(|_| bad())?,
        n.trim().parse().map_err(|_| bad())?,
    );
    if k == 0 || k > n {
        return Err(bad());
    }
    Ok((k, n))
}

/// The shard of a Slurm array task: K = SLURM_ARRAY_TASK_ID − SLURM_ARRAY_TASK_MIN + 1 (MIN
/// defaults to 1) and N = SLURM_ARRAY_TASK_COUNT (or MAX − MIN + 1). `get` reads a variable, so one
/// command line serves every task of an array job.
pub fn shard_from_env(get: impl Fn(&str) -> Option<String>) -> Result<(usize, usize)> {
    let num = |name: &str| -> Result<Option<usize>> {
        match get(name) {
            None => Ok(None),
            Some(v) => v.trim().parse().map(Some).map_err(|_| {
                Error::msg(format!("--shard env: {name} = `{v}` is not a whole number"))
            }),
        }
    };
    let id = num("SLURM_ARRAY_TASK_ID")?.ok_or_else(|| {
        Error::msg(
            "--shard env: SLURM_ARRAY_TASK_ID is not set; run inside a Slurm array job \
             (sbatch --array=1-N) or give --shard K/N",
        )
    })?;
    let min = num("SLURM_ARRAY_TASK_MIN")?.unwrap_or(1);
    let count = match num("SLURM_ARRAY_TASK_COUNT")? {
        Some(c) => c,
        None => num("SLURM_ARRAY_TASK_MAX")?
            .map(|max| max.saturating_add(1) - min.min(max.saturating_add(1)))
            .ok_or_else(|| {
                Error::msg(
                    "--shard env: neither SLURM_ARRAY_TASK_COUNT nor SLURM_ARRAY_TASK_MAX is set",
                )
            })?,
    };
    if id < min || id - min >= count {
        return Err(Error::msg(format!(
            "--shard env: task {id} lies outside the array (min {min}, count {count})"
        )));
    }
    Ok((id - min + 1, count))
}

/// The part of `batch.json` that every shard of one batch shares.
pub(crate) fn batch_identity(
    manifest: &Manifest,
    ensemble: Option<&SiteEnsemble>,
    from_to: &(Option<String>, Option<String>),
) -> serde_json::Value {
    let file = |p: &Path| {
        p.file_name()
            .map_or(String::new(), |n| n.to_string_lossy().into_owned())
    };
    // The canonical command, without shard flags or folders, so that a merged batch and a
    // one-shot batch carry the same history.
    let mut history = format!(
        "isodisc {}: isodisc batch {}",
        env!("CARGO_PKG_VERSION"),
        file(&manifest.path)
    );
    if let Some(e) = ensemble {
        if let Some(spec) = &e.spec {
            let _ = write!(history, " --spec {}", file(&spec.path));
        }
        if let Some(dir) = &e.posterior {
            let _ = write!(history, " --posterior {}", file(dir));
        }
        let _ = write!(history, " --members {} --seed {}", e.members, e.seed);
    }
    if let Some(f) = &from_to.0 {
        let _ = write!(history, " --from {f}");
    }
    if let Some(t) = &from_to.1 {
        let _ = write!(history, " --to {t}");
    }
    serde_json::json!({
        "isodisc_version": env!("CARGO_PKG_VERSION"),
        "manifest": {"file": file(&manifest.path), "fnv1a64": fnv1a64(manifest.text.as_bytes())},
        "title": manifest.title.clone().unwrap_or_else(|| "isodisc land priors".into()),
        "history": history,
        "ensemble": ensemble.map(|e| {
            let mut j = serde_json::Map::new();
            if let Some(spec) = &e.spec {
                j.insert("spec".into(), file(&spec.path).into());
                j.insert("spec_fnv1a64".into(), fnv1a64(spec.text.as_bytes()).into());
            }
            if let Some(dir) = &e.posterior {
                j.insert("posterior".into(), file(dir).into());
                j.insert("posterior_fnv1a64".into(), e.fits.iter()
                    .map(|(id, f)| (id.clone(), fnv1a64(f.spec.text.as_bytes()).into()))
                    .collect::<serde_json::Map<_, _>>().into());
            }
            j.insert("members".into(), e.members.into());
            j.insert("seed".into(), e.seed.into());
            j
        }),
        "from": from_to.0, "to": from_to.1,
        "sites": manifest.sites.iter().map(|s| serde_json::json!({
            "id": s.id,
            "latitude": s.site.settings.location.latitude_deg(),
            "longitude": s.site.settings.location.longitude_deg(),
            "weight": s.weight,
        })).collect::<Vec<_>>(),
    })
}

/// Reads and merges the priors of the listed site folders (in the given order) and writes
/// `priors.csv` and `priors.nc` into `dir`.
pub(crate) fn combine_priors(dir: &Path, ids: &[&str], identity: &serde_json::Value) -> Result<()> {
    let mut rows: Vec<PriorRow> = Vec::new();
    for id in ids {
        rows.extend(read_priors_csv(
            &dir.join("sites").join(id).join("priors.csv"),
        )?);
    }
    let s = |k: &str| identity[k].as_str().unwrap_or_default().to_string();
    write_priors(dir, &rows, &s("title"), &s("history"))
}

/// Writes a finished site's `done.json`: its inputs (see `BatchPlan::site_inputs`) and the size
/// and checksum of every file in `dir`, so that a truncated or edited file is found by the next
/// batch (which re-runs the site) and by `merge` (which refuses it).
fn write_done(dir: &Path, inputs: serde_json::Value) -> Result<()> {
    let mut outputs = serde_json::Map::new();
    let mut names: Vec<String> = fs::read_dir(dir)?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| !n.starts_with('.'))
        .collect();
    names.sort();
    for name in names {
        let bytes = fs::read(dir.join(&name))
            .with_context(|| format!("cannot read {}", dir.join(&name).display()))?;
        outputs.insert(
            name,
            serde_json::json!({"bytes": bytes.len(), "fnv1a64": fnv1a64(&bytes)}),
        );
    }
    let done = serde_json::json!({
        "isodisc_version": env!("CARGO_PKG_VERSION"),
        "inputs": inputs,
        "outputs": outputs,
    });
    write_json(&dir.join("done.json"), &done)
}

/// Reads a site folder's `done.json` and checks that every file it lists is there, whole and
/// unchanged; the error names the file.
pub(crate) fn read_done(dir: &Path) -> Result<serde_json::Value> {
    let path = dir.join("done.json");
    let text = fs::read_to_string(&path)
        .with_context(|| format!("{}: the site is not finished (no done.json)", dir.display()))?;
    let done: serde_json::Value =
        serde_json::from_str(&text).with_context(|| format!("{} is damaged", path.display()))?;
    let outputs = done["outputs"].as_object().ok_or_else(|| {
        Error::msg(format!(
            "{} lists no outputs (written by an older isodisc: re-run the batch into this folder)",
            path.display()
        ))
    })?;
    for (name, want) in outputs {
        let file = dir.join(name);
        let bytes = fs::read(&file).with_context(|| format!("cannot read {}", file.display()))?;
        if Some(bytes.len() as u64) != want["bytes"].as_u64()
            || want["fnv1a64"].as_str() != Some(fnv1a64(&bytes).as_str())
        {
            return Err(Error::msg(format!(
                "{}: {} bytes, {} when the site finished: the file was cut short or changed since; \
                 re-run the batch into this folder to redo the site",
                file.display(),
                bytes.len(),
                want["bytes"]
            )));
        }
    }
    Ok(done)
}

impl BatchPlan {
    /// Reads the manifest, its sites and the spec, and checks the flags, before any work starts.
    pub fn from_args(args: &BatchArgs) -> Result<Self> {
        let manifest = Manifest::load(&args.manifest)?;
        let shard = args.shard.as_deref().map_or(Ok((1, 1)), parse_shard)?;
        let ensemble = match (&args.spec, &args.posterior, args.members, args.seed) {
            (spec, posterior, Some(members), Some(seed))
                if spec.is_some() || posterior.is_some() =>
            {
                Some(SiteEnsemble::load(
                    &manifest,
                    spec.as_deref(),
                    posterior.as_deref(),
                    members,
                    seed,
                )?)
            }
            (None, None, None, None) => None,
            _ => {
                return Err(Error::msg(
                    "--members and --seed go with --spec or --posterior (or both)",
                ));
            }
        };
        check_threads(args.threads)?;
        if args.out.exists() && !args.out.is_dir() {
            return Err(Error::msg(format!(
                "--out {}: exists and is not a folder",
                args.out.display()
            )));
        }
        let mut inputs = vec![manifest.path.clone()];
        if let Some(e) = &ensemble {
            inputs.extend(e.files());
        }
        for s in &manifest.sites {
            inputs.extend(s.site.input_files().into_iter().map(|f| f.1));
        }
        check_not_input("--out", &args.out, &inputs)?;
        Ok(Self {
            manifest,
            out: args.out.clone(),
            shard,
            ensemble,
            threads: args.threads,
            period: parse_period(&args.period)?,
            from_to: (args.period.from.clone(), args.period.to.clone()),
            quiet: args.quiet,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        })
    }

    /// The sites of this shard, in manifest order.
    fn shard_sites(&self) -> Vec<&ManifestSite> {
        let (k, n) = self.shard;
        self.manifest
            .sites
            .iter()
            .enumerate()
            .filter(|(i, _)| i % n == k - 1)
            .map(|(_, s)| s)
            .collect()
    }

    /// What a finished site's outputs depend on: the checksum of every input file (site file,
    /// weather, atmospheric history), the overrides, weight, spec, members, seed, period and the
    /// isodisc version. Stored as `inputs` in its `done.json`; a re-run skips the site only when
    /// this is unchanged.
    fn site_inputs(&self, s: &ManifestSite) -> Result<serde_json::Value> {
        let overrides: String = s
            .overrides
            .iter()
            .map(|(k, v)| format!("{k}={v:?}\n"))
            .collect();
        Ok(serde_json::json!({
            "site": s.id,
            "isodisc_version": env!("CARGO_PKG_VERSION"),
            // Checksums only: the same files reached by another path are the same inputs.
            "files_fnv1a64": s.site.input_files().iter().map(|(role, path)| {
                fs::read(path)
                    .map(|b| ((*role).to_string(), fnv1a64(&b).into()))
                    .with_context(|| format!("site `{}`: cannot read {}", s.id, path.display()))
            }).collect::<Result<serde_json::Map<String, serde_json::Value>>>()?,
            "overrides_fnv1a64": fnv1a64(overrides.as_bytes()),
            "spec_fnv1a64": self.ensemble.as_ref().and_then(|e| e.site_fnv1a64(&s.id)),
            "members": self.ensemble.as_ref().map(|e| e.members),
            "seed": self.ensemble.as_ref().map(|e| e.seed),
            "weight": s.weight,
            "from": self.from_to.0, "to": self.from_to.1,
        }))
    }

    /// Runs one site into `sites/<id>` unless its marker matches. Returns true when it ran.
    fn run_site(&self, s: &ManifestSite, sites_dir: &Path) -> Result<bool> {
        let inputs = self.site_inputs(s)?;
        let dir = sites_dir.join(&s.id);
        clean_stale(&dir);
        if read_done(&dir).is_ok_and(|done| done["inputs"] == inputs) {
            return Ok(false);
        }
        let tmp = sibling(&dir, "tmp");
        if tmp.exists() {
            fs::remove_dir_all(&tmp)?;
        }
        track_temp(&tmp);
        fs::create_dir_all(&tmp)
            .with_context(|| format!("cannot create the folder {}", tmp.display()))?;
        let result = (|| -> Result<()> {
            let (steps, report) = read_steps(&s.site, self.period)?;
            let members: Vec<Member> = match &self.ensemble {
                Some(e) => {
                    let (spec, m) = match (e.fits.get(&s.id), &e.spec) {
                        // As `isodisc ensemble SITE --posterior FITS/<id>` draws its members.
                        (Some(fit), _) => (
                            &fit.spec,
                            run_members_drawn(
                                &s.site,
                                &steps,
                                report.step_minutes,
                                &fit.spec,
                                e.members,
                                &ProgressBar::hidden(),
                                |i| posterior_draw(&fit.draws, e.seed, i),
                            ),
                        ),
                        (None, Some(spec)) => (
                            spec,
                            run_members(
                                &s.site,
                                &steps,
                                report.step_minutes,
                                spec,
                                e.members,
                                e.seed,
                                &ProgressBar::hidden(),
                            ),
                        ),
                        (None, None) => unreachable!("SiteEnsemble::load found a fit or a spec"),
                    };
                    write_ensemble_files(&tmp, spec, &m)?;
                    m
                }
                None => {
                    let sim = simulate(
                        &s.site,
                        steps.iter().cloned().map(Ok),
                        report.step_minutes,
                        &mut NoSink,
                    )?;
                    write_periods(&tmp.join("monthly.csv"), &sim.periods[1])?;
                    write_periods(&tmp.join("annual.csv"), &sim.periods[2])?;
                    vec![Member {
                        params: Vec::new(),
                        status: MemberStatus::Ok(MemberPeriods::from_simulated(&sim)),
                    }]
                }
            };
            if !members.iter().any(|m| m.periods().is_some()) {
                return Err(Error::msg("no member ran"));
            }
            let loc = &s.site.settings.location;
            let rows = prior_rows(
                &s.id,
                (loc.latitude_deg(), loc.longitude_deg(), loc.utc_offset_h()),
                s.weight,
                &members,
            );
            write_priors_csv(&tmp.join("priors.csv"), &rows)?;
            write_done(&tmp, inputs)?;
            replace_dir(&tmp, &dir, true)
        })();
        if result.is_err() {
            let _ = fs::remove_dir_all(&tmp);
            untrack(&tmp);
        }
        result.with_context(|| format!("site `{}`", s.id))?;
        Ok(true)
    }

    /// Runs the shard's sites and writes its priors.
    pub fn run(&self) -> Result<()> {
        let started = Instant::now();
        let identity = batch_identity(&self.manifest, self.ensemble.as_ref(), &self.from_to);
        let mut batch = identity.clone();
        batch["shard"] = format!("{}/{}", self.shard.0, self.shard.1).into();
        let batch_file = self.out.join("batch.json");
        let lock = FolderLock::acquire(&self.out)?;
        if lock.took_over && !self.quiet {
            eprintln!(
                "isodisc batch: {} held a lock file of an ended batch; taken over",
                self.out.display()
            );
        }
        if let Ok(text) = fs::read_to_string(&batch_file) {
            let mut old: serde_json::Value = serde_json::from_str(&text)
                .with_context(|| format!("{} is not a batch file", batch_file.display()))?;
            old.as_object_mut().map(|o| o.remove("shard"));
            if old != identity {
                return Err(Error::msg(format!(
                    "--out {} holds another batch (manifest, spec, members, seed or period differ); \
                     use another folder",
                    self.out.display()
                )));
            }
        } else if fs::read_dir(&self.out)?
            .flatten()
            .any(|e| e.file_name() != crate::output::LOCK_FILE)
        {
            return Err(Error::msg(format!(
                "--out {}: the folder is not empty and holds no batch.json",
                self.out.display()
            )));
        }
        write_marker(&self.out, "batch")?;
        let sites_dir = self.out.join("sites");
        fs::create_dir_all(&sites_dir)
            .with_context(|| format!("cannot create {}", sites_dir.display()))?;
        write_json(&batch_file, &batch)?;

        let sites = self.shard_sites();
        let pool = thread_pool(self.threads)?;
        let progress = if self.quiet {
            ProgressBar::hidden()
        } else {
            ProgressBar::new(sites.len() as u64)
        };
        let outcomes: Vec<Result<bool>> = pool.install(|| {
            sites
                .par_iter()
                .progress_with(progress.clone())
                .map(|s| self.run_site(s, &sites_dir))
                .collect()
        });
        progress.finish_and_clear();
        let ran = outcomes.iter().filter(|o| matches!(o, Ok(true))).count();
        let skipped = outcomes.iter().filter(|o| matches!(o, Ok(false))).count();
        let failed: Vec<String> = outcomes
            .iter()
            .filter_map(|o| o.as_ref().err().map(Error::chain))
            .collect();
        let log = serde_json::json!({
            "isodisc_version": env!("CARGO_PKG_VERSION"),
            "command": self.command,
            "shard": format!("{}/{}", self.shard.0, self.shard.1),
            "sites_in_shard": sites.len(),
            "ran": ran,
            "skipped_as_done": skipped,
            "failed": failed,
            "threads": pool.current_num_threads(),
            "wall_time_s": started.elapsed().as_secs_f64(),
        });
        write_json(&self.out.join("run.json"), &log)?;
        if !failed.is_empty() {
            return Err(Error::msg(format!(
                "{} of {} failed (finished sites are kept; re-run to resume): {}",
                failed.len(),
                plural(sites.len() as u64, "site"),
                failed.join("; ")
            )));
        }
        let ids: Vec<&str> = sites.iter().map(|s| s.id.as_str()).collect();
        combine_priors(&self.out, &ids, &identity)?;
        if !self.quiet {
            println!(
                "isodisc batch: shard {}/{}: {} ({ran} run, {skipped} already done) in {:.1} s\nresults: {}",
                self.shard.0,
                self.shard.1,
                plural(sites.len() as u64, "site"),
                started.elapsed().as_secs_f64(),
                self.out.display()
            );
        }
        Ok(())
    }
}
