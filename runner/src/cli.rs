//! Command-line arguments. Each subcommand's raw arguments are turned into a validated plan by its
//! module in [`crate::commands`] before any work starts.

use std::path::PathBuf;

use clap::{Parser, Subcommand, ValueEnum};

/// isodisc: 13C discrimination of vegetation and the δ13C of ecosystem respiration from site weather.
#[derive(Debug, Parser)]
#[command(name = "isodisc", version, about, propagate_version = true)]
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
    /// A parameter ensemble of one site: members sampled from a spec, run in parallel, summarised.
    Ensemble(EnsembleArgs),
    /// Many sites from a manifest, optionally each as an ensemble; shardable, resumable; priors.
    Batch(BatchArgs),
    /// Joins the output folders of a batch's shards into one.
    Merge(MergeArgs),
}

/// `isodisc run`.
#[derive(Debug, clap::Args)]
pub struct RunArgs {
    /// The site file (TOML).
    pub site: PathBuf,
    /// Folder for the results (created; an existing non-empty folder needs --overwrite).
    #[arg(long)]
    pub out: PathBuf,
    /// First day to run, YYYY-MM-DD (local standard time).
    #[arg(long)]
    pub from: Option<String>,
    /// Last day to run, YYYY-MM-DD, inclusive.
    #[arg(long)]
    pub to: Option<String>,
    /// Replace the results folder if it exists.
    #[arg(long)]
    pub overwrite: bool,
    /// Print nothing on success.
    #[arg(long)]
    pub quiet: bool,
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
    /// C3 discrimination form (ignored for C4, which has one form).
    #[arg(long, value_enum, default_value = "comprehensive")]
    pub discrimination: FormArg,
    /// C3 electron-transport limit.
    #[arg(long, value_enum, default_value = "nadph")]
    pub electron_limit: ElectronArg,
    /// What soil-water stress (--soil-beta) scales.
    #[arg(long, value_enum, default_value = "g1")]
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
    /// (t_leaf, ppfd, vpd or rh, ca, pressure, o2, d13c_air, soil_beta) or like parameters.
    #[arg(long, value_name = "FILE.csv")]
    pub input: Option<PathBuf>,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// `isodisc ensemble`.
#[derive(Debug, clap::Args)]
pub struct EnsembleArgs {
    /// The site file (TOML).
    pub site: PathBuf,
    /// The ensemble spec (TOML; see docs/ensembles.md).
    #[arg(long)]
    pub spec: PathBuf,
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
    /// First day to run, YYYY-MM-DD (local standard time).
    #[arg(long)]
    pub from: Option<String>,
    /// Last day to run, YYYY-MM-DD, inclusive.
    #[arg(long)]
    pub to: Option<String>,
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
    /// Run only shard K of N (sites whose 0-based index mod N is K - 1), e.g. 2/3.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Run every site as an ensemble of this spec (needs --members and --seed).
    #[arg(long, requires_all = ["members", "seed"])]
    pub spec: Option<PathBuf>,
    /// Members per site.
    #[arg(long, requires = "spec")]
    pub members: Option<usize>,
    /// Seed of the sampling.
    #[arg(long, requires = "spec")]
    pub seed: Option<u64>,
    /// Worker threads [default: one per core].
    #[arg(long)]
    pub threads: Option<usize>,
    /// First day to run, YYYY-MM-DD (local standard time).
    #[arg(long)]
    pub from: Option<String>,
    /// Last day to run, YYYY-MM-DD, inclusive.
    #[arg(long)]
    pub to: Option<String>,
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
