//! The streaming weather-file reader: one CSV row at a time through one reused `ByteRecord`,
//! converted to the project's units, checked, and gap-filled. Only the rows of a gap that may
//! still be interpolated are held back, so memory does not grow with the file.
//!
//! Gap rules: a run of missing values of one variable that lasts at most `max_gap_hours` is
//! filled by linear interpolation between the values on either side; a longer run, or one at the
//! start or end of the file, is left missing. Precipitation in a gap is 0, never interpolated
//! (rain does not follow straight lines). VPD from RH or dew point uses FAO-56 (Allen et al.
//! 1998, eqs. 11–14, through `isodisc_model::water`).

use std::collections::{BTreeMap, VecDeque};
use std::fmt;
use std::fs::File;
use std::path::{Path, PathBuf};

use csv::{ByteRecord, ReaderBuilder, Trim};
use isodisc_model::error::{check_range, closest_name};
use isodisc_model::water::{pressure_from_elevation_kpa, vpd_from_dew_point_kpa, vpd_from_rh_kpa};

use super::config::{ForcingConfig, N_VARIABLES, Plan, TimeFormat, TimestampMarks, Variable};
use super::error::{DataErrorKind, ForcingError};
use super::time::LocalTime;

/// Air temperatures above this in a column said to be °C are taken for kelvin, °C.
const KELVIN_SUSPECT_C: f64 = 60.0;
/// Air temperatures below this in a column said to be kelvin are taken for °C, °C after conversion.
const CELSIUS_SUSPECT_C: f64 = -100.0;
/// Relative humidity above this is refused, % (sensors overshoot 100 % a little when saturated).
const RH_MAX_PERCENT: f64 = 105.0;
/// Shortwave below this is refused rather than set to 0, W m⁻² (night offsets are a few W m⁻²).
const SW_MIN_W_M2: f64 = -50.0;

/// One step of weather in the project's units.
#[derive(Debug, Clone, PartialEq)]
pub struct ForcingStep {
    /// Start of the interval this step holds for, local standard time.
    pub time: LocalTime,
    /// Air temperature, °C. NaN only when the step is missing.
    pub t_air_c: f64,
    /// Vapour pressure deficit, kPa (from RH or dew point where no VPD column). NaN only when the
    /// step is missing.
    pub vpd_kpa: f64,
    /// Incoming shortwave, W m⁻² (from PPFD ÷ `ppfd_per_sw` where no shortwave column). NaN only
    /// when the step is missing.
    pub sw_w_m2: f64,
    /// Incoming PPFD, µmol m⁻² s⁻¹ (from shortwave × `ppfd_per_sw` where no PPFD column). NaN
    /// only when the step is missing.
    pub ppfd_umol_m2_s: f64,
    /// Air pressure, kPa (FAO-56 from the site elevation where no column, or in a long gap).
    pub pressure_kpa: f64,
    /// Precipitation in this step, mm (0 in a gap and when no column is mapped).
    pub precip_mm: f64,
    /// CO2 mole fraction, µmol mol⁻¹: None when not mapped, Some(NaN) in a long gap.
    pub co2_umol_mol: Option<f64>,
    /// Volumetric soil water, m³ m⁻³: None when not mapped, Some(NaN) in a long gap.
    pub swc_m3_m3: Option<f64>,
    /// Leaf area index, m² m⁻²: None when not mapped, Some(NaN) in a long gap.
    pub lai: Option<f64>,
    /// δ13C of CO2 in the air, ‰ vs VPDB: None when not mapped, Some(NaN) in a long gap.
    pub d13c_co2_permil: Option<f64>,
    /// Wind speed, m s⁻¹: None when not mapped, Some(NaN) in a long gap.
    pub wind_m_s: Option<f64>,
    /// True when any value of this step came from gap filling.
    pub filled: bool,
    /// True when a required value (air temperature, humidity, radiation) falls in a gap longer
    /// than `max_gap_hours`: the caller leaves this step's outputs empty.
    pub missing: bool,
}

