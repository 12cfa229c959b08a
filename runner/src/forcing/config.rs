//! The `[forcing]` block of the site file and its validated form.
//!
//! Every setting is optional except `path`; an unset setting comes from the preset when one is
//! named, else from the default given on the field. Validation happens once, in
//! [`ForcingConfig::plan`], before any row is read.

use std::path::PathBuf;

use isodisc_model::error::check_range;
use serde::Deserialize;

use super::error::ForcingError;
use super::pattern::Pattern;
use super::preset::Preset;

/// A weather variable isodisc can read, by the name used in `[forcing.columns]` and
/// `[forcing.units]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Variable {
    /// Air temperature.
    TAir,
    /// Vapour pressure deficit.
    Vpd,
    /// Relative humidity.
    Rh,
    /// Dew-point temperature.
    DewPoint,
    /// Incoming shortwave radiation.
    Sw,
    /// Incoming photosynthetic photon flux density.
    Ppfd,
    /// CO2 mole fraction of the air.
    Co2,
    /// Air pressure.
    Pressure,
    /// Precipitation per step.
    Precip,
    /// Volumetric soil water content.
    Swc,
    /// Leaf area index.
    Lai,
    /// δ13C of CO2 in the air.
    D13cCo2,
    /// Wind speed.
    Wind,
    /// Vapour pressure of the air.
    VapourPressure,
    /// Specific humidity of the air.
    SpecificHumidity,
}

/// Number of [`Variable`]s.
pub(crate) const N_VARIABLES: usize = 15;

impl Variable {
    /// All variables, in the order of their index.
    pub const ALL: [Variable; N_VARIABLES] = [
        Variable::TAir,
        Variable::Vpd,
        Variable::Rh,
        Variable::DewPoint,
        Variable::Sw,
        Variable::Ppfd,
        Variable::Co2,
        Variable::Pressure,
        Variable::Precip,
        Variable::Swc,
        Variable::Lai,
        Variable::D13cCo2,
        Variable::Wind,
        Variable::VapourPressure,
        Variable::SpecificHumidity,
    ];

