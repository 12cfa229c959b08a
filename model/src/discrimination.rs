//! Leaf 13C discrimination (Δ, ‰; positive when the assimilate is depleted relative to the air).
//!
//! - C3 simple: Δ = a + (b − a)·ci/ca (Farquhar, O'Leary & Berry 1982, Aust. J. Plant Physiol.;
//!   Farquhar & Richards 1984), b the effective carboxylation fractionation (27‰).
//! - C3 comprehensive (Farquhar et al. 1982; Evans et al. 1986, Aust. J. Plant Physiol.):
//!   Δ = ab(ca − cs)/ca + a(cs − ci)/ca + (es + al)(ci − cc)/ca + b·cc/ca − (e·Rd/k + f·Γ*)/ca,
//!   with k = (A + Rd)/(cc − Γ*) the carboxylation efficiency. With no boundary layer, infinite
//!   mesophyll conductance, e = f = 0 and b = 27‰ it reduces to the simple form.
//!   The respiration term assumes day respiration releases the current assimilate. When its
//!   substrate is older carbon of another δ13C (Wingate et al. 2007; Tcherkez et al. 2011; from
//!   memory), e is replaced by the apparent e′ = e + δ(assimilate) − δ(substrate); since δ of the
//!   assimilate depends on Δ itself, [`c3_comprehensive_apparent_e_permil`] solves for Δ exactly.
//! - C4 (Farquhar 1983, Aust. J. Plant Physiol.): Δ = ab(ca − cs)/ca + a(cs − ci)/ca +
//!   (b4 + φ(b3 − s))·ci/ca, with leakiness φ and b4 the temperature-dependent fractionation of
//!   CO2 dissolution, hydration and PEP carboxylation, b4 = −9483/T + 23.89 + 2.2 ‰ with T in K
//!   (the HCO3⁻/CO2 equilibrium of Mook et al. 1974 plus 2.2‰).
//!
//! The ternary correction (Farquhar & Cernusak 2012) is not applied.

use crate::temperature::ZERO_C_IN_K;

/// C3 simple discrimination (‰) from ci/ca (dimensionless), a and b (‰).
pub fn c3_simple_permil(ci_ca: f64, a_permil: f64, b_permil: f64) -> f64 {
    a_permil + (b_permil - a_permil) * ci_ca
}

/// Fractionation constants of the comprehensive C3 form, all ‰.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct C3Fractionations {
    /// Boundary-layer diffusion.
    pub ab: f64,
    /// Diffusion in air through stomata.
    pub a: f64,
    /// Dissolution of CO2.
    pub es: f64,
    /// Diffusion in water.
    pub al: f64,
    /// Rubisco carboxylation.
    pub b: f64,
    /// Day respiration.
    pub e: f64,
    /// Photorespiration.
    pub f: f64,
}

/// CO2 mole fractions along the leaf's diffusion path and the fluxes of a C3 leaf.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct C3Gradient {
    /// Ambient CO2 (µmol mol⁻¹).
    pub ca: f64,
    /// CO2 at the leaf surface (µmol mol⁻¹).
    pub cs: f64,
    /// Intercellular CO2 (µmol mol⁻¹).
    pub ci: f64,
    /// CO2 at the site of carboxylation (µmol mol⁻¹).
    pub cc: f64,
    /// Net assimilation (µmol m⁻² s⁻¹).
    pub a_net: f64,
    /// Day respiration (µmol m⁻² s⁻¹).
    pub rd: f64,
    /// CO2 compensation point without day respiration (µmol mol⁻¹).
    pub gamma_star: f64,
}

/// C3 comprehensive discrimination (‰). NaN when gross assimilation A + Rd is not positive, where
/// discrimination has no meaning.
pub fn c3_comprehensive_permil(g: &C3Gradient, fr: &C3Fractionations) -> f64 {
    let gross = g.a_net + g.rd;
    if gross <= 0.0 {
        return f64::NAN;
    }
    // e·Rd/k with k = (A + Rd)/(cc − Γ*).
    let resp = fr.e * g.rd * (g.cc - g.gamma_star) / gross;
    (fr.ab * (g.ca - g.cs) + fr.a * (g.cs - g.ci) + (fr.es + fr.al) * (g.ci - g.cc) + fr.b * g.cc
        - resp
        - fr.f * g.gamma_star)
        / g.ca
}

/// C3 comprehensive discrimination (‰) with the apparent fractionation of day respiration
/// e′ = e + δp − δsub, where δp = (δa − Δ)/(1 + Δ/1000) is the δ13C of the assimilate this Δ gives,
/// `d13c_air_permil` δa and `d13c_substrate_permil` δsub (‰ vs VPDB). With the weight
/// w = Rd(cc − Γ*)/((A + Rd)·ca) of the respiration term, Δ = Δ₀ − w·e′ where Δ₀ is the form with
/// e = 0; multiplied by (1 + Δ/1000) this is the quadratic
/// Δ²/1000 + Δ(1 − c/1000 − w) + (w·δa − c) = 0 with c = Δ₀ − w(e − δsub), whose root near c is
/// taken in its cancellation-free form. NaN where the comprehensive form is.
pub fn c3_comprehensive_apparent_e_permil(
    g: &C3Gradient,
    fr: &C3Fractionations,
    d13c_air_permil: f64,
    d13c_substrate_permil: f64,
) -> f64 {
    let delta0 = c3_comprehensive_permil(g, &C3Fractionations { e: 0.0, ..*fr });
    if delta0.is_nan() {
        return f64::NAN;
    }
    let w = g.rd * (g.cc - g.gamma_star) / ((g.a_net + g.rd) * g.ca);
    let c = delta0 - w * (fr.e - d13c_substrate_permil);
    let b = 1.0 - c / 1000.0 - w;
    let k = w * d13c_air_permil - c;
    let disc = b * b - 4e-3 * k;
    2.0 * (c - w * d13c_air_permil) / (b + disc.max(0.0).sqrt())
}

/// b4 (‰) at leaf temperature `t_leaf_c` (°C): −9483/T + 23.89 + 2.2 with T in K.
pub fn c4_b4_permil(t_leaf_c: f64) -> f64 {
    -9483.0 / (t_leaf_c + ZERO_C_IN_K) + 23.89 + 2.2
}

/// Fractionation constants of the C4 form, ‰ (leakiness dimensionless).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct C4Fractionations {
    /// Boundary-layer diffusion.
    pub ab: f64,
    /// Diffusion in air through stomata.
    pub a: f64,
    /// Rubisco in the bundle sheath.
    pub b3: f64,
    /// CO2 leaking from the bundle sheath.
    pub s: f64,
    /// Leakiness φ (fraction, 0–1).
    pub leakiness: f64,
}

/// C4 discrimination (‰) from ca, cs, ci (µmol mol⁻¹) and leaf temperature (°C).
pub fn c4_permil(ca: f64, cs: f64, ci: f64, t_leaf_c: f64, fr: &C4Fractionations) -> f64 {
    let b4 = c4_b4_permil(t_leaf_c);
    (fr.ab * (ca - cs) + fr.a * (cs - ci) + (b4 + fr.leakiness * (fr.b3 - fr.s)) * ci) / ca
}