/// What the reader did, for the run log. Counts cover the yielded steps (those in `from`..`to`).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ForcingReport {
    /// The weather file.
    pub path: PathBuf,
    /// Data rows read from the file (all of them, also outside `from`..`to`).
    pub rows_read: usize,
    /// Steps yielded.
    pub steps: usize,
    /// Values filled per variable (interpolated; 0 for precipitation; elevation pressure; radiation
    /// derived from the other radiation column). Only variables with fills are listed.
    pub filled: BTreeMap<Variable, usize>,
    /// Steps marked missing.
    pub missing_steps: usize,
    /// Slightly negative radiation values (night sensor offsets) set to 0.
    pub night_radiation_zeroed: usize,
    /// Start of the first yielded step.
    pub first: Option<LocalTime>,
    /// Start of the last yielded step.
    pub last: Option<LocalTime>,
    /// Step, minutes.
    pub step_minutes: u32,
    /// Assumptions made for this file (derived variables, defaults used).
    pub notes: Vec<String>,
}

impl fmt::Display for ForcingReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let span = match (self.first, self.last) {
            (Some(a), Some(b)) => format!("{a} to {b}"),
            _ => "no steps".to_string(),
        };
        writeln!(
            f,
            "{}: {} rows read, {} steps of {} min ({span}), {} missing",
            self.path.display(),
            self.rows_read,
            self.steps,
            self.step_minutes,
            self.missing_steps
        )?;
        if !self.filled.is_empty() {
            let list: Vec<String> = self
                .filled
                .iter()
                .map(|(v, n)| format!("{} {n}", v.name()))
                .collect();
            writeln!(f, "  gap-filled values: {}", list.join(", "))?;
        }
        if self.night_radiation_zeroed > 0 {
            writeln!(
                f,
                "  negative night radiation set to 0: {}",
                self.night_radiation_zeroed
            )?;
        }
        for note in &self.notes {
            writeln!(f, "  {note}")?;
        }
        Ok(())
    }
}

/// A mapped column of the file.
struct Column {
    var: Variable,
    /// Field index, 0-based.
    index: usize,
    scale: f64,
    offset: f64,
    unit: &'static str,
}

/// A parsed row waiting to be yielded.
struct Row {
    /// Row number from 0, for gap arithmetic.
    idx: usize,
    time: LocalTime,
    /// Values in project units; NaN where missing.
    values: [f64; N_VARIABLES],
    /// Bit per variable: value came from gap filling.
    filled: u16,
    /// Bit per variable: negative night radiation set to 0.
    zeroed: u16,
}

/// The gap state of one variable.
#[derive(Clone, Copy, Default)]
struct Gap {
    /// Last present value and its row.
    last: Option<(usize, f64)>,
    /// First row of the current run of missing values.
    open: Option<usize>,
    /// The current run can no longer be interpolated (too long, or nothing before it).
    long: bool,
}

/// Reads a weather file step by step. Iterate it for `Result<ForcingStep, ForcingError>`; the
/// iteration ends after the first error. Then [`ForcingReader::report`] says what was done.
pub struct ForcingReader {
    plan: Plan,
    path: PathBuf,
    csv: csv::Reader<File>,
    record: ByteRecord,
    /// Header names, trimmed.
    headers: Vec<String>,
    time_index: usize,
    columns: Vec<Column>,
    missing_numbers: Vec<f64>,
    pressure_default_kpa: f64,
    from: Option<LocalTime>,
    to: Option<LocalTime>,
    max_gap_steps: usize,
    queue: VecDeque<Row>,
    gaps: [Gap; N_VARIABLES],
    next_idx: usize,
    /// File timestamp and line of the previous row.
    previous: Option<(LocalTime, u64)>,
    eof: bool,
    done: bool,
    report: ForcingReport,
}

fn bit(v: Variable) -> u16 {
    1 << v.index()
}