    /// The name used in the site file (`t_air`, `vpd`, ...).
    pub fn name(self) -> &'static str {
        match self {
            Variable::TAir => "t_air",
            Variable::Vpd => "vpd",
            Variable::Rh => "rh",
            Variable::DewPoint => "dew_point",
            Variable::Sw => "sw",
            Variable::Ppfd => "ppfd",
            Variable::Co2 => "co2",
            Variable::Pressure => "pressure",
            Variable::Precip => "precip",
            Variable::Swc => "swc",
            Variable::Lai => "lai",
            Variable::D13cCo2 => "d13c_co2",
            Variable::Wind => "wind",
            Variable::VapourPressure => "vapour_pressure",
            Variable::SpecificHumidity => "specific_humidity",
        }
    }

    /// The project's unit of the variable, for messages.
    pub fn project_unit(self) -> &'static str {
        match self {
            Variable::TAir | Variable::DewPoint => "°C",
            Variable::Vpd | Variable::Pressure | Variable::VapourPressure => "kPa",
            Variable::Rh => "%",
            Variable::Sw => "W m⁻²",
            Variable::Ppfd => "µmol m⁻² s⁻¹",
            Variable::Co2 => "µmol mol⁻¹",
            Variable::Precip => "mm",
            Variable::Swc => "m³ m⁻³",
            Variable::Lai => "m² m⁻²",
            Variable::D13cCo2 => "‰",
            Variable::Wind => "m s⁻¹",
            Variable::SpecificHumidity => "kg kg⁻¹",
        }
    }

    /// The range a value may take in the project's unit; the reader refuses values outside it.
    /// Radiation below 0 but above −50 W m⁻² (a night-time sensor offset) is set to 0 instead.
    pub fn valid_range(self) -> (f64, f64) {
        match self {
            // Colder than −70 °C or hotter than 60 °C has not been measured at a vegetated site
            // (common practice); a value outside is a unit or scale slip.
            Variable::TAir | Variable::DewPoint => (-70.0, 60.0),
            // The leaf model's VPD range.
            Variable::Vpd => (0.0, 10.0),
            // Sensors overshoot 100 % a little when the air is saturated.
            Variable::Rh => (0.0, 105.0),
            // Above the solar constant with cloud enhancement; the site model's limit.
            Variable::Sw => (0.0, 2000.0),
            // The site model's limit.
            Variable::Ppfd => (0.0, 5000.0),
            // Air at a site holds far more than 100 and far less than 5000 µmol mol⁻¹ (the leaf
            // model's upper limit).
            Variable::Co2 => (100.0, 5000.0),
            // Pressure from the highest summits to the deepest depressions (the leaf model's range).
            Variable::Pressure => (30.0, 110.0),
            // The soil bucket's limit per step.
            Variable::Precip => (0.0, 2000.0),
            Variable::Swc => (0.0, 1.0),
            // The canopy model's range.
            Variable::Lai => (0.0, 20.0),
            // Ambient and canopy air lie between about −6 and −20 ‰ (common practice); a
            // positive value is a sign slip.
            Variable::D13cCo2 => (-30.0, 0.0),
            // The strongest winds measured are near 100 m s⁻¹ (from memory).
            Variable::Wind => (0.0, 100.0),
            // The saturation vapour pressure at 45 °C is 9.6 kPa (FAO-56).
            Variable::VapourPressure => (0.0, 10.0),
            // Above 0.05 kg kg⁻¹ the air would be wetter than saturated at 60 °C.
            Variable::SpecificHumidity => (0.0, 0.05),
        }
    }

    /// Position in [`Variable::ALL`], for per-variable arrays.
    pub(crate) fn index(self) -> usize {
        self as usize
    }

    /// Units accepted in `[forcing.units]`, each with the scale, offset and power of the step
    /// length (s) that convert a file value into the project's unit:
    /// project = file·scale·step_s^power + offset. The first is the default.
    pub(crate) fn accepted_units(self) -> &'static [(&'static str, f64, f64, i32)] {
        // °F to °C by definition: (F − 32)·5/9.
        const F_SCALE: f64 = 5.0 / 9.0;
        const F_OFFSET: f64 = -32.0 * 5.0 / 9.0;
        match self {
            Variable::TAir | Variable::DewPoint => &[
                ("degC", 1.0, 0.0, 0),
                ("K", 1.0, -273.15, 0),
                ("degF", F_SCALE, F_OFFSET, 0),
            ],
            Variable::Vpd => &[
                ("kPa", 1.0, 0.0, 0),
                ("hPa", 0.1, 0.0, 0),
                ("Pa", 1e-3, 0.0, 0),
            ],
            Variable::Pressure => &[
                ("kPa", 1.0, 0.0, 0),
                ("hPa", 0.1, 0.0, 0),
                ("mbar", 0.1, 0.0, 0),
                ("Pa", 1e-3, 0.0, 0),
            ],
            Variable::VapourPressure => &[("kPa", 1.0, 0.0, 0), ("hPa", 0.1, 0.0, 0)],
            Variable::SpecificHumidity => &[("kg kg-1", 1.0, 0.0, 0), ("g kg-1", 1e-3, 0.0, 0)],
            Variable::Rh => &[("%", 1.0, 0.0, 0), ("fraction", 100.0, 0.0, 0)],
            // Energy accumulated over the step ÷ the step's seconds = its mean flux.
            Variable::Sw => &[
                ("W m-2", 1.0, 0.0, 0),
                ("J m-2", 1.0, 0.0, -1),
                ("MJ m-2", 1e6, 0.0, -1),
                ("Wh m-2", 3600.0, 0.0, -1),
            ],
            Variable::Ppfd => &[("umol m-2 s-1", 1.0, 0.0, 0)],
            Variable::Co2 => &[("umol mol-1", 1.0, 0.0, 0), ("ppm", 1.0, 0.0, 0)],
            // 1 kg m⁻² of water is 1 mm; a rate times the step's seconds is the step's amount;
            // 1 inch = 25.4 mm by definition.
            Variable::Precip => &[
                ("mm", 1.0, 0.0, 0),
                ("inch", 25.4, 0.0, 0),
                ("kg m-2 s-1", 1.0, 0.0, 1),
                ("mm h-1", 1.0 / 3600.0, 0.0, 1),
            ],
            Variable::Swc => &[("m3 m-3", 1.0, 0.0, 0), ("%", 0.01, 0.0, 0)],
            Variable::Lai => &[("m2 m-2", 1.0, 0.0, 0)],
            Variable::D13cCo2 => &[("permil", 1.0, 0.0, 0)],
            Variable::Wind => &[("m s-1", 1.0, 0.0, 0), ("km h-1", 1.0 / 3.6, 0.0, 0)],
        }
    }
}

