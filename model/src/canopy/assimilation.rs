//! Canopy assimilation and discrimination of one pathway with the sunlit/shaded two-leaf scheme of
//! de Pury & Farquhar (1997, Plant Cell Environ.).
//!
//! Each class (sunlit, shaded) is one leaf at the class's mean absorbed PPFD and mean capacity, both
//! per unit leaf area; the canopy sums class × leaf area. The leaf model applies its quantum yield to
//! *incident* PPFD, so absorbed PPFD is divided by the leaf absorptance (1 − σ) before the leaf sees
//! it. Leaf temperature is the air temperature (no energy balance).
//!
//! Flux weighting: the canopy Δ is Σ Aᵢ·Δᵢ / Σ Aᵢ over the classes with net assimilation Aᵢ > 0 —
//! never an unweighted mean. A class that fixes no carbon (A ≤ 0: in the dark, below its light
//! compensation point, or with stomata shut because its stomatal ci lies below its CO2
//! compensation point) books neither GPP nor weight for Δ.

use crate::canopy::radiation::{TwoLeafCanopy, TwoLeafLight};
use crate::error::{Result, check_input, check_range};
use crate::leaf::{
    LeafConditions, LeafModel, LeafOptions, LeafState, LeafTemperature, SharedTemperature,
};

/// Settings of the canopy of one pathway.
#[derive(Debug, Clone, PartialEq)]
pub struct CanopySettings {
    radiation: TwoLeafCanopy,
    kn: f64,
    leaf_absorptance: f64,
}

impl CanopySettings {
    /// A canopy with its radiation scheme, the extinction of leaf capacity with depth `kn`
    /// (per unit LAI, [0, 2]; about 0.3 after de Pury & Farquhar 1997, from memory) and the leaf
    /// absorptance of PAR (dimensionless, (0, 1]; 1 − σ = 0.85 for σ = 0.15).
    pub fn new(radiation: TwoLeafCanopy, kn: f64, leaf_absorptance: f64) -> Result<Self> {
        Ok(Self {
            radiation,
            kn: check_range("kn", kn, 0.0, 2.0)?,
            leaf_absorptance: check_range("leaf_absorptance", leaf_absorptance, 0.01, 1.0)?,
        })
    }

    /// The radiation scheme.
    pub fn radiation(&self) -> &TwoLeafCanopy {
        &self.radiation
    }

    /// Capacity extinction coefficient kn (per unit LAI).
    pub fn kn(&self) -> f64 {
        self.kn
    }
}

/// Drivers of one canopy over one step (leaf area basis inside, ground area outside).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CanopyDrivers {
    /// Conditions of a leaf at the top of the canopy; its PPFD is ignored (the light comes from
    /// `ppfd_beam_umol_m2_s` and `ppfd_diffuse_umol_m2_s`).
    pub leaf: LeafConditions,
    /// Beam PPFD above the canopy (µmol m⁻² ground s⁻¹).
    pub ppfd_beam_umol_m2_s: f64,
    /// Diffuse PPFD above the canopy (µmol m⁻² ground s⁻¹).
    pub ppfd_diffuse_umol_m2_s: f64,
    /// Cosine of the solar zenith angle over the step (≤ 0: night).
    pub cos_zenith: f64,
    /// Leaf area index of this canopy where it grows (m² m⁻²).
    pub lai_m2_m2: f64,
}

/// One canopy's fluxes over a step, per m² of the ground it covers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CanopyFlux {
    /// Gross primary production, Σ LAIᵢ·(Aᵢ + Rdᵢ) over classes fixing carbon (µmol m⁻² s⁻¹).
    pub gpp_umol_m2_s: f64,
    /// Net canopy assimilation Σ LAIᵢ·Aᵢ (µmol m⁻² s⁻¹).
    pub a_net_umol_m2_s: f64,
    /// Leaf day respiration Σ LAIᵢ·Rdᵢ (µmol m⁻² s⁻¹).
    pub rd_umol_m2_s: f64,
    /// Assimilation-weighted discrimination (‰); NaN when no class fixes carbon.
    pub discrimination_permil: f64,
    /// Assimilation-weighted ci/ca (dimensionless); NaN when no class fixes carbon.
    pub ci_ca: f64,
    /// Canopy stomatal conductance to H2O Σ LAIᵢ·gsᵢ (mol m⁻² s⁻¹).
    pub gs_canopy_mol_m2_s: f64,
    /// Sunlit leaf area (m² m⁻²).
    pub lai_sunlit_m2_m2: f64,
    /// PAR absorbed by the canopy (µmol m⁻² s⁻¹).
    pub apar_umol_m2_s: f64,
}