impl ForcingReader {
    /// Opens the weather file of `config` (its `path` relative to `site_dir`) and reads its header.
    /// `elevation_m` (m above sea level, −500 to 9000) gives the pressure when there is no pressure
    /// column. Steps starting before `from` (inclusive bound) or at or after `to` (exclusive bound)
    /// are read for gap filling but not yielded; for an inclusive end date pass the next midnight.
    pub fn open(
        config: &ForcingConfig,
        site_dir: &Path,
        elevation_m: f64,
        from: Option<LocalTime>,
        to: Option<LocalTime>,
    ) -> Result<ForcingReader, ForcingError> {
        let plan = config.plan()?;
        check_range("elevation_m", elevation_m, -500.0, 9000.0)?;
        if let (Some(f), Some(t)) = (from, to)
            && f >= t
        {
            return Err(ForcingError::Config {
                message: format!("the period start {f} is not before its end {t}"),
            });
        }
        let path = site_dir.join(&plan.path);
        let file = File::open(&path).map_err(|source| {
            if source.kind() == std::io::ErrorKind::NotFound {
                ForcingError::FileNotFound { path: path.clone() }
            } else {
                ForcingError::Io {
                    path: path.clone(),
                    source,
                }
            }
        })?;
        let mut csv = ReaderBuilder::new()
            .delimiter(plan.delimiter)
            .trim(Trim::All)
            .from_reader(file);
        let headers: Vec<String> = csv
            .byte_headers()
            .map_err(|e| csv_error(&path, e))?
            .iter()
            .map(|h| {
                String::from_utf8_lossy(h)
                    .trim_start_matches('\u{feff}')
                    .trim()
                    .to_string()
            })
            .collect();
        let find = |variable: &str, column: &str| {
            headers
                .iter()
                .position(|h| h == column)
                .ok_or_else(|| ForcingError::MissingColumn {
                    path: path.clone(),
                    variable: variable.to_string(),
                    column: column.to_string(),
                    closest: closest_name(column, headers.iter().map(String::as_str)),
                })
        };
        let time_index = find("time", &plan.time_column)?;

        let mut notes = Vec::new();
        let mut columns = Vec::new();
        let mut mappings = plan.mappings.clone();
        for v in Variable::ALL {
            let Some(m) = &plan.mappings[v.index()] else {
                continue;
            };
            match find(v.name(), &m.column) {
                Ok(index) => columns.push(Column {
                    var: v,
                    index,
                    scale: m.scale,
                    offset: m.offset,
                    unit: m.unit,
                }),
                Err(_) if m.optional => mappings[v.index()] = None,
                Err(e) => return Err(e),
            }
        }
        let plan = Plan { mappings, ..plan };

        let pressure_default_kpa = pressure_from_elevation_kpa(elevation_m);
        let mapped = |v: Variable| plan.mappings[v.index()].is_some();
        match plan.humidity {
            Variable::Rh => {
                notes.push("VPD from relative humidity and air temperature (FAO-56)".into())
            }
            Variable::DewPoint => {
                notes.push("VPD from dew point and air temperature (FAO-56)".into())
            }
            _ => {}
        }
        if !mapped(Variable::Ppfd) {
            notes.push(format!("PPFD = shortwave × {} µmol J⁻¹", plan.ppfd_per_sw));
        }
        if !mapped(Variable::Sw) {
            notes.push(format!("shortwave = PPFD ÷ {} µmol J⁻¹", plan.ppfd_per_sw));
        }
        if mapped(Variable::Pressure) {
            notes.push(format!(
                "pressure in long gaps from the elevation {elevation_m} m: {pressure_default_kpa:.2} kPa (FAO-56)"
            ));
        } else {
            notes.push(format!(
                "no pressure column: {pressure_default_kpa:.2} kPa from the elevation {elevation_m} m (FAO-56)"
            ));
        }
        if mapped(Variable::Precip) {
            notes.push("precipitation in gaps is 0, not interpolated".into());
        } else {
            notes.push("no precipitation column: precipitation is 0".into());
        }

        let missing_numbers = plan
            .missing
            .iter()
            .filter_map(|m| m.trim().parse::<f64>().ok())
            .filter(|x| x.is_finite())
            .collect();
        // Whole steps only: a gap of k missing rows lasts k steps.
        let max_gap_steps = (plan.max_gap_hours * 60.0 / f64::from(plan.step_minutes)) as usize;
        let report = ForcingReport {
            path: path.clone(),
            step_minutes: plan.step_minutes,
            notes,
            ..ForcingReport::default()
        };
        Ok(ForcingReader {
            plan,
            path,
            csv,
            record: ByteRecord::new(),
            headers,
            time_index,
            columns,
            missing_numbers,
            pressure_default_kpa,
            from,
            to,
            max_gap_steps,
            queue: VecDeque::new(),
            gaps: [Gap::default(); N_VARIABLES],
            next_idx: 0,
            previous: None,
            eof: false,
            done: false,
            report,
        })
    }

    /// What the reader has done so far; complete once the iteration has ended.
    pub fn report(&self) -> ForcingReport {
        self.report.clone()
    }

