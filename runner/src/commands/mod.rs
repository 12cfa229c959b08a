//! One module per subcommand: each turns its arguments into a validated plan, then runs it.

pub mod compare;
pub mod keeling;
pub mod leaf;
pub mod plot;
pub mod batch;
pub mod ensemble;
pub mod merge;
pub mod run;