impl CanopyFlux {
    /// A canopy that is absent (no leaves): zero fluxes, NaN ratios.
    pub fn empty() -> Self {
        Self {
            gpp_umol_m2_s: 0.0,
            a_net_umol_m2_s: 0.0,
            rd_umol_m2_s: 0.0,
            discrimination_permil: f64::NAN,
            ci_ca: f64::NAN,
            gs_canopy_mol_m2_s: 0.0,
            lai_sunlit_m2_m2: 0.0,
            apar_umol_m2_s: 0.0,
        }
    }
}

/// The light of one canopy over one step: the two-leaf partition and the capacity weights of its
/// sunlit and shaded leaves, with the inputs they came from. It depends on the canopy's optics,
/// kn, LAI, the light above the canopy and the Sun's height only, so steps or runs that share
/// those can share it (see [`canopy_step_lit`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CanopyLight {
    radiation: TwoLeafCanopy,
    kn: f64,
    ppfd_beam_umol_m2_s: f64,
    ppfd_diffuse_umol_m2_s: f64,
    cos_zenith: f64,
    lai_m2_m2: f64,
    light: TwoLeafLight,
    capacity: (f64, f64),
}

impl CanopyLight {
    /// The light of the canopy `settings` under the drivers `d` (their leaf conditions aside).
    pub fn new(settings: &CanopySettings, d: &CanopyDrivers) -> Result<Self> {
        let light = settings.radiation.partition(
            d.ppfd_beam_umol_m2_s,
            d.ppfd_diffuse_umol_m2_s,
            d.cos_zenith,
            d.lai_m2_m2,
        )?;
        let capacity =
            settings
                .radiation
                .capacity_fractions(d.lai_m2_m2, d.cos_zenith, settings.kn)?;
        Ok(Self {
            radiation: settings.radiation,
            kn: settings.kn,
            ppfd_beam_umol_m2_s: d.ppfd_beam_umol_m2_s,
            ppfd_diffuse_umol_m2_s: d.ppfd_diffuse_umol_m2_s,
            cos_zenith: d.cos_zenith,
            lai_m2_m2: d.lai_m2_m2,
            light,
            capacity,
        })
    }

    /// Whether this is the light of `settings` under `d` (same inputs, bit for bit).
    pub fn fits(&self, settings: &CanopySettings, d: &CanopyDrivers) -> bool {
        let same = |a: f64, b: f64| a.to_bits() == b.to_bits();
        self.radiation == settings.radiation
            && same(self.kn, settings.kn)
            && same(self.ppfd_beam_umol_m2_s, d.ppfd_beam_umol_m2_s)
            && same(self.ppfd_diffuse_umol_m2_s, d.ppfd_diffuse_umol_m2_s)
            && same(self.cos_zenith, d.cos_zenith)
            && same(self.lai_m2_m2, d.lai_m2_m2)
    }
}

/// Runs the canopy of one pathway over one step.
pub fn canopy_step(
    leaf: &LeafModel,
    options: &LeafOptions,
    settings: &CanopySettings,
    d: &CanopyDrivers,
) -> Result<CanopyFlux> {
    canopy_step_lit(leaf, options, settings, d, None)
}