/// Per-variable settings: for each variable, a value of type `T` or nothing. Used twice: column
/// names (`[forcing.columns]`) and units (`[forcing.units]`). Unknown variable names are refused.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PerVariable<T> {
    /// Air temperature; unit `degC` (default) or `K`.
    pub t_air: Option<T>,
    /// Vapour pressure deficit; unit `kPa` (default) or `hPa`.
    pub vpd: Option<T>,
    /// Relative humidity; unit `%` (default) or `fraction`.
    pub rh: Option<T>,
    /// Dew point; unit `degC` (default) or `K`.
    pub dew_point: Option<T>,
    /// Incoming shortwave radiation; unit `W m-2`.
    pub sw: Option<T>,
    /// Incoming PPFD; unit `umol m-2 s-1`.
    pub ppfd: Option<T>,
    /// CO2 mole fraction; unit `umol mol-1` (or `ppm`).
    pub co2: Option<T>,
    /// Air pressure; unit `kPa` (default) or `hPa`.
    pub pressure: Option<T>,
    /// Precipitation per step; unit `mm`.
    pub precip: Option<T>,
    /// Volumetric soil water content; unit `m3 m-3` (default) or `%`.
    pub swc: Option<T>,
    /// Leaf area index; unit `m2 m-2`.
    pub lai: Option<T>,
    /// δ13C of CO2 in the air; unit `permil` (‰ vs VPDB).
    pub d13c_co2: Option<T>,
    /// Wind speed; unit `m s-1` (default) or `km h-1`.
    pub wind: Option<T>,
    /// Vapour pressure of the air; unit `kPa` (default) or `hPa`.
    pub vapour_pressure: Option<T>,
    /// Specific humidity; unit `kg kg-1` (default) or `g kg-1`; needs the air pressure.
    pub specific_humidity: Option<T>,
}

impl<T> PerVariable<T> {
    /// The setting for `v`, if any.
    pub fn get(&self, v: Variable) -> Option<&T> {
        match v {
            Variable::TAir => self.t_air.as_ref(),
            Variable::Vpd => self.vpd.as_ref(),
            Variable::Rh => self.rh.as_ref(),
            Variable::DewPoint => self.dew_point.as_ref(),
            Variable::Sw => self.sw.as_ref(),
            Variable::Ppfd => self.ppfd.as_ref(),
            Variable::Co2 => self.co2.as_ref(),
            Variable::Pressure => self.pressure.as_ref(),
            Variable::Precip => self.precip.as_ref(),
            Variable::Swc => self.swc.as_ref(),
            Variable::Lai => self.lai.as_ref(),
            Variable::D13cCo2 => self.d13c_co2.as_ref(),
            Variable::Wind => self.wind.as_ref(),
            Variable::VapourPressure => self.vapour_pressure.as_ref(),
            Variable::SpecificHumidity => self.specific_humidity.as_ref(),
        }
    }
}

/// How a time (or, with `date_column`, a time of day) is written.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub enum TimeFormat {
    /// ISO 8601 `YYYY-MM-DDTHH:MM[:SS]`, also with a space for the `T` (default).
    #[default]
    Iso,
    /// Compact `YYYYMMDDHHMM`, as in flux-tower files.
    Yyyymmddhhmm,
    /// A strftime-style pattern such as `"%d.%m.%Y %H:%M"` (see [`super::pattern`]).
    Pattern(String),
}

impl<'de> Deserialize<'de> for TimeFormat {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let text = String::deserialize(d)?;
        match text.as_str() {
            "iso" => Ok(TimeFormat::Iso),
            "yyyymmddhhmm" => Ok(TimeFormat::Yyyymmddhhmm),
            p if p.contains('%') => Ok(TimeFormat::Pattern(p.to_string())),
            other => Err(serde::de::Error::custom(format!(
                "time format \"{other}\" is not \"iso\", \"yyyymmddhhmm\" or a pattern with % fields such as \"%d.%m.%Y %H:%M\""
            ))),
        }
    }
}

/// Which end of its interval a row's timestamp marks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum TimestampMarks {
    /// The timestamp is the start of the interval the row's values hold for (default).
    #[default]
    Start,
    /// The timestamp is the end of the interval; isodisc moves it back one step.
    End,
}

