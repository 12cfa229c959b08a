//! Radiation at the canopy: PPFD from shortwave, the diffuse fraction from the clearness index
//! (Erbs, Klein & Duffie 1982, Solar Energy 28: 293–302) and the sunlit/shaded two-leaf partition
//! of absorbed PAR (de Pury & Farquhar 1997, Plant Cell Environ. 20: 537–557).
//!
//! The two-leaf model assumes spherical leaves (beam extinction kb = 0.5/cos Z), black-leaf
//! diffuse extinction kd = 0.78 and a PAR leaf scattering coefficient σ = 0.15. Scattering lowers
//! the effective extinction to kb′ = kb·√(1 − σ) and kd′ = kd·√(1 − σ) = 0.719; the canopy
//! reflects ρcb = 1 − exp(−2ρh·kb/(1 + kb)) of the beam, ρh = (1 − √(1−σ))/(1 + √(1−σ)), and
//! ρcd = 0.036 of the diffuse light. Sunlit leaves at cumulative leaf area l are the fraction
//! Ω·e^{−Ω·kb·l} (Ω the clumping index; Ω = 1 is de Pury & Farquhar's random canopy), so the
//! sunlit leaf area is (1 − e^{−Ω·kb·L})/kb. Clumping multiplies every extinction coefficient by
//! Ω: the gap fraction of a clumped canopy is e^{−Ω·G·L/cos Z} (Nilson 1971, Agric. Meteorol. 8:
//! 25–38; Chen et al. 1997, J. Geophys. Res. 102: 29429–29443; both from memory), applied here to
//! de Pury & Farquhar's extinction coefficients.

use crate::error::{Result, check_input, check_range};

/// Photosynthetic photon flux per joule of global shortwave (µmol J⁻¹): 0.46 of shortwave is PAR
/// and PAR carries about 4.57 µmol J⁻¹, so PPFD ≈ 2.1·SW (common practice, from memory).
pub const PPFD_PER_SHORTWAVE_UMOL_J: f64 = 2.1;

/// Leaf projection for spherical leaves: kb = G/cos Z with G = 0.5.
const SPHERICAL_PROJECTION: f64 = 0.5;

/// PPFD (µmol m⁻² s⁻¹) from global shortwave `sw_w_m2` (W m⁻²) at `umol_per_j` (µmol J⁻¹,
/// default [`PPFD_PER_SHORTWAVE_UMOL_J`]). Small negative night-time readings (sensor offset,
/// down to −100 W m⁻²) give 0.
pub fn ppfd_from_shortwave_umol_m2_s(sw_w_m2: f64, umol_per_j: f64) -> Result<f64> {
    check_input("sw_w_m2", sw_w_m2, -100.0, 2000.0)?;
    check_range("ppfd_per_sw_umol_j", umol_per_j, 1.0, 3.0)?;
    Ok(sw_w_m2.max(0.0) * umol_per_j)
}

/// Clearness index kt = SW / extraterrestrial horizontal irradiance (dimensionless), clamped to
/// [0, 1]; `None` when the extraterrestrial irradiance is zero (the Sun is down).
pub fn clearness_index(sw_w_m2: f64, extraterrestrial_horizontal_w_m2: f64) -> Result<Option<f64>> {
    check_input("sw_w_m2", sw_w_m2, -100.0, 2000.0)?;
    check_input(
        "extraterrestrial_horizontal_w_m2",
        extraterrestrial_horizontal_w_m2,
        0.0,
        1500.0,
    )?;
    if extraterrestrial_horizontal_w_m2 <= 0.0 {
        return Ok(None);
    }
    Ok(Some(
        (sw_w_m2 / extraterrestrial_horizontal_w_m2).clamp(0.0, 1.0),
    ))
}

/// Diffuse fraction of global shortwave (dimensionless) from the clearness index `kt`
/// (Erbs et al. 1982, their hourly correlation): 1 − 0.09·kt up to kt = 0.22, a quartic up to
/// 0.80 and 0.165 above. `kt` must lie in [0, 1].
pub fn diffuse_fraction_erbs_from_kt(kt: f64) -> Result<f64> {
    let kt = check_input("kt", kt, 0.0, 1.0)?;
    Ok(if kt <= 0.22 {
        1.0 - 0.09 * kt
    } else if kt <= 0.80 {
        0.9511 + kt * (-0.1604 + kt * (4.388 + kt * (-16.638 + kt * 12.336)))
    } else {
        0.165
    })
}

/// Diffuse fraction of global shortwave (dimensionless) from measured shortwave `sw_w_m2`
/// (W m⁻²) and the extraterrestrial irradiance on a horizontal surface (W m⁻²) over the same
/// interval (Erbs et al. 1982). When the Sun is down all light is counted as diffuse (1).
pub fn diffuse_fraction_erbs(sw_w_m2: f64, extraterrestrial_horizontal_w_m2: f64) -> Result<f64> {
    match clearness_index(sw_w_m2, extraterrestrial_horizontal_w_m2)? {
        Some(kt) => diffuse_fraction_erbs_from_kt(kt),
        None => Ok(1.0),
    }
}

