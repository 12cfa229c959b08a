//! The site file (TOML): where the site is, what grows there, its soil, its atmosphere, its weather
//! file and what to write. Parsed strictly: unknown keys are errors that name the key, the file and
//! line, and the closest known key; values are validated by the model's constructors and errors
//! name the key and line.

use std::collections::BTreeMap;
use std::fmt;
use std::path::{Path, PathBuf};

use isodisc_model::canopy::assimilation::CanopySettings;
use isodisc_model::canopy::radiation::TwoLeafCanopy;
use isodisc_model::canopy::solar::Location;
use isodisc_model::error::closest_name;
use isodisc_model::leaf::{
    BetaTarget, C3Form, ElectronLimit, G1Temperature, LeafModel, LeafOptions, Pathway,
    TemperatureSet,
};
use isodisc_model::phenology::{PhenologyKind, PhenologySettings};
use isodisc_model::pools::{AtmosphereHistory, PoolsConfig};
use isodisc_model::site::{SiteSettings, SoilWater, Vegetation};
use isodisc_model::water::bucket::{Bucket, BucketParams, InitialWater};
use isodisc_model::water::evaporation::PriestleyTaylor;
use serde::Deserialize;
use toml::Spanned;

use crate::error::{Error, Result};
use crate::forcing::{ForcingConfig, ForcingError, ForcingReader, LocalTime};

/// A constant, or `"forcing"`: the value comes from the weather file's column.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ValueOrForcing {
    /// A constant value.
    Value(f64),
    /// The word `"forcing"`.
    Forcing(FromForcing),
}

/// The word `"forcing"`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FromForcing {
    /// The value comes from the weather file.
    Forcing,
}

/// Leaf area index of a vegetation block: a constant (m² m⁻²), `"forcing"` (the weather file's
/// LAI column) or `"phenology"` (the Growing Season Index between `lai_min` and `lai_max`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LaiSetting {
    /// A constant LAI (m² m⁻²).
    Value(f64),
    /// The weather file's LAI column.
    Forcing,
    /// The Growing Season Index phenology.
    Phenology,
}

/// A number, or one of a few words: what a site-file value may be. Deserialised by hand so that a
/// wrong value is told what the key takes (serde's untagged enums only say that nothing matched).
struct NumberOrWord {
    words: &'static [&'static str],
    expecting: &'static str,
}

/// What [`NumberOrWord`] read.
enum NumberOrWordValue {
    Number(f64),
    Word(&'static str),
}

impl<'de> serde::de::DeserializeSeed<'de> for NumberOrWord {
    type Value = NumberOrWordValue;

    fn deserialize<D: serde::Deserializer<'de>>(
        self,
        d: D,
    ) -> std::result::Result<Self::Value, D::Error> {
        d.deserialize_any(self)
    }
}

impl serde::de::Visitor<'_> for NumberOrWord {
    type Value = NumberOrWordValue;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str(self.expecting)
    }

    fn visit_f64<E: serde::de::Error>(self, v: f64) -> std::result::Result<Self::Value, E> {
        Ok(NumberOrWordValue::Number(v))
    }

    fn visit_i64<E: serde::de::Error>(self, v: i64) -> std::result::Result<Self::Value, E> {
        Ok(NumberOrWordValue::Number(v as f64))
    }

    fn visit_u64<E: serde::de::Error>(self, v: u64) -> std::result::Result<Self::Value, E> {
        Ok(NumberOrWordValue::Number(v as f64))
    }

    fn visit_str<E: serde::de::Error>(self, v: &str) -> std::result::Result<Self::Value, E> {
        self.words
            .iter()
            .find(|w| **w == v)
            .map(|w| NumberOrWordValue::Word(w))
            .ok_or_else(|| E::custom(format!("\"{v}\" is not {}", self.expecting)))
    }
}

impl<'de> Deserialize<'de> for ValueOrForcing {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        use serde::de::DeserializeSeed;
        let seed = NumberOrWord {
            words: &["forcing"],
            expecting: "a number or \"forcing\" (the weather file's column)",
        };
        Ok(match seed.deserialize(d)? {
            NumberOrWordValue::Number(x) => ValueOrForcing::Value(x),
            NumberOrWordValue::Word(_) => ValueOrForcing::Forcing(FromForcing::Forcing),
        })
    }
}

