//! The `[forcing]` block of the site file and its validated form.
//!
//! Every setting is optional except `path`; an unset setting comes from the preset when one is
//! named, else from the default given on the field. Validation happens once, in
//! [`ForcingConfig::plan`], before any row is read.

use std::path::PathBuf;

use isodisc_model::error::check_range;
use serde::Deserialize;

use super::error::ForcingError;
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
}

/// Number of [`Variable`]s.
pub(crate) const N_VARIABLES: usize = 13;

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
        }
    }

    /// Position in [`Variable::ALL`], for per-variable arrays.
    pub(crate) fn index(self) -> usize {
        self as usize
    }

    /// Units accepted in `[forcing.units]`, each with the scale and offset that convert a file
    /// value into the project's unit (project = file·scale + offset). The first is the default.
    pub(crate) fn accepted_units(self) -> &'static [(&'static str, f64, f64)] {
        match self {
            Variable::TAir | Variable::DewPoint => &[("degC", 1.0, 0.0), ("K", 1.0, -273.15)],
            Variable::Vpd | Variable::Pressure => &[("kPa", 1.0, 0.0), ("hPa", 0.1, 0.0)],
            Variable::Rh => &[("%", 1.0, 0.0), ("fraction", 100.0, 0.0)],
            Variable::Sw => &[("W m-2", 1.0, 0.0)],
            Variable::Ppfd => &[("umol m-2 s-1", 1.0, 0.0)],
            Variable::Co2 => &[("umol mol-1", 1.0, 0.0), ("ppm", 1.0, 0.0)],
            Variable::Precip => &[("mm", 1.0, 0.0)],
            Variable::Swc => &[("m3 m-3", 1.0, 0.0), ("%", 0.01, 0.0)],
            Variable::Lai => &[("m2 m-2", 1.0, 0.0)],
            Variable::D13cCo2 => &[("permil", 1.0, 0.0)],
            Variable::Wind => &[("m s-1", 1.0, 0.0)],
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
    /// Wind speed; unit `m s-1`.
    pub wind: Option<T>,
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
        }
    }
}

/// How the time column is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum TimeFormat {
    /// ISO 8601 `YYYY-MM-DDTHH:MM[:SS]`, also with a space for the `T` (default).
    #[default]
    Iso,
    /// Compact `YYYYMMDDHHMM`, as in flux-tower files.
    Yyyymmddhhmm,
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
    /// missing markers: `"flux-tower"`. Default: none.
    pub preset: Option<Preset>,
    /// Field delimiter, one ASCII character. Default `','`.
    pub delimiter: Option<char>,
    /// Header of the time column. Default `"time"`.
    pub time_column: Option<String>,
    /// Time format. Default `"iso"`.
    pub time_format: Option<TimeFormat>,
    /// Expected step between rows, minutes (1–1440); any other step is an error. Default 60.
    pub step_minutes: Option<u32>,
    /// Which end of its interval a timestamp marks. Default `"start"`.
    pub timestamp_marks: Option<TimestampMarks>,
    /// Cell contents that mean "missing" (compared after trimming; a numeric marker also matches
    /// equal numbers, so `-9999` matches `-9999.0`). Default `["-9999", "NA", ""]`.
    pub missing: Option<Vec<String>>,
    /// Longest gap, hours, that is filled by linear interpolation; longer gaps leave the steps
    /// missing. Default 2.0.
    pub max_gap_hours: Option<f64>,
    /// PPFD per unit shortwave, µmol J⁻¹, used to derive PPFD from shortwave and shortwave from
    /// PPFD. Default 2.1 (≈0.46 of shortwave is PAR at ≈4.57 µmol J⁻¹; common practice).
    pub ppfd_per_sw: Option<f64>,
    /// The file's column for each variable. An empty name removes a preset's mapping.
    /// Default: none mapped (a preset maps its own).
    #[serde(default)]
    pub columns: PerVariable<String>,
    /// The unit of each mapped column. Default: the first unit listed for each variable.
    #[serde(default)]
    pub units: PerVariable<String>,
}

