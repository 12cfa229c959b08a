//! `isodisc fit SITE.toml --spec SPEC.toml --observed FILE --variable NAME --seed S --out DIR`:
//! calibrates a site's parameters to observations (docs/fit.md). The weather is read once, and
//! the light of its steps computed once unless a sampled parameter moves the site; every
//! evaluation of the posterior runs the site over them (no output kept but the model's values at
//! the observations); the walkers of the Goodman & Weare sampler move in parallel on a local pool
//! of `--threads` threads, with results identical for any thread count. `posterior.csv`,
//! `summary.csv`, `predictive_<variable>.csv`, the maximum-a-posteriori run in `best/` and
//! `run.json` are written into a temporary folder that replaces DIR only when all are written.

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::time::Instant;

use indicatif::ProgressBar;
use rand::rngs::StdRng;

use crate::cli::{FitArgs, LikelihoodArg};
use crate::commands::ensemble::{check_spec_paths, read_steps, spec_json, thread_pool};
use crate::commands::run::RunPlan;
use crate::commands::{Period, parse_period};
use crate::ensemble::sample::open_unit;
use crate::ensemble::shares_light;
use crate::ensemble::spec::{Dist, EnsembleSpec, ParamSpec};
use crate::ensemble::summary::stats;
use crate::error::{Error, Result};
use crate::fit::diagnostics::{RHAT_WARN, ess_bulk, split_rhat};
use crate::fit::sampler::{Chain, Eval, SamplerSettings, Stop, sample};
use crate::fit::streams::{Pairing, Stream};
use crate::fit::{Likelihood, ln_prior};
use crate::forcing::{ForcingReport, ForcingStep};
use crate::output::{
    AtomicFile, check_out_dir, fmt_num, fnv1a64, inputs_json, write_folder, write_json,
};
use crate::simulate::{Kept, NoSink, Simulated, simulate_keeping, step_lights};
use crate::site::Site;
use isodisc_model::site::StepLight;

/// Prefix of the spec paths that are model-error SDs of a variable's streams, not site parameters.
pub const ERROR_PREFIX: &str = "error.";

/// Most evaluations a fit may ask for (far above any real need; a typo is refused).
pub const MAX_EVALUATIONS: u64 = 100_000_000;

/// A validated `isodisc fit`.
#[derive(Debug)]
pub struct FitPlan {
    /// The site with the spec's `fixed` values applied.
    site: Site,
    spec: EnsembleSpec,
    /// The sampled parameters (spec order, `fixed` left out).
    sampled: Vec<ParamSpec>,
    /// Fixed model-error SDs by variable.
    fixed_errors: Vec<(String, f64)>,
    streams: Vec<Stream>,
    likelihood: Likelihood,
    settings: SamplerSettings,
    out: PathBuf,
    threads: Option<usize>,
    period: Period,
    overwrite: bool,
    quiet: bool,
    command: String,
}

/// The per-site work shared by every evaluation: the weather read once and, unless a sampled
/// parameter moves the site (`site.latitude`, `site.longitude`: [`shares_light`]), the light of
/// each step (solar geometry, diffuse fraction, two-leaf partition) computed once. The site model
/// recomputes any shared light that does not fit its site and step (a sampled LAI, say), so the
/// numbers are those of a run without sharing.
struct Weather {
    steps: Vec<ForcingStep>,
    step_minutes: u32,
    lights: Vec<Option<StepLight>>,
}

impl Weather {
    fn new(
        site: &Site,
        sampled: &[ParamSpec],
        spec: &EnsembleSpec,
        steps: Vec<ForcingStep>,
        report: &ForcingReport,
    ) -> Self {
        let sampled_spec = EnsembleSpec {
            params: sampled.to_vec(),
            ..spec.clone()
        };
        let lights = if shares_light(&sampled_spec) {
            step_lights(site, &steps, report.step_minutes)
        } else {
            Vec::new()
        };
        Self {
            steps,
            step_minutes: report.step_minutes,
            lights,
        }
    }

