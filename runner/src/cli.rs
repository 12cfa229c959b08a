//! Command-line arguments. Each subcommand's raw arguments are turned into a validated plan by its
//! module in [`crate::commands`] before any work starts.

use std::path::PathBuf;

use clap::{Parser, Subcommand, ValueEnum};

/// isodisc: 13C discrimination of vegetation and the δ13C of ecosystem respiration from site weather.
#[derive(Debug, Parser)]
#[command(
    name = "isodisc",
    version,
    about = "13C discrimination of vegetation and the d13C of ecosystem respiration from site weather",
    propagate_version = true
)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// One leaf: net assimilation, stomatal conductance, ci, cc and 13C discrimination.
    Leaf(LeafArgs),
    /// A site from its weather file: flux-weighted discrimination step by step and aggregated.
    Run(RunArgs),
    /// The vegetation presets of site files, with every value, unit and source.
    Presets(PresetsArgs),
    /// Source δ13C from canopy-air samples: Keeling and Miller–Tans fits per group.
    Keeling(KeelingArgs),
    /// Scores (and lags) of a run's predictions against observations.
    Compare(CompareArgs),
    /// SVG figures from a run folder (and Keeling fits, observations).
    Plot(PlotArgs),
    /// A parameter ensemble of one site: members sampled from a spec, run in parallel, summarised.
    Ensemble(EnsembleArgs),
    /// Many sites from a manifest, optionally each as an ensemble; shardable, resumable; priors.
    Batch(BatchArgs),
    /// Joins the output folders of a batch's shards into one.
    Merge(MergeArgs),
    /// Writes a Slurm submission script: an array job over the shards and a merge job after it.
    ClusterScript(ClusterScriptArgs),
    /// Calibrates a site's parameters to observations: the posterior by an ensemble sampler.
    Fit(FitArgs),
    /// Every vegetated cell of gridded NetCDF weather run as a site: monthly priors on the grid.
    Grid(GridArgs),
}

/// `isodisc run`.
#[derive(Debug, clap::Args)]
pub struct RunArgs {
    /// The site file (TOML).
    pub site: PathBuf,
    /// Folder for the results (created; an existing non-empty folder needs --overwrite).
    #[arg(long)]
    pub out: PathBuf,
    /// The days to run.
    #[command(flatten)]
    pub period: PeriodArgs,
    /// Replace the results folder if it exists.
    #[arg(long)]
    pub overwrite: bool,
    /// Print nothing on success.
    #[arg(long)]
    pub quiet: bool,
}

/// `isodisc presets`.
#[derive(Debug, clap::Args)]
pub struct PresetsArgs {
    /// Only this preset.
    pub name: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
}

/// Output format of tables.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Aligned columns for reading.
    Table,
    /// Comma-separated values with a header.
    Csv,
    /// JSON (one object; one object per line with --input).
    Json,
}

/// Photosynthetic pathway.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PathwayArg {
    /// C3 (Farquhar–von Caemmerer–Berry).
    C3,
    /// C4 (Collatz et al. 1992).
    C4,
}

/// C3 discrimination form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormArg {
    /// Δ = a + (b − a)·ci/ca.
    Simple,
    /// With boundary layer, mesophyll, respiration and photorespiration terms.
    Comprehensive,
}

/// C3 electron-transport limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ElectronArg {
    /// J(cc − Γ*)/(4cc + 8Γ*).
    Nadph,
    /// J(cc − Γ*)/(4.5cc + 10.5Γ*).
    Atp,
}

/// What soil-water stress scales.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BetaTargetArg {
    /// Photosynthetic capacity.
    Capacity,
    /// The stomatal slope g1.
    G1,
    /// Both.
    Both,
}

/// C3 temperature responses of Vcmax and Jmax.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TemperatureSetArg {
    /// Acclimated to the growth temperature (Kattge & Knorr 2007).
    Acclimated,
    /// One set for every leaf (Bernacchi et al. 2001 / Medlyn et al. 2002).
    Fixed,
}