    /// The first queued row that cannot be released yet: the start of the earliest gap that may
    /// still be interpolated.
    fn blocked_from(&self) -> usize {
        self.gaps
            .iter()
            .filter(|g| !g.long)
            .filter_map(|g| g.open)
            .min()
            .unwrap_or(usize::MAX)
    }

    fn next_step(&mut self) -> Result<Option<ForcingStep>, ForcingError> {
        loop {
            if let Some(front) = self.queue.front() {
                if self.eof || front.idx < self.blocked_from() {
                    let row = self.queue.pop_front().expect("front exists");
                    if self.from.is_some_and(|f| row.time < f) {
                        continue;
                    }
                    if self.to.is_some_and(|t| row.time >= t) {
                        return Ok(None);
                    }
                    return Ok(Some(self.emit(&row)));
                }
            } else if self.eof {
                return Ok(None);
            }
            if !self.read_row()? {
                self.eof = true;
            }
        }
    }

    fn data_error(
        &self,
        line: u64,
        index: usize,
        value: &[u8],
        kind: DataErrorKind,
        problem: String,
    ) -> ForcingError {
        ForcingError::Data {
            path: self.path.clone(),
            line,
            column: self.headers.get(index).cloned().unwrap_or_default(),
            column_number: index + 1,
            value: String::from_utf8_lossy(value).into_owned(),
            kind,
            problem,
        }
    }

    /// Reads, checks and queues one row; false at the end of the file.
    fn read_row(&mut self) -> Result<bool, ForcingError> {
        let more = self
            .csv
            .read_byte_record(&mut self.record)
            .map_err(|e| csv_error(&self.path, e))?;
        if !more {
            return Ok(false);
        }
        self.report.rows_read += 1;
        let line = self.record.position().map_or(0, |p| p.line());

        let cell = self.record.get(self.time_index).unwrap_or_default();
        let stamp = std::str::from_utf8(cell)
            .map_err(|_| "not valid UTF-8".to_string())
            .and_then(|s| {
                match self.plan.time_format {
                    TimeFormat::Iso => LocalTime::parse_iso(s),
                    TimeFormat::Yyyymmddhhmm => LocalTime::parse_yyyymmddhhmm(s),
                }
                .map_err(|e| e.to_string())
            })
            .map_err(|why| {
                self.data_error(
                    line,
                    self.time_index,
                    cell,
                    DataErrorKind::Time,
                    format!("not a time: {why}"),
                )
            })?;
        let step = i64::from(self.plan.step_minutes);
        if let Some((prev, prev_line)) = self.previous {
            let delta = stamp.minutes() - prev.minutes();
            let problem = if delta == 0 {
                Some((
                    DataErrorKind::TimeOrder,
                    format!(
                        "repeats the timestamp of line {prev_line}; each step must appear once"
                    ),
                ))
            } else if delta < 0 {
                Some((
                    DataErrorKind::TimeOrder,
                    format!(
                        "goes back in time from {prev} on line {prev_line}; rows must be in time order"
                    ),
                ))
            } else if delta != step {
                Some((
                    DataErrorKind::IrregularStep,
                    format!(
                        "follows {prev} on line {prev_line} after {delta} min, but the step is {step} min \
                         (forcing.step_minutes); missing rows must be present with empty or missing-marked cells"
                    ),
                ))
            } else {
                None
            };
            if let Some((kind, problem)) = problem {
                return Err(self.data_error(line, self.time_index, cell, kind, problem));
            }
        }
        self.previous = Some((stamp, line));
        let time = match self.plan.timestamp_marks {
            TimestampMarks::Start => stamp,
            TimestampMarks::End => stamp.plus_minutes(-step),
        };

        let idx = self.next_idx;
        self.next_idx += 1;
        let mut row = Row {
            idx,
            time,
            values: [f64::NAN; N_VARIABLES],
            filled: 0,
            zeroed: 0,
        };
        for c in &self.columns {
            let cell = self.record.get(c.index).unwrap_or_default();
            let (value, zeroed) = self.parse_value(c, cell, line)?;
            row.values[c.var.index()] = value;
            if zeroed {
                row.zeroed |= bit(c.var);
            }
        }
        self.queue.push_back(row);
        self.update_gaps(idx);
        Ok(true)
    }

