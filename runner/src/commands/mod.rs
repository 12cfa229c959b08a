//! One module per subcommand: each turns its arguments into a validated plan, then runs it.

pub mod leaf;
pub mod run;
