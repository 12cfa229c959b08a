//! Stomatal conductance after Medlyn et al. (2011, Global Change Biol.):
//! gs = g0 + 1.6·(1 + g1/√D)·A/cs for A > 0, and gs = g0 otherwise (gs for H2O, mol m⁻² s⁻¹;
//! D the leaf-to-air vapour pressure deficit in kPa, floored at [`VPD_FLOOR_KPA`]; cs µmol mol⁻¹).
//! With g0 = 0 and no boundary layer this gives ci/ca = g1/(g1 + √D) exactly.

/// Floor on D (kPa) so that g1/√D stays finite in saturated air.
pub const VPD_FLOOR_KPA: f64 = 0.05;

/// Ratio of the diffusivities of H2O and CO2 in air through stomata.
pub const GS_H2O_PER_CO2: f64 = 1.6;

/// Ratio of the boundary-layer conductances to H2O and CO2.
pub const GB_H2O_PER_CO2: f64 = 1.37;

/// Medlyn stomatal model with its parameters fixed for one leaf and one VPD.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Medlyn {
    /// Residual conductance g0 (mol m⁻² s⁻¹, H2O).
    pub g0: f64,
    /// 1 + g1/√D (dimensionless), g1 already scaled by any soil-water factor.
    pub slope: f64,
}

impl Medlyn {
    /// The model for `g0` (mol m⁻² s⁻¹), `g1` (kPa^0.5) and `vpd_kpa` (kPa).
    pub fn new(g0: f64, g1: f64, vpd_kpa: f64) -> Self {
        Self {
            g0,
            slope: 1.0 + g1 / vpd_kpa.max(VPD_FLOOR_KPA).sqrt(),
        }
    }

    /// gs (mol m⁻² s⁻¹, H2O) for net assimilation `a_net` (µmol m⁻² s⁻¹) at surface CO2 `cs`
    /// (µmol mol⁻¹).
    pub fn conductance(&self, a_net: f64, cs: f64) -> f64 {
        if a_net > 0.0 && cs > 0.0 {
            self.g0 + GS_H2O_PER_CO2 * self.slope * a_net / cs
        } else {
            self.g0
        }
    }
}

/// Enhancement of the leaf boundary-layer conductance outdoors over the laminar-flow value of a flat
/// plate: turbulence and leaf flutter make it about 1.4 times larger (Campbell & Norman 1998, An
/// Introduction to Environmental Biophysics; from memory).
pub const OUTDOOR_BOUNDARY_LAYER_FACTOR: f64 = 1.4;

/// Leaf boundary-layer conductance to H2O (mol m⁻² s⁻¹) outdoors at wind speed `wind_m_s` (m s⁻¹,
/// floored at 0.1) for leaf width `leaf_width_m` (m): 1.4 × 0.147·√(u/d) (Campbell & Norman 1998,
/// from memory), limited to [0.01, 1e6].
pub fn boundary_layer_h2o_from_wind(wind_m_s: f64, leaf_width_m: f64) -> f64 {
    (OUTDOOR_BOUNDARY_LAYER_FACTOR * 0.147 * (wind_m_s.max(0.1) / leaf_width_m).sqrt())
        .clamp(0.01, 1e6)
}
