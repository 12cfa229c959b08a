//! One module per subcommand: each turns its arguments into a validated plan, then runs it.

pub mod batch;
mod blocks;
pub mod cluster;
pub mod compare;
pub mod ensemble;
pub mod fit;
pub mod grid;
pub mod keeling;
pub mod leaf;
pub mod leaf_input;
pub mod merge;
pub mod plot;
pub mod presets;
pub mod run;

use crate::cli::PeriodArgs;
use crate::error::{Error, Result};
use crate::forcing::LocalTime;

/// The `--from`/`--to` days as reader bounds (inclusive start, exclusive end).
pub type Period = (Option<LocalTime>, Option<LocalTime>);

/// Parses `--from` and `--to` (YYYY-MM-DD; `--to` inclusive).
pub fn parse_period(flags: &PeriodArgs) -> Result<Period> {
    let (from, to) = (&flags.from, &flags.to);
    let parse = |flag: &str, s: &Option<String>| -> Result<Option<LocalTime>> {
        s.as_deref()
            .map(|d| {
                LocalTime::parse_date(d)
                    .map_err(|e| Error::msg(format!("--{flag} `{d}`: {e} (expected YYYY-MM-DD)")))
            })
            .transpose()
    };
    let from = parse("from", from)?;
    let to = parse("to", to)?.map(|t| t.plus_minutes(24 * 60));
    if let (Some(f), Some(t)) = (from, to)
        && f >= t
    {
        return Err(Error::msg("--from must not be after --to"));
    }
    Ok((from, to))
}
