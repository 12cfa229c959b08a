//! One module per subcommand: each turns its arguments into a validated plan, then runs it.

pub mod batch;
pub mod cluster;
pub mod compare;
pub mod ensemble;
pub mod keeling;
pub mod leaf;
pub mod merge;
pub mod plot;
pub mod run;
