//! One module per subcommand: each turns its arguments into a validated plan, then runs it.

pub mod batch;
pub mod ensemble;
pub mod leaf;
pub mod merge;
pub mod run;