/// Optical settings of the two-leaf canopy, validated once.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoLeafCanopy {
    scattering: f64,
    kd_black: f64,
    rho_cd: f64,
    clumping: f64,
    min_cos_zenith: f64,
}

impl Default for TwoLeafCanopy {
    /// De Pury & Farquhar's (1997) PAR values: σ = 0.15, kd = 0.78, ρcd = 0.036 (from memory),
    /// no clumping (Ω = 1), and cos Z floored at 0.05 (kb ≤ 10; common practice).
    fn default() -> Self {
        Self {
            scattering: 0.15,
            kd_black: 0.78,
            rho_cd: 0.036,
            clumping: 1.0,
            min_cos_zenith: 0.05,
        }
    }
}

/// Light absorbed by the sunlit and shaded leaves of a canopy in one interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoLeafLight {
    /// Beam extinction coefficient used, kb = 0.5/cos Z with cos Z floored (dimensionless).
    pub kb: f64,
    /// Sunlit leaf area index (m² leaf m⁻² ground).
    pub lai_sunlit_m2_m2: f64,
    /// Shaded leaf area index (m² leaf m⁻² ground).
    pub lai_shaded_m2_m2: f64,
    /// PPFD absorbed per unit sunlit leaf area (µmol m⁻² leaf s⁻¹); 0 when there is no sunlit leaf.
    pub apar_sunlit_leaf_umol_m2_s: f64,
    /// PPFD absorbed per unit shaded leaf area (µmol m⁻² leaf s⁻¹); 0 when there is no shaded leaf.
    pub apar_shaded_leaf_umol_m2_s: f64,
    /// PPFD absorbed by all sunlit leaves (µmol m⁻² ground s⁻¹).
    pub apar_sunlit_ground_umol_m2_s: f64,
    /// PPFD absorbed by all shaded leaves (µmol m⁻² ground s⁻¹).
    pub apar_shaded_ground_umol_m2_s: f64,
    /// PPFD absorbed by the canopy (µmol m⁻² ground s⁻¹):
    /// (1 − ρcb)·I_beam·(1 − e^{−Ω·kb′·L}) + (1 − ρcd)·I_diff·(1 − e^{−Ω·kd′·L}).
    pub apar_canopy_umol_m2_s: f64,
}

/// (1 − e^{−k·x})/k, the integral of e^{−k·l} over [0, x]; x itself as k → 0.
fn attenuated_integral(k: f64, x: f64) -> f64 {
    if k * x < 1e-12 {
        x
    } else {
        -(-k * x).exp_m1() / k
    }
}

impl TwoLeafCanopy {
    /// A canopy with leaf scattering coefficient for PAR `scattering` ((0, 0.5]), black-leaf
    /// diffuse extinction `kd_black` ((0, 2]), canopy reflection of diffuse PAR `rho_cd`
    /// ([0, 0.2]), clumping index `clumping` ((0, 1]) and a floor on cos Z `min_cos_zenith`
    /// ([0.01, 0.5]) that caps kb near the horizon (all dimensionless).
    pub fn new(
        scattering: f64,
        kd_black: f64,
        rho_cd: f64,
        clumping: f64,
        min_cos_zenith: f64,
    ) -> Result<Self> {
        let positive = f64::MIN_POSITIVE;
        Ok(Self {
            scattering: check_range("leaf_scattering_par", scattering, positive, 0.5)?,
            kd_black: check_range("kd_black", kd_black, positive, 2.0)?,
            rho_cd: check_range("rho_cd", rho_cd, 0.0, 0.2)?,
            clumping: check_range("clumping", clumping, positive, 1.0)?,
            min_cos_zenith: check_range("min_cos_zenith", min_cos_zenith, 0.01, 0.5)?,
        })
    }

    /// Clumping index Ω (dimensionless).
    pub fn clumping(&self) -> f64 {
        self.clumping
    }

    /// Diffuse extinction coefficient with scattering, kd′ = kd·√(1 − σ) (dimensionless).
    pub fn kd_scattered(&self) -> f64 {
        self.kd_black * (1.0 - self.scattering).sqrt()
    }

    /// Reflection coefficient of a canopy of horizontal leaves, ρh = (1 − √(1−σ))/(1 + √(1−σ)).
    pub fn rho_horizontal(&self) -> f64 {
        let s = (1.0 - self.scattering).sqrt();
        (1.0 - s) / (1.0 + s)
    }