impl<'de> Deserialize<'de> for LaiSetting {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        use serde::de::DeserializeSeed;
        let seed = NumberOrWord {
            words: &["forcing", "phenology"],
            expecting: "a number (m2 m-2), \"forcing\" (the weather file's LAI column) or \
                        \"phenology\" (the Growing Season Index between lai_min and lai_max)",
        };
        Ok(match seed.deserialize(d)? {
            NumberOrWordValue::Number(x) => LaiSetting::Value(x),
            NumberOrWordValue::Word("forcing") => LaiSetting::Forcing,
            NumberOrWordValue::Word(_) => LaiSetting::Phenology,
        })
    }
}

/// A leaf parameter's value in a site file: a number, TOML's `inf`, or the string `"inf"`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParamNumber(pub f64);

impl<'de> Deserialize<'de> for ParamNumber {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        use serde::de::DeserializeSeed;
        let seed = NumberOrWord {
            words: &["inf"],
            expecting: "a number, or inf (conductances and tpu25)",
        };
        Ok(ParamNumber(match seed.deserialize(d)? {
            NumberOrWordValue::Number(x) => x,
            NumberOrWordValue::Word(_) => f64::INFINITY,
        }))
    }
}

/// `[site]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SiteBlock {
    /// Site name.
    pub name: String,
    /// Latitude (°, north positive).
    pub latitude: f64,
    /// Longitude (°, east positive).
    pub longitude: f64,
    /// Elevation above sea level (m); gives pressure when the weather has none.
    pub elevation_m: f64,
    /// UTC offset of the timestamps, local standard time (hours).
    pub utc_offset_h: f64,
}

/// `[vegetation.c3]` or `[vegetation.c4]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VegetationBlock {
    /// A vegetation preset (`isodisc presets`): its values fill every key and parameter the block
    /// does not set.
    #[serde(default)]
    pub preset: Option<String>,
    /// Fraction of the ground covered by this pathway (0–1).
    pub cover: f64,
    /// Leaf area index where it grows (m² m⁻²), "forcing" or "phenology". Required without a
    /// preset; "phenology" with one.
    #[serde(default)]
    pub lai: Option<LaiSetting>,
    /// Phenology with `lai = "phenology"`: "gsi", "gsi-soil-water" or "gsi-budburst".
    #[serde(default)]
    pub phenology: Option<String>,
    /// LAI at a Growing Season Index of 0 (m² m⁻²). Default 0.
    #[serde(default)]
    pub lai_min: Option<f64>,
    /// LAI at a Growing Season Index of 1 (m² m⁻²).
    #[serde(default)]
    pub lai_max: Option<f64>,
    /// Leaf parameters by the names of `isodisc leaf --set` (`inf` allowed for conductances and
    /// tpu25).
    #[serde(default)]
    pub params: BTreeMap<String, Spanned<ParamNumber>>,
    /// C3 discrimination form: "comprehensive" (default) or "simple".
    #[serde(default)]
    pub discrimination: Option<String>,
    /// C3 electron-transport limit: "nadph" (default) or "atp".
    #[serde(default)]
    pub electron_limit: Option<String>,
    /// C3 temperature responses of Vcmax and Jmax: "acclimated" (default) or "fixed".
    #[serde(default)]
    pub temperature_set: Option<String>,
    /// How the C3 g1 follows leaf temperature: "constant" (default) or "gamma-star".
    #[serde(default)]
    pub g1_temperature: Option<String>,
    /// Extinction of leaf capacity with canopy depth (per unit LAI). Default 0.3.
    #[serde(default)]
    pub kn: Option<f64>,
    /// Clumping index Ω (0–1). Default 1.
    #[serde(default)]
    pub clumping: Option<f64>,
    /// Leaf width for the boundary layer when wind is given (m). Default 0.05 (C3), 0.01 (C4).
    #[serde(default)]
    pub leaf_width_m: Option<f64>,
}

/// `[vegetation]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VegetationBlocks {
    /// C3 vegetation, if present.
    pub c3: Option<VegetationBlock>,
    /// C4 vegetation, if present.
    pub c4: Option<VegetationBlock>,
}

