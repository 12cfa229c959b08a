//! Checks of isodisc against published values, general-purpose reference libraries and facts of the
//! trade. One test binary; one module per process. Each check names its source beside it.

mod canopy_water;
mod common;
mod docs;
mod ensemble;
mod fit;
mod golden;
mod grid;
mod isotopes_leaf;
mod keeling_input;
mod model_numerics;
mod numbers_text;
mod observations;
mod phenology_cold;
mod plots;
mod pools;
mod priors_grid;
mod robustness;
mod runner_forcing;
mod runner_leaf;
mod runner_leaf_input;
mod runner_observations;
mod runner_run;
mod validation;