    /// A cell in project units (NaN when missing) and whether it was negative radiation set to 0.
    fn parse_value(&self, c: &Column, cell: &[u8], line: u64) -> Result<(f64, bool), ForcingError> {
        let err = |kind, problem: String| self.data_error(line, c.index, cell, kind, problem);
        let text = std::str::from_utf8(cell)
            .map_err(|_| err(DataErrorKind::Number, "not valid UTF-8".into()))?;
        if self.plan.missing.iter().any(|m| m.trim() == text) {
            return Ok((f64::NAN, false));
        }
        let raw: f64 = text.parse().map_err(|_| {
            err(
                DataErrorKind::Number,
                format!(
                    "not a number (expected {} in {}, or a missing marker {:?})",
                    c.var.name(),
                    c.unit,
                    self.plan.missing
                ),
            )
        })?;
        if raw.is_nan() || self.missing_numbers.contains(&raw) {
            return Ok((f64::NAN, false));
        }
        if raw.is_infinite() {
            return Err(err(DataErrorKind::Number, "not a finite number".into()));
        }
        let value = raw * c.scale + c.offset;
        let range = |problem: String| Err(err(DataErrorKind::Range, problem));
        match c.var {
            Variable::TAir | Variable::DewPoint if c.unit == "degC" && value > KELVIN_SUSPECT_C => {
                range(format!(
                    "{} above {KELVIN_SUSPECT_C} °C looks like kelvin; if the column is in kelvin set \
                     `units.{} = \"K\"`",
                    c.var.name(),
                    c.var.name()
                ))
            }
            Variable::TAir | Variable::DewPoint if c.unit == "K" && value < CELSIUS_SUSPECT_C => {
                range(format!(
                    "{} of {raw} K ({value:.2} °C) looks like °C; if the column is in °C set \
                     `units.{} = \"degC\"`",
                    c.var.name(),
                    c.var.name()
                ))
            }
            Variable::Rh if !(0.0..=RH_MAX_PERCENT).contains(&value) => range(format!(
                "relative humidity of {value} % is outside 0–{RH_MAX_PERCENT} % (unit `{}`)",
                c.unit
            )),
            Variable::Sw | Variable::Ppfd => {
                let floor = if c.var == Variable::Sw {
                    SW_MIN_W_M2
                } else {
                    SW_MIN_W_M2 * self.plan.ppfd_per_sw
                };
                if value < floor {
                    range(format!(
                        "{} below {floor} {} is not a night-time sensor offset; expected incoming \
                         radiation ≥ 0",
                        c.var.name(),
                        c.unit
                    ))
                } else if value < 0.0 {
                    Ok((0.0, true))
                } else {
                    Ok((value, false))
                }
            }
            _ => Ok((value, false)),
        }
    }

    /// Updates every variable's gap state with the row just queued (`idx`), interpolating a gap
    /// that this row closes.
    fn update_gaps(&mut self, idx: usize) {
        let front = self.queue.front().map_or(idx, |r| r.idx);
        for c in &self.columns {
            let v = c.var.index();
            let value = self.queue[idx - front].values[v];
            let gap = &mut self.gaps[v];
            if value.is_nan() {
                if c.var == Variable::Precip {
                    let row = &mut self.queue[idx - front];
                    row.values[v] = 0.0;
                    row.filled |= bit(c.var);
                    continue;
                }
                let start = *gap.open.get_or_insert(idx);
                if gap.last.is_none() || idx - start + 1 > self.max_gap_steps {
                    gap.long = true;
                }
                continue;
            }
            if let (Some(start), false, Some((i0, y0))) = (gap.open, gap.long, gap.last) {
                // Linear in time between the rows on either side of the gap.
                let span = (idx - i0) as f64;
                for k in start..idx {
                    let row = &mut self.queue[k - front];
                    row.values[v] = y0 + (value - y0) * (k - i0) as f64 / span;
                    row.filled |= bit(c.var);
                }
            }
            *gap = Gap {
                last: Some((idx, value)),
                open: None,
                long: false,
            };
        }
    }