/// How the C3 stomatal slope g1 follows leaf temperature.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum G1TemperatureArg {
    /// g1 is the same at every leaf temperature.
    Constant,
    /// g1 × √(Γ*(T)/Γ*(25 °C)) (Medlyn et al. 2011); C3 only.
    GammaStar,
}

/// `isodisc leaf`.
#[derive(Debug, clap::Args)]
pub struct LeafArgs {
    /// Photosynthetic pathway.
    #[arg(long, value_enum, default_value = "c3")]
    pub pathway: PathwayArg,
    /// Leaf temperature (°C).
    #[arg(long, default_value_t = 25.0, allow_negative_numbers = true)]
    pub t_leaf: f64,
    /// Incident PPFD (µmol photons m⁻² s⁻¹).
    #[arg(long, default_value_t = 1500.0)]
    pub ppfd: f64,
    /// Leaf-to-air vapour pressure deficit (kPa) [default: 1.0 unless --rh is given].
    #[arg(long, conflicts_with = "rh", allow_negative_numbers = true)]
    pub vpd: Option<f64>,
    /// Relative humidity of the air (%), turned into VPD at leaf temperature (FAO-56 es).
    #[arg(long, allow_negative_numbers = true)]
    pub rh: Option<f64>,
    /// Ambient CO2 (µmol mol⁻¹).
    #[arg(long, default_value_t = 420.0)]
    pub ca: f64,
    /// Air pressure (kPa).
    #[arg(long, default_value_t = 101.325)]
    pub pressure: f64,
    /// O2 (mmol mol⁻¹).
    #[arg(long, default_value_t = 210.0)]
    pub o2: f64,
    /// δ13C of the ambient CO2 (‰ vs VPDB).
    #[arg(long, default_value_t = -8.5, allow_negative_numbers = true)]
    pub d13c_air: f64,
    /// Soil-water factor β (0–1; 1 = no stress).
    #[arg(long, default_value_t = 1.0)]
    pub soil_beta: f64,
    /// Growth temperature (°C): mean air temperature of the preceding 30 days, for the acclimated
    /// C3 temperature set.
    #[arg(long, default_value_t = 25.0, allow_negative_numbers = true)]
    pub t_growth: f64,
    /// C3 temperature responses of Vcmax and Jmax: acclimated to --t-growth (Kattge & Knorr 2007)
    /// or one fixed set (Bernacchi et al. 2001 / Medlyn et al. 2002).
    #[arg(long, value_enum, default_value = "acclimated")]
    pub temperature_set: TemperatureSetArg,
    /// How the C3 stomatal slope g1 follows leaf temperature: the same at every temperature, or
    /// g1 × √(Γ*(T)/Γ*(25 °C)) after the optimisation theory of Medlyn et al. (2011).
    #[arg(long, value_enum, default_value = "constant")]
    pub g1_temperature: G1TemperatureArg,
    /// δ13C of the substrate of day respiration (‰ vs VPDB): the C3 respiration term then uses the
    /// apparent e′ = e + δ(assimilate) − δ(substrate) [default: the current assimilate, e′ = e].
    #[arg(long, allow_negative_numbers = true)]
    pub d13c_substrate: Option<f64>,
    /// C3 discrimination form (ignored for C4, which has one form).
    #[arg(long, value_enum, default_value = "comprehensive")]
    pub discrimination: FormArg,
    /// C3 electron-transport limit.
    #[arg(long, value_enum, default_value = "nadph")]
    pub electron_limit: ElectronArg,
    /// What soil-water stress (--soil-beta) scales.
    #[arg(long, value_enum, default_value = "both")]
    pub beta_target: BetaTargetArg,
    /// Set a leaf parameter, NAME=VALUE (repeatable; see --list-params).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
    /// List every parameter of the pathway with default, unit, valid range and source, then stop.
    #[arg(long)]
    pub list_params: bool,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    /// Many conditions from a CSV file, one per row; columns named like the flags without dashes
    /// (t_leaf, ppfd, vpd or rh, ca, pressure, o2, d13c_air, soil_beta) or like parameters; other
    /// columns (sample IDs, treatments) are copied to the output unchanged, first.
    #[arg(long, value_name = "FILE.csv")]
    pub input: Option<PathBuf>,
    /// With --input: the file's column COLUMN gives the condition NAME (t_leaf, ppfd, vpd, rh, ca,
    /// pressure, o2, d13c_air, soil_beta); repeatable.
    #[arg(long = "map", value_name = "NAME=COLUMN", requires = "input")]
    pub map: Vec<String>,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// How `isodisc keeling` groups samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ByArg {
    /// The `group` column.
    Group,
    /// Nights: sunset to sunrise (--site) or fixed local hours (--night-hours).
    Night,
    /// Fixed windows of --window length, counted from 1970-01-01T00:00 local time.
    Window,
}