/// Missing-value codes: one list for every column (`missing = ["-9999", "NA", ""]`), or a table
/// with a list for every column (`all`) and lists for single variables that add to it
/// (`missing = { all = ["-9999"], precip = ["-9900"] }`). Codes may be written as strings or
/// numbers.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MissingSpec {
    /// Codes for every column; None keeps the default (or the preset's).
    pub all: Option<Vec<String>>,
    /// Extra codes of single variables.
    pub per_variable: PerVariable<Vec<String>>,
}

impl MissingSpec {
    /// A file-wide list only.
    pub fn list(codes: &[&str]) -> Self {
        Self {
            all: Some(codes.iter().map(|c| c.to_string()).collect()),
            per_variable: PerVariable::default(),
        }
    }
}

/// A missing code written as a string or a number in the site file.
struct Code(String);

impl<'de> Deserialize<'de> for Code {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl serde::de::Visitor<'_> for V {
            type Value = Code;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a missing code, as a string or a number")
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<Code, E> {
                Ok(Code(v.to_string()))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<Code, E> {
                Ok(Code(v.to_string()))
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<Code, E> {
                Ok(Code(v.to_string()))
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<Code, E> {
                Ok(Code(v.to_string()))
            }
        }
        d.deserialize_any(V)
    }
}

fn codes(list: Vec<Code>) -> Vec<String> {
    list.into_iter().map(|c| c.0).collect()
}

impl<'de> Deserialize<'de> for MissingSpec {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> serde::de::Visitor<'de> for V {
            type Value = MissingSpec;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str(
                    "a list of missing codes, or a table `all = [...]`, `<variable> = [...]`",
                )
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(
                self,
                mut a: A,
            ) -> Result<MissingSpec, A::Error> {
                let mut list = Vec::new();
                while let Some(c) = a.next_element::<Code>()? {
                    list.push(c.0);
                }
                Ok(MissingSpec {
                    all: Some(list),
                    per_variable: PerVariable::default(),
                })
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(
                self,
                mut a: A,
            ) -> Result<MissingSpec, A::Error> {
                let mut spec = MissingSpec::default();
                while let Some(key) = a.next_key::<String>()? {
                    let list = codes(a.next_value::<Vec<Code>>()?);
                    if key == "all" {
                        spec.all = Some(list);
                        continue;
                    }
                    let Some(v) = Variable::ALL.into_iter().find(|v| v.name() == key) else {
                        return Err(serde::de::Error::custom(format!(
                            "missing.{key}: `{key}` is neither `all` nor a variable isodisc reads"
                        )));
                    };
                    *spec.per_variable.slot(v) = Some(list);
                }
                Ok(spec)
            }
        }
        d.deserialize_any(V)
    }
}

impl<T> PerVariable<T> {
    /// The setting for `v`, to fill.
    pub(crate) fn slot(&mut self, v: Variable) -> &mut Option<T> {
        match v {
            Variable::TAir => &mut self.t_air,
            Variable::Vpd => &mut self.vpd,
            Variable::Rh => &mut self.rh,
            Variable::DewPoint => &mut self.dew_point,
            Variable::Sw => &mut self.sw,
            Variable::Ppfd => &mut self.ppfd,
            Variable::Co2 => &mut self.co2,
            Variable::Pressure => &mut self.pressure,
            Variable::Precip => &mut self.precip,
            Variable::Swc => &mut self.swc,
            Variable::Lai => &mut self.lai,
            Variable::D13cCo2 => &mut self.d13c_co2,
            Variable::Wind => &mut self.wind,
            Variable::VapourPressure => &mut self.vapour_pressure,
            Variable::SpecificHumidity => &mut self.specific_humidity,
        }
    }
}

