//! Validated leaf parameter sets, one per pathway, each parameter with its default, unit, valid range
//! and source. The same names serve `isodisc leaf --set NAME=VALUE`, the site file's vegetation
//! blocks and ensemble specs.

use crate::error::{ModelError, Result, check_range, closest_name};

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
                let value = check_range(spec.name, value, spec.min, spec.max)?;
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
        }
    };
}

const BERNACCHI: &str = "Bernacchi et al. 2001, Plant Cell Environ.";
const MEDLYN02: &str = "Medlyn et al. 2002, Plant Cell Environ. (from memory)";
const FARQUHAR82: &str = "Farquhar, O'Leary & Berry 1982, Aust. J. Plant Physiol.";
const INF: f64 = f64::INFINITY;

parameter_set! {
    /// C3 leaf parameters: Farquhar–von Caemmerer–Berry photosynthesis with Bernacchi et al. (2001)
    /// kinetics, Medlyn stomata and the C3 discrimination constants.
    C3Params {
        vcmax25 = 60.0, "umol m-2 s-1", [1.0, 400.0], "typical of C3 leaves (common practice)",
            "maximum carboxylation rate at 25 degC";
        jmax25 = 100.0, "umol m-2 s-1", [1.0, 800.0], "about 1.67 x vcmax25 (Medlyn et al. 2002, from memory)",
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
        kc25 = 404.9, "umol mol-1", [1.0, 2000.0], BERNACCHI,
            "Michaelis constant of Rubisco for CO2 at 25 degC";
        ko25 = 278.4, "mmol mol-1", [1.0, 2000.0], BERNACCHI,
            "Michaelis constant of Rubisco for O2 at 25 degC";
        gamma_star25 = 42.75, "umol mol-1", [1.0, 200.0], BERNACCHI,
            "CO2 compensation point without day respiration at 25 degC";
        ea_kc = 79430.0, "J mol-1", [0.0, 300000.0], BERNACCHI, "activation energy of kc";
        ea_ko = 36380.0, "J mol-1", [0.0, 300000.0], BERNACCHI, "activation energy of ko";
        ea_gamma_star = 37830.0, "J mol-1", [0.0, 300000.0], BERNACCHI,
            "activation energy of gamma_star";
        ea_rd = 46390.0, "J mol-1", [0.0, 300000.0], BERNACCHI, "activation energy of rd";
        ha_vcmax = 65330.0, "J mol-1", [1000.0, 300000.0], BERNACCHI,
            "activation energy of vcmax (peaked Arrhenius)";
        hd_vcmax = 200000.0, "J mol-1", [1000.0, 1000000.0], MEDLYN02,
            "deactivation energy of vcmax";
        ds_vcmax = 650.0, "J mol-1 K-1", [400.0, 800.0], MEDLYN02, "entropy term of vcmax";
        ha_jmax = 43540.0, "J mol-1", [1000.0, 300000.0], MEDLYN02,
            "activation energy of jmax (peaked Arrhenius)";
        hd_jmax = 200000.0, "J mol-1", [1000.0, 1000000.0], MEDLYN02,
            "deactivation energy of jmax";
        ds_jmax = 650.0, "J mol-1 K-1", [400.0, 800.0], MEDLYN02, "entropy term of jmax";
        g0 = 0.0, "mol m-2 s-1", [0.0, 1.0], "Medlyn et al. 2011 fits are often near 0 (common practice)",
            "residual stomatal conductance to H2O";
        g1 = 4.1, "kPa^0.5", [0.01, 20.0], "angiosperm trees, Lin et al. 2015, Nature Clim. Change (from memory)",
            "slope of the Medlyn et al. 2011 stomatal model";
        gb = INF, "mol m-2 s-1", [0.01, INF], "none (infinite) by default",
            "leaf boundary-layer conductance to H2O (CO2: gb/1.37)";
        gm = INF, "mol m-2 s-1", [0.01, INF], "none (infinite) by default",
            "mesophyll conductance to CO2 on a mole-fraction basis (cc = ci - A/gm)";
        a = 4.4, "permil", [0.0, 10.0], FARQUHAR82, "fractionation by diffusion in air";
        b = f64::NAN, "permil", [10.0, 40.0],
            "27 (simple form, Farquhar & Richards 1984) or 29 (comprehensive form, Farquhar et al. 1982)",
            "fractionation by carboxylation; default depends on the discrimination form";
        ab = 2.9, "permil", [0.0, 10.0], FARQUHAR82, "fractionation in the leaf boundary layer";
        es = 1.1, "permil", [0.0, 5.0], "Farquhar et al. 1982; Evans et al. 1986",
            "fractionation as CO2 dissolves";
        al = 0.7, "permil", [0.0, 5.0], "Farquhar et al. 1982; Evans et al. 1986",
            "fractionation by diffusion in water";
        e = 0.0, "permil", [-20.0, 20.0], "0 by default; -6 to 0 reported",
            "fractionation of day respiration";
        f = 11.6, "permil", [0.0, 25.0], "Lanigan et al. 2008, Plant Physiol.; 16.2 in Evans & von Caemmerer 2013",
            "fractionation of photorespiration";
    }
}

parameter_set! {
    /// C4 leaf parameters: Collatz, Ribas-Carbo & Berry (1992) photosynthesis, Medlyn stomata and the
    /// Farquhar (1983) C4 discrimination with leakiness.
    C4Params {
        vmax25 = 39.0, "umol m-2 s-1", [1.0, 200.0], "Collatz et al. 1992, Aust. J. Plant Physiol. (from memory)",
            "maximum Rubisco capacity at 25 degC";
        alpha = 0.067, "mol CO2 (mol photons)-1", [0.01, 0.2], "Collatz et al. 1992 (from memory)",
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
        gb = INF, "mol m-2 s-1", [0.01, INF], "none (infinite) by default",
            "leaf boundary-layer conductance to H2O (CO2: gb/1.37)";
        leakiness = 0.25, "-", [0.0, 0.95], "0.2-0.35 reported; Farquhar 1983",
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
