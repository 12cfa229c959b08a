//! Vegetation presets: published parameter sets for common vegetation types, applied on top of the
//! leaf defaults and under any key or parameter a site file sets.
//!
//! Sources (values recalled, not re-read, are marked "from memory" in the table):
//! - Vcmax25 (C3): Kattge et al. 2009, Global Change Biol., mean per plant functional type.
//!   Jmax25 = 1.67 × Vcmax25 (Medlyn et al. 2002, Plant Cell Environ.) and Rd25 = 0.015 × Vcmax25,
//!   the ratios of the leaf defaults.
//! - Vmax25 (C4): Collatz, Ribas-Carbo & Berry 1992 (maize) and Sellers et al. 1996, J. Climate
//!   (C4 grassland); k25 = 0.018 × Vmax25 and Rd25 = 0.021 × Vmax25 as in Collatz et al. 1992.
//! - g1: Lin et al. 2015, Nature Climate Change, per plant type.
//! - Clumping Ω: Chen et al. 2005, Remote Sens. Environ., mean per cover type.
//! - kn (C3): Lloyd et al. 2010, Biogeosciences, kn = exp(0.00963·Vcmax25 − 2.43); C4 keeps 0.3,
//!   the common two-leaf default (from memory), the relation being fitted to C3 trees; de Pury &
//!   Farquhar 1997 used a steeper 0.713 for wheat (from memory, not re-read).
//! - LAI range: lai_max from Asner, Scurlock & Hicke 2003, Global Ecol. Biogeogr. (mean LAI per
//!   biome; grasslands 1.7 from memory, which their abstract ranks below tundra and above deserts);
//!   lai_min 0 for deciduous and herbaceous types, about 3/4 (needleleaf) or 4/5 (tropical
//!   broadleaf) of lai_max for evergreens (common practice).
//! - Leaf width: typical leaf sizes of each type (common practice).

use crate::error::{ModelError, Result, closest_name};
use crate::leaf::Pathway;
use crate::phenology::PhenologyKind;

/// One value of a preset: a leaf parameter (by its `--set` name) or a vegetation-block key.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PresetValue {
    /// Leaf parameter name or block key (`leaf_width_m`, `clumping`, `kn`, `lai_min`, `lai_max`).
    pub key: &'static str,
    /// The value, in `unit`.
    pub value: f64,
    /// Unit.
    pub unit: &'static str,
    /// Where the value comes from.
    pub source: &'static str,
}

/// A vegetation type's parameter set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VegetationPreset {
    /// Name used by `preset = "..."`.
    pub name: &'static str,
    /// The pathway the type belongs to.
    pub pathway: Pathway,
    /// What it stands for.
    pub description: &'static str,
    /// The phenology that drives LAI with `lai = "phenology"` (the default with a preset).
    pub phenology: PhenologyKind,
    /// The values, leaf parameters first.
    pub values: &'static [PresetValue],
}

impl VegetationPreset {
    /// The value of `key`, if the preset sets it.
    pub fn value(&self, key: &str) -> Option<f64> {
        self.values.iter().find(|v| v.key == key).map(|v| v.value)
    }