/// The `[forcing]` block of the site file: where the weather file is and how to read it.
///
/// Every field except `path` may be left out; the named `preset` fills what is left out, and the
/// defaults given below fill the rest.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ForcingConfig {
    /// Weather file (CSV), relative to the site file's folder unless absolute.
    pub path: PathBuf,
    /// A named layout that fills the time column and format, step, column names, units and
    /// missing markers: `"flux-tower"` or `"flux-tower-sensors"`. Default: none.
    pub preset: Option<Preset>,
    /// Field delimiter, one ASCII character. Default `','`.
    pub delimiter: Option<char>,
    /// 1-based line of the header; the lines above it (station metadata) are skipped. Default 1.
    pub header_line: Option<u64>,
    /// Lines starting with this one ASCII character are skipped anywhere. Default: none.
    pub comment: Option<String>,
    /// Header of the time column (with `date_column`: the time-of-day column). Default `"time"`.
    pub time_column: Option<String>,
    /// Time format: `"iso"`, `"yyyymmddhhmm"` or a pattern like `"%d.%m.%Y %H:%M"`; with
    /// `date_column` a pattern of the time of day (default `"%H:%M"`). Default `"iso"`.
    pub time_format: Option<TimeFormat>,
    /// Header of a date column, read with `date_format`, beside `time_column`. Default: none.
    pub date_column: Option<String>,
    /// Pattern of `date_column`. Default `"%Y-%m-%d"`.
    pub date_format: Option<String>,
    /// Header of a year column (time in separate fields). Default: none.
    pub year_column: Option<String>,
    /// Header of a month column (with `day_column`). Default: none.
    pub month_column: Option<String>,
    /// Header of a day-of-month column. Default: none.
    pub day_column: Option<String>,
    /// Header of a day-of-year column (instead of month and day). Default: none.
    pub doy_column: Option<String>,
    /// Header of an hour column (0–23, or 1–24 where 24 ends the day). Default: none (hour 0).
    pub hour_column: Option<String>,
    /// Header of a minute column. Default: none (minute 0).
    pub minute_column: Option<String>,
    /// Relabels every row to this year: a typical year spliced from months of different years,
    /// January to December in order, each month complete. Default: none.
    pub typical_year: Option<i32>,
    /// Expected step between rows, minutes (1–1440); any other step is an error. Default 60.
    pub step_minutes: Option<u32>,
    /// Which end of its interval a timestamp marks. Default `"start"`.
    pub timestamp_marks: Option<TimestampMarks>,
    /// Cell contents that mean "missing" (compared after trimming; a numeric marker also matches
    /// equal numbers, so `-9999` matches `-9999.0`); a list, or a table with `all` and per-variable
    /// lists. Default `["-9999", "NA", ""]`.
    pub missing: Option<MissingSpec>,
    /// Longest gap, hours, that is filled by linear interpolation; longer gaps leave the steps
    /// missing. Default 2.0.
    pub max_gap_hours: Option<f64>,
    /// PPFD per unit shortwave, µmol J⁻¹, used to derive PPFD from shortwave and shortwave from
    /// PPFD. Default 2.1 (≈0.46 of shortwave is PAR at ≈4.57 µmol J⁻¹; common practice).
    pub ppfd_per_sw: Option<f64>,
    /// Header of a column giving the hours a precipitation value is the total of; the total is
    /// spread evenly over the steps that end with its row. Default: none (each value is one step's).
    pub precip_period_column: Option<String>,
    /// Largest quality flag accepted: a value whose `<column>_QC` flag exceeds it is missing.
    /// Default: none (flags not read); 1 with the `flux-tower-sensors` preset.
    pub qc_max: Option<f64>,
    /// The file's column for each variable. An empty name removes a preset's mapping.
    /// Default: none mapped (a preset maps its own).
    #[serde(default)]
    pub columns: PerVariable<String>,
    /// The unit of each mapped column. Default: the first unit listed for each variable.
    #[serde(default)]
    pub units: PerVariable<String>,
    /// A factor applied to a column as read, before its unit (tenths: 0.1). Default 1.
    #[serde(default)]
    pub scale: PerVariable<f64>,
}

/// Where a variable's value comes from in the file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Mapping {
    /// Column header.
    pub column: String,
    /// Project value = file value · scale + offset (the `scale.<variable>` factor included).
    pub scale: f64,
    pub offset: f64,
    /// Name of the unit, for messages.
    pub unit: &'static str,
    /// `scale.<variable>` as set (1 when not), for messages.
    pub user_scale: f64,
    /// A preset's optional column: silently unmapped when the header lacks it.
    pub optional: bool,
    /// Missing codes of this column: the file-wide list and the variable's own.
    pub missing: Vec<String>,
}

/// How the time of a row is written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TimeLayout {
    /// One column.
    Single { column: String, format: TimeFormat },
    /// A date column and a time-of-day column, each a pattern.
    DateTime {
        date_column: String,
        date: Pattern,
        time_column: String,
        time: Pattern,
    },
    /// Separate numeric fields.
    Fields {
        year: String,
        month_day: Option<(String, String)>,
        doy: Option<String>,
        hour: Option<String>,
        minute: Option<String>,
    },
}

