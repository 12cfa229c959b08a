//! Carbon and 13C pools as linear ODEs: the respiration lag and the isotopic disequilibrium
//! (docs/science.md).
//!
//! Assimilated carbon enters labile plant pools and moves, by first-order turnover and fixed
//! transfer fractions, through litter and soil pools, each releasing part of its outflow as
//! autotrophic or heterotrophic respiration. 12C and 13C are followed separately, each flux
//! carrying its pool's ratio times (1 + ε/1000), so δ13C of respiration (δRa, δRh, δR) lags the
//! assimilate by the pools' turnover times and, under a falling atmospheric δ13C, old carbon
//! stays less depleted than new assimilate.
//!
//! - [`network`]: pools as data, validated ([`PoolNetwork::new`], [`PoolNetwork::default_four_pool`]);
//! - [`response`]: Q10 or Lloyd & Taylor (1994) temperature and a linear moisture response;
//! - [`state`]: pool contents, forcing, per-step fluxes and δ arithmetic;
//! - [`integrate`]: one step exactly (matrix exponential) or with Dopri5; steady state;
//! - [`spinup`]: spin-up through an atmospheric (year, CO2, δ13C) history;
//! - [`diagnostics`]: pool sizes, δ and mean ages of respired carbon at steady state;
//! - [`config`]: the `[pools]` block of a site file and dotted-path overrides.

pub mod config;
pub mod diagnostics;
mod expm;
pub mod integrate;
pub mod network;
pub mod response;
pub mod spinup;
pub mod state;

pub use config::{MethodName, PoolEntry, PoolsConfig, TemperatureResponseName};
pub use diagnostics::{PoolReport, SteadyStateReport};
pub use integrate::{Method, PoolModel, PoolSettings};
pub use network::{EXPORT, PoolKind, PoolNetwork, PoolSpec};
pub use response::{EnvironmentResponse, TemperatureResponse};
pub use spinup::{AtmosphereHistory, AtmosphereRow, MeanDrivers};
pub use state::{Flux, Forcing, PoolState, R_VPDB_DEFAULT, StepResult};