    /// The leaf parameters it sets (name, value).
    pub fn leaf_params(&self) -> impl Iterator<Item = (&'static str, f64)> + '_ {
        self.values
            .iter()
            .filter(|v| self.pathway.specs().iter().any(|s| s.name == v.key))
            .map(|v| (v.key, v.value))
    }
}

const KATTGE: &str = "Kattge et al. 2009, Global Change Biol. (from memory)";
const JMAX: &str = "1.67 x vcmax25 (Medlyn et al. 2002, from memory)";
const RD: &str = "0.015 x vcmax25 (ratio of the leaf default, from memory)";
const LIN: &str = "Lin et al. 2015, Nature Clim. Change (from memory)";
const CHEN: &str = "Chen et al. 2005, Remote Sens. Environ. (from memory)";
const LLOYD: &str = "exp(0.00963 vcmax25 - 2.43), Lloyd et al. 2010, Biogeosciences (from memory)";
const ASNER: &str = "Asner, Scurlock & Hicke 2003, Global Ecol. Biogeogr. (from memory)";
const GRASS_LAI: &str = "grassland mean, Asner, Scurlock & Hicke 2003, Global Ecol. Biogeogr. (value from memory; their abstract ranks the lowest biome means deserts (1.3) < grasslands < tundra)";
const DEC_MIN: &str = "leafless in the dormant season";
const WIDTH: &str = "typical leaf size (common practice)";
const COLLATZ_K: &str = "0.018 x vmax25 (Collatz et al. 1992, from memory)";
const COLLATZ_RD: &str = "0.021 x vmax25 (Collatz et al. 1992, from memory)";
const C4_KN: &str = "common two-leaf default (from memory; de Pury & Farquhar 1997 used 0.713 for wheat); the kn relation is fitted to C3 trees";

const fn v(key: &'static str, value: f64, unit: &'static str, source: &'static str) -> PresetValue {
    PresetValue {
        key,
        value,
        unit,
        source,
    }
}

const UMOL: &str = "umol m-2 s-1";
const G1U: &str = "kPa^0.5";
const LAIU: &str = "m2 m-2";

/// Every preset.
pub const PRESETS: &[VegetationPreset] = &[
    VegetationPreset {
        name: "deciduous-broadleaf",
        pathway: Pathway::C3,
        description: "temperate deciduous broadleaf forest",
        phenology: PhenologyKind::GsiBudburst,
        values: &[
            v("vcmax25", 57.7, UMOL, KATTGE),
            v("jmax25", 96.4, UMOL, JMAX),
            v("rd25", 0.87, UMOL, RD),
            v("g1", 4.45, G1U, LIN),
            v("leaf_width_m", 0.05, "m", WIDTH),
            v("clumping", 0.7, "-", CHEN),
            v("kn", 0.15, "-", LLOYD),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v("lai_max", 5.1, LAIU, ASNER),
        ],
    },
    VegetationPreset {
        name: "evergreen-needleleaf",
        pathway: Pathway::C3,
        description: "temperate and boreal evergreen needleleaf (conifer) forest",
        phenology: PhenologyKind::Gsi,
        values: &[
            v("vcmax25", 62.5, UMOL, KATTGE),
            v("jmax25", 104.4, UMOL, JMAX),
            v("rd25", 0.94, UMOL, RD),
            v("g1", 2.35, G1U, LIN),
            v("leaf_width_m", 0.002, "m", WIDTH),
            v("clumping", 0.6, "-", CHEN),
            v("kn", 0.16, "-", LLOYD),
            v(
                "lai_min",
                3.0,
                LAIU,
                "3/4 of lai_max: needles kept several years (common practice)",
            ),
            v(
                "lai_max",
                4.0,
                LAIU,
                "between boreal (3.5) and temperate (5.5) needleleaf means, Asner et al. 2003 (from memory)",
            ),
        ],
    },
    VegetationPreset {
        name: "evergreen-broadleaf-tropical",
        pathway: Pathway::C3,
        description: "tropical evergreen broadleaf forest",
        phenology: PhenologyKind::Gsi,
        values: &[
            v(
                "vcmax25",
                41.0,
                UMOL,
                "tropical trees off oxisols (29 on oxisols), Kattge et al. 2009 (from memory)",
            ),
            v("jmax25", 68.5, UMOL, JMAX),
            v("rd25", 0.62, UMOL, RD),
            v("g1", 4.12, G1U, LIN),
            v("leaf_width_m", 0.08, "m", WIDTH),
            v("clumping", 0.65, "-", CHEN),
            v("kn", 0.13, "-", LLOYD),
            v(
                "lai_min",
                3.8,
                LAIU,
                "4/5 of lai_max: partial dry-season shedding (common practice)",
            ),
            v("lai_max", 4.8, LAIU, ASNER),
        ],
    },
    VegetationPreset {
        name: "c3-grass",
        pathway: Pathway::C3,
        description: "C3 grassland (temperate and cool)",
        phenology: PhenologyKind::GsiSoilWater,
        values: &[
            v("vcmax25", 78.2, UMOL, KATTGE),
            v("jmax25", 130.6, UMOL, JMAX),
            v("rd25", 1.17, UMOL, RD),
            v("g1", 5.25, G1U, LIN),
            v("leaf_width_m", 0.005, "m", WIDTH),
            v("clumping", 0.75, "-", CHEN),
            v("kn", 0.19, "-", LLOYD),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v("lai_max", 1.7, LAIU, GRASS_LAI),
        ],
    },
    VegetationPreset {
        name: "c4-grass",
        pathway: Pathway::C4,
        description: "C4 grassland and savanna grasses",
        phenology: PhenologyKind::GsiSoilWater,
        values: &[
            v(
                "vmax25",
                30.0,
                UMOL,
                "C4 grassland, Sellers et al. 1996, J. Climate (from memory)",
            ),
            v("k25", 0.54, "mol m-2 s-1", COLLATZ_K),
            v("rd25", 0.63, UMOL, COLLATZ_RD),
            v("g1", 1.62, G1U, LIN),
            v("leaf_width_m", 0.005, "m", WIDTH),
            v("clumping", 0.75, "-", CHEN),
            v("kn", 0.3, "-", C4_KN),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v("lai_max", 1.7, LAIU, GRASS_LAI),
        ],
    },
    VegetationPreset {
        name: "tundra-shrub",
        pathway: Pathway::C3,
        description: "arctic and alpine deciduous shrub tundra",
        phenology: PhenologyKind::Gsi,
        values: &[
            v(
                "vcmax25",
                54.0,
                UMOL,
                "deciduous shrubs, Kattge et al. 2009 (from memory)",
            ),
            v("jmax25", 90.2, UMOL, JMAX),
            v("rd25", 0.81, UMOL, RD),
            v("g1", 4.7, G1U, "shrubs, Lin et al. 2015 (from memory)"),
            v("leaf_width_m", 0.01, "m", WIDTH),
            v("clumping", 0.7, "-", CHEN),
            v("kn", 0.15, "-", LLOYD),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v(
                "lai_max",
                1.5,
                LAIU,
                "tundra 1.9 +- 1.6, Asner et al. 2003 (from memory); shrub tundra lower",
            ),
        ],
    },
    VegetationPreset {
        name: "c3-crop",
        pathway: Pathway::C3,
        description: "C3 crops (wheat, barley, soybean); no sowing or harvest dates",
        phenology: PhenologyKind::GsiSoilWater,
        values: &[
            v("vcmax25", 100.7, UMOL, KATTGE),
            v("jmax25", 168.2, UMOL, JMAX),
            v("rd25", 1.51, UMOL, RD),
            v("g1", 5.79, G1U, LIN),
            v("leaf_width_m", 0.02, "m", WIDTH),
            v("clumping", 0.8, "-", CHEN),
            v("kn", 0.23, "-", LLOYD),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v("lai_max", 3.6, LAIU, ASNER),
        ],
    },
    VegetationPreset {
        name: "c4-crop",
        pathway: Pathway::C4,
        description: "C4 crops (maize, sorghum, sugar cane); no sowing or harvest dates",
        phenology: PhenologyKind::GsiSoilWater,
        values: &[
            v(
                "vmax25",
                39.0,
                UMOL,
                "maize, Collatz et al. 1992, Aust. J. Plant Physiol. (from memory)",
            ),
            v("k25", 0.7, "mol m-2 s-1", COLLATZ_K),
            v("rd25", 0.82, UMOL, COLLATZ_RD),
            v("g1", 1.79, G1U, LIN),
            v("leaf_width_m", 0.08, "m", WIDTH),
            v("clumping", 0.8, "-", CHEN),
            v("kn", 0.3, "-", C4_KN),
            v("lai_min", 0.0, LAIU, DEC_MIN),
            v("lai_max", 3.6, LAIU, ASNER),
        ],
    },
];

/// The preset called `name`; an unknown name is an error that suggests the closest and lists all.
pub fn preset(name: &str) -> Result<&'static VegetationPreset> {
    PRESETS.iter().find(|p| p.name == name).ok_or_else(|| {
        let names: Vec<&str> = PRESETS.iter().map(|p| p.name).collect();
        let hint = closest_name(name, names.iter().copied())
            .map(|c| format!(" (did you mean \"{c}\"?)"))
            .unwrap_or_default();
        ModelError::InvalidConfig(format!(
            "unknown preset \"{name}\"{hint}; presets: {}",
            names.join(", ")
        ))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The derived values of the table follow the rules its sources give.
    #[test]
    fn derived_values_follow_their_rules() {
        for p in PRESETS {
            match p.pathway {
                Pathway::C3 => {
                    let vc = p.value("vcmax25").unwrap();
                    let round = |x: f64, d: f64| (x * d).round() / d;
                    assert_eq!(
                        p.value("jmax25"),
                        Some(round(1.67 * vc, 10.0)),
                        "{}",
                        p.name
                    );
                    assert_eq!(
                        p.value("rd25"),
                        Some(round(0.015 * vc, 100.0)),
                        "{}",
                        p.name
                    );
                    let kn = (0.00963 * vc - 2.43).exp();
                    assert_eq!(p.value("kn"), Some(round(kn, 100.0)), "{}", p.name);
                }
                Pathway::C4 => {
                    let vm = p.value("vmax25").unwrap();
                    assert!(
                        (p.value("k25").unwrap() - 0.018 * vm).abs() < 0.01,
                        "{}",
                        p.name
                    );
                    assert!(
                        (p.value("rd25").unwrap() - 0.021 * vm).abs() < 0.01,
                        "{}",
                        p.name
                    );
                }
            }
            assert!(p.value("lai_min").unwrap() <= p.value("lai_max").unwrap());
            // Every leaf value is a parameter of the pathway and lies in its range.
            for (k, x) in p.leaf_params() {
                let s = p.pathway.specs().iter().find(|s| s.name == k).unwrap();
                assert!(x >= s.min && x <= s.max, "{} {k}", p.name);
            }
        }
    }
}