/// A [`ForcingConfig`] with the preset and defaults applied and every setting checked.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Plan {
    pub path: PathBuf,
    pub delimiter: u8,
    pub header_line: u64,
    pub comment: Option<u8>,
    pub time: TimeLayout,
    pub typical_year: Option<i32>,
    pub step_minutes: u32,
    pub timestamp_marks: TimestampMarks,
    /// The file-wide missing codes.
    pub missing: Vec<String>,
    pub max_gap_hours: f64,
    pub ppfd_per_sw: f64,
    pub precip_period_column: Option<String>,
    pub qc_max: Option<f64>,
    pub mappings: [Option<Mapping>; N_VARIABLES],
    /// The humidity variable used for VPD (first mapped of vpd, rh, dew_point, vapour_pressure,
    /// specific_humidity).
    pub humidity: Variable,
}

/// Humidity variables in the order they are preferred.
pub(crate) const HUMIDITY: [Variable; 5] = [
    Variable::Vpd,
    Variable::Rh,
    Variable::DewPoint,
    Variable::VapourPressure,
    Variable::SpecificHumidity,
];

impl ForcingConfig {
    /// Applies the preset and defaults and checks every setting: the numbers are in range, the
    /// required variables (t_air; a humidity; one of sw/ppfd) are mapped, and every unit is one
    /// the variable accepts. Called by the reader; callable early to fail fast.
    pub fn validate(&self) -> Result<(), ForcingError> {
        self.plan().map(|_| ())
    }

