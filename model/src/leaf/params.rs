//! Validated leaf parameter sets, one per pathway, each parameter with its default, unit, valid range
//! and source. The same names serve `isodisc leaf --set NAME=VALUE`, the site file's vegetation
//! blocks and ensemble specs.

use super::{C3Form, LeafOptions, TemperatureSet};
use crate::error::{ModelError, Result, check_range, closest_name};
use crate::temperature::{
    KK07_HA_JMAX_J_MOL, KK07_HA_VCMAX_J_MOL, kattge_knorr_ds_jmax, kattge_knorr_ds_vcmax,
    kattge_knorr_jv_ratio, peaked_arrhenius_factor,
};

/// Description of one parameter: what `--list-params` prints and what validation uses.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParamSpec {
    /// Name used by `--set`, site files and ensemble specs.
    pub name: &'static str,
    /// Default value (NaN where the default depends on a setting: see `description`).
    pub default: f64,
    /// Unit of the value.
    pub unit: &'static str,
    /// Inclusive lower bound.
    pub min: f64,
    /// Inclusive upper bound (may be infinite).
    pub max: f64,
    /// Where the default comes from.
    pub source: &'static str,
    /// What the parameter is.
    pub description: &'static str,
}

/// Generates a parameter struct with private fields, getters, a table of specs, `get` and a validating
/// `set`, so the table and the struct cannot drift apart.
macro_rules! parameter_set {
    (
        $(#[$meta:meta])*
        $name:ident {
            $( $(#[$fmeta:meta])* $field:ident = $default:expr, $unit:expr, [$min:expr, $max:expr], $source:expr, $desc:expr; )*
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq)]
        pub struct $name {
            $( $field: f64, )*
        }

        impl Default for $name {
            fn default() -> Self {
                Self { $( $field: $default, )* }
            }
        }

        impl $name {
            /// Every parameter of this set with default, unit, range and source.
            pub const SPECS: &'static [ParamSpec] = &[
                $( ParamSpec {
                    name: stringify!($field),
                    default: $default,
                    unit: $unit,
                    min: $min,
                    max: $max,
                    source: $source,
                    description: $desc,
                }, )*
            ];

            $(
                $(#[$fmeta])*
                #[doc = concat!($desc, " (", $unit, ").")]
                #[inline]
                pub fn $field(&self) -> f64 {
                    self.$field
                }
            )*

            /// The value of the parameter called `name`, if there is one.
            pub fn get(&self, name: &str) -> Option<f64> {
                match name {
                    $( stringify!($field) => Some(self.$field), )*
                    _ => None,
                }
            }

            /// Sets the parameter called `name` after checking its range. Unknown names are errors
            /// that suggest the closest known name.
            pub fn set(&mut self, name: &str, value: f64) -> Result<()> {
                let spec = Self::SPECS.iter().find(|s| s.name == name).ok_or_else(|| {
                    ModelError::UnknownParameter {
                        name: name.to_string(),
                        suggestion: closest_name(name, Self::SPECS.iter().map(|s| s.name)),
                    }
                })?;
                // `inf` is a value where the range's upper end is infinite (a conductance that
                // imposes no resistance, a limit that is off).
                let value = if value == f64::INFINITY && spec.max == f64::INFINITY {
                    value
                } else {
                    check_range(spec.name, value, spec.min, spec.max)?
                };
                match name {
                    $( stringify!($field) => self.$field = value, )*
                    _ => unreachable!("name was found in SPECS"),
                }
                Ok(())
            }

            /// Defaults with the given overrides applied in order.
            pub fn with_overrides<'a>(
                overrides: impl IntoIterator<Item = (&'a str, f64)>,
            ) -> Result<Self> {
                let mut p = Self::default();
                for (name, value) in overrides {
                    p.set(name, value)?;
                }
                Ok(p)
            }

            /// These parameters with the boundary-layer conductance to H2O `gb`
            /// (mol m⁻² s⁻¹), checked against [`BOUNDARY_LAYER_RANGE`] as [`Self::set`] checks
            /// it, without looking the name up (a site sets it from the wind every step).
            pub fn with_boundary_layer(&self, gb: f64) -> Result<Self> {
                let (lo, hi) = BOUNDARY_LAYER_RANGE;
                let gb = if gb == hi { gb } else { check_range("gb", gb, lo, hi)? };
                Ok(Self { gb, ..self.clone() })
            }

            /// Sets the boundary-layer conductance in place to `gb`, checked as in
            /// [`Self::with_boundary_layer`] (the value is left alone on error), or to `base`'s
            /// without one.
            pub(crate) fn set_boundary_layer_from(
                &mut self,
                base: &Self,
                gb: Option<f64>,
            ) -> Result<()> {
                self.gb = match gb {
                    Some(gb) => {
                        let (lo, hi) = BOUNDARY_LAYER_RANGE;
                        if gb == hi { gb } else { check_range("gb", gb, lo, hi)? }
                    }
                    None => base.gb,
                };
                Ok(())
            }
        }
    };
}

/// Range of the boundary-layer conductance `gb` (mol m⁻² s⁻¹) in both parameter tables.
pub const BOUNDARY_LAYER_RANGE: (f64, f64) = (0.01, INF);

const BERNACCHI01: &str = "Bernacchi et al. 2001, Plant Cell Environ.";
const BERNACCHI02: &str = "Bernacchi et al. 2002, Plant Physiol. (from memory)";
const FARQUHAR82: &str = "Farquhar, O'Leary & Berry 1982, Aust. J. Plant Physiol.";
const KINETICS_AUTO: &str = "auto: chloroplast (cc) basis of Bernacchi et al. 2002 (from memory) with a finite gm, \
     intercellular (ci) basis of Bernacchi et al. 2001 with gm = inf";
const ACCLIMATED_AUTO: &str = "auto: Kattge & Knorr 2007, Plant Cell Environ. (from memory) for the acclimated \
     temperature set; Medlyn et al. 2002 / Bernacchi et al. 2001 for the fixed set";
const NAN: f64 = f64::NAN;
const INF: f64 = f64::INFINITY;

parameter_set! {
    /// C3 leaf parameters: Farquhar–von Caemmerer–Berry photosynthesis with Bernacchi et al.
    /// kinetics, a finite mesophyll conductance, Medlyn stomata and the C3 discrimination constants.
    /// Parameters whose default is NaN ("auto") take a value that depends on a setting: see the
    /// resolving methods ([`C3Params::kinetics_25`], [`C3Params::jmax25_for`], ...).
    C3Params {
        vcmax25 = 60.0, "umol m-2 s-1", [1.0, 400.0],
            "typical of C3 leaves, 40-80 across plant types (Kattge et al. 2009, Global Change Biol.; from memory)",
            "maximum carboxylation rate at 25 degC";
        jmax25 = NAN, "umol m-2 s-1", [1.0, 800.0],
            "auto: (2.59 - 0.035 t_growth) x vcmax25 for the acclimated set (Kattge & Knorr 2007, from memory); 1.67 x vcmax25 for the fixed set (Medlyn et al. 2002, from memory)",
            "maximum electron transport rate at 25 degC";
        rd25 = 0.9, "umol m-2 s-1", [0.0, 30.0], "0.015 x default vcmax25 (from memory)",
            "day respiration at 25 degC";
        rd_light_factor = 1.0, "-", [0.0, 1.0], "no light inhibition (default)",
            "fraction of rd25 respired in the light (PPFD > 10)";
        tpu25 = INF, "umol m-2 s-1", [0.1, INF], "off by default",
            "triose-phosphate use rate at 25 degC (limit Wp = 3 TPU); inf disables it";
        theta = 0.7, "-", [0.0, 0.999], "from memory; Medlyn et al. 2002 used 0.9",
            "curvature of the light response of J";
        alpha = 0.3, "mol e- (mol photons)-1", [0.01, 0.6], "from memory (Medlyn et al. 2002 also 0.3)",
            "quantum yield of electron transport on incident PPFD";
        kc25 = NAN, "umol mol-1", [1.0, 2000.0], KINETICS_AUTO,
            "Michaelis constant of Rubisco for CO2 at 25 degC and 101.325 kPa (auto: 272.38 cc, 404.9 ci)";
        ko25 = NAN, "mmol mol-1", [1.0, 2000.0], KINETICS_AUTO,
            "Michaelis constant of Rubisco for O2 at 25 degC and 101.325 kPa (auto: 165.82 cc, 278.4 ci)";
        gamma_star25 = NAN, "umol mol-1", [1.0, 200.0], KINETICS_AUTO,
            "CO2 compensation point without day respiration at 25 degC and 210 mmol mol-1 O2 (auto: 37.43 cc, 42.75 ci)";
        ea_kc = NAN, "J mol-1", [0.0, 300000.0], KINETICS_AUTO,
            "activation energy of kc (auto: 80990 cc, 79430 ci)";
        ea_ko = NAN, "J mol-1", [0.0, 300000.0], KINETICS_AUTO,
            "activation energy of ko (auto: 23720 cc, 36380 ci)";
        ea_gamma_star = NAN, "J mol-1", [0.0, 300000.0], KINETICS_AUTO,
            "activation energy of gamma_star (auto: 24420 cc, 37830 ci)";
        ea_rd = 46390.0, "J mol-1", [0.0, 300000.0], BERNACCHI01, "activation energy of rd";
        ha_vcmax = NAN, "J mol-1", [1000.0, 300000.0], ACCLIMATED_AUTO,
            "activation energy of vcmax, peaked Arrhenius (auto: 71513 acclimated, 65330 fixed)";
        hd_vcmax = 200000.0, "J mol-1", [1000.0, 1000000.0],
            "Kattge & Knorr 2007 and Medlyn et al. 2002 (from memory)",
            "deactivation energy of vcmax";
        ds_vcmax = NAN, "J mol-1 K-1", [400.0, 800.0], ACCLIMATED_AUTO,
            "entropy term of vcmax (auto: 668.39 - 1.07 t_growth acclimated, 650 fixed)";
        ha_jmax = NAN, "J mol-1", [1000.0, 300000.0], ACCLIMATED_AUTO,
            "activation energy of jmax, peaked Arrhenius (auto: 49884 acclimated, 43540 fixed)";
        hd_jmax = 200000.0, "J mol-1", [1000.0, 1000000.0],
            "Kattge & Knorr 2007 and Medlyn et al. 2002 (from memory)",
            "deactivation energy of jmax";
        ds_jmax = NAN, "J mol-1 K-1", [400.0, 800.0], ACCLIMATED_AUTO,
            "entropy term of jmax (auto: 659.70 - 0.75 t_growth acclimated, 650 fixed)";
        g0 = 0.0, "mol m-2 s-1", [0.0, 1.0], "Medlyn et al. 2011 fits are often near 0 (common practice)",
            "residual stomatal conductance to H2O";
        g1 = 4.1, "kPa^0.5", [0.01, 20.0], "angiosperm trees, Lin et al. 2015, Nature Clim. Change (from memory)",
            "slope of the Medlyn et al. 2011 stomatal model";
        gb = INF, "mol m-2 s-1", [BOUNDARY_LAYER_RANGE.0, BOUNDARY_LAYER_RANGE.1], "none (infinite) for a single leaf; site runs with wind compute it",
            "leaf boundary-layer conductance to H2O (CO2: gb/1.37)";
        gm = 0.25, "mol m-2 s-1", [0.01, INF],
            "0.1-0.5 reported for C3 leaves at 25 degC (Flexas et al. 2008, Plant Cell Environ.; von Caemmerer & Evans 2015; from memory)",
            "mesophyll conductance to CO2 at 25 degC on a mole-fraction basis (cc = ci - A/gm); inf: cc = ci";
        ha_gm = 49600.0, "J mol-1", [1000.0, 300000.0], BERNACCHI02,
            "activation energy of gm (peaked Arrhenius)";
        hd_gm = 437400.0, "J mol-1", [1000.0, 1000000.0], BERNACCHI02, "deactivation energy of gm";
        ds_gm = 1400.0, "J mol-1 K-1", [400.0, 2000.0], BERNACCHI02, "entropy term of gm";
        a = 4.4, "permil", [0.0, 10.0], FARQUHAR82, "fractionation by diffusion in air";
        b = NAN, "permil", [10.0, 40.0],
            "auto: 27 (simple form, Farquhar & Richards 1984) or 29 (comprehensive form with finite gm; Farquhar & Richards 1984, Evans & von Caemmerer 2013, from memory)",
            "fractionation by carboxylation; default depends on the discrimination form";
        ab = 2.9, "permil", [0.0, 10.0], FARQUHAR82, "fractionation in the leaf boundary layer";
        es = 1.1, "permil", [0.0, 5.0], "Farquhar et al. 1982; Evans et al. 1986",
            "fractionation as CO2 dissolves";
        al = 0.7, "permil", [0.0, 5.0], "Farquhar et al. 1982; Evans et al. 1986",
            "fractionation by diffusion in water";
        e = 0.0, "permil", [-20.0, 20.0],
            "0: negligible against the current assimilate (Farquhar et al. 1982); -6 to 0 reported (Ghashghaie et al. 2003, from memory)",
            "fractionation of day respiration against its substrate";
        f = 11.6, "permil", [0.0, 25.0],
            "Lanigan et al. 2008, Plant Physiol. (from memory); 16.2 in Evans & von Caemmerer 2013",
            "fractionation of photorespiration";
    }
}

parameter_set! {
    /// C4 leaf parameters: Collatz, Ribas-Carbo & Berry (1992) photosynthesis, Medlyn stomata and the
    /// Farquhar (1983) C4 discrimination with leakiness.
    C4Params {
        vmax25 = 39.0, "umol m-2 s-1", [1.0, 200.0], "Collatz et al. 1992, Aust. J. Plant Physiol. (from memory)",
            "maximum Rubisco capacity at 25 degC";
        alpha = 0.051, "mol CO2 (mol photons)-1", [0.01, 0.2],
            "0.06 per absorbed photon (C4 grasses 0.052-0.069, Ehleringer & Pearcy 1983, Plant Physiol.; from memory) x leaf absorptance 0.85",
            "initial slope of the light response on incident PPFD";
        k25 = 0.7, "mol m-2 s-1", [0.01, 5.0], "Collatz et al. 1992 (from memory)",
            "initial slope of the CO2 response at 25 degC";
        q10_k = 2.0, "-", [1.0, 4.0], "Collatz et al. 1992 (from memory)", "Q10 of k";
        rd25 = 0.8, "umol m-2 s-1", [0.0, 20.0], "about 0.021 x vmax25, Collatz et al. 1992 (from memory)",
            "day respiration at 25 degC";
        theta = 0.83, "-", [0.0, 0.999], "Collatz et al. 1992 (from memory)",
            "curvature of the light/Rubisco co-limitation";
        beta_c = 0.93, "-", [0.0, 0.999], "Collatz et al. 1992 (from memory)",
            "curvature of the co-limitation with the CO2-limited rate";
        g0 = 0.0, "mol m-2 s-1", [0.0, 1.0], "Medlyn et al. 2011 fits are often near 0 (common practice)",
            "residual stomatal conductance to H2O";
        g1 = 1.6, "kPa^0.5", [0.01, 20.0], "C4, Lin et al. 2015, Nature Clim. Change (from memory)",
            "slope of the Medlyn et al. 2011 stomatal model";
        gb = INF, "mol m-2 s-1", [BOUNDARY_LAYER_RANGE.0, BOUNDARY_LAYER_RANGE.1], "none (infinite) by default",
            "leaf boundary-layer conductance to H2O (CO2: gb/1.37)";
        leakiness = 0.3, "-", [0.0, 0.95], "0.2-0.35 reported (Farquhar 1983; Henderson et al. 1992, Aust. J. Plant Physiol.; from memory); 0.3 puts C4 grass within compilations of C4 leaf d13C",
            "fraction of fixed carbon leaking from the bundle sheath";
        a = 4.4, "permil", [0.0, 10.0], FARQUHAR82, "fractionation by diffusion in air";
        ab = 2.9, "permil", [0.0, 10.0], FARQUHAR82, "fractionation in the leaf boundary layer";
        b3 = 30.0, "permil", [10.0, 40.0], "Farquhar 1983, Aust. J. Plant Physiol.",
            "fractionation by Rubisco in the bundle sheath";
        s = 1.8, "permil", [0.0, 5.0], "Farquhar 1983", "fractionation of CO2 leaking from the bundle sheath";
    }
}

impl C3Params {
    /// These parameters with photosynthetic capacity (vcmax25, jmax25, tpu25) and day respiration
    /// (rd25) multiplied by `factor` (> 0): a leaf deeper in the canopy, with less nitrogen.
    pub fn with_capacity_scaled(&self, factor: f64) -> Self {
        Self {
            vcmax25: self.vcmax25 * factor,
            jmax25: self.jmax25 * factor,
            tpu25: self.tpu25 * factor,
            rd25: self.rd25 * factor,
            ..self.clone()
        }
    }

    /// Sets capacity and day respiration in place to `base`'s, multiplied by `factor` when
    /// there is one: [`Self::with_capacity_scaled`] without a copy of the rest.
    pub(crate) fn set_capacity_from(&mut self, base: &Self, factor: Option<f64>) {
        // x · 1 is x exactly (IEEE 754), so no factor needs no branch of its own.
        let f = factor.unwrap_or(1.0);
        self.vcmax25 = base.vcmax25 * f;
        self.jmax25 = base.jmax25 * f;
        self.tpu25 = base.tpu25 * f;
        self.rd25 = base.rd25 * f;
    }

    /// Rubisco's constants at 25 °C and their activation energies, each the set value or, when left
    /// "auto", the basis that matches the mesophyll conductance: chloroplast-based (Bernacchi et al.
    /// 2002, from memory) when gm is finite, intercellular-based (Bernacchi et al. 2001) when gm is
    /// infinite, so that cc and the constants always refer to the same CO2.
    pub fn kinetics_25(&self) -> Kinetics25 {
        let cc = self.gm.is_finite();
        let pick = |set: f64, cc_based: f64, ci_based: f64| {
            if !set.is_nan() {
                set
            } else if cc {
                cc_based
            } else {
                ci_based
            }
        };
        Kinetics25 {
            kc25: pick(self.kc25, 272.38, 404.9),
            ko25: pick(self.ko25, 165.82, 278.4),
            gamma_star25: pick(self.gamma_star25, 37.43, 42.75),
            ea_kc: pick(self.ea_kc, 80_990.0, 79_430.0),
            ea_ko: pick(self.ea_ko, 23_720.0, 36_380.0),
            ea_gamma_star: pick(self.ea_gamma_star, 24_420.0, 37_830.0),
        }
    }

    /// (Ha, Hd, ΔS) of Vcmax's peaked Arrhenius response for a temperature set and growth
    /// temperature (°C); set values override the set's.
    pub fn vcmax_response(&self, set: TemperatureSet, t_growth_c: f64) -> PeakedResponse {
        let (ha, ds) = match set {
            TemperatureSet::Acclimated => (KK07_HA_VCMAX_J_MOL, kattge_knorr_ds_vcmax(t_growth_c)),
            TemperatureSet::Fixed => (65_330.0, 650.0),
        };
        PeakedResponse {
            ha_j_mol: or_auto(self.ha_vcmax, ha),
            hd_j_mol: self.hd_vcmax,
            ds_j_mol_k: or_auto(self.ds_vcmax, ds),
        }
    }

    /// (Ha, Hd, ΔS) of Jmax's peaked Arrhenius response for a temperature set and growth
    /// temperature (°C); set values override the set's.
    pub fn jmax_response(&self, set: TemperatureSet, t_growth_c: f64) -> PeakedResponse {
        let (ha, ds) = match set {
            TemperatureSet::Acclimated => (KK07_HA_JMAX_J_MOL, kattge_knorr_ds_jmax(t_growth_c)),
            TemperatureSet::Fixed => (43_540.0, 650.0),
        };
        PeakedResponse {
            ha_j_mol: or_auto(self.ha_jmax, ha),
            hd_j_mol: self.hd_jmax,
            ds_j_mol_k: or_auto(self.ds_jmax, ds),
        }
    }

    /// Jmax at 25 °C (µmol m⁻² s⁻¹): the set value or, when "auto", vcmax25 times the Jmax/Vcmax
    /// ratio of the temperature set (acclimated: 2.59 − 0.035·t_growth, Kattge & Knorr 2007; fixed:
    /// 1.67, Medlyn et al. 2002; both from memory).
    pub fn jmax25_for(&self, set: TemperatureSet, t_growth_c: f64) -> f64 {
        let ratio = match set {
            TemperatureSet::Acclimated => kattge_knorr_jv_ratio(t_growth_c),
            TemperatureSet::Fixed => 1.67,
        };
        or_auto(self.jmax25, ratio * self.vcmax25)
    }

    /// The value of parameter `name` in use under these leaf options and growth temperature (°C):
    /// the set value, or its "auto" default resolved. None for an unknown name.
    pub fn in_use(&self, name: &str, options: &LeafOptions, t_growth_c: f64) -> Option<f64> {
        let set = options.temperature_set;
        let k = self.kinetics_25();
        let v = self.vcmax_response(set, t_growth_c);
        let j = self.jmax_response(set, t_growth_c);
        Some(match name {
            "jmax25" => self.jmax25_for(set, t_growth_c),
            "kc25" => k.kc25,
            "ko25" => k.ko25,
            "gamma_star25" => k.gamma_star25,
            "ea_kc" => k.ea_kc,
            "ea_ko" => k.ea_ko,
            "ea_gamma_star" => k.ea_gamma_star,
            "ha_vcmax" => v.ha_j_mol,
            "ds_vcmax" => v.ds_j_mol_k,
            "ha_jmax" => j.ha_j_mol,
            "ds_jmax" => j.ds_j_mol_k,
            "b" => self.b_for(options.c3_form == C3Form::Comprehensive),
            other => self.get(other)?,
        })
    }

    /// Carboxylation fractionation b (‰) for the given discrimination form: the set value, or the
    /// form's default (27‰ simple, 29‰ comprehensive).
    pub fn b_for(&self, comprehensive: bool) -> f64 {
        if self.b.is_nan() {
            if comprehensive { 29.0 } else { 27.0 }
        } else {
            self.b
        }
    }
}

/// The value that was set, or the setting's default where it was left "auto" (NaN).
fn or_auto(set: f64, auto: f64) -> f64 {
    if set.is_nan() { auto } else { set }
}

/// Rubisco's constants at 25 °C (as mole fractions at 101.325 kPa and 210 mmol mol⁻¹ O2) and their
/// activation energies (J mol⁻¹), resolved by [`C3Params::kinetics_25`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Kinetics25 {
    /// Kc (µmol mol⁻¹).
    pub kc25: f64,
    /// Ko (mmol mol⁻¹).
    pub ko25: f64,
    /// Γ* (µmol mol⁻¹).
    pub gamma_star25: f64,
    /// Activation energy of Kc.
    pub ea_kc: f64,
    /// Activation energy of Ko.
    pub ea_ko: f64,
    /// Activation energy of Γ*.
    pub ea_gamma_star: f64,
}

/// The constants of a peaked Arrhenius response (Medlyn et al. 2002 form).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PeakedResponse {
    /// Activation energy (J mol⁻¹).
    pub ha_j_mol: f64,
    /// Deactivation energy (J mol⁻¹).
    pub hd_j_mol: f64,
    /// Entropy term (J mol⁻¹ K⁻¹).
    pub ds_j_mol_k: f64,
}