/// `isodisc keeling`.
#[derive(Debug, clap::Args)]
pub struct KeelingArgs {
    /// Samples: columns time, co2 (µmol mol⁻¹), d13c (‰); optional group, co2_sd, d13c_sd, co2_bg,
    /// d13c_bg.
    pub samples: PathBuf,
    /// Grouping [default: the group column when present, else one group].
    #[arg(long, value_enum)]
    pub by: Option<ByArg>,
    /// Site file whose [site] latitude, longitude and utc_offset_h give sunset and sunrise.
    #[arg(long, value_name = "SITE.toml")]
    pub site: Option<PathBuf>,
    /// Night as local hours START-END, e.g. 19-6 (instead of --site).
    #[arg(long, value_name = "START-END", conflicts_with = "site")]
    pub night_hours: Option<String>,
    /// Window length for --by window: a number and m, h or d (30m, 6h, 1d).
    #[arg(long)]
    pub window: Option<String>,
    /// Background CO2 (µmol mol⁻¹) for Miller–Tans; overrides a co2_bg column.
    #[arg(long, requires = "background_d13c")]
    pub background_co2: Option<f64>,
    /// Background δ13C (‰) for Miller–Tans; overrides a d13c_bg column.
    #[arg(long, requires = "background_co2", allow_negative_numbers = true)]
    pub background_d13c: Option<f64>,
    /// Bootstrap resamples per fit (10 or more) for a bootstrap SE.
    #[arg(long, value_name = "N")]
    pub bootstrap: Option<usize>,
    /// Seed of the bootstrap.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Groups with a smaller CO2 range (µmol mol⁻¹) are flagged small_co2_range.
    #[arg(long, default_value_t = 40.0)]
    pub min_co2_range: f64,
    /// Write CSV here (atomically) instead of a table on standard output.
    #[arg(long, value_name = "FILE.csv")]
    pub out: Option<PathBuf>,
}

/// Output format of `isodisc compare`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CompareFormat {
    /// Aligned text for reading.
    Table,
    /// One JSON object.
    Json,
}

/// How `isodisc compare` pairs predictions with observations.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MatchArg {
    /// Daily predictions (`period` = YYYY-MM-DD) with the day's mean observation.
    Daily,
    /// Step predictions (`time`) with observations at exactly the same timestamp.
    Step,
}

/// `isodisc compare`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// A run's daily.csv or steps.csv.
    #[arg(long, value_name = "FILE.csv")]
    pub predicted: PathBuf,
    /// Observations: a time (or date) column and the variable's column.
    #[arg(long, value_name = "FILE.csv")]
    pub observed: PathBuf,
    /// The predicted column to score, e.g. d13c_respiration.
    #[arg(long, value_name = "NAME")]
    pub variable: String,
    /// The observed file's column [default: the --variable name].
    #[arg(long, value_name = "NAME")]
    pub observed_column: Option<String>,
    /// Pairing of predictions and observations.
    #[arg(long = "match", value_enum, default_value = "daily")]
    pub match_by: MatchArg,
    /// Also correlate the observations with the driver lagged by 0..=K days.
    #[arg(long, value_name = "K")]
    pub lags: Option<usize>,
    /// Days averaged in the driver, ending k days before the observation.
    #[arg(long, default_value_t = 1, requires = "lags")]
    pub window: usize,
    /// Predicted column used as the lag driver.
    #[arg(long, default_value = "discrimination", requires = "lags")]
    pub driver: String,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: CompareFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