    /// Turns a released row into a step, deriving what the file does not give, and counts it.
    fn emit(&mut self, row: &Row) -> ForcingStep {
        let plan = &self.plan;
        let mapped = |v: Variable| plan.mappings[v.index()].is_some();
        let get = |v: Variable| row.values[v.index()];
        let mut filled = row.filled;

        let t_air_c = get(Variable::TAir);
        let humidity = get(plan.humidity);
        // The FAO-56 helpers clamp at 0 with f64::max, which would turn NaN into 0.
        let vpd_kpa = if t_air_c.is_nan() || humidity.is_nan() {
            f64::NAN
        } else {
            match plan.humidity {
                Variable::Rh => vpd_from_rh_kpa(t_air_c, humidity),
                Variable::DewPoint => vpd_from_dew_point_kpa(t_air_c, humidity),
                _ => humidity,
            }
        };
        let k = plan.ppfd_per_sw;
        let mut sw_w_m2 = get(Variable::Sw);
        let mut ppfd_umol_m2_s = get(Variable::Ppfd);
        if sw_w_m2.is_nan() && !ppfd_umol_m2_s.is_nan() {
            sw_w_m2 = ppfd_umol_m2_s / k;
            if mapped(Variable::Sw) {
                filled |= bit(Variable::Sw);
            }
        }
        if ppfd_umol_m2_s.is_nan() && !sw_w_m2.is_nan() {
            ppfd_umol_m2_s = sw_w_m2 * k;
            if mapped(Variable::Ppfd) {
                filled |= bit(Variable::Ppfd);
            }
        }
        let mut pressure_kpa = get(Variable::Pressure);
        if pressure_kpa.is_nan() {
            pressure_kpa = self.pressure_default_kpa;
            if mapped(Variable::Pressure) {
                filled |= bit(Variable::Pressure);
            }
        }
        let precip_mm = if mapped(Variable::Precip) {
            get(Variable::Precip)
        } else {
            0.0
        };
        let optional = |v: Variable| mapped(v).then(|| get(v));
        let missing = t_air_c.is_nan() || vpd_kpa.is_nan() || sw_w_m2.is_nan();

        let report = &mut self.report;
        report.steps += 1;
        report.first.get_or_insert(row.time);
        report.last = Some(row.time);
        report.missing_steps += usize::from(missing);
        report.night_radiation_zeroed += row.zeroed.count_ones() as usize;
        for v in Variable::ALL {
            if filled & bit(v) != 0 {
                *report.filled.entry(v).or_insert(0) += 1;
            }
        }
        ForcingStep {
            time: row.time,
            t_air_c,
            vpd_kpa,
            sw_w_m2,
            ppfd_umol_m2_s,
            pressure_kpa,
            precip_mm,
            co2_umol_mol: optional(Variable::Co2),
            swc_m3_m3: optional(Variable::Swc),
            lai: optional(Variable::Lai),
            d13c_co2_permil: optional(Variable::D13cCo2),
            wind_m_s: optional(Variable::Wind),
            filled: filled != 0,
            missing,
        }
    }
}

/// A CSV-level error (a row with the wrong number of fields, an I/O failure) with its place.
fn csv_error(path: &Path, e: csv::Error) -> ForcingError {
    match e.kind() {
        csv::ErrorKind::UnequalLengths {
            pos,
            expected_len,
            len,
        } => ForcingError::Data {
            path: path.to_path_buf(),
            line: pos.as_ref().map_or(0, |p| p.line()),
            column: String::new(),
            column_number: 0,
            value: String::new(),
            kind: DataErrorKind::Csv,
            problem: format!("the row has {len} fields but the header has {expected_len}"),
        },
        _ => ForcingError::Io {
            path: path.to_path_buf(),
            source: std::io::Error::other(e.to_string()),
        },
    }
}

impl Iterator for ForcingReader {
    type Item = Result<ForcingStep, ForcingError>;

    fn next(&mut self) -> Option<Self::Item> {
        if self.done {
            return None;
        }
        match self.next_step() {
            Ok(Some(step)) => Some(Ok(step)),
            Ok(None) => {
                self.done = true;
                if self.report.steps == 0 && (self.from.is_some() || self.to.is_some()) {
                    let show =
                        |t: Option<LocalTime>| t.map_or("…".to_string(), |t| t.to_string());
                    return Some(Err(ForcingError::EmptyPeriod {
                        path: self.path.clone(),
                        message: format!(
                            "no step between {} and {} (the file has {} rows)",
                            show(self.from),
                            show(self.to),
                            self.report.rows_read
                        ),
                    }));
                }
                None
            }
            Err(e) => {
                self.done = true;
                Some(Err(e))
            }
        }
    }
}