impl PeakedResponse {
    /// The factor relative to 25 °C at `t_c` (°C).
    pub fn factor(&self, t_c: f64) -> f64 {
        peaked_arrhenius_factor(self.ha_j_mol, self.hd_j_mol, self.ds_j_mol_k, t_c)
    }
}

impl C4Params {
    /// These parameters with capacity (vmax25, k25) and day respiration (rd25) multiplied by
    /// `factor` (> 0): a leaf deeper in the canopy. k scales with Vmax as in Collatz et al. (1992).
    pub fn with_capacity_scaled(&self, factor: f64) -> Self {
        Self {
            vmax25: self.vmax25 * factor,
            k25: self.k25 * factor,
            rd25: self.rd25 * factor,
            ..self.clone()
        }
    }

    /// Sets capacity and day respiration in place to `base`'s, multiplied by `factor` when
    /// there is one: [`Self::with_capacity_scaled`] without a copy of the rest.
    pub(crate) fn set_capacity_from(&mut self, base: &Self, factor: Option<f64>) {
        // x · 1 is x exactly (IEEE 754), so no factor needs no branch of its own.
        let f = factor.unwrap_or(1.0);
        self.vmax25 = base.vmax25 * f;
        self.k25 = base.k25 * f;
        self.rd25 = base.rd25 * f;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_lie_in_their_ranges() {
        for s in C3Params::SPECS.iter().chain(C4Params::SPECS) {
            if s.default.is_nan() {
                continue; // depends on a setting
            }
            assert!(s.default >= s.min && s.default <= s.max, "{}", s.name);
        }
    }

    #[test]
    fn set_validates_and_suggests() {
        let mut p = C3Params::default();
        assert!(p.set("g1", f64::NAN).is_err());
        assert!(p.set("g1", 50.0).is_err());
        p.set("g1", 5.3).unwrap();
        assert_eq!(p.g1(), 5.3);
        match p.set("vcmax", 50.0) {
            Err(ModelError::UnknownParameter { suggestion, .. }) => {
                assert_eq!(suggestion.as_deref(), Some("vcmax25"))
            }
            other => panic!("expected an unknown-parameter error, got {other:?}"),
        }
    }
}