    /// Beam extinction coefficient kb = 0.5/cos Z for spherical leaves (dimensionless), with cos Z
    /// floored at the canopy's `min_cos_zenith`.
    pub fn kb(&self, cos_zenith: f64) -> Result<f64> {
        let mu = check_input("cos_zenith", cos_zenith, -1.0, 1.0)?;
        Ok(SPHERICAL_PROJECTION / mu.max(self.min_cos_zenith))
    }

    /// Canopy reflection of beam PAR for spherical leaves, ρcb = 1 − exp(−2ρh·kb/(1 + kb)).
    pub fn rho_beam(&self, kb: f64) -> f64 {
        1.0 - (-2.0 * self.rho_horizontal() * kb / (1.0 + kb)).exp()
    }

    /// Partition beam PPFD `ppfd_beam_umol_m2_s` and diffuse PPFD `ppfd_diffuse_umol_m2_s`
    /// (µmol m⁻² ground s⁻¹, above the canopy) between the sunlit and shaded leaves of a canopy of
    /// leaf area index `lai_m2_m2` (m² m⁻², [0, 20]) with the Sun at `cos_zenith`.
    ///
    /// When the Sun is below the horizon (cos Z ≤ 0) there are no sunlit leaves and any beam is
    /// counted as diffuse (forcing files often hold a little twilight light).
    pub fn partition(
        &self,
        ppfd_beam_umol_m2_s: f64,
        ppfd_diffuse_umol_m2_s: f64,
        cos_zenith: f64,
        lai_m2_m2: f64,
    ) -> Result<TwoLeafLight> {
        let mut ib = check_input("ppfd_beam_umol_m2_s", ppfd_beam_umol_m2_s, 0.0, 5000.0)?;
        let mut id = check_input(
            "ppfd_diffuse_umol_m2_s",
            ppfd_diffuse_umol_m2_s,
            0.0,
            5000.0,
        )?;
        let lai = check_input("lai_m2_m2", lai_m2_m2, 0.0, 20.0)?;
        let kb = self.kb(cos_zenith)?;
        let sun_up = cos_zenith > 0.0;
        if !sun_up {
            id += ib;
            ib = 0.0;
        }
        let om = self.clumping;
        let sq = (1.0 - self.scattering).sqrt();
        let kb_s = kb * sq;
        let kd_s = self.kd_scattered();
        let one_minus_sigma = 1.0 - self.scattering;

        // Integrals over cumulative leaf area of products of exponentials, with clumping. Each is
        // computed once, and not at all where the light it multiplies is exactly zero (night, or
        // no beam): a product of a zero with finite positive factors is that zero, sign and all,
        // whatever those factors are, so 1.0 stands in for them there (lai > 0 keeps every
        // integral finite and positive).
        let int = |k: f64| attenuated_integral(om * k, lai);
        let skip_beam = ib == 0.0 && lai > 0.0;
        let skip_diffuse = id == 0.0 && lai > 0.0;
        let rho_cb = if skip_beam { 0.0 } else { self.rho_beam(kb) };
        let int_kb = if sun_up { int(kb) } else { 0.0 };
        let int_kb_s = if skip_beam { 1.0 } else { int(kb_s) };
        let lai_sunlit = if sun_up { om * int_kb } else { 0.0 };
        let lai_shaded = lai - lai_sunlit;

        let canopy_beam = (1.0 - rho_cb) * ib * om * kb_s * int_kb_s;
        let canopy_diffuse =
            (1.0 - self.rho_cd) * id * om * kd_s * if skip_diffuse { 1.0 } else { int(kd_s) };

        // Sunlit leaves: unscattered beam (kb per unit leaf area), plus their share of diffuse
        // and of scattered beam (de Pury & Farquhar 1997, eq. 20, with Ω).
        let (sun_direct, sun_diffuse, sun_scattered) = if sun_up {
            let direct = ib * one_minus_sigma * kb * lai_sunlit;
            let diffuse = (1.0 - self.rho_cd)
                * id
                * om
                * kd_s
                * om
                * if skip_diffuse { 1.0 } else { int(kd_s + kb) };
            let (int_kb_s_kb, int_2kb) = if skip_beam {
                (1.0, 1.0)
            } else {
                (int(kb_s + kb), int(2.0 * kb))
            };
            let total_beam = (1.0 - rho_cb) * ib * om * kb_s * om * int_kb_s_kb;
            let unscattered = ib * one_minus_sigma * om * kb * om * int_2kb;
            (direct, diffuse, total_beam - unscattered)
        } else {
            (0.0, 0.0, 0.0)
        };
        // Shaded leaves: diffuse and scattered beam reaching the leaves not in the sun (eq. 21
        // with Ω), written as "all leaves" minus "sunlit leaves" layer by layer.
        let shade_diffuse = canopy_diffuse - sun_diffuse;
        let shade_scattered = if sun_up {
            let all_total_beam = (1.0 - rho_cb) * ib * om * kb_s * int_kb_s;
            let all_unscattered = ib * one_minus_sigma * om * kb * int_kb;
            all_total_beam - all_unscattered - sun_scattered
        } else {
            0.0
        };

        let sunlit = sun_direct + sun_diffuse + sun_scattered;
        let shaded = shade_diffuse + shade_scattered;
        let per_leaf = |absorbed: f64, area: f64| if area > 0.0 { absorbed / area } else { 0.0 };
        Ok(TwoLeafLight {
            kb,
            lai_sunlit_m2_m2: lai_sunlit,
            lai_shaded_m2_m2: lai_shaded,
            apar_sunlit_leaf_umol_m2_s: per_leaf(sunlit, lai_sunlit),
            apar_shaded_leaf_umol_m2_s: per_leaf(shaded, lai_shaded),
            apar_sunlit_ground_umol_m2_s: sunlit,
            apar_shaded_ground_umol_m2_s: shaded,
            apar_canopy_umol_m2_s: canopy_beam + canopy_diffuse,
        })
    }

