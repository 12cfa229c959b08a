//! Helpers shared by the checks that drive the `isodisc` command.

use clap::Parser;
use isodisc_runner::cli::Cli;

/// Runs `isodisc ARGS…` in-process; the error is the message chain the user would see.
pub fn run(args: &[&str]) -> Result<(), String> {
    let cli = Cli::try_parse_from(std::iter::once("isodisc").chain(args.iter().copied()))
        .map_err(|e| e.to_string())?;
    isodisc_runner::run(cli).map_err(|e| e.chain())
}
