//! C3 photosynthesis after Farquhar, von Caemmerer & Berry (1980, Planta).
//!
//! Rubisco carboxylates at the smaller of two rates, vc = Vcmax·cc/(cc + Kc(1 + O/Ko)) and
//! vj = J·cc/(4cc + 8Γ*) (NADPH-limited; the ATP-limited 4.5/10.5 form is an option), and for every
//! carboxylation 0.5 oxygenations release CO2, so net assimilation is
//! A = (1 − Γ*/cc)·min(vc, vj) − Rd. Above Γ* this is the usual min(Wc, Wj) − Rd with
//! Wc = Vcmax(cc − Γ*)/(cc + Kc(1 + O/Ko)) and Wj = J(cc − Γ*)/(4cc + 8Γ*); below Γ* the factor is
//! negative and the minimum must be taken of the carboxylation rates, not of the net rates (more
//! light there means more photorespiratory release, never an unbounded one). When set, the
//! triose-phosphate limit Wp = 3·TPU caps gross assimilation above Γ*.
//! J is the smaller root of θJ² − (αI + Jmax)J + αI·Jmax = 0, with α applied to incident PPFD.
//! Kc, Ko, Γ* and Rd follow Arrhenius functions (Bernacchi et al. 2001 or 2002 constants, see
//! [`C3Params::kinetics_25`]); Vcmax, Jmax and gm follow peaked Arrhenius functions (Medlyn et al.
//! 2002 form; acclimated constants of Kattge & Knorr 2007, gm of Bernacchi et al. 2002).
//!
//! Pressure and O2: the constants are given as mole fractions at 101.325 kPa and 210 mmol mol⁻¹ O2.
//! Kc and Ko are partial-pressure constants, so as mole fractions at pressure P they scale with
//! 101.325/P. Γ* = 0.5·O/S(c/o) is proportional to the O2 partial pressure, so as a mole fraction it
//! does not depend on P and scales with O2/210 mmol mol⁻¹ (von Caemmerer 2000).

use super::params::C3Params;
use super::{ElectronLimit, LeafConditions, LeafOptions, Limitation};
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
    /// Mesophyll conductance at leaf temperature (mol m⁻² s⁻¹; infinite: cc = ci).
    pub gm: f64,
    pub rates: [Rate; 3],
    pub n_rates: usize,
}

/// O2 (mmol mol⁻¹) at which Γ*25 is given.
pub const REFERENCE_O2_MMOL_MOL: f64 = 210.0;

/// Γ* (µmol mol⁻¹) at leaf temperature `t_leaf_c` (°C) and O2 `o2_mmol_mol`, from its value at
/// 25 °C and 210 mmol mol⁻¹ and its activation energy (J mol⁻¹). Independent of air pressure.
pub fn gamma_star_at(gamma_star25: f64, ea_j_mol: f64, t_leaf_c: f64, o2_mmol_mol: f64) -> f64 {
    gamma_star25 * arrhenius_factor(ea_j_mol, t_leaf_c) * o2_mmol_mol / REFERENCE_O2_MMOL_MOL
}

/// Kc (µmol mol⁻¹) or Ko (mmol mol⁻¹) as a mole fraction at `pressure_kpa`, from its value at 25 °C
/// and 101.325 kPa and its activation energy (J mol⁻¹).
pub fn michaelis_at(k25: f64, ea_j_mol: f64, t_leaf_c: f64, pressure_kpa: f64) -> f64 {
    k25 * arrhenius_factor(ea_j_mol, t_leaf_c) * STANDARD_PRESSURE_KPA / pressure_kpa
}

/// The temperature terms of a C3 leaf: everything of [`C3Kinetics`] that depends on leaf and growth
/// temperature, pressure and O2 but neither on light nor on the capacity scaling of
/// [`C3Params::with_capacity_scaled`] — so a canopy's sunlit and shaded leaves share them.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C3Temperature {
    kc: f64,
    ko: f64,
    gamma_star: f64,
    rd_factor: f64,
    vcmax_factor: f64,
    jmax_factor: f64,
    gm: f64,
}