    /// Leaf-capacity scaling for the two classes with this canopy's clumping, for the Sun at
    /// `cos_zenith`: as [`capacity_fractions`] with the sunlit fraction Ω·e^{−Ω·kb·l}. Multiply by
    /// the top-of-canopy leaf capacity (e.g. Vcmax) to get each class's capacity per ground area.
    pub fn capacity_fractions(
        &self,
        lai_m2_m2: f64,
        cos_zenith: f64,
        kn: f64,
    ) -> Result<(f64, f64)> {
        let kb = self.kb(cos_zenith)?;
        if cos_zenith > 0.0 {
            clumped_capacity_fractions(lai_m2_m2, kb, kn, self.clumping)
        } else {
            clumped_capacity_fractions(lai_m2_m2, 0.0, kn, 0.0)
        }
    }
}

/// Leaf-capacity scaling for sunlit and shaded leaves (m² leaf m⁻² ground, dimensionless
/// weights) in a canopy of leaf area index `lai_m2_m2` (m² m⁻²) with beam extinction `kb`
/// (dimensionless, ≥ 0) and a nitrogen (capacity) profile e^{−kn·l} declining with cumulative
/// leaf area l at `kn` (per unit LAI, ≥ 0; about 0.3 following de Pury & Farquhar 1997, from
/// memory). With `kb` = 0 every leaf counts as sunlit.
///
/// Sunlit = ∫₀ᴸ e^{−kn·l}·e^{−kb·l} dl = (1 − e^{−(kn+kb)L})/(kn + kb); shaded is the rest of
/// ∫₀ᴸ e^{−kn·l} dl = (1 − e^{−kn·L})/kn, so the two sum to it. Leaf capacity at the top of the
/// canopy times each weight gives that class's capacity per unit ground area.
pub fn capacity_fractions(lai_m2_m2: f64, kb: f64, kn: f64) -> Result<(f64, f64)> {
    clumped_capacity_fractions(lai_m2_m2, kb, kn, 1.0)
}

fn clumped_capacity_fractions(lai: f64, kb: f64, kn: f64, clumping: f64) -> Result<(f64, f64)> {
    let lai = check_input("lai_m2_m2", lai, 0.0, 20.0)?;
    let kb = check_input("kb", kb, 0.0, 1e3)?;
    let kn = check_range("kn", kn, 0.0, 10.0)?;
    let total = attenuated_integral(kn, lai);
    // No sunlit leaves (clumping 0 at night): 0 times the finite, positive integral is 0.
    let sunlit_integral = if clumping == 0.0 && lai > 0.0 {
        1.0
    } else {
        attenuated_integral(kn + clumping * kb, lai)
    };
    let sunlit = (clumping * sunlit_integral).min(total);
    Ok((sunlit, total - sunlit))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_parameters() {
        assert!(TwoLeafCanopy::new(0.15, 0.78, 0.036, 0.0, 0.05).is_err());
        assert!(TwoLeafCanopy::new(f64::NAN, 0.78, 0.036, 1.0, 0.05).is_err());
        let c = TwoLeafCanopy::default();
        assert!(c.partition(-1.0, 100.0, 0.5, 3.0).is_err());
        assert!(c.partition(100.0, 100.0, 0.5, f64::NAN).is_err());
        assert!(diffuse_fraction_erbs_from_kt(1.5).is_err());
    }

    #[test]
    fn night_has_no_sunlit_leaves() {
        let light = TwoLeafCanopy::default()
            .partition(10.0, 5.0, -0.1, 3.0)
            .unwrap();
        assert_eq!(light.lai_sunlit_m2_m2, 0.0);
        assert_eq!(light.apar_sunlit_ground_umol_m2_s, 0.0);
        assert!(light.apar_shaded_ground_umol_m2_s > 0.0);
    }
}
