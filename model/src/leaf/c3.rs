//! C3 photosynthesis after Farquhar, von Caemmerer & Berry (1980, Planta).
//!
//! Gross carboxylation is the hard minimum of the Rubisco-limited rate
//! Wc = Vcmax(cc − Γ*)/(cc + Kc(1 + O/Ko)), the electron-transport-limited rate
//! Wj = J(cc − Γ*)/(4cc + 8Γ*) (NADPH-limited; the ATP-limited 4.5/10.5 form is an option) and, when
//! set, the triose-phosphate-limited rate Wp = 3·TPU; A = min(Wc, Wj, Wp) − Rd.
//! J is the smaller root of θJ² − (αI + Jmax)J + αI·Jmax = 0, with α applied to incident PPFD.
//! Kc, Ko, Γ* and Rd follow Arrhenius functions with the Bernacchi et al. (2001) constants; Vcmax
//! and Jmax follow peaked Arrhenius functions (Medlyn et al. 2002).
//!
//! The kinetic constants are given as mole fractions at 101.325 kPa. Rubisco sees partial pressures,
//! so at another pressure P they are scaled by 101.325/P (the same partial pressure is a larger mole
//! fraction at altitude).

use super::params::C3Params;
use super::{ElectronLimit, Limitation};
use crate::numerics::smaller_root;
use crate::temperature::{arrhenius_factor, peaked_arrhenius_factor};

/// Standard atmospheric pressure (kPa) at which the kinetic constants are given as mole fractions.
pub const STANDARD_PRESSURE_KPA: f64 = 101.325;

/// Electron transport rate J (µmol m⁻² s⁻¹) from incident PPFD (µmol m⁻² s⁻¹), Jmax, quantum yield
/// α and curvature θ: the smaller root of θJ² − (αI + Jmax)J + αI·Jmax = 0.
pub fn electron_transport(ppfd_umol_m2_s: f64, jmax: f64, alpha: f64, theta: f64) -> f64 {
    let ai = alpha * ppfd_umol_m2_s;
    if ai <= 0.0 || jmax <= 0.0 {
        return 0.0;
    }
    smaller_root(theta, -(ai + jmax), ai * jmax)
}

/// A gross rate of the form W = v·(cc − Γ*)/(cc + k), or a constant (k infinite is never used:
/// `constant` marks the TPU limit).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Rate {
    pub v: f64,
    pub k: f64,
    pub constant: bool,
    pub limitation: Limitation,
}

/// Everything about a C3 leaf at one temperature, light and pressure that does not depend on CO2.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C3Kinetics {
    pub gamma_star: f64,
    pub rd: f64,
    pub rates: [Rate; 3],
    pub n_rates: usize,
}

impl C3Kinetics {
    pub fn new(
        p: &C3Params,
        t_leaf_c: f64,
        ppfd: f64,
        pressure_kpa: f64,
        o2_mmol_mol: f64,
        capacity_scale: f64,
        electron: ElectronLimit,
    ) -> Self {
        let pscale = STANDARD_PRESSURE_KPA / pressure_kpa;
        let kc = p.kc25() * arrhenius_factor(p.ea_kc(), t_leaf_c) * pscale;
        let ko = p.ko25() * arrhenius_factor(p.ea_ko(), t_leaf_c) * pscale;
        let gamma_star = p.gamma_star25() * arrhenius_factor(p.ea_gamma_star(), t_leaf_c) * pscale;
        let light_factor = if ppfd > 10.0 {
            p.rd_light_factor()
        } else {
            1.0
        };
        let rd = p.rd25() * arrhenius_factor(p.ea_rd(), t_leaf_c) * light_factor;
        let vcmax = capacity_scale
            * p.vcmax25()
            * peaked_arrhenius_factor(p.ha_vcmax(), p.hd_vcmax(), p.ds_vcmax(), t_leaf_c);
        let jmax = capacity_scale
            * p.jmax25()
            * peaked_arrhenius_factor(p.ha_jmax(), p.hd_jmax(), p.ds_jmax(), t_leaf_c);
        let j = electron_transport(ppfd, jmax, p.alpha(), p.theta());
        let (jdiv, kj) = match electron {
            ElectronLimit::Nadph => (4.0, 2.0),
            ElectronLimit::Atp => (4.5, 10.5 / 4.5),
        };
        let wc = Rate {
            v: vcmax,
            k: kc * (1.0 + o2_mmol_mol / ko),
            constant: false,
            limitation: Limitation::Rubisco,
        };
        let wj = Rate {
            v: j / jdiv,
            k: kj * gamma_star,
            constant: false,
            limitation: if ppfd > 0.0 {
                Limitation::ElectronTransport
            } else {
                Limitation::Dark
            },
        };
        let mut rates = [wc, wj, wj];
        let mut n_rates = 2;
        if p.tpu25().is_finite() {
            // TPU follows Vcmax's temperature response (common practice, from memory).
            let tpu = capacity_scale
                * p.tpu25()
                * peaked_arrhenius_factor(p.ha_vcmax(), p.hd_vcmax(), p.ds_vcmax(), t_leaf_c);
            rates[2] = Rate {
                v: 3.0 * tpu,
                k: 0.0,
                constant: true,
                limitation: Limitation::TriosePhosphate,
            };
            n_rates = 3;
        }
        Self {
            gamma_star,
            rd,
            rates,
            n_rates,
        }
    }

    /// Net assimilation (µmol m⁻² s⁻¹), cc (µmol mol⁻¹) and the limiting rate at intercellular CO2
    /// `ci`, with mesophyll conductance `gm` (mol m⁻² s⁻¹; infinite: cc = ci).
    pub fn demand(&self, ci: f64, gm: f64) -> (f64, f64, Limitation) {
        let mut best = (f64::INFINITY, ci, Limitation::Rubisco);
        for r in &self.rates[..self.n_rates] {
            let a = if r.constant {
                r.v - self.rd
            } else if gm.is_infinite() {
                r.v * (ci - self.gamma_star) / (ci + r.k) - self.rd
            } else {
                // (A + Rd)(cc + k) = v(cc − Γ*) with cc = ci − A/gm: a quadratic in A,
                // A² − A(gm(ci + k) − Rd + v) + gm(v(ci − Γ*) − Rd(ci + k)) = 0, smaller root.
                smaller_root(
                    1.0,
                    -(gm * (ci + r.k) - self.rd + r.v),
                    gm * (r.v * (ci - self.gamma_star) - self.rd * (ci + r.k)),
                )
            };
            if a < best.0 {
                best = (a, ci, r.limitation);
            }
        }
        let cc = if gm.is_infinite() {
            ci
        } else {
            ci - best.0 / gm
        };
        (best.0, cc, best.2)
    }
}

/// Electron-transport-limited gross carboxylation (µmol m⁻² s⁻¹) at chloroplast CO2 `cc` and
/// compensation point `gamma_star` (µmol mol⁻¹): J(cc − Γ*)/(4cc + 8Γ*) or, ATP-limited,
/// J(cc − Γ*)/(4.5cc + 10.5Γ*).
pub fn electron_limited_rate(j: f64, cc: f64, gamma_star: f64, form: ElectronLimit) -> f64 {
    match form {
        ElectronLimit::Nadph => j * (cc - gamma_star) / (4.0 * cc + 8.0 * gamma_star),
        ElectronLimit::Atp => j * (cc - gamma_star) / (4.5 * cc + 10.5 * gamma_star),
    }
}
