//! Evaporation: Priestley & Taylor (1972, Mon. Weather Rev. 100: 81–92) potential evaporation with
//! FAO-56's slope of the saturation curve and psychrometric constant (Allen et al. 1998), canopy
//! transpiration from stomatal conductance, and a simple soil-evaporation demand.

use crate::error::{Result, check_input, check_range};
use crate::water::vapour::{psychrometric_constant_kpa_per_c, saturation_slope_kpa_per_c};

/// Latent heat of vaporisation (J kg⁻¹), FAO-56's fixed 2.45 MJ kg⁻¹ (Allen et al. 1998).
pub const LATENT_HEAT_J_KG: f64 = 2.45e6;

/// Molar mass of water (g mol⁻¹).
pub const WATER_MOLAR_MASS_G_MOL: f64 = 18.015;

/// Priestley–Taylor potential evaporation: E = α·Δ/(Δ + γ)·(Rn − G)/λ.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PriestleyTaylor {
    alpha: f64,
}

impl Default for PriestleyTaylor {
    /// α = 1.26 (Priestley & Taylor 1972).
    fn default() -> Self {
        Self { alpha: 1.26 }
    }
}

impl PriestleyTaylor {
    /// Priestley–Taylor with coefficient `alpha` (dimensionless, (0, 3]).
    pub fn new(alpha: f64) -> Result<Self> {
        Ok(Self {
            alpha: check_range("pt_alpha", alpha, f64::MIN_POSITIVE, 3.0)?,
        })
    }

    /// The coefficient α (dimensionless).
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// Potential evaporation (mm per step, i.e. kg m⁻²) over a step of `step_s` seconds at air
    /// temperature `t_air_c` (°C) and pressure `pressure_kpa` (kPa), from net radiation
    /// `net_radiation_w_m2` and optional soil heat flux `soil_heat_flux_w_m2` (W m⁻², into the
    /// soil positive; `None` counts as 0). Negative available energy (night) gives 0: dew is not
    /// added to the soil water.
    pub fn potential_evaporation_mm(
        &self,
        t_air_c: f64,
        pressure_kpa: f64,
        net_radiation_w_m2: f64,
        soil_heat_flux_w_m2: Option<f64>,
        step_s: f64,
    ) -> Result<f64> {
        // Down to below the lowest air temperature measured on Earth (−89.2 °C, Vostok 1983).
        let t = check_input("t_air_c", t_air_c, -90.0, 60.0)?;
        let p = check_input("pressure_kpa", pressure_kpa, 30.0, 110.0)?;
        let rn = check_input("net_radiation_w_m2", net_radiation_w_m2, -500.0, 1500.0)?;
        let g = match soil_heat_flux_w_m2 {
            Some(g) => check_input("soil_heat_flux_w_m2", g, -500.0, 500.0)?,
            None => 0.0,
        };
        let dt = check_input("step_s", step_s, 0.0, 86_400.0 * 31.0)?;
        let slope = saturation_slope_kpa_per_c(t);
        let gamma = psychrometric_constant_kpa_per_c(p);
        let energy_j_m2 = (rn - g).max(0.0) * dt;
        Ok(self.alpha * slope / (slope + gamma) * energy_j_m2 / LATENT_HEAT_J_KG)
    }
}

/// Transpiration (mm per step) of leaf area `lai_m2_m2` (m² leaf m⁻² ground) with stomatal
/// conductance to water vapour `gs_mol_m2_s` (mol m⁻² leaf s⁻¹) under vapour pressure deficit
/// `vpd_kpa` (kPa) at pressure `pressure_kpa` (kPa) over `step_s` seconds:
/// E = gs·VPD/P mol m⁻² leaf s⁻¹, times 18.015 g mol⁻¹, LAI and the step length.
/// Leaf-to-air VPD is taken as the air's (leaf at air temperature, no boundary layer).
pub fn transpiration_mm(
    gs_mol_m2_s: f64,
    vpd_kpa: f64,
    pressure_kpa: f64,
    lai_m2_m2: f64,
    step_s: f64,
) -> Result<f64> {
    let gs = check_input("gs_mol_m2_s", gs_mol_m2_s, 0.0, 10.0)?;
    let vpd = check_input("vpd_kpa", vpd_kpa, 0.0, 20.0)?;
    let p = check_input("pressure_kpa", pressure_kpa, 30.0, 110.0)?;
    let lai = check_input("lai_m2_m2", lai_m2_m2, 0.0, 20.0)?;
    let dt = check_input("step_s", step_s, 0.0, 86_400.0 * 31.0)?;
    let mol_m2_ground = gs * vpd / p * lai * dt;
    // 1 kg of water over 1 m² is 1 mm.
    Ok(mol_m2_ground * WATER_MOLAR_MASS_G_MOL * 1e-3)
}

/// Soil-evaporation demand (mm per step) beneath a canopy: the Priestley–Taylor evaporation of
/// the open site `potential_evaporation_mm` (mm per step) scaled by the fraction of net radiation
/// reaching the soil, e^{−k·LAI}, with `lai_m2_m2` (m² m⁻²) and extinction `k_extinction`
/// (dimensionless, [0, 2]; 0.5 is common practice, from memory).
///
/// A deliberately simple choice: the bucket then scales this demand by its relative water, a
/// stand-in for a drying surface layer.
pub fn soil_evaporation_demand_mm(
    potential_evaporation_mm: f64,
    lai_m2_m2: f64,
    k_extinction: f64,
) -> Result<f64> {
    let pe = check_input(
        "potential_evaporation_mm",
        potential_evaporation_mm,
        0.0,
        1e3,
    )?;
    let lai = check_input("lai_m2_m2", lai_m2_m2, 0.0, 20.0)?;
    let k = check_range("k_soil_extinction", k_extinction, 0.0, 2.0)?;
    Ok(pe * (-k * lai).exp())
}