/// `[soil]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SoilBlock {
    /// Volumetric water content at field capacity (m³ m⁻³).
    pub field_capacity: f64,
    /// Volumetric water content at the wilting point (m³ m⁻³).
    pub wilting_point: f64,
    /// Rooting depth (m).
    pub root_depth_m: f64,
    /// Initial plant-available water as a fraction of capacity (0–1), or "forcing": β from the
    /// weather file's observed soil-water column every step (no bucket).
    pub initial_water: ValueOrForcing,
    /// Relative available water above which β = 1 (0–1). Default 0.5.
    #[serde(default)]
    pub beta_threshold: Option<f64>,
    /// What β scales: "g1" (default), "capacity" or "both".
    #[serde(default)]
    pub beta_target: Option<String>,
    /// Priestley–Taylor α for soil evaporation. Default 1.26.
    #[serde(default)]
    pub priestley_taylor_alpha: Option<f64>,
}

/// `[atmosphere]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AtmosphereBlock {
    /// CO2 (µmol mol⁻¹), or "forcing".
    pub co2: ValueOrForcing,
    /// δ13C of CO2 (‰ vs VPDB), or "forcing".
    pub d13c_co2: ValueOrForcing,
    /// O2 (mmol mol⁻¹). Default 210.
    #[serde(default)]
    pub o2: Option<f64>,
    /// Atmospheric history (`year,co2,d13c`), relative to the site file, through which the pools
    /// are spun up so that old carbon carries the older atmosphere. Default: none (the pools start
    /// at the steady state of the first year).
    #[serde(default)]
    pub history: Option<PathBuf>,
}

/// `[output]`.
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct OutputBlock {
    /// Write `daily.csv`. Default true.
    #[serde(default)]
    pub daily: Option<bool>,
    /// Write `monthly.csv`. Default true.
    #[serde(default)]
    pub monthly: Option<bool>,
    /// Write `annual.csv`. Default true.
    #[serde(default)]
    pub annual: Option<bool>,
}

/// The whole site file.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SiteFile {
    /// `[site]`.
    pub site: SiteBlock,
    /// `[vegetation]`.
    pub vegetation: VegetationBlocks,
    /// `[soil]`.
    pub soil: SoilBlock,
    /// `[atmosphere]`.
    pub atmosphere: AtmosphereBlock,
    /// `[forcing]`.
    pub forcing: ForcingConfig,
    /// `[output]`.
    #[serde(default)]
    pub output: OutputBlock,
    /// `[pools]`: the carbon and 13C pools (default: the four-pool network).
    #[serde(default)]
    pub pools: PoolsConfig,
}

/// A site file read and validated: the model's settings and what the runner needs.
#[derive(Debug, Clone)]
pub struct Site {
    /// Path of the site file.
    pub path: PathBuf,
    /// The file's text (for checksums and line numbers).
    pub text: String,
    /// The parsed file.
    pub file: SiteFile,
    /// The model's settings.
    pub settings: SiteSettings,
    /// Constant CO2 (µmol mol⁻¹), or None: from the weather file.
    pub co2: Option<f64>,
    /// Constant δ13C of CO2 (‰), or None: from the weather file.
    pub d13c_co2: Option<f64>,
    /// O2 (mmol mol⁻¹).
    pub o2: f64,
    /// LAI from the weather file.
    pub lai_from_forcing: bool,
    /// Outputs to write: daily, monthly, annual.
    pub aggregates: [bool; 3],
    /// The pools' configuration (validated: it builds).
    pub pools: PoolsConfig,
    /// The atmospheric history, if given.
    pub history: Option<AtmosphereHistory>,
}

/// An error located in the site file.
#[derive(Debug)]
pub struct SiteError {
    path: PathBuf,
    line: Option<usize>,
    message: String,
}

impl fmt::Display for SiteError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(l) => write!(f, "{}: line {l}: {}", self.path.display(), self.message),
            None => write!(f, "{}: {}", self.path.display(), self.message),
        }
    }
}

impl std::error::Error for SiteError {}

fn line_of(text: &str, offset: usize) -> usize {
    text[..offset.min(text.len())]
        .bytes()
        .filter(|b| *b == b'\n')
        .count()
        + 1
}