/// Where a variable's value comes from in the file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Mapping {
    /// Column header.
    pub column: String,
    /// Project value = file value · scale + offset.
    pub scale: f64,
    pub offset: f64,
    /// Name of the unit, for messages.
    pub unit: &'static str,
    /// A preset's optional column: silently unmapped when the header lacks it.
    pub optional: bool,
}

/// A [`ForcingConfig`] with the preset and defaults applied and every setting checked.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Plan {
    pub path: PathBuf,
    pub delimiter: u8,
    pub time_column: String,
    pub time_format: TimeFormat,
    pub step_minutes: u32,
    pub timestamp_marks: TimestampMarks,
    pub missing: Vec<String>,
    pub max_gap_hours: f64,
    pub ppfd_per_sw: f64,
    pub mappings: [Option<Mapping>; N_VARIABLES],
    /// The humidity variable used for VPD (first mapped of vpd, rh, dew_point).
    pub humidity: Variable,
}

impl ForcingConfig {
    /// Applies the preset and defaults and checks every setting: the numbers are in range, the
    /// required variables (t_air; one of vpd/rh/dew_point; one of sw/ppfd) are mapped, and every
    /// unit is one the variable accepts. Called by the reader; callable early to fail fast.
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
        let step_minutes = self
            .step_minutes
            .or(p.map(|p| p.step_minutes))
            .unwrap_or(60);
        check_range("forcing.step_minutes", f64::from(step_minutes), 1.0, 1440.0)?;
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
            let (unit, scale, offset) = match unit_name {
                None => accepted[0],
                Some(u) => *accepted
                    .iter()
                    .find(|(name, _, _)| *name == u.trim())
                    .ok_or_else(|| {
                        let list: Vec<String> = accepted
                            .iter()
                            .map(|(n, _, _)| format!("\"{n}\""))
                            .collect();
                        config_err(format!(
                            "forcing.units.{} = \"{u}\" is not a unit isodisc knows for {}; use {}",
                            v.name(),
                            v.name(),
                            list.join(" or ")
                        ))
                    })?,
            };
            if column.is_empty() {
                continue;
            }
            mappings[v.index()] = Some(Mapping {
                column,
                scale,
                offset,
                unit,
                optional,
            });
        }
        for v in Variable::ALL {
            if self.units.get(v).is_some() && mappings[v.index()].is_none() {
                return Err(config_err(format!(
                    "forcing.units.{} is set but no column is mapped to {}",
                    v.name(),
                    v.name()
                )));
            }
        }
        let mapped = |v: Variable| mappings[v.index()].is_some();
        if !mapped(Variable::TAir) {
            return Err(config_err(
                "forcing.columns.t_air is required (the air temperature column)".to_string(),
            ));
        }
        // The user's own humidity column wins over a preset's; then VPD (measured directly) over
        // RH over dew point.
        let humidity_vars = [Variable::Vpd, Variable::Rh, Variable::DewPoint];
        let humidity = humidity_vars
            .into_iter()
            .find(|v| mapped(*v) && self.columns.get(*v).is_some())
            .or_else(|| humidity_vars.into_iter().find(|v| mapped(*v)))
            .ok_or_else(|| {
                config_err(
                    "one of forcing.columns.vpd, .rh or .dew_point is required (air humidity)"
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
        for v in humidity_vars {
            if v != humidity {
                mappings[v.index()] = None;
            }
        }

        let time_column = self
            .time_column
            .clone()
            .or(p.map(|p| p.time_column.to_string()))
            .unwrap_or_else(|| "time".to_string());
        Ok(Plan {
            path: self.path.clone(),
            delimiter: delimiter as u8,
            time_column: time_column.trim().to_string(),
            time_format: self
                .time_format
                .or(p.map(|p| p.time_format))
                .unwrap_or_default(),
            step_minutes,
            timestamp_marks: self
                .timestamp_marks
                .or(p.map(|p| p.timestamp_marks))
                .unwrap_or_default(),
            missing: self
                .missing
                .clone()
                .or(p.map(|p| p.missing.iter().map(|s| s.to_string()).collect()))
                .unwrap_or_else(|| vec!["-9999".into(), "NA".into(), String::new()]),
            max_gap_hours,
            ppfd_per_sw,
            mappings,
            humidity,
        })
    }
}