/// [`canopy_step`] with the canopy's light computed beforehand: `light` is used when it
/// [fits](CanopyLight::fits) these settings and drivers, and computed afresh otherwise, so the
/// result is the same either way.
///
/// Both leaf classes share the leaf's temperature terms, and a class without light is not
/// solved where the dark leaf has a closed form ([`LeafModel::dark`]): the fluxes are those of
/// the solver to the bit.
pub fn canopy_step_lit(
    leaf: &LeafModel,
    options: &LeafOptions,
    settings: &CanopySettings,
    d: &CanopyDrivers,
    light: Option<&CanopyLight>,
) -> Result<CanopyFlux> {
    canopy_step_shared(leaf, options, settings, d, light, None)
}

/// [`canopy_step_lit`] with the leaf's temperature terms computed beforehand
/// ([`LeafModel::shared_temperature`], e.g. once for many runs of a site): `temperature` is used
/// when it was computed from the same inputs as this leaf's at these drivers, bit for bit, and the
/// terms are computed afresh otherwise, so the result is the same either way.
pub fn canopy_step_shared(
    leaf: &LeafModel,
    options: &LeafOptions,
    settings: &CanopySettings,
    d: &CanopyDrivers,
    light: Option<&CanopyLight>,
    temperature: Option<&SharedTemperature>,
) -> Result<CanopyFlux> {
    canopy_step_in(
        leaf,
        &mut leaf.clone(),
        options,
        settings,
        d,
        light,
        temperature,
    )
}

