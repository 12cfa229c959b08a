//! Named file layouts. `flux-tower` uses the variable names and units of the flux-tower
//! community's standard half-hourly files (as in the FLUXNET2015 release; from memory): interval
//! start in `TIMESTAMP_START` as `YYYYMMDDHHMM`, gap-filled `_F` variables, −9999 for missing.
//! `flux-tower-sensors` reads the same files' position-qualified sensor columns with their flags.

use serde::Deserialize;

use super::config::{TimeFormat, TimestampMarks, Variable};

/// A named file layout for `forcing.preset`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
pub enum Preset {
    /// Half-hourly flux-tower files: `TIMESTAMP_START`, `TA_F` (°C), `VPD_F` (hPa), `SW_IN_F`
    /// (W m⁻²), `PPFD_IN` (µmol m⁻² s⁻¹, if present), `CO2_F_MDS` (µmol mol⁻¹, if present), `PA_F`
    /// (kPa), `P_F` (mm), `SWC_F_MDS_1` (%, if present), `WS_F` (m s⁻¹); −9999 missing; 30 min.
    #[serde(rename = "flux-tower")]
    FluxTower,
    /// Half-hourly flux-tower files with position-qualified sensor names (`_H_V_R`: horizontal
    /// position, vertical position, replicate; from memory) and their `_QC` flag columns: the
    /// first sensor of each, `TA_1_1_1` (°C), `RH_1_1_1` (%), `SW_IN_1_1_1` (W m⁻²), and when the
    /// header has them `PPFD_IN_1_1_1`, `CO2_1_1_1`, `PA_1_1_1` (kPa), `P_1_1_1` (mm),
    /// `SWC_1_1_1` (%), `WS_1_1_1` (m s⁻¹); −9999 missing; 30 min; `qc_max` = 1.
    #[serde(rename = "flux-tower-sensors")]
    FluxTowerSensors,
}

/// What a preset fills in.
pub(crate) struct Layout {
    pub time_column: &'static str,
    pub time_format: TimeFormat,
    pub timestamp_marks: TimestampMarks,
    pub step_minutes: u32,
    pub missing: &'static [&'static str],
    /// Largest quality flag accepted, when the layout has flag columns.
    pub qc_max: Option<f64>,
    /// (variable, column, unit, optional: used only when the header has it).
    pub columns: &'static [(Variable, &'static str, &'static str, bool)],
}

impl Layout {
    /// The preset's column for `v` and whether it is optional.
    pub fn column(&self, v: Variable) -> Option<(&'static str, bool)> {
        self.columns.iter().find(|c| c.0 == v).map(|c| (c.1, c.3))
    }

    /// The preset's unit for `v`.
    pub fn unit(&self, v: Variable) -> Option<&'static str> {
        self.columns.iter().find(|c| c.0 == v).map(|c| c.2)
    }
}

impl Preset {
    pub(crate) fn layout(self) -> Layout {
        match self {
            Preset::FluxTower => Layout {
                time_column: "TIMESTAMP_START",
                time_format: TimeFormat::Yyyymmddhhmm,
                timestamp_marks: TimestampMarks::Start,
                step_minutes: 30,
                missing: &["-9999"],
                qc_max: None,
                columns: &[
                    (Variable::TAir, "TA_F", "degC", false),
                    (Variable::Vpd, "VPD_F", "hPa", false),
                    (Variable::Sw, "SW_IN_F", "W m-2", false),
                    (Variable::Ppfd, "PPFD_IN", "umol m-2 s-1", true),
                    (Variable::Co2, "CO2_F_MDS", "umol mol-1", true),
                    (Variable::Pressure, "PA_F", "kPa", false),
                    (Variable::Precip, "P_F", "mm", false),
                    (Variable::Swc, "SWC_F_MDS_1", "%", true),
                    (Variable::Wind, "WS_F", "m s-1", false),
                ],
            },
            // Flag 0 is a measured value and 1 a good-quality fill in the community's files (from
            // memory): the default keeps those and drops poorer fills.
            Preset::FluxTowerSensors => Layout {
                time_column: "TIMESTAMP_START",
                time_format: TimeFormat::Yyyymmddhhmm,
                timestamp_marks: TimestampMarks::Start,
                step_minutes: 30,
                missing: &["-9999"],
                qc_max: Some(1.0),
                columns: &[
                    (Variable::TAir, "TA_1_1_1", "degC", false),
                    (Variable::Rh, "RH_1_1_1", "%", false),
                    (Variable::Sw, "SW_IN_1_1_1", "W m-2", false),
                    (Variable::Ppfd, "PPFD_IN_1_1_1", "umol m-2 s-1", true),
                    (Variable::Co2, "CO2_1_1_1", "umol mol-1", true),
                    (Variable::Pressure, "PA_1_1_1", "kPa", true),
                    (Variable::Precip, "P_1_1_1", "mm", true),
                    (Variable::Swc, "SWC_1_1_1", "%", true),
                    (Variable::Wind, "WS_1_1_1", "m s-1", true),
                ],
            },
        }
    }
}