/// What [`C3Temperature`] is computed from: leaf temperature (°C), pressure (kPa), O2
/// (mmol mol⁻¹) and the constants of the leaf's temperature responses, resolved for its options
/// and growth temperature. Two leaves with the same inputs, bit for bit, have the same terms.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C3TemperatureInputs {
    t_leaf_c: f64,
    pressure_kpa: f64,
    o2_mmol_mol: f64,
    k25: super::Kinetics25,
    ea_rd: f64,
    vcmax: super::PeakedResponse,
    jmax: super::PeakedResponse,
    gm: f64,
    gm_response: super::PeakedResponse,
}

impl C3TemperatureInputs {
    fn values(&self) -> [f64; 20] {
        let (k, v, j, g) = (&self.k25, &self.vcmax, &self.jmax, &self.gm_response);
        [
            self.t_leaf_c,
            self.pressure_kpa,
            self.o2_mmol_mol,
            k.kc25,
            k.ko25,
            k.gamma_star25,
            k.ea_kc,
            k.ea_ko,
            k.ea_gamma_star,
            self.ea_rd,
            v.ha_j_mol,
            v.hd_j_mol,
            v.ds_j_mol_k,
            j.ha_j_mol,
            j.hd_j_mol,
            j.ds_j_mol_k,
            self.gm,
            g.ha_j_mol,
            g.hd_j_mol,
            g.ds_j_mol_k,
        ]
    }

    /// Whether `other` holds the same inputs, bit for bit.
    pub fn same_as(&self, other: &Self) -> bool {
        self.values()
            .iter()
            .zip(other.values())
            .all(|(a, b)| a.to_bits() == b.to_bits())
    }
}

impl C3Temperature {
    /// The inputs of the temperature terms of `p` under `options` at the conditions `c`.
    pub fn inputs(p: &C3Params, options: &LeafOptions, c: &LeafConditions) -> C3TemperatureInputs {
        let set = options.temperature_set;
        C3TemperatureInputs {
            t_leaf_c: c.t_leaf_c,
            pressure_kpa: c.pressure_kpa,
            o2_mmol_mol: c.o2_mmol_mol,
            k25: p.kinetics_25(),
            ea_rd: p.ea_rd(),
            vcmax: p.vcmax_response(set, c.t_growth_c),
            jmax: p.jmax_response(set, c.t_growth_c),
            gm: p.gm(),
            gm_response: super::PeakedResponse {
                ha_j_mol: p.ha_gm(),
                hd_j_mol: p.hd_gm(),
                ds_j_mol_k: p.ds_gm(),
            },
        }
    }

    /// The temperature terms from their inputs.
    pub fn from_inputs(x: &C3TemperatureInputs) -> Self {
        let (t, k25) = (x.t_leaf_c, &x.k25);
        Self {
            kc: michaelis_at(k25.kc25, k25.ea_kc, t, x.pressure_kpa),
            ko: michaelis_at(k25.ko25, k25.ea_ko, t, x.pressure_kpa),
            gamma_star: gamma_star_at(k25.gamma_star25, k25.ea_gamma_star, t, x.o2_mmol_mol),
            rd_factor: arrhenius_factor(x.ea_rd, t),
            vcmax_factor: x.vcmax.factor(t),
            jmax_factor: x.jmax.factor(t),
            gm: x.gm
                * peaked_arrhenius_factor(
                    x.gm_response.ha_j_mol,
                    x.gm_response.hd_j_mol,
                    x.gm_response.ds_j_mol_k,
                    t,
                ),
        }
    }

    pub fn new(p: &C3Params, options: &LeafOptions, c: &LeafConditions) -> Self {
        Self::from_inputs(&Self::inputs(p, options, c))
    }

    /// Day respiration (µmol m⁻² s⁻¹) of `p` in the dark (no light inhibition).
    pub fn rd_dark(&self, p: &C3Params) -> f64 {
        p.rd25() * self.rd_factor
    }

    /// Mesophyll conductance at leaf temperature (mol m⁻² s⁻¹).
    pub fn gm(&self) -> f64 {
        self.gm
    }
}