/// [`canopy_step_shared`] with `class_leaf` as the working copy of `leaf` that each leaf class
/// gets its capacity in ([`LeafModel::adjust_from`]): it must be `leaf` but for the boundary
/// layer and the capacity, e.g. a copy of it kept from step to step, so that a step copies no
/// leaf.
pub(crate) fn canopy_step_in(
    leaf: &LeafModel,
    class_leaf: &mut LeafModel,
    options: &LeafOptions,
    settings: &CanopySettings,
    d: &CanopyDrivers,
    light: Option<&CanopyLight>,
    temperature: Option<&SharedTemperature>,
) -> Result<CanopyFlux> {
    if d.lai_m2_m2 <= 0.0 {
        return Ok(CanopyFlux::empty());
    }
    let own;
    let lit = match light {
        Some(l) if l.fits(settings, d) => l,
        _ => {
            own = CanopyLight::new(settings, d)?;
            &own
        }
    };
    let light = &lit.light;
    let (cap_sun, cap_shade) = lit.capacity;
    let classes = [
        (
            light.lai_sunlit_m2_m2,
            light.apar_sunlit_leaf_umol_m2_s,
            cap_sun,
        ),
        (
            light.lai_shaded_m2_m2,
            light.apar_shaded_leaf_umol_m2_s,
            cap_shade,
        ),
    ];
    let mut out = CanopyFlux {
        lai_sunlit_m2_m2: light.lai_sunlit_m2_m2,
        apar_umol_m2_s: light.apar_canopy_umol_m2_s,
        ..CanopyFlux::empty()
    };
    let (mut w_sum, mut wd_sum, mut wc_sum) = (0.0, 0.0, 0.0);
    // The conditions differ between the classes only in PPFD: they are validated in full once.
    let mut terms: Option<LeafTemperature> = None;
    for (lai, apar_leaf, capacity) in classes {
        if lai <= 1e-9 {
            continue;
        }
        // `leaf.with_capacity_scaled(..)`, in place.
        class_leaf.adjust_from(leaf, None, Some((capacity / lai).max(1e-6)))?;
        let scaled = &*class_leaf;
        let c = LeafConditions {
            ppfd_umol_m2_s: (apar_leaf / settings.leaf_absorptance).min(3000.0),
            ..d.leaf
        };
        if terms.is_none() {
            c.validate()?;
            let inputs = leaf.temperature_inputs(options, &c);
            terms = Some(
                temperature
                    .and_then(|t| t.terms_for(&inputs))
                    .unwrap_or_else(|| inputs.terms()),
            );
        } else {
            let (name, _, lo, hi) = LeafConditions::RANGES[1];
            check_input(name, c.ppfd_umol_m2_s, lo, hi)?;
        }
        let tt = terms.as_ref().expect("set above");
        let dark = if c.ppfd_umol_m2_s == 0.0 {
            scaled.dark(options, &c, tt)
        } else {
            None
        };
        let (a_net, rd, g_s) = match dark {
            Some(flux) => flux,
            None => {
                let s: LeafState = scaled.solve_at(options, &c, tt)?;
                if s.a_net > 0.0 && s.discrimination.is_finite() {
                    out.gpp_umol_m2_s += lai * (s.a_net + s.rd);
                    let w = lai * s.a_net;
                    w_sum += w;
                    wd_sum += w * s.discrimination;
                    wc_sum += w * s.ci_ca;
                }
                (s.a_net, s.rd, s.g_s)
            }
        };
        out.a_net_umol_m2_s += lai * a_net;
        out.rd_umol_m2_s += lai * rd;
        out.gs_canopy_mol_m2_s += lai * g_s;
    }
    if w_sum > 0.0 {
        out.discrimination_permil = wd_sum / w_sum;
        out.ci_ca = wc_sum / w_sum;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::canopy::radiation::TwoLeafCanopy;
    use crate::leaf::{C3Params, C4Params, Pathway};

    /// Leaves whose dark state has a closed form, and one (C3, finite gm, g0 > 0) that has none.
    fn leaves() -> Vec<LeafModel> {
        let c3 = |o: &[(&str, f64)]| LeafModel::C3(C3Params::with_overrides(o.to_vec()).unwrap());
        let c4 = |o: &[(&str, f64)]| LeafModel::C4(C4Params::with_overrides(o.to_vec()).unwrap());
        vec![
            c3(&[]),
            c3(&[("gb", 1.5)]),
            c3(&[("gm", f64::INFINITY)]),
            c3(&[("gm", f64::INFINITY), ("g0", 0.02), ("gb", 0.8)]),
            c3(&[("g0", 0.02)]),
            c3(&[("tpu25", 8.0), ("rd25", 0.0)]),
            c4(&[]),
            c4(&[("g0", 0.03), ("gb", 2.0)]),
            c4(&[("rd25", 0.0), ("g0", 0.01)]),
        ]
    }

    /// The dark shortcut gives the root search's A, Rd and gs bit for bit (the promise of
    /// `LeafModel::dark`; common practice: compare a shortcut with the path it replaces).
    #[test]
    fn dark_leaves_match_the_solver_to_the_bit() {
        let options = LeafOptions::default();
        let mut closed = 0;
        for leaf in leaves() {
            for t in [-1.5, 4.0, 17.3, 29.9, 41.0] {
                for (ca, vpd, beta) in [(425.0, 0.4, 1.0), (380.0, 2.5, 0.3), (900.0, 0.05, 0.0)] {
                    let c = LeafConditions {
                        t_leaf_c: t,
                        ppfd_umol_m2_s: 0.0,
                        vpd_kpa: vpd,
                        ca_umol_mol: ca,
                        soil_beta: beta,
                        t_growth_c: t + 3.0,
                        ..LeafConditions::default()
                    };
                    for scale in [1.0, 0.37] {
                        let scaled = leaf.with_capacity_scaled(scale);
                        let tt = leaf.temperature_inputs(&options, &c).terms();
                        let s = scaled.solve(&options, &c).unwrap();
                        if let Some((a, rd, gs)) = scaled.dark(&options, &c, &tt) {
                            closed += 1;
                            assert_eq!(a.to_bits(), s.a_net.to_bits(), "{leaf:?} at {c:?}");
                            assert_eq!(rd.to_bits(), s.rd.to_bits(), "{leaf:?} at {c:?}");
                            assert_eq!(gs.to_bits(), s.g_s.to_bits(), "{leaf:?} at {c:?}");
                        } else {
                            // Only a C3 leaf with finite gm and g0 > 0 needs the search.
                            assert_eq!(scaled.pathway(), Pathway::C3);
                            assert!(scaled.get("gm").unwrap().is_finite());
                            assert!(scaled.get("g0").unwrap() > 0.0);
                        }
                    }
                }
            }
        }
        assert!(closed > 0);
    }

    /// A light computed for other drivers or another canopy is not used: the result equals
    /// `canopy_step`'s (common practice).
    #[test]
    fn a_light_that_does_not_fit_is_recomputed() {
        let options = LeafOptions::default();
        let settings = CanopySettings::new(TwoLeafCanopy::default(), 0.3, 0.85).unwrap();
        let other = CanopySettings::new(
            TwoLeafCanopy::new(0.15, 0.78, 0.036, 0.6, 0.05).unwrap(),
            0.3,
            0.85,
        )
        .unwrap();
        let d = |ppfd: f64, cos_zenith: f64, lai: f64| CanopyDrivers {
            leaf: LeafConditions::default(),
            ppfd_beam_umol_m2_s: 0.6 * ppfd,
            ppfd_diffuse_umol_m2_s: 0.4 * ppfd,
            cos_zenith,
            lai_m2_m2: lai,
        };
        for leaf in leaves() {
            let here = d(1200.0, 0.7, 2.5);
            let expected = canopy_step(&leaf, &options, &settings, &here).unwrap();
            for (s, drivers) in [
                (&settings, here),
                (&settings, d(1200.0, 0.7, 2.4)),
                (&settings, d(1100.0, 0.7, 2.5)),
                (&settings, d(1200.0, 0.6, 2.5)),
                (&other, here),
            ] {
                let light = CanopyLight::new(s, &drivers).unwrap();
                assert_eq!(
                    light.fits(&settings, &here),
                    s == &settings && drivers == here
                );
                let got = canopy_step_lit(&leaf, &options, &settings, &here, Some(&light)).unwrap();
                assert_eq!(format!("{got:?}"), format!("{expected:?}"));
            }
        }
    }

    /// Temperature terms computed for another leaf or other conditions are not used, and those of
    /// the same leaf are: the result equals `canopy_step`'s either way (common practice).
    #[test]
    fn shared_temperature_terms_are_used_only_where_they_fit() {
        let options = LeafOptions::default();
        let settings = CanopySettings::new(TwoLeafCanopy::default(), 0.3, 0.85).unwrap();
        let leaf_at = |t: f64| LeafConditions {
            t_leaf_c: t,
            t_growth_c: t - 2.0,
            ..LeafConditions::default()
        };
        let d = CanopyDrivers {
            leaf: leaf_at(27.0),
            ppfd_beam_umol_m2_s: 700.0,
            ppfd_diffuse_umol_m2_s: 300.0,
            cos_zenith: 0.6,
            lai_m2_m2: 2.2,
        };
        for leaf in leaves() {
            let expected = canopy_step(&leaf, &options, &settings, &d).unwrap();
            let other_leaf = match &leaf {
                LeafModel::C3(p) => {
                    let mut p = p.clone();
                    p.set("ea_rd", 50_000.0).unwrap();
                    LeafModel::C3(p)
                }
                LeafModel::C4(p) => {
                    let mut p = p.clone();
                    p.set("q10_k", 1.8).unwrap();
                    LeafModel::C4(p)
                }
            };
            let other_pathway = LeafModel::default_for(match leaf.pathway() {
                Pathway::C3 => Pathway::C4,
                Pathway::C4 => Pathway::C3,
            });
            let own = leaf.shared_temperature(&options, &d.leaf);
            let inputs = leaf.temperature_inputs(&options, &d.leaf);
            assert!(own.terms_for(&inputs).is_some());
            for (shared, fits) in [
                (own, true),
                (leaf.shared_temperature(&options, &leaf_at(27.5)), false),
                (other_leaf.shared_temperature(&options, &d.leaf), false),
                (other_pathway.shared_temperature(&options, &d.leaf), false),
                // A capacity scaling of the leaf shares its terms.
                (
                    leaf.with_capacity_scaled(0.4)
                        .shared_temperature(&options, &d.leaf),
                    true,
                ),
            ] {
                assert_eq!(shared.terms_for(&inputs).is_some(), fits, "{leaf:?}");
                let got = canopy_step_shared(&leaf, &options, &settings, &d, None, Some(&shared))
                    .unwrap();
                assert_eq!(format!("{got:?}"), format!("{expected:?}"));
            }
        }
    }
}
