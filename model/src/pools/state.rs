//! Pool contents, forcing and per-step results, with the ratio arithmetic that turns 12C and 13C
//! amounts into δ13C.
//!
//! Amounts are kept as 12C and 13C separately, both in gC m⁻² of ground counted by atoms (an
//! amount n of atoms is n·12.011 g whatever the isotope), so total carbon = 12C + 13C and
//! R = 13C/12C. Keeping the two isotopes apart makes every flux linear in the pool contents and
//! conserves each isotope to round-off. δ = (R/R_VPDB − 1)·1000, with R_VPDB a setting
//! (default [`R_VPDB_DEFAULT`]).

use crate::error::{ModelError, Result, check_input};

pub use crate::isotopes::R_VPDB_WERNER_BRAND_2001 as R_VPDB_DEFAULT;
use crate::isotopes::{delta_from_ratio as ratio_to_delta_permil, split_isotopes};

/// The 12C and 13C content of every pool, gC m⁻² of ground (atom-counted), in network order.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolState {
    pub(crate) c12: Vec<f64>,
    pub(crate) c13: Vec<f64>,
}

impl PoolState {
    /// A state from 12C and 13C amounts (gC m⁻²), which must be finite, non-negative and of
    /// equal length.
    pub fn from_isotopes(c12_g_m2: Vec<f64>, c13_g_m2: Vec<f64>) -> Result<Self> {
        if c12_g_m2.len() != c13_g_m2.len() {
            return Err(ModelError::InvalidConfig(format!(
                "pool state has {} 12C amounts but {} 13C amounts",
                c12_g_m2.len(),
                c13_g_m2.len()
            )));
        }
        for (i, (&a, &b)) in c12_g_m2.iter().zip(&c13_g_m2).enumerate() {
            check_input(&format!("pool[{i}].c12_g_m2"), a, 0.0, f64::MAX)?;
            check_input(&format!("pool[{i}].c13_g_m2"), b, 0.0, f64::MAX)?;
        }
        Ok(PoolState {
            c12: c12_g_m2,
            c13: c13_g_m2,
        })
    }

    /// A state from total carbon (gC m⁻²) and δ13C (‰) per pool.
    pub fn from_totals(c_g_m2: &[f64], d13c_permil: &[f64], r_standard: f64) -> Result<Self> {
        if c_g_m2.len() != d13c_permil.len() {
            return Err(ModelError::InvalidConfig(format!(
                "pool state has {} amounts but {} δ13C values",
                c_g_m2.len(),
                d13c_permil.len()
            )));
        }
        let mut c12 = Vec::with_capacity(c_g_m2.len());
        let mut c13 = Vec::with_capacity(c_g_m2.len());
        for (i, (&c, &d)) in c_g_m2.iter().zip(d13c_permil).enumerate() {
            check_input(&format!("pool[{i}].c_g_m2"), c, 0.0, f64::MAX)?;
            check_input(&format!("pool[{i}].d13c_permil"), d, -1000.0, 1000.0)?;
            let (a, b) = split_isotopes(c, d, r_standard);
            c12.push(a);
            c13.push(b);
        }
        Ok(PoolState { c12, c13 })
    }

    /// Number of pools.
    pub fn len(&self) -> usize {
        self.c12.len()
    }

    /// True when the state holds no pools.
    pub fn is_empty(&self) -> bool {
        self.c12.is_empty()
    }

    /// 12C per pool, gC m⁻².
    pub fn c12_g_m2(&self) -> &[f64] {
        &self.c12
    }

    /// 13C per pool, gC m⁻².
    pub fn c13_g_m2(&self) -> &[f64] {
        &self.c13
    }

    /// Total carbon (12C + 13C) of pool `i`, gC m⁻².
    pub fn pool_c_g_m2(&self, i: usize) -> f64 {
        self.c12[i] + self.c13[i]
    }

    /// δ13C of pool `i`, ‰ vs the standard of ratio `r_standard`; `None` for an empty pool.
    pub fn pool_d13c_permil(&self, i: usize, r_standard: f64) -> Option<f64> {
        (self.c12[i] > 0.0).then(|| ratio_to_delta_permil(self.c13[i] / self.c12[i], r_standard))
    }