    fn shares_light(&self) -> bool {
        !self.lights.is_empty()
    }

    /// One run of `site` over the weather, keeping nothing but its period rows.
    fn simulate(&self, site: &Site, kept: Kept) -> Result<Simulated> {
        simulate_keeping(
            site,
            self.steps.iter().cloned().map(Ok),
            self.step_minutes,
            &mut NoSink,
            &self.lights,
            kept,
        )
    }
}

/// The sampled parameters' values split into the site's and the streams' model-error SDs.
struct Point<'a> {
    site: Vec<(&'a str, f64)>,
}

impl FitPlan {
    /// Reads and validates the site, the spec, the observations and the flags before any work.
    pub fn from_args(args: &FitArgs) -> Result<Self> {
        let mut site = Site::load(&args.site)?;
        let spec = EnsembleSpec::load(&args.spec)?;
        if args.observed.len() != args.variable.len() {
            return Err(Error::msg(format!(
                "{} --observed and {} --variable: give one --variable per --observed, in order",
                args.observed.len(),
                args.variable.len()
            )));
        }
        if !args.sd.is_empty() && args.sd.len() != args.observed.len() {
            return Err(Error::msg(format!(
                "{} --sd for {} streams: give none (SD columns) or one per --observed, in order",
                args.sd.len(),
                args.observed.len()
            )));
        }
        let mut streams = args
            .observed
            .iter()
            .zip(&args.variable)
            .enumerate()
            .map(|(i, (f, v))| Stream::read(f, v, args.sd.get(i).copied(), i + 1))
            .collect::<Result<Vec<_>>>()?;
        // Site parameters are checked as `isodisc ensemble` checks them; `error.<variable>` must
        // name a stream's variable.
        let (errors, site_params): (Vec<ParamSpec>, Vec<ParamSpec>) = spec
            .params
            .iter()
            .cloned()
            .partition(|p| p.path.starts_with(ERROR_PREFIX));
        check_spec_paths(
            &EnsembleSpec {
                params: site_params.clone(),
                ..spec.clone()
            },
            &site,
        )?;
        for p in &errors {
            let var = &p.path[ERROR_PREFIX.len()..];
            if !streams.iter().any(|s| s.variable == var) {
                return Err(Error::msg(format!(
                    "{}: line {}: [param.\"{}\"]: no stream has --variable {var} (streams: {})",
                    spec.path.display(),
                    p.line,
                    p.path,
                    args.variable.join(", ")
                )));
            }
        }
        let fixed: Vec<(&str, f64)> = site_params
            .iter()
            .filter_map(|p| match p.dist {
                Dist::Fixed { value } => Some((p.path.as_str(), value)),
                _ => None,
            })
            .collect();
        site.set_params(&fixed).map_err(|e| {
            Error::msg(format!(
                "{}: a fixed value: {}",
                spec.path.display(),
                e.chain()
            ))
        })?;
        let mut fixed_errors = Vec::new();
        for p in &errors {
            if let Dist::Fixed { value } = p.dist
                && (value.is_nan() || value < 0.0)
            {
                return Err(Error::msg(format!(
                    "{}: line {}: [param.\"{}\"] value = {value}: a model-error SD must be >= 0",
                    spec.path.display(),
                    p.line,
                    p.path
                )));
            } else if let Dist::Fixed { value } = p.dist {
                fixed_errors.push((p.path[ERROR_PREFIX.len()..].to_string(), value));
            }
        }
        // Site parameters first, then model-error SDs: the order of posterior.csv.
        let sampled: Vec<ParamSpec> = site_params
            .into_iter()
            .chain(errors)
            .filter(|p| !p.dist.is_fixed())
            .collect();
        for s in &mut streams {
            s.error_param = sampled
                .iter()
                .position(|p| p.path[..].strip_prefix(ERROR_PREFIX) == Some(s.variable.as_str()));
        }
        let likelihood = match (args.likelihood, args.dof) {
            (LikelihoodArg::Gaussian, None) => Likelihood::Gaussian,
            (LikelihoodArg::Gaussian, Some(_)) => {
                return Err(Error::msg("--dof applies only to --likelihood student-t"));
            }
            (LikelihoodArg::StudentT, Some(dof)) if dof > 0.0 && dof.is_finite() => {
                Likelihood::StudentT { dof }
            }
            (LikelihoodArg::StudentT, Some(dof)) => {
                return Err(Error::msg(format!(
                    "--dof {dof}: must be a finite number > 0"
                )));
            }
            (LikelihoodArg::StudentT, None) => {
                return Err(Error::msg("--likelihood student-t needs --dof N"));
            }
        };
        let dim = sampled.len();
        let walkers = args
            .walkers
            .unwrap_or((2 * dim + 2).max(8).next_multiple_of(2));
        if args.max_evaluations > MAX_EVALUATIONS {
            return Err(Error::msg(format!(
                "--max-evaluations {}: use at most {MAX_EVALUATIONS}",
                args.max_evaluations
            )));
        }
        if args.predictive == 0 {
            return Err(Error::msg("--predictive 0: keep at least one draw"));
        }
        let settings = SamplerSettings {
            walkers,
            warmup_steps: args.warmup,
            target_ess: args.ess,
            max_evaluations: args.max_evaluations,
            check_every: 10,
            payload_steps: args.predictive.div_ceil(walkers),
            seed: args.seed,
            start_tries: 100,
        };
        settings.check(dim)?;
        crate::commands::ensemble::check_threads(args.threads)?;
        let mut inputs: Vec<PathBuf> = site.input_files().into_iter().map(|f| f.1).collect();
        inputs.push(spec.path.clone());
        inputs.extend(args.observed.iter().cloned());
        check_out_dir(&args.out, args.overwrite, &inputs)?;
        Ok(Self {
            site,
            spec,
            sampled,
            fixed_errors,
            streams,
            likelihood,
            settings,
            out: args.out.clone(),
            threads: args.threads,
            period: parse_period(&args.period)?,
            overwrite: args.overwrite,
            quiet: args.quiet,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        })
    }

