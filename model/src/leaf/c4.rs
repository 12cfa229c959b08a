//! C4 photosynthesis after Collatz, Ribas-Carbo & Berry (1992, Aust. J. Plant Physiol.).
//!
//! Three rates: Rubisco capacity Vmax(T) = Vmax25·2^((T−25)/10)/((1 + e^{0.3(13−T)})(1 + e^{0.3(T−36)})),
//! the light-limited rate α·I (α on incident PPFD) and the CO2-limited rate k(T)·ci (k in mol m⁻² s⁻¹,
//! ci as a mole fraction, Q10 of k = 2). They are combined by two non-rectangular hyperbolae:
//! θM² − M(Vmax + αI) + Vmax·αI = 0 and βA² − A(M + k·ci) + M·k·ci = 0 (smaller roots), then
//! A_net = A − Rd with Rd(T) = Rd25·2^((T−25)/10)/(1 + e^{1.3(T−55)}).
//! Constants as in Collatz et al. (1992), recalled from memory.

use super::Limitation;
use super::params::C4Params;
use crate::numerics::smaller_root;
use crate::temperature::q10_factor;

/// Vmax (µmol m⁻² s⁻¹) at `t_leaf_c` (°C) for `vmax25` at 25 °C, Collatz et al. (1992).
pub fn vmax_at(vmax25: f64, t_leaf_c: f64) -> f64 {
    vmax25 * q10_factor(2.0, t_leaf_c, 25.0)
        / ((1.0 + (0.3 * (13.0 - t_leaf_c)).exp()) * (1.0 + (0.3 * (t_leaf_c - 36.0)).exp()))
}

/// Day respiration (µmol m⁻² s⁻¹) at `t_leaf_c` (°C) for `rd25` at 25 °C, Collatz et al. (1992).
pub fn rd_at(rd25: f64, t_leaf_c: f64) -> f64 {
    rd25 * q10_factor(2.0, t_leaf_c, 25.0) / (1.0 + (1.3 * (t_leaf_c - 55.0)).exp())
}

/// The temperature terms of a C4 leaf: the factors of [`vmax_at`], [`rd_at`] and k at leaf
/// temperature, which the capacity scaling of [`C4Params::with_capacity_scaled`] leaves alone — so
/// a canopy's sunlit and shaded leaves share them.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C4Temperature {
    /// 2^((T − 25)/10), shared by Vmax and Rd.
    q10_2: f64,
    vmax_denominator: f64,
    rd_denominator: f64,
    k_factor: f64,
}

/// What [`C4Temperature`] is computed from: leaf temperature (°C) and the Q10 of k.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C4TemperatureInputs {
    t_leaf_c: f64,
    q10_k: f64,
}

impl C4TemperatureInputs {
    /// Whether `other` holds the same inputs, bit for bit.
    pub fn same_as(&self, other: &Self) -> bool {
        self.t_leaf_c.to_bits() == other.t_leaf_c.to_bits()
            && self.q10_k.to_bits() == other.q10_k.to_bits()
    }
}

impl C4Temperature {
    /// The inputs of the temperature terms of `p` at leaf temperature `t_leaf_c` (°C).
    pub fn inputs(p: &C4Params, t_leaf_c: f64) -> C4TemperatureInputs {
        C4TemperatureInputs {
            t_leaf_c,
            q10_k: p.q10_k(),
        }
    }

    pub fn new(p: &C4Params, t_leaf_c: f64) -> Self {
        Self::from_inputs(&Self::inputs(p, t_leaf_c))
    }

    /// The temperature terms from their inputs.
    pub fn from_inputs(x: &C4TemperatureInputs) -> Self {
        let t_leaf_c = x.t_leaf_c;
        Self {
            q10_2: q10_factor(2.0, t_leaf_c, 25.0),
            vmax_denominator: (1.0 + (0.3 * (13.0 - t_leaf_c)).exp())
                * (1.0 + (0.3 * (t_leaf_c - 36.0)).exp()),
            rd_denominator: 1.0 + (1.3 * (t_leaf_c - 55.0)).exp(),
            k_factor: q10_factor(x.q10_k, t_leaf_c, 25.0),
        }
    }

    /// Day respiration (µmol m⁻² s⁻¹) of `p`: [`rd_at`] with these terms.
    pub fn rd(&self, p: &C4Params) -> f64 {
        p.rd25() * self.q10_2 / self.rd_denominator
    }
}

/// A C4 leaf at one temperature and light: everything that does not depend on CO2.
#[derive(Debug, Clone, Copy)]
pub(crate) struct C4Kinetics {
    pub vmax: f64,
    pub light: f64,
    /// k in µmol m⁻² s⁻¹ per µmol mol⁻¹ (numerically equal to mol m⁻² s⁻¹ per mol mol⁻¹).
    pub k: f64,
    pub m: f64,
    pub beta_c: f64,
    pub rd: f64,
}

impl C4Kinetics {
    /// The kinetics of `p` at PPFD `ppfd` (µmol m⁻² s⁻¹) with the temperature terms `tt`.
    pub fn new(p: &C4Params, ppfd: f64, capacity_scale: f64, tt: &C4Temperature) -> Self {
        let vmax = capacity_scale * (p.vmax25() * tt.q10_2 / tt.vmax_denominator);
        let light = p.alpha() * ppfd.max(0.0);
        let m = smaller_root(p.theta(), -(vmax + light), vmax * light);
        Self {
            vmax,
            light,
            k: capacity_scale * p.k25() * tt.k_factor,
            m,
            beta_c: p.beta_c(),
            rd: tt.rd(p),
        }
    }

    /// Net assimilation (µmol m⁻² s⁻¹), its derivative dA/dci (µmol m⁻² s⁻¹ per µmol mol⁻¹)
    /// and the limiting rate at intercellular CO2 `ci` (µmol mol⁻¹).
    pub fn demand(&self, ci: f64) -> (f64, f64, Limitation) {
        let kc = self.k * ci.max(0.0);
        let b = self.m + kc;
        let gross = smaller_root(self.beta_c, -b, self.m * kc);
        // Differentiating βA² − A(M + kc) + M·kc = 0 in kc: dA/dkc = (A − M)/(2βA − (M + kc)).
        let slope = if ci > 0.0 {
            self.k * (gross - self.m) / (2.0 * self.beta_c * gross - b)
        } else {
            0.0
        };
        let lim = if self.light <= 0.0 {
            Limitation::Dark
        } else if kc <= self.light.min(self.vmax) {
            Limitation::Co2
        } else if self.light <= self.vmax {
            Limitation::Light
        } else {
            Limitation::Rubisco
        };
        (gross - self.rd, slope, lim)
    }
}
