//! # isodisc-runner
//!
//! Drives the model with weather files and writes results: the `isodisc` command. Arguments are turned
//! into a validated plan before any work starts; the plan runs; errors are printed with their chain.

pub mod cli;
pub mod commands;
pub mod ensemble;
pub mod error;
pub mod fit;
pub mod forcing;
pub mod grid;
pub mod netcdf_in;
pub mod numfmt;
pub mod output;
pub mod priors;
pub mod priors_grid;
pub mod simulate;
pub mod site;
pub mod site_params;
pub mod table;

use std::process::ExitCode;

use clap::Parser;

use cli::{Cli, Command};
use error::Result;

/// Parses the command line, runs it and turns the outcome into an exit code (2 on error).
pub fn main_entry() -> ExitCode {
    output::install_interrupt_handler();
    match run(Cli::parse()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if e.is_broken_pipe() => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("isodisc: error: {}", e.chain());
            ExitCode::from(2)
        }
    }
}

/// Runs a parsed command line.
pub fn run(cli: Cli) -> Result<()> {
    match cli.command {
        Command::Leaf(args) => commands::leaf::LeafPlan::from_args(&args)?.run(),
        Command::Run(args) => commands::run::RunPlan::from_args(&args)?.run(),
        Command::Presets(args) => commands::presets::PresetsPlan::from_args(&args)?.run(),
        Command::Keeling(args) => commands::keeling::KeelingPlan::from_args(&args)?.run(),
        Command::Compare(args) => commands::compare::ComparePlan::from_args(&args)?.run(),
        Command::Plot(args) => commands::plot::PlotPlan::from_args(&args)?.run(),
        Command::Ensemble(args) => commands::ensemble::EnsemblePlan::from_args(&args)?.run(),
        Command::Batch(args) => commands::batch::BatchPlan::from_args(&args)?.run(),
        Command::Grid(args) => commands::grid::GridPlan::from_args(&args)?.run(),
        Command::Merge(args) => commands::merge::MergePlan::from_args(&args)?.run(),
        Command::ClusterScript(args) => {
            commands::cluster::ClusterScriptPlan::from_args(&args)?.run()
        }
        Command::Fit(args) => commands::fit::FitPlan::from_args(&args)?.run(),
    }
}