/// Line (1-based) of the first `key =` or `[key]` at or after the start of `section` in the text;
/// a best effort for values serde does not locate.
fn line_of_key(text: &str, section: &str, key: &str) -> Option<usize> {
    let start = text
        .find(&format!("[{section}]"))
        .map(|o| line_of(text, o))
        .unwrap_or(1);
    text.lines()
        .enumerate()
        .skip(start - 1)
        .find(|(_, l)| {
            let t = l.trim_start();
            t.starts_with(key) && t[key.len()..].trim_start().starts_with('=')
        })
        .map(|(i, _)| i + 1)
}

/// Turns a toml error into one that names the line and, for unknown keys, the closest known key.
fn toml_error(path: &Path, text: &str, e: toml::de::Error) -> SiteError {
    let line = e.span().map(|s| line_of(text, s.start));
    let msg = e.message().trim().to_string();
    let message = if let Some(rest) = msg.strip_prefix("unknown field `") {
        let (key, expected) = rest.split_once('`').unwrap_or((rest, ""));
        let known: Vec<&str> = expected.split('`').skip(1).step_by(2).collect();
        match closest_name(key, known.iter().copied()) {
            Some(k) => format!(
                "unknown key `{key}` (did you mean `{k}`?); known keys: {}",
                known.join(", ")
            ),
            None => format!("unknown key `{key}`; known keys: {}", known.join(", ")),
        }
    } else {
        msg
    };
    SiteError {
        path: path.to_path_buf(),
        line,
        message,
    }
}