    pub(crate) fn plan(&self) -> Result<Plan, ForcingError> {
        let preset = self.preset.map(Preset::layout);
        let p = preset.as_ref();
        let config_err = |message: String| ForcingError::Config { message };

        let delimiter = self.delimiter.unwrap_or(',');
        if !delimiter.is_ascii() || delimiter == '"' || delimiter == '\n' {
            return Err(config_err(format!(
                "forcing.delimiter {delimiter:?} must be one ASCII character other than a quote or newline"
            )));
        }
        let comment = match &self.comment {
            None => None,
            Some(c) => {
                let b = c.as_bytes();
                if b.len() != 1
                    || !b[0].is_ascii()
                    || b[0] == b'"'
                    || b[0] == b'\n'
                    || b[0] == delimiter as u8
                {
                    return Err(config_err(format!(
                        "forcing.comment = {c:?} must be one ASCII character other than a quote, newline or the delimiter"
                    )));
                }
                Some(b[0])
            }
        };
        let header_line = self.header_line.unwrap_or(1);
        if header_line == 0 {
            return Err(config_err(
                "forcing.header_line = 0: lines count from 1 (the first line of the file)".into(),
            ));
        }
        let step_minutes = self
            .step_minutes
            .or(p.map(|p| p.step_minutes))
            .unwrap_or(60);
        check_range("forcing.step_minutes", f64::from(step_minutes), 1.0, 1440.0)?;
        let step_s = f64::from(step_minutes) * 60.0;
        let max_gap_hours = check_range(
            "forcing.max_gap_hours",
            self.max_gap_hours.unwrap_or(2.0),
            0.0,
            240.0,
        )?;
        // Around 2.0–2.3 µmol J⁻¹ in the literature; a wide range still catches a units slip.
        let ppfd_per_sw = check_range(
            "forcing.ppfd_per_sw",
            self.ppfd_per_sw.unwrap_or(2.1),
            1.0,
            3.0,
        )?;
        if let Some(y) = self.typical_year {
            check_range("forcing.typical_year", f64::from(y), 1.0, 9999.0)?;
        }
        let qc_max = match self.qc_max.or(p.and_then(|p| p.qc_max)) {
            Some(q) => Some(check_range("forcing.qc_max", q, f64::MIN, f64::MAX)?),
            None => None,
        };
        let missing_all: Vec<String> = self
            .missing
            .as_ref()
            .and_then(|m| m.all.clone())
            .or(p.map(|p| p.missing.iter().map(|s| s.to_string()).collect()))
            .unwrap_or_else(|| vec!["-9999".into(), "NA".into(), String::new()]);

        let mut mappings: [Option<Mapping>; N_VARIABLES] = Default::default();
        for v in Variable::ALL {
            // A preset's unit belongs to the preset's column, not to one the user put in its place.
            let (column, optional, preset_unit) = match (self.columns.get(v), p) {
                (Some(own), _) => (own.trim().to_string(), false, None),
                (None, Some(p)) => match p.column(v) {
                    Some((name, optional)) => (name.to_string(), optional, p.unit(v)),
                    None => continue,
                },
                (None, None) => continue,
            };
            let accepted = v.accepted_units();
            let unit_name = self.units.get(v).map(String::as_str).or(preset_unit);
            let (unit, scale, offset, power) = match unit_name {
                None => accepted[0],
                Some(u) => *accepted
                    .iter()
                    .find(|(name, ..)| *name == u.trim())
                    .ok_or_else(|| {
                        let list: Vec<String> =
                            accepted.iter().map(|(n, ..)| format!("\"{n}\"")).collect();
                        config_err(format!(
                            "forcing.units.{} = \"{u}\" is not a unit isodisc knows for {}; use {}",
                            v.name(),
                            v.name(),
                            list.join(" or ")
                        ))
                    })?,
            };
            let user_scale = match self.scale.get(v) {
                Some(&f) => {
                    if !f.is_finite() || f == 0.0 {
                        return Err(config_err(format!(
                            "forcing.scale.{} = {f} must be a finite number other than 0",
                            v.name()
                        )));
                    }
                    f
                }
                None => 1.0,
            };
            if column.is_empty() {
                continue;
            }
            let mut missing = missing_all.clone();
            if let Some(own) = self.missing.as_ref().and_then(|m| m.per_variable.get(v)) {
                missing.extend(own.iter().cloned());
            }
            mappings[v.index()] = Some(Mapping {
                column,
                scale: user_scale * scale * step_s.powi(power),
                offset,
                unit,
                user_scale,
                optional,
                missing,
            });
        }
        for v in Variable::ALL {
            let unmapped = mappings[v.index()].is_none();
            let named = |what: &str| {
                config_err(format!(
                    "forcing.{what}.{} is set but no column is mapped to {}",
                    v.name(),
                    v.name()
                ))
            };
            if self.units.get(v).is_some() && unmapped {
                return Err(named("units"));
            }
            if self.scale.get(v).is_some() && unmapped {
                return Err(named("scale"));
            }
            if self
                .missing
                .as_ref()
                .and_then(|m| m.per_variable.get(v))
                .is_some()
                && unmapped
            {
                return Err(named("missing"));
            }
        }
        let mapped = |v: Variable| mappings[v.index()].is_some();
        if !mapped(Variable::TAir) {
            return Err(config_err(
                "forcing.columns.t_air is required (the air temperature column)".to_string(),
            ));
        }
        // The user's own humidity column wins over a preset's; then VPD (measured directly) over
        // RH over dew point over vapour pressure over specific humidity.
        let humidity = HUMIDITY
            .into_iter()
            .find(|v| mapped(*v) && self.columns.get(*v).is_some())
            .or_else(|| HUMIDITY.into_iter().find(|v| mapped(*v)))
            .ok_or_else(|| {
                config_err(
                    "one of forcing.columns.vpd, .rh, .dew_point, .vapour_pressure or \
                     .specific_humidity is required (air humidity)"
                        .to_string(),
                )
            })?;
        if !mapped(Variable::Sw) && !mapped(Variable::Ppfd) {
            return Err(config_err(
                "one of forcing.columns.sw or .ppfd is required (incoming radiation)".to_string(),
            ));
        }
        // Only the humidity variable in use is read, so a gap in an unused one cannot make a step
        // missing.
        for v in HUMIDITY {
            if v != humidity {
                mappings[v.index()] = None;
            }
        }
        if self.precip_period_column.is_some() && mappings[Variable::Precip.index()].is_none() {
            return Err(config_err(
                "forcing.precip_period_column is set but no column is mapped to precip".into(),
            ));
        }

        let time = self.time_layout(p)?;
        if self.typical_year.is_some() && self.step_minutes.is_some_and(|s| 1440 % s != 0) {
            return Err(config_err(
                "forcing.typical_year needs a step that divides a day".into(),
            ));
        }
        Ok(Plan {
            path: self.path.clone(),
            delimiter: delimiter as u8,
            header_line,
            comment,
            time,
            typical_year: self.typical_year,
            step_minutes,
            timestamp_marks: self
                .timestamp_marks
                .or(p.map(|p| p.timestamp_marks))
                .unwrap_or_default(),
            missing: missing_all,
            max_gap_hours,
            ppfd_per_sw,
            precip_period_column: self
                .precip_period_column
                .as_ref()
                .map(|c| c.trim().to_string()),
            qc_max,
            mappings,
            humidity,
        })
    }

