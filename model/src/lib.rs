//! # isodisc-model
//!
//! The science of isodisc, as pure computation: plain structs and slices in, values out. No files,
//! no threads, no printing — those belong to the runner.
//!
//! Units follow the conventions of the project (µmol mol⁻¹ for CO2, µmol m⁻² s⁻¹ for leaf fluxes,
//! mol m⁻² s⁻¹ for conductances, ‰ vs VPDB for δ13C, °C for temperature, kPa for pressure and VPD,
//! gC m⁻² of ground for pools). Units are also in public names (`t_leaf_c`, `ca_umol_mol`).
//!
//! Modules, one per process:
//! - [`isotopes`]: δ ⇄ R, Δ from source and product, 13CO2 in a CO2 mole fraction;
//! - [`temperature`]: Arrhenius, peaked Arrhenius and Q10 responses;
//! - [`leaf`]: C3 (Farquhar–von Caemmerer–Berry) and C4 (Collatz) photosynthesis, Medlyn stomata and
//!   the coupled solution for A, gs, ci and cc;
//! - [`discrimination`]: leaf 13C discrimination (C3 simple and comprehensive, C4 with leakiness);
//! - [`canopy`]: solar geometry, diffuse fraction, sunlit/shaded radiation and canopy assimilation;
//! - [`water`]: vapour pressure, Priestley–Taylor evaporation and the soil-water bucket;
//! - [`phenology`]: LAI from the Growing Season Index, and the cold rule (frost, frozen soil);
//! - [`presets`]: published parameter sets of common vegetation types;
//! - [`pools`]: carbon and 13C pools integrated as ODEs (respiration lag, disequilibrium);
//! - [`observations`]: Keeling plots, scores and lag analysis.

pub mod canopy;
pub mod discrimination;
pub mod error;
pub mod isotopes;
pub mod leaf;
mod numerics;
pub mod observations;
pub mod phenology;
pub mod pools;
pub mod presets;
pub mod site;
pub mod temperature;
pub mod water;

pub use error::{ModelError, Result};