impl Site {
    /// Reads and validates a site file.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path).map_err(|e| {
            Error::msg(format!("cannot read the site file {}: {e}", path.display()))
        })?;
        Self::from_text(path, text)
    }

    /// Validates the text of a site file as if read from `path` (relative paths in it are taken
    /// from `path`'s folder): a grid builds each cell's site this way.
    pub fn from_text(path: &Path, text: String) -> Result<Self> {
        let file: SiteFile = toml::from_str(&text)
            .map_err(|e| toml_error(path, &text, e))
            .map_err(site_err)?;
        let err = |line: Option<usize>, message: String| {
            site_err(SiteError {
                path: path.to_path_buf(),
                line,
                message,
            })
        };
        let s = &file.site;
        let location = Location::new(s.latitude, s.longitude, s.utc_offset_h).map_err(|e| {
            err(
                line_of_key(&text, "site", "latitude"),
                format!("[site]: {e}"),
            )
        })?;
        if !(-500.0..=6000.0).contains(&s.elevation_m) {
            return Err(err(
                line_of_key(&text, "site", "elevation_m"),
                format!(
                    "[site] elevation_m = {}: valid range is -500 to 6000 m",
                    s.elevation_m
                ),
            ));
        }
        let mut vegetation = Vec::new();
        let mut lai_from_forcing = false;
        for (pathway, block) in [
            (Pathway::C3, &file.vegetation.c3),
            (Pathway::C4, &file.vegetation.c4),
        ] {
            let Some(b) = block else { continue };
            let name = pathway.as_str();
            let section = format!("vegetation.{name}");
            let preset = match &b.preset {
                Some(name) => {
                    let p = isodisc_model::presets::preset(name).map_err(|e| {
                        err(
                            line_of_key(&text, &section, "preset"),
                            format!("[{section}] preset: {e}"),
                        )
                    })?;
                    if p.pathway != pathway {
                        return Err(err(
                            line_of_key(&text, &section, "preset"),
                            format!(
                                "[{section}] preset = \"{name}\" is a {} preset; use it in \
                                 [vegetation.{}]",
                                p.pathway.as_str().to_uppercase(),
                                p.pathway.as_str()
                            ),
                        ));
                    }
                    Some(p)
                }
                None => None,
            };
            let from_preset = |key: &str| preset.and_then(|p| p.value(key));
            let mut leaf = LeafModel::default_for(pathway);
            for (k, v) in preset.iter().flat_map(|p| p.leaf_params()) {
                leaf.set(k, v).map_err(|e| {
                    err(
                        line_of_key(&text, &section, "preset"),
                        format!("[{section}] preset parameter {k}: {e}"),
                    )
                })?;
            }
            for (k, v) in &b.params {
                leaf.set(k, v.get_ref().0).map_err(|e| {
                    err(
                        Some(line_of(&text, v.span().start)),
                        format!("[{section}] params.{k}: {e}"),
                    )
                })?;
            }
            let c3_form = match b.discrimination.as_deref() {
                None | Some("comprehensive") => C3Form::Comprehensive,
                Some("simple") => C3Form::Simple,
                Some(o) => {
                    return Err(err(
                        line_of_key(&text, &section, "discrimination"),
                        format!(
                            "[{section}] discrimination = \"{o}\": use \"comprehensive\" or \"simple\""
                        ),
                    ));
                }
            };
            if pathway == Pathway::C4 && b.discrimination.is_some() {
                return Err(err(
                    line_of_key(&text, &section, "discrimination"),
                    format!(
                        "[{section}] discrimination: C4 has one form (Farquhar 1983); remove the key"
                    ),
                ));
            }
            let electron_limit = match b.electron_limit.as_deref() {
                None | Some("nadph") => ElectronLimit::Nadph,
                Some("atp") if pathway == Pathway::C3 => ElectronLimit::Atp,
                Some(o) => {
                    return Err(err(
                        line_of_key(&text, &section, "electron_limit"),
                        format!(
                            "[{section}] electron_limit = \"{o}\": use \"nadph\" or \"atp\" (C3 only)"
                        ),
                    ));
                }
            };
            let temperature_set = match b.temperature_set.as_deref() {
                None => TemperatureSet::default(),
                Some(name) => TemperatureSet::from_name(name)
                    .filter(|_| pathway == Pathway::C3)
                    .ok_or_else(|| {
                        let names: Vec<_> = TemperatureSet::NAMES.iter().map(|n| n.0).collect();
                        err(
                            line_of_key(&text, &section, "temperature_set"),
                            format!(
                                "[{section}] temperature_set = \"{name}\": use \"{}\" (C3 only)",
                                names.join("\" or \"")
                            ),
                        )
                    })?,
            };
            let g1_temperature = match b.g1_temperature.as_deref() {
                None => G1Temperature::default(),
                Some(name) => G1Temperature::from_name(name)
                    .filter(|t| pathway == Pathway::C3 || *t == G1Temperature::Constant)
                    .ok_or_else(|| {
                        let names: Vec<_> = G1Temperature::NAMES.iter().map(|n| n.0).collect();
                        err(
                            line_of_key(&text, &section, "g1_temperature"),
                            format!(
                                "[{section}] g1_temperature = \"{name}\": use \"{}\" \
                                 (\"gamma-star\" is for C3 leaves)",
                                names.join("\" or \"")
                            ),
                        )
                    })?,
            };
            let beta_target = match file.soil.beta_target.as_deref() {
                Some("g1") => BetaTarget::G1,
                Some("capacity") => BetaTarget::Capacity,
                None | Some("both") => BetaTarget::Both,
                Some(o) => {
                    return Err(err(
                        line_of_key(&text, "soil", "beta_target"),
                        format!(
                            "[soil] beta_target = \"{o}\": use \"g1\", \"capacity\" or \"both\""
                        ),
                    ));
                }
            };
            let clumping = b.clumping.or(from_preset("clumping")).unwrap_or(1.0);
            let radiation = TwoLeafCanopy::new(0.15, 0.78, 0.036, clumping, 0.05).map_err(|e| {
                err(
                    line_of_key(&text, &section, "clumping"),
                    format!("[{section}] {e}"),
                )
            })?;
            let canopy =
                CanopySettings::new(radiation, b.kn.or(from_preset("kn")).unwrap_or(0.3), 0.85)
                    .map_err(|e| {
                        err(
                            line_of_key(&text, &section, "kn"),
                            format!("[{section}] {e}"),
                        )
                    })?;
            let lai_setting = match (b.lai, preset) {
                (Some(l), _) => l,
                (None, Some(_)) => LaiSetting::Phenology,
                (None, None) => {
                    return Err(err(
                        text.find(&format!("[{section}]"))
                            .map(|o| line_of(&text, o)),
                        format!(
                            "[{section}] needs lai: a number (m2 m-2), \"forcing\" or \
                             \"phenology\" (or a preset)"
                        ),
                    ));
                }
            };
            let phenology_keys = [
                ("phenology", b.phenology.is_some()),
                ("lai_min", b.lai_min.is_some()),
                ("lai_max", b.lai_max.is_some()),
            ];
            if lai_setting != LaiSetting::Phenology
                && let Some((key, _)) = phenology_keys.iter().find(|(_, set)| *set)
            {
                return Err(err(
                    line_of_key(&text, &section, key),
                    format!(
                        "[{section}] {key} applies only with lai = \"phenology\"; remove it or \
                         set lai = \"phenology\""
                    ),
                ));
            }
            let (lai, phenology) = match lai_setting {
                LaiSetting::Value(v) => (v, None),
                LaiSetting::Forcing => {
                    lai_from_forcing = true;
                    (0.0, None)
                }
                LaiSetting::Phenology => {
                    let kind = match (&b.phenology, preset) {
                        (Some(name), _) => PhenologyKind::parse(name).map_err(|e| {
                            err(
                                line_of_key(&text, &section, "phenology"),
                                format!("[{section}] {e}"),
                            )
                        })?,
                        (None, Some(p)) => p.phenology,
                        (None, None) => {
                            return Err(err(
                                line_of_key(&text, &section, "lai"),
                                format!(
                                    "[{section}] lai = \"phenology\" needs phenology = \"gsi\", \
                                     \"gsi-soil-water\" or \"gsi-budburst\" and lai_max \
                                     (m2 m-2), or a preset"
                                ),
                            ));
                        }
                    };
                    let Some(lai_max) = b.lai_max.or(from_preset("lai_max")) else {
                        return Err(err(
                            line_of_key(&text, &section, "lai"),
                            format!("[{section}] lai = \"phenology\" needs lai_max (m2 m-2)"),
                        ));
                    };
                    let lai_min = b.lai_min.or(from_preset("lai_min")).unwrap_or(0.0);
                    let settings = PhenologySettings::new(kind, lai_min, lai_max).map_err(|e| {
                        err(
                            line_of_key(&text, &section, "lai_min")
                                .or_else(|| line_of_key(&text, &section, "lai_max")),
                            format!("[{section}] {e}"),
                        )
                    })?;
                    (lai_max, Some(settings))
                }
            };
            vegetation.push(Vegetation {
                leaf,
                options: LeafOptions {
                    electron_limit,
                    beta_target,
                    c3_form,
                    temperature_set,
                    g1_temperature,
                },
                canopy,
                cover: b.cover,
                lai_m2_m2: lai,
                leaf_width_m: b.leaf_width_m.or(from_preset("leaf_width_m")).unwrap_or(
                    match pathway {
                        Pathway::C3 => 0.05,
                        Pathway::C4 => 0.01,
                    },
                ),
                phenology,
            });
        }
        if vegetation.is_empty() {
            return Err(err(
                line_of_key(&text, "", "vegetation")
                    .or_else(|| text.find("[vegetation").map(|o| line_of(&text, o))),
                "[vegetation] needs a c3 or a c4 block (or both)".into(),
            ));
        }
        if file
            .vegetation
            .c3
            .as_ref()
            .is_some_and(|b| b.lai == Some(LaiSetting::Forcing))
            != file
                .vegetation
                .c4
                .as_ref()
                .is_some_and(|b| b.lai == Some(LaiSetting::Forcing))
            && file.vegetation.c3.is_some()
            && file.vegetation.c4.is_some()
        {
            return Err(err(
                text.find("lai = \"forcing\"").map(|o| line_of(&text, o)),
                "lai = \"forcing\" applies the weather file's one LAI column to every pathway: set it for both or neither".into(),
            ));
        }
        let soil = &file.soil;
        let bucket_params = BucketParams::new(
            soil.field_capacity,
            soil.wilting_point,
            soil.root_depth_m,
            soil.beta_threshold.unwrap_or(0.5),
        )
        .map_err(|e| {
            err(
                line_of_key(&text, "soil", "field_capacity"),
                format!("[soil] {e}"),
            )
        })?;
        let soil_water = match soil.initial_water {
            ValueOrForcing::Value(f) => SoilWater::Bucket(
                Bucket::new(bucket_params, InitialWater::FractionOfCapacity(f)).map_err(|e| {
                    err(
                        line_of_key(&text, "soil", "initial_water"),
                        format!("[soil] initial_water: {e}"),
                    )
                })?,
            ),
            ValueOrForcing::Forcing(_) => SoilWater::Observed(bucket_params),
        };
        let priestley_taylor = PriestleyTaylor::new(soil.priestley_taylor_alpha.unwrap_or(1.26))
            .map_err(|e| {
                err(
                    line_of_key(&text, "soil", "priestley_taylor_alpha"),
                    format!("[soil] {e}"),
                )
            })?;
        let settings = SiteSettings {
            location,
            vegetation,
            soil: soil_water,
            priestley_taylor,
            soil_radiation_extinction: 0.5,
        };
        let settings = isodisc_model::site::SiteModel::new(settings)
            .map_err(|e| {
                err(
                    line_of_key(&text, "vegetation.c3", "cover"),
                    format!("[vegetation] {e}"),
                )
            })?
            .settings()
            .clone();
        let atm = &file.atmosphere;
        let constant =
            |v: ValueOrForcing, key: &str, min: f64, max: f64, unit: &str| -> Result<Option<f64>> {
                match v {
                    ValueOrForcing::Value(x) if x.is_finite() && (min..=max).contains(&x) => {
                        Ok(Some(x))
                    }
                    ValueOrForcing::Value(x) => Err(err(
                        line_of_key(&text, "atmosphere", key),
                        format!("[atmosphere] {key} = {x}: valid range is {min} to {max} {unit}"),
                    )),
                    ValueOrForcing::Forcing(_) => Ok(None),
                }
            };
        let co2 = constant(atm.co2, "co2", 1.0, 5000.0, "umol mol-1")?;
        let d13c_co2 = constant(atm.d13c_co2, "d13c_co2", -50.0, 50.0, "permil")?;
        let o2 = constant(
            ValueOrForcing::Value(atm.o2.unwrap_or(210.0)),
            "o2",
            0.0,
            1000.0,
            "mmol mol-1",
        )?
        .unwrap_or(210.0);
        let out = &file.output;
        let aggregates = [
            out.daily.unwrap_or(true),
            out.monthly.unwrap_or(true),
            out.annual.unwrap_or(true),
        ];
        file.pools.build().map_err(|e| {
            err(
                text.find("[pools").map(|o| line_of(&text, o)),
                format!("[pools] {e}"),
            )
        })?;
        let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
        let history = match &atm.history {
            Some(h) => Some(crate::simulate::read_history(&dir.join(h)).map_err(|e| {
                err(
                    line_of_key(&text, "atmosphere", "history"),
                    format!("[atmosphere] history: {}", e.chain()),
                )
            })?),
            None => None,
        };
        let pools = file.pools.clone();
        Ok(Self {
            path: path.to_path_buf(),
            text,
            file,
            settings,
            pools,
            history,
            co2,
            d13c_co2,
            o2,
            lai_from_forcing,
            aggregates,
        })
    }

    /// Every file the site reads, with its role: the site file, the weather file and the
    /// atmospheric history (when given).
    pub fn input_files(&self) -> Vec<(&'static str, PathBuf)> {
        let dir = self.dir();
        let mut files = vec![
            ("site_file", self.path.clone()),
            ("forcing", dir.join(&self.file.forcing.path)),
        ];
        if let Some(h) = &self.file.atmosphere.history {
            files.push(("atmosphere_history", dir.join(h)));
        }
        files
    }

    /// The folder of the site file (relative paths inside it are taken from here).
    pub fn dir(&self) -> PathBuf {
        self.path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_else(|| PathBuf::from("."))
    }

    /// The site's weather from `[forcing]`, read from `from` to `to` (local times, both optional),
    /// with the site's elevation for the pressure when the weather has none.
    pub fn weather(
        &self,
        from: Option<LocalTime>,
        to: Option<LocalTime>,
    ) -> std::result::Result<ForcingReader, ForcingError> {
        ForcingReader::open(
            &self.file.forcing,
            &self.dir(),
            self.file.site.elevation_m,
            from,
            to,
        )
    }
}

fn site_err(e: SiteError) -> Error {
    Error::msg(e.to_string())
}