    /// Samples the posterior and writes the results.
    pub fn run(&self) -> Result<()> {
        let started = Instant::now();
        let (summary, warnings) = write_folder(&self.out, self.overwrite, "fit", |tmp| {
            self.run_into(tmp, started)
        })?;
        for w in &warnings {
            eprintln!("isodisc fit: warning: {w}");
        }
        if !self.quiet {
            print!("{summary}");
        }
        Ok(())
    }

    fn split<'a>(&'a self, x: &[f64]) -> (Point<'a>, Vec<f64>) {
        let mut site = Vec::new();
        for (p, &v) in self.sampled.iter().zip(x) {
            if !p.path.starts_with(ERROR_PREFIX) {
                site.push((p.path.as_str(), v));
            }
        }
        let sigmas = self
            .streams
            .iter()
            .map(|s| match s.error_param {
                Some(j) => x[j],
                None => self
                    .fixed_errors
                    .iter()
                    .find(|(v, _)| *v == s.variable)
                    .map_or(0.0, |e| e.1),
            })
            .collect();
        (Point { site }, sigmas)
    }

    /// ln prior, ln likelihood and the model's values at the observations (all streams, in
    /// order) of the sampled values `x`; the model is not run outside the prior's support, and
    /// a value the site refuses or a failed run gives −∞.
    fn evaluate(&self, x: &[f64], weather: &Weather) -> Eval<Vec<f64>> {
        let refused = |lp| Eval {
            log_likelihood: f64::NEG_INFINITY,
            log_prior: lp,
            payload: Vec::new(),
        };
        let log_prior: f64 = self
            .sampled
            .iter()
            .zip(x)
            .map(|(p, &v)| ln_prior(&p.dist, v))
            .sum();
        if !log_prior.is_finite() {
            return refused(f64::NEG_INFINITY);
        }
        let (point, sigmas) = self.split(x);
        if sigmas.iter().any(|s| s.is_nan() || *s < 0.0) {
            return refused(f64::NEG_INFINITY);
        }
        let mut site = self.site.clone();
        if site.set_params(&point.site).is_err() {
            return refused(log_prior);
        }
        // The streams read daily rows, and monthly rows for monthly observations only.
        let kept = Kept {
            daily: true,
            monthly: self.streams.iter().any(|s| s.pairing == Pairing::Monthly),
            annual: false,
        };
        let Ok(sim) = weather.simulate(&site, kept) else {
            return refused(log_prior);
        };
        let mut payload = Vec::new();
        let mut log_likelihood = 0.0;
        for (s, sigma) in self.streams.iter().zip(sigmas) {
            let start = payload.len();
            s.predictions(&sim.periods[0], &sim.periods[1], &mut payload);
            log_likelihood += s.log_likelihood(&payload[start..], sigma, &self.likelihood);
        }
        Eval {
            log_likelihood,
            log_prior,
            payload,
        }
    }

    fn run_into(&self, dir: &Path, started: Instant) -> Result<(String, Vec<String>)> {
        let (steps, report) = read_steps(&self.site, self.period)?;
        let weather = Weather::new(&self.site, &self.sampled, &self.spec, steps, &report);
        // A reference run of the site as given pairs the observations with the model's periods.
        let reference = weather.simulate(&self.site, Kept::ALL)?;
        let mut streams = self.streams.clone();
        for s in &mut streams {
            s.pair(&reference.periods[0], &reference.periods[1])?;
        }
        let plan = Self {
            streams,
            site: self.site.clone(),
            spec: self.spec.clone(),
            sampled: self.sampled.clone(),
            fixed_errors: self.fixed_errors.clone(),
            settings: self.settings.clone(),
            out: self.out.clone(),
            command: self.command.clone(),
            ..*self
        };
        let model_days = reference.periods[0].len();
        drop(reference);
        let pool = thread_pool(self.threads)?;
        let progress = if self.quiet {
            ProgressBar::hidden()
        } else {
            ProgressBar::new(self.settings.max_evaluations)
        };
        let chain = pool.install(|| {
            sample(
                &plan.settings,
                |rng: &mut StdRng| {
                    plan.sampled
                        .iter()
                        .map(|p| p.dist.quantile(open_unit(rng)))
                        .collect()
                },
                |x: &[f64]| plan.evaluate(x, &weather),
                &progress,
            )
        });
        progress.finish_and_clear();
        let chain = chain?;
        let light_shared = weather.shares_light();
        drop(weather);
        let names: Vec<&str> = plan.sampled.iter().map(|p| p.path.as_str()).collect();
        write_posterior(&dir.join("posterior.csv"), &names, &chain)?;
        let diag = write_summary(&dir.join("summary.csv"), &names, &chain)?;
        let predictive = plan.write_predictive(dir, &chain)?;
        // The maximum-a-posteriori run, as `isodisc run` writes it.
        let (point, _) = plan.split(&chain.best.0);
        let mut best = plan.site.clone();
        best.set_params(&point.site)?;
        let best_dir = dir.join("best");
        std::fs::create_dir_all(&best_dir)?;
        RunPlan::for_site(best, self.out.join("best"), self.period).run_into(&best_dir, started)?;

        let mut warnings = Vec::new();
        for (name, (rhat, ess)) in names.iter().zip(&diag) {
            if rhat.is_nan() || *rhat > RHAT_WARN {
                warnings.push(format!(
                    "{name}: R-hat {rhat:.3} > {RHAT_WARN}: the walkers have not mixed; run longer"
                ));
            }
            if ess.is_nan() || *ess < self.settings.target_ess {
                warnings.push(format!(
                    "{name}: bulk ESS {ess:.0} < --ess {}: run longer (--max-evaluations)",
                    self.settings.target_ess
                ));
            }
        }
        let elapsed = started.elapsed().as_secs_f64();
        let model_years = chain.evaluations as f64 * model_days as f64 / 365.25;
        let log = serde_json::json!({
            "isodisc_version": env!("CARGO_PKG_VERSION"),
            "command": self.command,
            "inputs": inputs_json(&self.site.input_files())?,
            "site_file": {"path": self.site.path.display().to_string(), "fnv1a64": fnv1a64(self.site.text.as_bytes())},
            "forcing": {"path": report.path.display().to_string(), "steps": report.steps,
                "first_step": report.first.map(|t| t.to_string()),
                "last_step": report.last.map(|t| t.to_string())},
            "spec": spec_json(&self.spec),
            "streams": plan.streams.iter().zip(&predictive).map(|(s, file)| serde_json::json!({
                "observed": s.file.display().to_string(),
                "fnv1a64": std::fs::read(&s.file).map(|b| fnv1a64(&b)).unwrap_or_default(),
                "variable": s.variable, "column": s.column,
                "sd": s.sd_column.clone().map_or_else(|| serde_json::json!(s.obs[0].sd), serde_json::Value::from),
                "paired_with": s.pairing.name(),
                "observations": s.obs.len(), "outside_period": s.outside,
                "model_error": s.error_param.map(|j| plan.sampled[j].path.clone()),
                "predictive": file,
            })).collect::<Vec<_>>(),
            "likelihood": {"name": self.likelihood.name(),
                "dof": match self.likelihood { Likelihood::StudentT { dof } => Some(dof), Likelihood::Gaussian => None }},
            "sampler": {"method": "Goodman & Weare (2010) affine-invariant ensemble sampler, stretch move a = 2, two half-ensembles",
                "walkers": self.settings.walkers, "warmup_steps": self.settings.warmup_steps,
                "kept_steps": chain.kept_steps(), "evaluations": chain.evaluations,
                "target_ess": self.settings.target_ess, "max_evaluations": self.settings.max_evaluations,
                "stopped_by": match chain.stop { Stop::TargetEss => "target ESS reached", Stop::MaxEvaluations => "evaluation budget" },
                "acceptance_rate": chain.acceptance_rate(), "seed": self.settings.seed,
                "threads": pool.current_num_threads(),
                "light_shared": light_shared},
            "diagnostics": "split R-hat (the larger of bulk and folded) and bulk ESS on rank-normalised draws, walkers as chains (Vehtari et al. 2021)",
            "quantiles": "R type 8 (Hyndman & Fan 1996), statrs Data::quantile; sd with n - 1",
            "map": {"params": names.iter().zip(&chain.best.0).map(|(n, v)| ((*n).to_string(), serde_json::json!(v)))
                .collect::<serde_json::Map<_, _>>(),
                "log_likelihood": chain.best.1, "log_prior": chain.best.2},
            "warnings": warnings,
            "model_years": model_years,
            "model_years_per_second": model_years / elapsed,
            "wall_time_s": elapsed,
        });
        write_json(&dir.join("run.json"), &log)?;
        let mut text = format!(
            "isodisc fit: {} of {} to {} in {} evaluations ({} walkers, {} kept steps, acceptance \
             {:.2}) in {elapsed:.1} s on {} threads ({:.0} model-years/s)\n",
            names.join(", "),
            self.site.file.site.name,
            plan.streams
                .iter()
                .map(|s| format!("{} {}", s.obs.len(), s.variable))
                .collect::<Vec<_>>()
                .join(" + "),
            chain.evaluations,
            self.settings.walkers,
            chain.kept_steps(),
            chain.acceptance_rate(),
            pool.current_num_threads(),
            model_years / elapsed,
        );
        let _ = writeln!(text, "results: {}", self.out.display());
        Ok((text, warnings))
    }

    /// Writes `predictive_<variable>.csv` per stream (a second stream of the same variable gets
    /// `_2`, ...); returns the file names.
    fn write_predictive(&self, dir: &Path, chain: &Chain<Vec<f64>>) -> Result<Vec<String>> {
        let draws: Vec<&Vec<f64>> = chain.payloads.iter().flat_map(|(_, p)| p).collect();
        let mut names = Vec::new();
        let mut offset = 0;
        for (k, s) in self.streams.iter().enumerate() {
            let n_same = self.streams[..k]
                .iter()
                .filter(|o| o.variable == s.variable)
                .count();
            let name = if n_same == 0 {
                format!("predictive_{}.csv", s.variable)
            } else {
                format!("predictive_{}_{}.csv", s.variable, n_same + 1)
            };
            let mut f = AtomicFile::create(&dir.join(&name))?;
            let w = f.writer();
            writeln!(
                w,
                "{},observed,sd,model_p05,model_p50,model_p95,draws",
                match s.pairing {
                    Pairing::Daily => "date",
                    Pairing::Monthly => "month",
                    Pairing::Window => "start,end",
                }
            )?;
            let mut line = String::new();
            for (i, o) in s.obs.iter().enumerate() {
                let st = stats(draws.iter().map(|d| d[offset + i]));
                line.clear();
                line.push_str(&o.key);
                if let Some(end) = &o.end {
                    line.push(',');
                    line.push_str(end);
                }
                for v in [
                    o.value,
                    o.sd,
                    st.quantiles[0],
                    st.quantiles[2],
                    st.quantiles[4],
                ] {
                    line.push(',');
                    fmt_num(&mut line, v);
                }
                let _ = write!(line, ",{}", st.n);
                writeln!(w, "{line}")?;
            }
            f.commit()?;
            offset += s.obs.len();
            names.push(name);
        }
        Ok(names)
    }
}