    /// Total carbon in all pools, gC m⁻².
    pub fn total_c_g_m2(&self) -> f64 {
        self.c12.iter().sum::<f64>() + self.total_c13_g_m2()
    }

    /// Total 13C in all pools, gC m⁻².
    pub fn total_c13_g_m2(&self) -> f64 {
        self.c13.iter().sum()
    }
}

/// Forcing held constant over one step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Forcing {
    /// Assimilation entering the pools, gC m⁻² (ground) day⁻¹, ≥ 0.
    pub assimilation_gc_m2_day: f64,
    /// δ13C of the assimilate, ‰ vs VPDB.
    pub d13c_assimilate_permil: f64,
    /// Soil temperature, °C, in [−40, 60].
    pub t_soil_c: f64,
    /// Moisture index β for the moisture response, dimensionless, in [0, 1].
    pub moisture: f64,
}

/// Largest accepted assimilation input, gC m⁻² day⁻¹ (far above any ecosystem's GPP).
pub const MAX_ASSIMILATION_GC_M2_DAY: f64 = 1e3;

impl Forcing {
    /// Checks every field and returns the (12C, 13C) assimilation rates, gC m⁻² day⁻¹.
    pub(crate) fn isotope_inputs(&self, r_standard: f64) -> Result<(f64, f64)> {
        let a = check_input(
            "assimilation_gc_m2_day",
            self.assimilation_gc_m2_day,
            0.0,
            MAX_ASSIMILATION_GC_M2_DAY,
        )?;
        let d = check_input(
            "d13c_assimilate_permil",
            self.d13c_assimilate_permil,
            -200.0,
            200.0,
        )?;
        Ok(split_isotopes(a, d, r_standard))
    }
}

/// Carbon that left the pools by one path over a step, gC m⁻² (atom-counted).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Flux {
    /// 12C, gC m⁻².
    pub c12_g_m2: f64,
    /// 13C, gC m⁻².
    pub c13_g_m2: f64,
}

impl Flux {
    /// Total carbon, gC m⁻².
    pub fn c_g_m2(&self) -> f64 {
        self.c12_g_m2 + self.c13_g_m2
    }

    /// δ13C of the flux, ‰ vs the standard `r_standard`; `None` when no 12C left this way.
    pub fn d13c_permil(&self, r_standard: f64) -> Option<f64> {
        (self.c12_g_m2 > 0.0)
            .then(|| ratio_to_delta_permil(self.c13_g_m2 / self.c12_g_m2, r_standard))
    }

    /// Sum of two fluxes (isotope by isotope).
    pub fn plus(self, other: Flux) -> Flux {
        Flux {
            c12_g_m2: self.c12_g_m2 + other.c12_g_m2,
            c13_g_m2: self.c13_g_m2 + other.c13_g_m2,
        }
    }
}

/// What left the pools over one step. δ values are flux-weighted by construction: they come
/// from the step's summed 12C and 13C.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepResult {
    /// Autotrophic respiration over the step, gC m⁻².
    pub ra: Flux,
    /// Heterotrophic respiration over the step, gC m⁻².
    pub rh: Flux,
    /// Carbon exported without respiration over the step, gC m⁻².
    pub export: Flux,
    /// Ratio of the standard the δ values refer to (13C/12C).
    pub r_standard: f64,
}

impl StepResult {
    /// Ecosystem respiration Ra + Rh over the step, gC m⁻².
    pub fn reco(&self) -> Flux {
        self.ra.plus(self.rh)
    }

    /// δ13C of autotrophic respiration, ‰ vs VPDB; `None` when there was none.
    pub fn d13c_ra_permil(&self) -> Option<f64> {
        self.ra.d13c_permil(self.r_standard)
    }

    /// δ13C of heterotrophic respiration, ‰ vs VPDB; `None` when there was none.
    pub fn d13c_rh_permil(&self) -> Option<f64> {
        self.rh.d13c_permil(self.r_standard)
    }

    /// δ13C of ecosystem respiration (δR), ‰ vs VPDB; `None` when there was none.
    pub fn d13c_reco_permil(&self) -> Option<f64> {
        self.reco().d13c_permil(self.r_standard)
    }
}