/// `isodisc plot`.
#[derive(Debug, clap::Args)]
pub struct PlotArgs {
    /// A run's results folder (daily.csv; quantiles_monthly.csv if an ensemble wrote one), or a
    /// folder holding priors_grid.nc for --map.
    pub dir: PathBuf,
    /// Folder for the SVG figures [default: DIR/figures].
    #[arg(long, value_name = "FIGDIR")]
    pub out: Option<PathBuf>,
    /// Keeling fits written by `isodisc keeling --out`.
    #[arg(long, value_name = "FILE.csv", requires_all = ["samples", "groups"])]
    pub keeling: Option<PathBuf>,
    /// The samples those fits were made from.
    #[arg(long, value_name = "SAMPLES.csv", requires = "keeling")]
    pub samples: Option<PathBuf>,
    /// Groups to draw Keeling plots of, comma-separated.
    #[arg(long, value_delimiter = ',', requires = "keeling")]
    pub groups: Vec<String>,
    /// Observed δ13C of respiration: a time (or date) column and --observed-column.
    #[arg(long, value_name = "FILE.csv")]
    pub observed: Option<PathBuf>,
    /// Column of the observed file.
    #[arg(long, default_value = "d13c_respiration", requires = "observed")]
    pub observed_column: String,
    /// Map of this variable of DIR/priors_grid.nc (gpp, discrimination, ...; docs/priors.md).
    #[arg(long, value_name = "VARIABLE", requires = "month")]
    pub map: Option<String>,
    /// Month of the map.
    #[arg(long, value_name = "YYYY-MM", requires = "map")]
    pub month: Option<String>,
}

/// `isodisc ensemble`.
#[derive(Debug, clap::Args)]
pub struct EnsembleArgs {
    /// The site file (TOML).
    pub site: PathBuf,
    /// The ensemble spec (TOML; see docs/ensembles.md).
    #[arg(
        long,
        required_unless_present = "posterior",
        conflicts_with = "posterior"
    )]
    pub spec: Option<PathBuf>,
    /// Draw the members from the posterior of `isodisc fit --out DIR` (its posterior.csv)
    /// instead of a spec.
    #[arg(long, value_name = "DIR")]
    pub posterior: Option<PathBuf>,
    /// Number of members.
    #[arg(long)]
    pub members: usize,
    /// Seed of the sampling: the same seed gives the same members on any number of threads.
    #[arg(long)]
    pub seed: u64,
    /// Folder for the results (created; an existing non-empty folder needs --overwrite).
    #[arg(long)]
    pub out: PathBuf,
    /// Worker threads [default: one per core].
    #[arg(long)]
    pub threads: Option<usize>,
    /// The days to run.
    #[command(flatten)]
    pub period: PeriodArgs,
    /// Replace the results folder if it exists.
    #[arg(long)]
    pub overwrite: bool,
    /// No progress bar and no summary.
    #[arg(long)]
    pub quiet: bool,
}