impl C3Kinetics {
    /// The kinetics of `p` at the conditions `c` whose temperature terms are `tt`.
    pub fn new(
        p: &C3Params,
        options: &LeafOptions,
        c: &LeafConditions,
        capacity_scale: f64,
        tt: &C3Temperature,
    ) -> Self {
        let ppfd = c.ppfd_umol_m2_s;
        let (kc, ko, gamma_star) = (tt.kc, tt.ko, tt.gamma_star);
        let light_factor = if ppfd > 10.0 {
            p.rd_light_factor()
        } else {
            1.0
        };
        let rd = p.rd25() * tt.rd_factor * light_factor;
        let set = options.temperature_set;
        let vcmax = capacity_scale * p.vcmax25() * tt.vcmax_factor;
        let jmax = capacity_scale * p.jmax25_for(set, c.t_growth_c) * tt.jmax_factor;
        let gm = tt.gm;
        let j = electron_transport(ppfd, jmax, p.alpha(), p.theta());
        let (jdiv, kj) = match options.electron_limit {
            ElectronLimit::Nadph => (4.0, 2.0),
            ElectronLimit::Atp => (4.5, 10.5 / 4.5),
        };
        let wc = Rate {
            v: vcmax,
            k: kc * (1.0 + c.o2_mmol_mol / ko),
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
            let tpu = capacity_scale * p.tpu25() * tt.vcmax_factor;
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
            gm,
            rates,
            n_rates,
        }
    }

    /// Net assimilation (µmol m⁻² s⁻¹) if rate `r` limits, at intercellular CO2 `ci`, and its
    /// derivative dA/dci (µmol m⁻² s⁻¹ per µmol mol⁻¹).
    fn net_rate(&self, r: &Rate, ci: f64) -> (f64, f64) {
        if r.constant {
            (r.v - self.rd, 0.0)
        } else if self.gm.is_infinite() {
            let d = ci + r.k;
            (
                r.v * (ci - self.gamma_star) / d - self.rd,
                r.v * (r.k + self.gamma_star) / (d * d),
            )
        } else {
            // (A + Rd)(cc + k) = v(cc − Γ*) with cc = ci − A/gm: a quadratic in A,
            // A² − A·B + C = 0 with B = gm(ci + k) − Rd + v and C = gm(v(ci − Γ*) − Rd(ci + k)),
            // smaller root. Differentiating it in ci: dA/dci = gm(A − v + Rd)/(2A − B).
            let gm = self.gm;
            let b = gm * (ci + r.k) - self.rd + r.v;
            let a = smaller_root(
                1.0,
                -b,
                gm * (r.v * (ci - self.gamma_star) - self.rd * (ci + r.k)),
            );
            (a, gm * (a - r.v + self.rd) / (2.0 * a - b))
        }
    }

    /// Net assimilation (µmol m⁻² s⁻¹), its derivative dA/dci (µmol m⁻² s⁻¹ per µmol mol⁻¹),
    /// cc (µmol mol⁻¹) and the limiting rate at intercellular CO2 `ci` (µmol mol⁻¹).
    pub fn demand(&self, ci: f64) -> (f64, f64, f64, Limitation) {
        // Every rate's net curve passes through (cc = Γ*, A = −Rd), so all rates agree on the side
        // of Γ* on which cc lies; the Rubisco rate tells which.
        let (a_rubisco, slope) = self.net_rate(&self.rates[0], ci);
        let below = a_rubisco + self.rd < 0.0;
        let mut best = (a_rubisco, slope, self.rates[0].limitation);
        for r in &self.rates[1..self.n_rates] {
            if below && r.constant {
                continue; // TPU caps gross assimilation, of which there is none below Γ*.
            }
            let (a, slope) = self.net_rate(r, ci);
            // Below Γ*, (1 − Γ*/cc) < 0: the smaller carboxylation rate gives the larger A.
            if (below && a > best.0) || (!below && a < best.0) {
                best = (a, slope, r.limitation);
            }
        }
        let cc = if self.gm.is_infinite() {
            ci
        } else {
            ci - best.0 / self.gm
        };
        (best.0, best.1, cc, best.2)
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