/// Writes `posterior.csv`: one row per kept draw (walker, step counted from the first warm-up
/// step, every sampled parameter, log_likelihood, log_prior).
fn write_posterior<T>(path: &Path, names: &[&str], chain: &Chain<T>) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    let w = f.writer();
    writeln!(
        w,
        "walker,step,{},log_likelihood,log_prior",
        names.join(",")
    )?;
    let mut line = String::new();
    for s in 0..chain.kept_steps() {
        for k in 0..chain.walkers {
            let i = s * chain.walkers + k;
            line.clear();
            let _ = write!(line, "{k},{}", chain.first_kept_step + s);
            for v in &chain.positions[i * chain.dim..(i + 1) * chain.dim] {
                line.push(',');
                fmt_num(&mut line, *v);
            }
            for v in [chain.log_likelihood[i], chain.log_prior[i]] {
                line.push(',');
                fmt_num(&mut line, v);
            }
            writeln!(w, "{line}")?;
        }
    }
    f.commit()
}

/// Writes `summary.csv` (parameter,mean,sd,p05,p50,p95,rhat,ess); returns (R-hat, ESS) per
/// parameter.
fn write_summary<T>(path: &Path, names: &[&str], chain: &Chain<T>) -> Result<Vec<(f64, f64)>> {
    let mut f = AtomicFile::create(path)?;
    let w = f.writer();
    writeln!(w, "parameter,mean,sd,p05,p50,p95,rhat,ess")?;
    let mut out = Vec::new();
    let mut line = String::new();
    for (j, name) in names.iter().enumerate() {
        let per_walker = chain.per_walker(j);
        let st = stats(per_walker.iter().flatten().copied());
        let (rhat, ess) = (split_rhat(&per_walker), ess_bulk(&per_walker));
        line.clear();
        line.push_str(name);
        for v in [
            st.mean,
            st.sd,
            st.quantiles[0],
            st.quantiles[2],
            st.quantiles[4],
            rhat,
            ess,
        ] {
            line.push(',');
            fmt_num(&mut line, v);
        }
        writeln!(w, "{line}")?;
        out.push((rhat, ess));
    }
    f.commit()?;
    Ok(out)
}