    /// The time layout: separate fields when `year_column` is set, a date and a time column when
    /// `date_column` is set, else one time column.
    fn time_layout(&self, p: Option<&super::preset::Layout>) -> Result<TimeLayout, ForcingError> {
        let config_err = |message: String| ForcingError::Config { message };
        let trim = |s: &Option<String>| s.as_ref().map(|c| c.trim().to_string());
        let field_keys = [
            ("month_column", &self.month_column),
            ("day_column", &self.day_column),
            ("doy_column", &self.doy_column),
            ("hour_column", &self.hour_column),
            ("minute_column", &self.minute_column),
        ];
        let compile = |key: &str, text: &str| {
            Pattern::compile(text).map_err(|e| config_err(format!("forcing.{key}: {e}")))
        };
        if let Some(year) = trim(&self.year_column) {
            for (key, set) in [
                ("time_column", self.time_column.is_some()),
                ("time_format", self.time_format.is_some()),
                ("date_column", self.date_column.is_some()),
                ("date_format", self.date_format.is_some()),
            ] {
                if set {
                    return Err(config_err(format!(
                        "forcing.{key} cannot be combined with forcing.year_column (time in separate fields)"
                    )));
                }
            }
            let month_day = match (trim(&self.month_column), trim(&self.day_column)) {
                (Some(m), Some(d)) => Some((m, d)),
                (None, None) => None,
                _ => {
                    return Err(config_err(
                        "forcing.month_column and forcing.day_column go together".into(),
                    ));
                }
            };
            let doy = trim(&self.doy_column);
            if month_day.is_some() == doy.is_some() {
                return Err(config_err(
                    "forcing.year_column needs either month_column and day_column, or doy_column"
                        .into(),
                ));
            }
            return Ok(TimeLayout::Fields {
                year,
                month_day,
                doy,
                hour: trim(&self.hour_column),
                minute: trim(&self.minute_column),
            });
        }
        if let Some((key, _)) = field_keys.iter().find(|(_, v)| v.is_some()) {
            return Err(config_err(format!(
                "forcing.{key} needs forcing.year_column (time in separate fields)"
            )));
        }
        let time_column = trim(&self.time_column)
            .or(p.map(|p| p.time_column.to_string()))
            .unwrap_or_else(|| "time".to_string());
        if let Some(date_column) = trim(&self.date_column) {
            let date_text = self.date_format.as_deref().unwrap_or("%Y-%m-%d");
            let date = compile("date_format", date_text)?;
            let time = match &self.time_format {
                None => compile("time_format", "%H:%M")?,
                Some(TimeFormat::Pattern(t)) => compile("time_format", t)?,
                Some(_) => {
                    return Err(config_err(
                        "forcing.time_format with date_column must be a pattern of the time of day such as \"%H:%M\""
                            .into(),
                    ));
                }
            };
            if !date.has_date_field() {
                return Err(config_err(format!(
                    "forcing.date_format \"{date}\" has no field of the date (%Y, %m, %d, %j)"
                )));
            }
            return Ok(TimeLayout::DateTime {
                date_column,
                date,
                time_column,
                time,
            });
        }
        if self.date_format.is_some() {
            return Err(config_err(
                "forcing.date_format needs forcing.date_column".into(),
            ));
        }
        let format = self
            .time_format
            .clone()
            .or(p.map(|p| p.time_format.clone()))
            .unwrap_or_default();
        if let TimeFormat::Pattern(t) = &format {
            compile("time_format", t)?;
        }
        Ok(TimeLayout::Single {
            column: time_column,
            format,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::ForcingConfig;

    /// Every `[forcing]` example in docs/forcing.md parses and validates (docs match behaviour).
    #[test]
    fn every_forcing_example_in_the_docs_is_valid() {
        #[derive(serde::Deserialize)]
        struct Site {
            forcing: ForcingConfig,
        }
        let docs = include_str!("../../../docs/forcing.md");
        let mut checked = 0;
        for block in docs.split("```toml\n").skip(1) {
            let text = block.split("```").next().unwrap_or_default();
            if !text.starts_with("[forcing]") {
                continue;
            }
            let site: Site = toml::from_str(text).unwrap_or_else(|e| panic!("{text}\n{e}"));
            site.forcing
                .validate()
                .unwrap_or_else(|e| panic!("{text}\n{e}"));
            checked += 1;
        }
        assert!(checked >= 4, "only {checked} examples found");
    }
}
