//! Parameter ensembles of one site (docs/science.md): the spec, the sampling design, running the
//! members in parallel over weather read once, and the summaries written from the members'
//! monthly and annual numbers (hourly outputs are never kept, so memory grows only by a few
//! hundred numbers per member).

pub mod manifest;
pub mod sample;
pub mod spec;
pub mod summary;

use indicatif::{ParallelProgressIterator, ProgressBar};
use rayon::prelude::*;

use crate::forcing::ForcingStep;
use crate::simulate::{
    Kept, NoSink, PeriodRow, Simulated, period_col, simulate_keeping, step_lights,
};
use crate::site::Site;
use sample::Design;
use spec::EnsembleSpec;

/// The period columns kept for every member (units as in `PERIOD_COLUMNS`: gC m⁻² per period for
/// fluxes, ‰ for Δ, δ and disequilibrium, ‰ gC m⁻² for the isoflux, dimensionless share).
pub const KEPT: [&str; 9] = [
    "gpp",
    "discrimination",
    "discrimination_c3",
    "discrimination_c4",
    "c4_share",
    "reco",
    "d13c_respiration",
    "disequilibrium",
    "isoflux_disequilibrium",
];

/// Index of a kept column in [`MemberPeriods::values`].
pub fn kept_col(name: &str) -> usize {
    KEPT.iter()
        .position(|k| *k == name)
        .unwrap_or_else(|| panic!("{name} is not a kept column"))
}

/// One member's monthly and annual numbers: per period, its key and the [`KEPT`] values.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct MemberPeriods {
    /// (YYYY-MM, values) per month.
    pub monthly: Vec<(String, Vec<f64>)>,
    /// (YYYY, values) per year.
    pub annual: Vec<(String, Vec<f64>)>,
}

impl MemberPeriods {
    /// Keeps the [`KEPT`] columns of a simulation's monthly and annual rows.
    pub fn from_simulated(sim: &Simulated) -> Self {
        let cols: Vec<usize> = KEPT.iter().map(|k| period_col(k)).collect();
        let keep = |rows: &[PeriodRow]| {
            rows.iter()
                .map(|r| (r.key.clone(), cols.iter().map(|&c| r.values[c]).collect()))
                .collect()
        };
        Self {
            monthly: keep(&sim.periods[1]),
            annual: keep(&sim.periods[2]),
        }
    }
}

/// How a member ended.
#[derive(Debug, Clone, PartialEq)]
pub enum MemberStatus {
    /// Ran.
    Ok(MemberPeriods),
    /// Its draw was refused by the site's validation (message says which parameter).
    Invalid(String),
    /// The simulation failed.
    Failed(String),
}

/// One member: its parameter values (spec order, their units) and its outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct Member {
    /// Parameter values.
    pub params: Vec<f64>,
    /// Outcome.
    pub status: MemberStatus,
}

impl Member {
    /// The numbers of a member that ran.
    pub fn periods(&self) -> Option<&MemberPeriods> {
        match &self.status {
            MemberStatus::Ok(p) => Some(p),
            _ => None,
        }
    }
}

/// Applies a member's values (spec order) to a copy of the site.
pub fn member_site(site: &Site, spec: &EnsembleSpec, values: &[f64]) -> crate::error::Result<Site> {
    let mut s = site.clone();
    let pairs: Vec<(&str, f64)> = spec
        .params
        .iter()
        .zip(values)
        .map(|(p, v)| (p.path.as_str(), *v))
        .collect();
    s.set_params(&pairs)?;
    Ok(s)
}

/// Whether the members of `spec` share the site's light (solar geometry, diffuse fraction and the
/// canopies' two-leaf light): every member has the site's location unless the spec samples
/// `site.latitude` or `site.longitude`. A canopy whose LAI a member changes (`vegetation.*.lai`)
/// recomputes its own light step by step (the site model checks that a shared light fits).
pub fn shares_light(spec: &EnsembleSpec) -> bool {
    !spec
        .params
        .iter()
        .any(|p| matches!(p.path.as_str(), "site.latitude" | "site.longitude"))
}

/// Runs members 0..n of the ensemble over `steps` (weather read once) in the current rayon pool,
/// ticking `progress`; results are in member order whatever the thread count. The light of each
/// step is computed once for all members when [`shares_light`].
pub fn run_members(
    site: &Site,
    steps: &[ForcingStep],
    step_minutes: u32,
    spec: &EnsembleSpec,
    members: usize,
    seed: u64,
    progress: &ProgressBar,
) -> Vec<Member> {
    let design = Design::new(spec, members, seed);
    run_members_drawn(site, steps, step_minutes, spec, members, progress, |i| {
        design.draw(spec, i)
    })
}

/// As [`run_members`], with member i's parameter values (in the order of `spec.params`) given by
/// `draw(i)`: a sampling design's row, or a draw from a fit's posterior.
pub fn run_members_drawn(
    site: &Site,
    steps: &[ForcingStep],
    step_minutes: u32,
    spec: &EnsembleSpec,
    members: usize,
    progress: &ProgressBar,
    draw: impl Fn(usize) -> Vec<f64> + Sync,
) -> Vec<Member> {
    let lights = if shares_light(spec) {
        step_lights(site, steps, step_minutes)
    } else {
        Vec::new()
    };
    (0..members)
        .into_par_iter()
        .progress_with(progress.clone())
        .map(|i| {
            let params = draw(i);
            let status = match member_site(site, spec, &params) {
                Err(e) => MemberStatus::Invalid(e.chain()),
                Ok(s) => {
                    let steps = steps.iter().cloned().map(Ok);
                    // A member keeps its monthly and annual rows only.
                    let kept = Kept {
                        daily: false,
                        ..Kept::ALL
                    };
                    match simulate_keeping(&s, steps, step_minutes, &mut NoSink, &lights, kept) {
                        Ok(sim) => MemberStatus::Ok(MemberPeriods::from_simulated(&sim)),
                        Err(e) => MemberStatus::Failed(e.chain()),
                    }
                }
            };
            Member { params, status }
        })
        .collect()
}