/// `isodisc batch`.
#[derive(Debug, clap::Args)]
pub struct BatchArgs {
    /// The manifest (TOML; see docs/ensembles.md).
    pub manifest: PathBuf,
    /// Folder for the results; an interrupted batch re-run into it resumes.
    #[arg(long)]
    pub out: PathBuf,
    /// Run only shard K of N (sites whose 0-based index mod N is K - 1), e.g. 2/3; or `env`: the
    /// shard of this Slurm array task (SLURM_ARRAY_TASK_ID, _MIN and _COUNT).
    #[arg(long, value_name = "K/N|env")]
    pub shard: Option<String>,
    /// Run every site as an ensemble of this spec (needs --members and --seed).
    #[arg(long, requires_all = ["members", "seed"])]
    pub spec: Option<PathBuf>,
    /// Draw each site's members from the posterior of its fit, DIR/<site id>/posterior.csv
    /// (`isodisc fit --out DIR/<site id>`); with --spec, sites without a fit take the spec.
    #[arg(long, value_name = "DIR", requires_all = ["members", "seed"])]
    pub posterior: Option<PathBuf>,
    /// Members per site (with --spec or --posterior).
    #[arg(long)]
    pub members: Option<usize>,
    /// Seed of the sampling (with --spec or --posterior).
    #[arg(long)]
    pub seed: Option<u64>,
    /// Worker threads [default: one per core].
    #[arg(long)]
    pub threads: Option<usize>,
    /// The days to run.
    #[command(flatten)]
    pub period: PeriodArgs,
    /// No progress bar and no summary.
    #[arg(long)]
    pub quiet: bool,
}

/// `isodisc merge`.
#[derive(Debug, clap::Args)]
pub struct MergeArgs {
    /// The shards' output folders.
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
    /// Folder for the merged results.
    #[arg(long)]
    pub out: PathBuf,
    /// Replace the folder if it exists.
    #[arg(long)]
    pub overwrite: bool,
    /// Print nothing on success.
    #[arg(long)]
    pub quiet: bool,
}

/// `isodisc cluster-script`.
#[derive(Debug, clap::Args)]
pub struct ClusterScriptArgs {
    /// The batch manifest or grid file (TOML): the tasks run `isodisc batch` or `isodisc grid`.
    pub manifest: PathBuf,
    /// Number of shards, one array task each.
    #[arg(long)]
    pub shards: u32,
    /// Folder for the results on the cluster's shared file system.
    #[arg(long)]
    pub results: PathBuf,
    /// The script to write.
    #[arg(long, default_value = "submit_batch.sh")]
    pub out: PathBuf,
    /// Threads per task (--cpus-per-task).
    #[arg(long, default_value_t = 1)]
    pub threads: u32,
    /// Wall-time limit per task, HH:MM:SS or D-HH:MM:SS.
    #[arg(long, default_value = "02:00:00")]
    pub time: String,
    /// Memory per task (e.g. 2G).
    #[arg(long, default_value = "2G")]
    pub mem: String,
    /// Slurm partition [default: the cluster's default].
    #[arg(long)]
    pub partition: Option<String>,
    /// Slurm account to charge [default: yours].
    #[arg(long)]
    pub account: Option<String>,
    /// The isodisc program the jobs run [default: this one].
    #[arg(long)]
    pub isodisc: Option<PathBuf>,
    /// Ensemble spec for every site (with --members).
    #[arg(long)]
    pub spec: Option<PathBuf>,
    /// Fits whose posteriors the sites' members are drawn from, DIR/<site id>/posterior.csv, as
    /// `isodisc batch --posterior` (with --members; with --spec, sites without a fit take the spec).
    #[arg(long, value_name = "DIR")]
    pub posterior: Option<PathBuf>,
    /// Ensemble members per site (with --spec or --posterior).
    #[arg(long)]
    pub members: Option<u32>,
    /// Ensemble seed.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
}

/// `--from` and `--to`, shared by the commands that run sites.
#[derive(Debug, Clone, clap::Args)]
pub struct PeriodArgs {
    /// First day to run, YYYY-MM-DD (local standard time).
    #[arg(long)]
    pub from: Option<String>,
    /// Last day to run, YYYY-MM-DD, inclusive.
    #[arg(long)]
    pub to: Option<String>,
}

/// The likelihood of `isodisc fit`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LikelihoodArg {
    /// Normal errors.
    Gaussian,
    /// Student-t errors with --dof degrees of freedom (heavy tails: outliers weigh less).
    StudentT,
}

