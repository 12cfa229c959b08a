//! The weather (forcing) file: the `[forcing]` block of the site file, a calendar for local
//! standard time, and a streaming CSV reader that converts units, checks values and fills short
//! gaps by linear interpolation. VPD from RH or dew point and pressure from elevation follow
//! FAO-56 (Allen et al. 1998). See `docs/forcing.md` for the user's view.

pub mod config;
pub mod error;
pub mod pattern;
pub mod preset;
pub mod reader;
pub mod time;

pub use config::{ForcingConfig, MissingSpec, PerVariable, TimeFormat, TimestampMarks, Variable};
pub use error::{DataErrorKind, ForcingError};
pub use preset::Preset;
pub use reader::{ForcingReader, ForcingReport, ForcingStep};
pub use time::{LocalDate, LocalTime, TimeError};