/// `isodisc fit`.
#[derive(Debug, clap::Args)]
pub struct FitArgs {
    /// The site file (TOML).
    pub site: PathBuf,
    /// The priors: an ensemble spec (TOML; see docs/ensembles.md); `error.<variable>` adds a
    /// model-error SD for that variable's streams (see docs/fit.md).
    #[arg(long)]
    pub spec: PathBuf,
    /// An observation file, one per data stream (repeatable; paired in order with --variable).
    #[arg(long, value_name = "FILE.csv", required = true)]
    pub observed: Vec<PathBuf>,
    /// The daily.csv column each --observed file measures, e.g. d13c_respiration (repeatable).
    #[arg(long, value_name = "NAME", required = true)]
    pub variable: Vec<String>,
    /// The observations' standard deviation, one per stream in order (unit of the variable)
    /// [default: the file's SD column].
    #[arg(long, value_name = "SD")]
    pub sd: Vec<f64>,
    /// The observations' error distribution.
    #[arg(long, value_enum, default_value = "gaussian")]
    pub likelihood: LikelihoodArg,
    /// Degrees of freedom of --likelihood student-t.
    #[arg(long, value_name = "N")]
    pub dof: Option<f64>,
    /// Seed of the walkers: the same seed gives the same draws on any number of threads.
    #[arg(long)]
    pub seed: u64,
    /// Folder for the results (created; an existing non-empty folder needs --overwrite).
    #[arg(long)]
    pub out: PathBuf,
    /// Walkers of the ensemble sampler, even [default: 2 x parameters + 2, at least 8].
    #[arg(long)]
    pub walkers: Option<usize>,
    /// Steps of every walker discarded before draws are kept.
    #[arg(long, value_name = "STEPS", default_value_t = 200)]
    pub warmup: usize,
    /// Stop when the smallest bulk effective sample size reaches this.
    #[arg(long, value_name = "N", default_value_t = 400.0)]
    pub ess: f64,
    /// Stop before the model runs (evaluations) exceed this, whatever the ESS.
    #[arg(long, value_name = "N", default_value_t = 20_000)]
    pub max_evaluations: u64,
    /// Most posterior draws kept for the predictive quantiles (thinned evenly).
    #[arg(long, value_name = "N", default_value_t = 400)]
    pub predictive: usize,
    /// Worker threads [default: one per core].
    #[arg(long)]
    pub threads: Option<usize>,
    /// The days to run.
    #[command(flatten)]
    pub period: PeriodArgs,
    /// Replace the results folder if it exists.
    #[arg(long)]
    pub overwrite: bool,
    /// No progress bar and no summary.
    #[arg(long)]
    pub quiet: bool,
}

/// `isodisc grid`.
#[derive(Debug, clap::Args)]
pub struct GridArgs {
    /// The grid file (TOML; see docs/grid.md).
    pub grid: PathBuf,
    /// Folder for the results; an interrupted run re-run into it resumes.
    #[arg(long, conflicts_with_all = ["cell", "export"])]
    pub out: Option<PathBuf>,
    /// Run only shard K of N (blocks of 32 vegetated cells whose 0-based index mod N is K - 1),
    /// e.g. 2/3; or `env`: the shard of this Slurm array task.
    #[arg(long, value_name = "K/N|env", requires = "out")]
    pub shard: Option<String>,
    /// Worker threads [default: one per core].
    #[arg(long)]
    pub threads: Option<usize>,
    /// The cell nearest LAT,LON (degrees north, east) to export (with --export).
    #[arg(
        long,
        value_name = "LAT,LON",
        requires = "export",
        allow_hyphen_values = true
    )]
    pub cell: Option<String>,
    /// Folder to write the cell's site.toml and weather.csv into (with --cell).
    #[arg(long, requires = "cell")]
    pub export: Option<PathBuf>,
    /// The days to run.
    #[command(flatten)]
    pub period: PeriodArgs,
    /// Print nothing on success.
    #[arg(long)]
    pub quiet: bool,
}
