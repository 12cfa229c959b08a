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
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};

use csv::{ByteRecord, ReaderBuilder};
use isodisc_model::error::{check_range, closest_name};
use isodisc_model::water::{
    pressure_from_elevation_kpa, saturation_vapour_pressure_kpa, vpd_from_dew_point_kpa,
    vpd_from_rh_kpa,
};

use super::config::{
    ForcingConfig, N_VARIABLES, Plan, TimeFormat, TimeLayout, TimestampMarks, Variable,
};
use super::error::{DataErrorKind, ForcingError};
use super::pattern::{Parts, Pattern};
use super::time::LocalTime;

/// Shortwave below this is refused rather than set to 0, W m⁻² (night offsets are a few W m⁻²).
const SW_MIN_W_M2: f64 = -50.0;

/// One step of weather in the project's units.
#[derive(Debug, Clone, PartialEq)]
pub struct ForcingStep {
    /// Start of the interval this step holds for, local standard time.
    pub time: LocalTime,
    /// The line of the weather file this step was read from (1-based), for messages.
    pub line: u64,
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
    /// The line taken as the header (1-based).
    pub header_line: u64,
    /// Interval start of the file's first and last rows (all rows read, also outside the period).
    pub file_first: Option<LocalTime>,
    /// See `file_first`.
    pub file_last: Option<LocalTime>,
    /// Where the period asked for reaches beyond the file: what was run instead.
    pub partial: Vec<String>,
    /// Missing cells per variable among the yielded steps (codes, empty cells, refused flags),
    /// before gap filling. Only variables with missing cells are listed.
    pub missing_values: BTreeMap<Variable, usize>,
    /// Values refused by their quality flag (`qc_max`), per variable, over all rows read.
    pub qc_refused: BTreeMap<Variable, usize>,
    /// Precipitation totals over several steps that were spread over them.
    pub precip_totals_spread: usize,
    /// Drivers missing in more than 20 % of the steps.
    pub warnings: Vec<String>,
    /// The variables read from the file (each with a column in its header).
    pub read: Vec<Variable>,
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
        for note in self.notes.iter().chain(&self.partial) {
            writeln!(f, "  {note}")?;
        }
        for w in &self.warnings {
            writeln!(f, "  warning: {w}")?;
        }
        Ok(())
    }
}

/// The file as the CSV parser sees it: comment lines emptied (their newline kept), and the bytes
/// handed on kept until a record has passed them, so that a record's end gives its line as an
/// editor counts it (the parser's own count skips blank and comment lines).
struct Source {
    inner: BufReader<File>,
    comment: Option<u8>,
    at_line_start: bool,
    in_comment: bool,
    /// Bytes handed on; those before `pending_at` have been passed by records.
    pending: Vec<u8>,
    pending_at: usize,
    /// Offset in the stream of `pending[0]`.
    pending_start: u64,
    /// Newlines passed.
    passed: u64,
}

/// Newlines in `s`, counted in blocks the compiler can vectorise.
fn count_newlines(s: &[u8]) -> u64 {
    let mut blocks = s.chunks_exact(32);
    let mut n: u64 = (&mut blocks)
        .map(|c| u64::from(c.iter().fold(0u8, |a, b| a + u8::from(*b == b'\n'))))
        .sum();
    n += blocks.remainder().iter().filter(|b| **b == b'\n').count() as u64;
    n
}

impl Source {
    /// Line (1-based, counted from the first line handed on) of the byte at `offset`; offsets must
    /// be asked in increasing order.
    fn line_of(&mut self, offset: u64) -> u64 {
        let end = (offset.saturating_sub(self.pending_start) as usize).min(self.pending.len());
        if end > self.pending_at {
            self.passed += count_newlines(&self.pending[self.pending_at..end]);
            self.pending_at = end;
        }
        self.passed + 1
    }
}

impl Read for Source {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = match self.comment {
            None => self.inner.read(buf)?,
            Some(c) => loop {
                let avail = self.inner.fill_buf()?;
                if avail.is_empty() {
                    break 0;
                }
                let (mut out, mut used) = (0, 0);
                for &b in avail {
                    if out == buf.len() {
                        break;
                    }
                    used += 1;
                    if self.at_line_start && b == c {
                        self.in_comment = true;
                    }
                    if self.in_comment {
                        if b == b'\n' {
                            self.in_comment = false;
                            buf[out] = b'\n';
                            out += 1;
                        }
                        continue;
                    }
                    buf[out] = b;
                    out += 1;
                    self.at_line_start = b == b'\n';
                }
                self.inner.consume(used);
                if out > 0 || buf.is_empty() {
                    break out;
                }
            },
        };
        // Drop what records have passed before keeping more.
        if self.pending_at > 0 {
            self.pending.drain(..self.pending_at);
            self.pending_start += self.pending_at as u64;
            self.pending_at = 0;
        }
        self.pending.extend_from_slice(&buf[..n]);
        Ok(n)
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
    user_scale: f64,
    /// Missing codes as written, trimmed, and those that are numbers.
    missing: Vec<String>,
    missing_numbers: Vec<f64>,
    /// Field index of the `<column>_QC` flag, when flags are read and the header has one.
    qc: Option<usize>,
}

/// Where the time of a row is, by field index.
enum TimeFields {
    Single {
        index: usize,
        format: TimeFormat,
        pattern: Option<Pattern>,
    },
    DateTime {
        date_index: usize,
        date: Pattern,
        time_index: usize,
        time: Pattern,
    },
    Fields {
        year: usize,
        month_day: Option<(usize, usize)>,
        doy: Option<usize>,
        hour: Option<usize>,
        minute: Option<usize>,
    },
}

impl TimeFields {
    /// Every time column, in the order the layout reads them.
    fn indices(&self) -> Vec<usize> {
        match self {
            TimeFields::Single { index, .. } => vec![*index],
            TimeFields::DateTime {
                date_index,
                time_index,
                ..
            } => vec![*date_index, *time_index],
            TimeFields::Fields {
                year,
                month_day,
                doy,
                hour,
                minute,
            } => {
                let mut v = vec![*year];
                if let Some((m, d)) = month_day {
                    v.extend([*m, *d]);
                }
                v.extend(doy.iter().chain(hour).chain(minute));
                v
            }
        }
    }

    /// The first time column, the one messages about the row's time point at.
    fn first(&self) -> usize {
        match self {
            TimeFields::Single { index, .. } => *index,
            TimeFields::DateTime { date_index, .. } => *date_index,
            TimeFields::Fields { year, .. } => *year,
        }
    }
}

/// A parsed row waiting to be yielded.
struct Row {
    /// Row number from 0, for gap arithmetic.
    idx: usize,
    /// Line in the file, 1-based.
    line: u64,
    time: LocalTime,
    /// Values in project units; NaN where missing.
    values: [f64; N_VARIABLES],
    /// Bit per variable: value came from gap filling.
    filled: u16,
    /// Bit per variable: negative night radiation set to 0.
    zeroed: u16,
    /// Bit per variable: the cell was missing (a code, empty, or refused by its quality flag).
    absent: u16,
    /// Steps the precipitation value is the total of (1 unless `precip_period_column` says more).
    precip_steps: usize,
}

/// The gap state of one variable.
#[derive(Clone, Copy, Default)]
struct Gap {
    /// Last present value, its row and its line.
    last: Option<(usize, f64, u64)>,
    /// First row of the current run of missing values.
    open: Option<usize>,
    /// The current run can no longer be interpolated (too long, or nothing before it).
    long: bool,
}

/// Longest period a precipitation total may cover, hours (a week; longer totals are not weather).
const MAX_PRECIP_PERIOD_H: f64 = 168.0;
/// A driver missing in more than this share of the steps gets a warning.
const WARN_MISSING_SHARE: f64 = 0.2;

/// Reads a weather file step by step. Iterate it for `Result<ForcingStep, ForcingError>`; the
/// iteration ends after the first error. Then [`ForcingReader::report`] says what was done.
/// A CSV file streams through [`CsvReader`]; a NetCDF time series (recognised by its signature)
/// is read whole by [`crate::netcdf_in::site`].
pub struct ForcingReader {
    inner: Inner,
}

enum Inner {
    Csv(Box<CsvReader>),
    /// The steps of a NetCDF file, read whole, and its report.
    NetCdf(Box<(std::vec::IntoIter<ForcingStep>, ForcingReport)>),
}

impl ForcingReader {
    /// Opens the weather file of `config` (its `path` relative to `site_dir`) and reads its header
    /// (a NetCDF file: its steps). `elevation_m` (m above sea level, −500 to 9000) gives the
    /// pressure when there is no pressure column. Steps starting before `from` (inclusive bound)
    /// or at or after `to` (exclusive bound) are read for gap filling but not yielded; for an
    /// inclusive end date pass the next midnight.
    pub fn open(
        config: &ForcingConfig,
        site_dir: &Path,
        elevation_m: f64,
        from: Option<LocalTime>,
        to: Option<LocalTime>,
    ) -> Result<ForcingReader, ForcingError> {
        let path = site_dir.join(&config.path);
        let inner = if crate::netcdf_in::site::is_netcdf(&path) {
            check_range("elevation_m", elevation_m, -500.0, 9000.0)?;
            let (steps, report) =
                crate::netcdf_in::site::read_site(config, site_dir, elevation_m, from, to)
                    .map_err(|e| ForcingError::NetCdf { message: e.chain() })?;
            Inner::NetCdf(Box::new((steps.into_iter(), report)))
        } else {
            Inner::Csv(Box::new(CsvReader::open(
                config,
                site_dir,
                elevation_m,
                from,
                to,
            )?))
        };
        Ok(ForcingReader { inner })
    }

    /// What the reader has done so far; complete once the iteration has ended.
    pub fn report(&self) -> ForcingReport {
        match &self.inner {
            Inner::Csv(r) => r.report(),
            Inner::NetCdf(nc) => nc.1.clone(),
        }
    }
}

impl Iterator for ForcingReader {
    type Item = Result<ForcingStep, ForcingError>;

    fn next(&mut self) -> Option<Self::Item> {
        match &mut self.inner {
            Inner::Csv(r) => r.next(),
            Inner::NetCdf(nc) => nc.0.next().map(Ok),
        }
    }
}

/// The streaming CSV weather reader behind [`ForcingReader`].
struct CsvReader {
    plan: Plan,
    path: PathBuf,
    csv: csv::Reader<Source>,
    record: ByteRecord,
    /// Lines skipped above the header, added to the CSV reader's line numbers.
    line_offset: u64,
    /// Header names, trimmed.
    headers: Vec<String>,
    time: TimeFields,
    columns: Vec<Column>,
    precip_period: Option<usize>,
    max_precip_steps: usize,
    pressure_default_kpa: f64,
    from: Option<LocalTime>,
    to: Option<LocalTime>,
    max_gap_steps: usize,
    queue: VecDeque<Row>,
    gaps: [Gap; N_VARIABLES],
    next_idx: usize,
    /// Interval start and line of the previous row.
    previous: Option<(LocalTime, u64)>,
    /// The reader stopped at `to` before the end of the file.
    reached_to: bool,
    eof: bool,
    done: bool,
    /// Cells missing per variable among the yielded steps.
    absent: [usize; N_VARIABLES],
    report: ForcingReport,
}

/// Field `i` of a record without surrounding spaces (empty when the row is short). Only the cells
/// the reader uses are trimmed, not every field of every row.
fn cell_of(record: &ByteRecord, i: usize) -> &[u8] {
    record.get(i).unwrap_or_default().trim_ascii()
}

fn bit(v: Variable) -> u16 {
    1 << v.index()
}

/// `a`, `b`, … : the first fields of a header, for messages.
fn header_start(headers: &[String]) -> String {
    if headers.is_empty() {
        return "an empty line".into();
    }
    let mut list: Vec<String> = headers.iter().take(6).map(|h| format!("`{h}`")).collect();
    if headers.len() > 6 {
        list.push("…".into());
    }
    list.join(", ")
}

impl CsvReader {
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
    ) -> Result<CsvReader, ForcingError> {
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
        let io_err = |source: std::io::Error| {
            if source.kind() == std::io::ErrorKind::NotFound {
                ForcingError::FileNotFound { path: path.clone() }
            } else {
                ForcingError::Io {
                    path: path.clone(),
                    source,
                }
            }
        };
        let mut file = BufReader::with_capacity(1 << 16, File::open(&path).map_err(io_err)?);
        // Metadata lines above the header are skipped as text, never split as CSV; so are comment
        // and blank lines before the header.
        let mut line_offset = 0;
        let mut skipped = Vec::new();
        loop {
            let above = line_offset + 1 < plan.header_line;
            let buf = file.fill_buf().map_err(io_err)?;
            let blank = buf.first().is_some_and(|b| *b == b'\n' || *b == b'\r');
            let comment = plan.comment.is_some() && buf.first() == plan.comment.as_ref();
            if !above && !blank && !comment {
                break;
            }
            skipped.clear();
            if file.read_until(b'\n', &mut skipped).map_err(io_err)? == 0 {
                if above {
                    return Err(ForcingError::Config {
                        message: format!(
                            "forcing.header_line = {} but {} has only {line_offset} lines",
                            plan.header_line,
                            path.display()
                        ),
                    });
                }
                break;
            }
            line_offset += 1;
        }
        let source = Source {
            inner: file,
            comment: plan.comment,
            at_line_start: true,
            in_comment: false,
            pending: Vec::with_capacity(1 << 16),
            pending_at: 0,
            pending_start: 0,
            passed: 0,
        };
        let mut csv = ReaderBuilder::new()
            .delimiter(plan.delimiter)
            .from_reader(source);
        let headers: Vec<String> = csv
            .byte_headers()
            .map_err(|e| csv_error(&path, e, line_offset + 1))?
            .iter()
            .map(|h| {
                String::from_utf8_lossy(h)
                    .trim_start_matches('\u{feff}')
                    .trim()
                    .to_string()
            })
            .collect();
        let header_line = line_offset + 1;
        let hint = match headers.as_slice() {
            [one] if one.contains('\t') => {
                Some("the header is one field holding tabs: set `delimiter = \"\\t\"`".to_string())
            }
            [one] if one.contains(';') => {
                Some("the header is one field holding `;`: set `delimiter = \";\"`".to_string())
            }
            _ => None,
        };
        let find = |variable: &str, column: &str| -> Result<usize, ForcingError> {
            let mut at = headers.iter().enumerate().filter(|(_, h)| *h == column);
            match (at.next(), at.next()) {
                (Some((i, _)), None) => Ok(i),
                (Some((i, _)), Some((j, _))) => Err(ForcingError::DuplicateColumn {
                    path: path.clone(),
                    header_line,
                    column: column.to_string(),
                    numbers: (i + 1, j + 1),
                }),
                (None, _) => Err(ForcingError::MissingColumn {
                    path: path.clone(),
                    variable: variable.to_string(),
                    column: column.to_string(),
                    detail: {
                        let closest = closest_name(column, headers.iter().map(String::as_str))
                            .map_or(String::new(), |c| format!("; did you mean `{c}`?"));
                        let hint = hint.as_ref().map_or(String::new(), |h| format!("; {h}"));
                        format!(
                            "{closest} (the header was taken from line {header_line}: {}; set \
                             `header_line` if the header is on another line){hint}",
                            header_start(&headers)
                        )
                    },
                }),
            }
        };
        let time = match &plan.time {
            TimeLayout::Single { column, format } => TimeFields::Single {
                index: find("time", column)?,
                format: format.clone(),
                pattern: match format {
                    TimeFormat::Pattern(p) => Some(
                        Pattern::compile(p).map_err(|message| ForcingError::Config { message })?,
                    ),
                    _ => None,
                },
            },
            TimeLayout::DateTime {
                date_column,
                date,
                time_column,
                time,
            } => TimeFields::DateTime {
                date_index: find("date", date_column)?,
                date: date.clone(),
                time_index: find("time", time_column)?,
                time: time.clone(),
            },
            TimeLayout::Fields {
                year,
                month_day,
                doy,
                hour,
                minute,
            } => TimeFields::Fields {
                year: find("year", year)?,
                month_day: match month_day {
                    Some((m, d)) => Some((find("month", m)?, find("day", d)?)),
                    None => None,
                },
                doy: doy.as_deref().map(|c| find("day of year", c)).transpose()?,
                hour: hour.as_deref().map(|c| find("hour", c)).transpose()?,
                minute: minute.as_deref().map(|c| find("minute", c)).transpose()?,
            },
        };

        let numbers = |codes: &[String]| -> Vec<f64> {
            codes
                .iter()
                .filter_map(|m| m.trim().parse::<f64>().ok())
                .filter(|x| x.is_finite())
                .collect()
        };
        let mut notes = Vec::new();
        let mut columns = Vec::new();
        let mut mappings = plan.mappings.clone();
        for v in Variable::ALL {
            let Some(m) = &plan.mappings[v.index()] else {
                continue;
            };
            match find(v.name(), &m.column) {
                Ok(index) => {
                    let qc = match plan.qc_max {
                        Some(_) => {
                            let flag = format!("{}_QC", m.column);
                            headers
                                .contains(&flag)
                                .then(|| find(&format!("{} quality flag", v.name()), &flag))
                                .transpose()?
                        }
                        None => None,
                    };
                    columns.push(Column {
                        var: v,
                        index,
                        scale: m.scale,
                        offset: m.offset,
                        unit: m.unit,
                        user_scale: m.user_scale,
                        missing: m.missing.iter().map(|s| s.trim().to_string()).collect(),
                        missing_numbers: numbers(&m.missing),
                        qc,
                    })
                }
                Err(ForcingError::MissingColumn { .. }) if m.optional => mappings[v.index()] = None,
                Err(e) => return Err(e),
            }
        }
        let plan = Plan { mappings, ..plan };
        let precip_period = plan
            .precip_period_column
            .as_deref()
            .map(|c| find("precipitation period", c))
            .transpose()?;
        if plan.precip_period_column.is_some() && plan.mappings[Variable::Precip.index()].is_none()
        {
            return Err(ForcingError::Config {
                message: "forcing.precip_period_column is set but the precipitation column is not in the file".into(),
            });
        }

        let pressure_default_kpa = pressure_from_elevation_kpa(elevation_m);
        let mapped = |v: Variable| plan.mappings[v.index()].is_some();
        match plan.humidity {
            Variable::Rh => {
                notes.push("VPD from relative humidity and air temperature (FAO-56)".into())
            }
            Variable::DewPoint => {
                notes.push("VPD from dew point and air temperature (FAO-56)".into())
            }
            Variable::VapourPressure => {
                notes.push("VPD from vapour pressure and air temperature (FAO-56)".into())
            }
            Variable::SpecificHumidity => notes.push(
                "VPD from specific humidity, air pressure and air temperature (FAO-56)".into(),
            ),
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
        if precip_period.is_some() {
            notes.push("precipitation totals spread evenly over the steps they cover".into());
        }
        if let Some(y) = plan.typical_year {
            notes.push(format!("typical year: every row relabelled to {y}"));
        }
        for c in &columns {
            if c.user_scale != 1.0 {
                notes.push(format!(
                    "{} multiplied by {} as read (scale.{})",
                    c.var.name(),
                    c.user_scale,
                    c.var.name()
                ));
            }
        }
        if let Some(q) = plan.qc_max {
            let flagged: Vec<&str> = columns
                .iter()
                .filter(|c| c.qc.is_some())
                .map(|c| c.var.name())
                .collect();
            if !flagged.is_empty() {
                notes.push(format!(
                    "values with a quality flag above {q} are missing ({})",
                    flagged.join(", ")
                ));
            }
        }

        // Whole steps only: a gap of k missing rows lasts k steps.
        let max_gap_steps = (plan.max_gap_hours * 60.0 / f64::from(plan.step_minutes)) as usize;
        let max_precip_steps = (MAX_PRECIP_PERIOD_H * 60.0 / f64::from(plan.step_minutes)) as usize;
        let report = ForcingReport {
            path: path.clone(),
            step_minutes: plan.step_minutes,
            header_line,
            notes,
            read: columns.iter().map(|c| c.var).collect(),
            ..ForcingReport::default()
        };
        Ok(CsvReader {
            plan,
            path,
            csv,
            record: ByteRecord::new(),
            line_offset,
            headers,
            time,
            columns,
            precip_period,
            max_precip_steps,
            pressure_default_kpa,
            from,
            to,
            max_gap_steps,
            queue: VecDeque::new(),
            gaps: [Gap::default(); N_VARIABLES],
            next_idx: 0,
            previous: None,
            reached_to: false,
            eof: false,
            done: false,
            absent: [0; N_VARIABLES],
            report,
        })
    }

    /// What the reader has done so far; complete once the iteration has ended.
    pub fn report(&self) -> ForcingReport {
        self.report.clone()
    }

    /// The first queued row that cannot be released yet: the start of the earliest gap that may
    /// still be interpolated (or, with precipitation totals, spread).
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
                        self.reached_to = true;
                        return Ok(None);
                    }
                    return Ok(Some(self.emit(&row)));
                }
            } else if self.eof {
                return Ok(None);
            }
            if !self.read_row()? {
                self.finish_file()?;
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

    /// The end of the file: a typical year must end on 31 December; a precipitation run still
    /// waiting for its total gets 0.
    fn finish_file(&mut self) -> Result<(), ForcingError> {
        if let (Some(y), Some((last, line))) = (self.plan.typical_year, self.previous) {
            let end = last.plus_minutes(i64::from(self.plan.step_minutes));
            if end.year() == y {
                let index = self.time.first();
                return Err(self.data_error(
                    line,
                    index,
                    b"",
                    DataErrorKind::TimeOrder,
                    format!(
                        "the file ends with the step starting {last}, but a typical year (typical_year = {y}) \
                         runs to the end of 31 December; every month must be complete"
                    ),
                ));
            }
        }
        if self.precip_period.is_some()
            && let Some(start) = self.gaps[Variable::Precip.index()].open.take()
        {
            let front = self.queue.front().map_or(start, |r| r.idx);
            for k in start..self.next_idx {
                let row = &mut self.queue[k - front];
                row.values[Variable::Precip.index()] = 0.0;
                row.filled |= bit(Variable::Precip);
            }
        }
        Ok(())
    }

    /// A time field of separate-field layouts: a whole number.
    fn whole(&self, index: usize, line: u64) -> Result<u32, ForcingError> {
        let cell = cell_of(&self.record, index);
        std::str::from_utf8(cell)
            .ok()
            .and_then(|s| s.parse::<f64>().ok())
            .filter(|x| x.fract() == 0.0 && (0.0..=f64::from(u32::MAX)).contains(x))
            .map(|x| x as u32)
            .ok_or_else(|| {
                self.data_error(
                    line,
                    index,
                    cell,
                    DataErrorKind::Time,
                    "not a whole number (a field of the time)".into(),
                )
            })
    }

    /// The row's time as the file writes it (before `timestamp_marks` and `typical_year`).
    fn parse_time(&self, line: u64) -> Result<LocalTime, ForcingError> {
        let text = |index: usize| -> Result<&str, ForcingError> {
            let cell = cell_of(&self.record, index);
            std::str::from_utf8(cell).map_err(|_| {
                self.data_error(
                    line,
                    index,
                    cell,
                    DataErrorKind::Time,
                    "not a time: not valid UTF-8".into(),
                )
            })
        };
        let fail = |index: usize, why: String| {
            let cell = cell_of(&self.record, index);
            self.data_error(
                line,
                index,
                cell,
                DataErrorKind::Time,
                format!("not a time: {why}"),
            )
        };
        match &self.time {
            TimeFields::Single {
                index,
                format,
                pattern,
            } => {
                let s = text(*index)?;
                let parsed = match (format, pattern) {
                    (TimeFormat::Iso, _) => {
                        LocalTime::parse_iso_with(s, true).map_err(|e| e.to_string())
                    }
                    (TimeFormat::Yyyymmddhhmm, _) => {
                        LocalTime::parse_yyyymmddhhmm_with(s, true).map_err(|e| e.to_string())
                    }
                    (TimeFormat::Pattern(_), Some(p)) => p.parse(s).and_then(build_time),
                    (TimeFormat::Pattern(p), None) => Err(format!("pattern \"{p}\" not compiled")),
                };
                parsed.map_err(|why| fail(*index, why))
            }
            TimeFields::DateTime {
                date_index,
                date,
                time_index,
                time,
            } => {
                let d = date
                    .parse(text(*date_index)?)
                    .map_err(|why| fail(*date_index, why))?;
                let t = time
                    .parse(text(*time_index)?)
                    .map_err(|why| fail(*time_index, why))?;
                // A bad time of day is the time column's fault, a bad date the date column's.
                let of_day = Parts {
                    year: Some(2001),
                    month: Some(1),
                    day: Some(1),
                    doy: None,
                    ..t
                };
                build_time(of_day).map_err(|why| fail(*time_index, why))?;
                build_time(t.or(d)).map_err(|why| fail(*date_index, why))
            }
            TimeFields::Fields {
                year,
                month_day,
                doy,
                hour,
                minute,
            } => {
                let mut parts = Parts {
                    year: Some(self.whole(*year, line)?),
                    ..Parts::default()
                };
                if let Some((m, d)) = month_day {
                    parts.month = Some(self.whole(*m, line)?);
                    parts.day = Some(self.whole(*d, line)?);
                }
                if let Some(j) = doy {
                    parts.doy = Some(self.whole(*j, line)?);
                }
                if let Some(h) = hour {
                    parts.hour = Some(self.whole(*h, line)?);
                }
                if let Some(mi) = minute {
                    parts.minute = Some(self.whole(*mi, line)?);
                }
                build_time(parts).map_err(|why| fail(*year, why))
            }
        }
    }

    /// The time cells of the current row, joined, for messages.
    fn time_text(&self) -> Vec<u8> {
        let indices = self.time.indices();
        let cells: Vec<&[u8]> = indices.iter().map(|i| cell_of(&self.record, *i)).collect();
        cells.join(&b' ')
    }

    /// The line of the record just read: that of its last byte (the parser's own start position
    /// lies before any blank lines that preceded the record).
    fn line_of_record(&mut self) -> u64 {
        let end = self.csv.position().byte();
        self.csv.get_mut().line_of(end.saturating_sub(1)) + self.line_offset
    }

    /// Reads, checks and queues one row; false at the end of the file.
    fn read_row(&mut self) -> Result<bool, ForcingError> {
        let more = match self.csv.read_byte_record(&mut self.record) {
            Ok(more) => more,
            Err(e) => {
                let line = self.line_of_record();
                return Err(csv_error(&self.path, e, line));
            }
        };
        if !more {
            return Ok(false);
        }
        self.report.rows_read += 1;
        let line = self.line_of_record();
        let stamp = self.parse_time(line)?;
        let step = i64::from(self.plan.step_minutes);
        let time_index = self.time.first();
        let mut time = match self.plan.timestamp_marks {
            TimestampMarks::Start => stamp,
            TimestampMarks::End => stamp.plus_minutes(-step),
        };
        if let Some(y) = self.plan.typical_year {
            time = time.with_year(y).map_err(|e| {
                self.data_error(
                    line,
                    time_index,
                    &self.time_text(),
                    DataErrorKind::Time,
                    format!("cannot be relabelled to the typical year {y}: {e}"),
                )
            })?;
            if self.previous.is_none()
                && time != LocalTime::from_ymdhm(y, 1, 1, 0, 0).expect("valid")
            {
                return Err(self.data_error(
                    line,
                    time_index,
                    &self.time_text(),
                    DataErrorKind::TimeOrder,
                    format!(
                        "a typical year (typical_year = {y}) must start with the step of 1 January 00:00, \
                         but this first row's step starts {time}"
                    ),
                ));
            }
        }
        if let Some((prev, prev_line)) = self.previous {
            let delta = time.minutes() - prev.minutes();
            let typical = if self.plan.typical_year.is_some() {
                "; with typical_year, months must run January to December in order, each complete"
            } else {
                ""
            };
            let problem = if delta == 0 {
                Some((
                    DataErrorKind::TimeOrder,
                    format!(
                        "repeats the step of line {prev_line} ({prev}); each step must appear once{typical}"
                    ),
                ))
            } else if delta < 0 {
                Some((
                    DataErrorKind::TimeOrder,
                    format!(
                        "goes back in time from {prev} on line {prev_line}; rows must be in time order{typical}"
                    ),
                ))
            } else if delta != step {
                Some((
                    DataErrorKind::IrregularStep,
                    format!(
                        "follows {prev} on line {prev_line} after {delta} min, but the step is {step} min \
                         (forcing.step_minutes); missing rows must be present with empty or missing-marked cells{typical}"
                    ),
                ))
            } else {
                None
            };
            if let Some((kind, problem)) = problem {
                return Err(self.data_error(line, time_index, &self.time_text(), kind, problem));
            }
        }
        self.previous = Some((time, line));
        self.report.file_first.get_or_insert(time);
        self.report.file_last = Some(time);

        let idx = self.next_idx;
        self.next_idx += 1;
        let mut row = Row {
            idx,
            line,
            time,
            values: [f64::NAN; N_VARIABLES],
            filled: 0,
            zeroed: 0,
            absent: 0,
            precip_steps: 1,
        };
        for c in &self.columns {
            let cell = cell_of(&self.record, c.index);
            // A value its flag refuses is missing, whatever it holds.
            let refused = match c.qc {
                Some(q) => self.flag_refuses(c, q, line)?,
                None => false,
            };
            let (value, zeroed) = if refused {
                let text = std::str::from_utf8(cell).unwrap_or("");
                if !c.missing.iter().any(|m| m == text) {
                    *self.report.qc_refused.entry(c.var).or_insert(0) += 1;
                }
                (f64::NAN, false)
            } else {
                self.parse_value(c, cell, line)?
            };
            row.values[c.var.index()] = value;
            if value.is_nan() {
                row.absent |= bit(c.var);
            }
            if zeroed {
                row.zeroed |= bit(c.var);
            }
        }
        if let Some(p) = self.precip_period {
            row.precip_steps = self.precip_steps(p, line)?;
        }
        self.queue.push_back(row);
        self.update_gaps(idx)?;
        Ok(true)
    }

    /// Whether the quality flag at field `q` refuses the value of column `c`.
    fn flag_refuses(&self, c: &Column, q: usize, line: u64) -> Result<bool, ForcingError> {
        let cell = cell_of(&self.record, q);
        let text = std::str::from_utf8(cell).unwrap_or("\u{fffd}");
        if self.plan.missing.iter().any(|m| m.trim() == text) {
            return Ok(false);
        }
        let flag: f64 = text.parse().map_err(|_| {
            self.data_error(
                line,
                q,
                cell,
                DataErrorKind::Number,
                format!(
                    "not a number (the quality flag of `{}`)",
                    self.headers[c.index]
                ),
            )
        })?;
        Ok(flag > self.plan.qc_max.unwrap_or(f64::INFINITY))
    }

    /// The steps a precipitation value covers, from the period column (hours; empty or a missing
    /// code: one step).
    fn precip_steps(&self, p: usize, line: u64) -> Result<usize, ForcingError> {
        let cell = cell_of(&self.record, p);
        let text = std::str::from_utf8(cell).unwrap_or("\u{fffd}");
        if self.plan.missing.iter().any(|m| m.trim() == text) {
            return Ok(1);
        }
        let step_h = f64::from(self.plan.step_minutes) / 60.0;
        let hours: f64 = text.parse().map_err(|_| {
            self.data_error(
                line,
                p,
                cell,
                DataErrorKind::Number,
                "not a number (hours the precipitation total covers)".into(),
            )
        })?;
        let steps = hours / step_h;
        if !(hours > 0.0 && hours <= MAX_PRECIP_PERIOD_H) || (steps - steps.round()).abs() > 1e-9 {
            return Err(self.data_error(
                line,
                p,
                cell,
                DataErrorKind::Range,
                format!(
                    "a precipitation period must be a whole number of steps of {step_h} h, up to {MAX_PRECIP_PERIOD_H} h"
                ),
            ));
        }
        Ok(steps.round() as usize)
    }

    /// A cell in project units (NaN when missing) and whether it was negative radiation set to 0.
    fn parse_value(&self, c: &Column, cell: &[u8], line: u64) -> Result<(f64, bool), ForcingError> {
        let err = |kind, problem: String| self.data_error(line, c.index, cell, kind, problem);
        let text = std::str::from_utf8(cell)
            .map_err(|_| err(DataErrorKind::Number, "not valid UTF-8".into()))?;
        if c.missing.iter().any(|m| m == text) {
            return Ok((f64::NAN, false));
        }
        // The same value as `str::parse`, by an exact fast path for plain decimals (numfmt).
        let raw: f64 = crate::numfmt::parse_f64(text.as_bytes()).ok_or_else(|| {
            err(
                DataErrorKind::Number,
                format!(
                    "not a number (expected {} in {}, or a missing code {:?})",
                    c.var.name(),
                    c.unit,
                    c.missing
                ),
            )
        })?;
        if raw.is_nan() || c.missing_numbers.contains(&raw) {
            return Ok((f64::NAN, false));
        }
        if raw.is_infinite() {
            return Err(err(DataErrorKind::Number, "not a finite number".into()));
        }
        let value = raw * c.scale + c.offset;
        let (lo, hi) = c.var.valid_range();
        let name = c.var.name();
        let unit = c.var.project_unit();
        let range = |hint: String| {
            let shown = if c.scale == 1.0 && c.offset == 0.0 {
                String::new()
            } else {
                format!(" ({value:.4} {unit} after scale and unit)")
            };
            Err(err(
                DataErrorKind::Range,
                format!("{name}{shown} is outside its valid range {lo}…{hi} {unit}{hint}"),
            ))
        };
        let code_hint = || {
            if raw <= -999.0 {
                format!(
                    "; if `{text}` marks a missing value, add it to `missing` (or `missing.{name}`)"
                )
            } else {
                String::new()
            }
        };
        match c.var {
            Variable::TAir | Variable::DewPoint
                if c.unit == "degC" && c.user_scale == 1.0 && value > hi =>
            {
                range(format!(
                    "; it looks like kelvin: if the column is in kelvin set `units.{name} = \"K\"`; \
                     in tenths of a degree set `scale.{name} = 0.1`"
                ))
            }
            Variable::TAir | Variable::DewPoint if c.unit == "K" && value < lo => range(format!(
                "; {raw} K looks like °C: if the column is in °C set `units.{name} = \"degC\"`{}",
                code_hint()
            )),
            Variable::Sw | Variable::Ppfd => {
                let floor = if c.var == Variable::Sw {
                    SW_MIN_W_M2
                } else {
                    SW_MIN_W_M2 * self.plan.ppfd_per_sw
                };
                if value < floor {
                    range(format!(
                        " (values down to {floor} {unit} are night-time sensor offsets and set to 0){}",
                        code_hint()
                    ))
                } else if value > hi {
                    range(format!(
                        "; if the column holds energy over the step set `units.{name}`, \
                         if it is scaled set `scale.{name}`"
                    ))
                } else if value < 0.0 {
                    Ok((0.0, true))
                } else {
                    Ok((value, false))
                }
            }
            _ if value < lo || value > hi => {
                let unit_hint = if value > hi && c.user_scale == 1.0 {
                    format!(
                        "; if the column is in other units set `units.{name}`, in tenths `scale.{name} = 0.1`"
                    )
                } else {
                    String::new()
                };
                range(format!("{unit_hint}{}", code_hint()))
            }
            _ => Ok((value, false)),
        }
    }

    /// Updates every variable's gap state with the row just queued (`idx`), interpolating a gap
    /// that this row closes and spreading a precipitation total over the steps it covers.
    fn update_gaps(&mut self, idx: usize) -> Result<(), ForcingError> {
        let front = self.queue.front().map_or(idx, |r| r.idx);
        let periods = self.precip_period.is_some();
        for ci in 0..self.columns.len() {
            let var = self.columns[ci].var;
            let v = var.index();
            let (value, line, precip_steps) = {
                let r = &self.queue[idx - front];
                (r.values[v], r.line, r.precip_steps)
            };
            if var == Variable::Precip && periods {
                self.update_precip_total(idx, front, value, line, precip_steps)?;
                continue;
            }
            let gap = &mut self.gaps[v];
            if value.is_nan() {
                if var == Variable::Precip {
                    let row = &mut self.queue[idx - front];
                    row.values[v] = 0.0;
                    row.filled |= bit(var);
                    continue;
                }
                let start = *gap.open.get_or_insert(idx);
                if gap.last.is_none() || idx - start + 1 > self.max_gap_steps {
                    gap.long = true;
                }
                continue;
            }
            if let (Some(start), false, Some((i0, y0, _))) = (gap.open, gap.long, gap.last) {
                // Linear in time between the rows on either side of the gap.
                let span = (idx - i0) as f64;
                for k in start..idx {
                    let row = &mut self.queue[k - front];
                    row.values[v] = y0 + (value - y0) * (k - i0) as f64 / span;
                    row.filled |= bit(var);
                }
            }
            *gap = Gap {
                last: Some((idx, value, line)),
                open: None,
                long: false,
            };
        }
        Ok(())
    }

    /// Precipitation with a period column: missing cells wait for a total that may cover them; a
    /// total over k steps is spread evenly over its row and the k − 1 rows before it, which must
    /// have no value of their own. Rows no total claims get 0 (a gap).
    fn update_precip_total(
        &mut self,
        idx: usize,
        front: usize,
        value: f64,
        line: u64,
        k: usize,
    ) -> Result<(), ForcingError> {
        let v = Variable::Precip.index();
        let zero = |row: &mut Row| {
            row.values[v] = 0.0;
            row.filled |= bit(Variable::Precip);
        };
        if value.is_nan() {
            let gap = &mut self.gaps[v];
            let start = *gap.open.get_or_insert(idx);
            if idx - start + 1 > self.max_precip_steps {
                zero(&mut self.queue[start - front]);
                gap.open = Some(start + 1);
            }
            return Ok(());
        }
        let first = (idx + 1).checked_sub(k);
        let open = self.gaps[v].open;
        let covered_ok = match (first, open) {
            (Some(f), _) if f == idx => true,
            (Some(f), Some(s)) => s <= f,
            _ => false,
        };
        if !covered_ok {
            let c = self
                .columns
                .iter()
                .find(|c| c.var == Variable::Precip)
                .expect("precip is mapped");
            let index = c.index;
            let cell = cell_of(&self.record, index).to_vec();
            let why = match (first, self.gaps[v].last) {
                (None, _) => {
                    format!("a total over {k} steps reaches back before the first row of the file")
                }
                (Some(_), Some((_, _, l))) => format!(
                    "a total over {k} steps reaches back to rows that have their own value (line {l}); \
                     the rows a total covers must have empty or missing-coded precipitation"
                ),
                (Some(_), None) => format!("a total over {k} steps covers rows outside the file"),
            };
            return Err(self.data_error(line, index, &cell, DataErrorKind::Range, why));
        }
        let first = first.expect("checked");
        if let Some(s) = open {
            for j in s..first {
                zero(&mut self.queue[j - front]);
            }
        }
        let each = value / k as f64;
        for j in first..=idx {
            let row = &mut self.queue[j - front];
            row.values[v] = each;
            row.absent &= !bit(Variable::Precip);
        }
        if k > 1 {
            self.report.precip_totals_spread += 1;
        }
        self.gaps[v] = Gap {
            last: Some((idx, value, line)),
            open: None,
            long: false,
        };
        Ok(())
    }

    /// Turns a released row into a step, deriving what the file does not give, and counts it.
    fn emit(&mut self, row: &Row) -> ForcingStep {
        let plan = &self.plan;
        let mapped = |v: Variable| plan.mappings[v.index()].is_some();
        let get = |v: Variable| row.values[v.index()];
        let mut filled = row.filled;

        let t_air_c = get(Variable::TAir);
        let mut pressure_kpa = get(Variable::Pressure);
        if pressure_kpa.is_nan() {
            pressure_kpa = self.pressure_default_kpa;
            if mapped(Variable::Pressure) {
                filled |= bit(Variable::Pressure);
            }
        }
        let vpd_kpa =
            vpd_from_humidity_kpa(plan.humidity, t_air_c, get(plan.humidity), pressure_kpa);
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
        if row.absent != 0 {
            for v in Variable::ALL {
                if row.absent & bit(v) != 0 {
                    self.absent[v.index()] += 1;
                }
            }
        }
        for v in Variable::ALL {
            if filled & bit(v) != 0 {
                *report.filled.entry(v).or_insert(0) += 1;
            }
        }
        ForcingStep {
            time: row.time,
            line: row.line,
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

impl CsvReader {
    /// At the end of a successful iteration: the period's overlap with the file, and warnings for
    /// drivers missing in much of the run.
    fn finish_report(&mut self) {
        let step = i64::from(self.plan.step_minutes);
        let report = &mut self.report;
        if let (Some(from), Some(first)) = (self.from, report.file_first)
            && from < first
        {
            report.partial.push(format!(
                "the period asked for starts {from}, before the file's first step {first}: the run starts with that step"
            ));
        }
        if let (Some(to), Some(last)) = (self.to, report.file_last)
            && !self.reached_to
            && to > last.plus_minutes(step)
        {
            report.partial.push(format!(
                "the period asked for runs until {to}, beyond the file's last step {last}: the run ends with that step"
            ));
        }
        report.missing_values = Variable::ALL
            .into_iter()
            .filter(|v| self.absent[v.index()] > 0)
            .map(|v| (v, self.absent[v.index()]))
            .collect();
        if report.steps == 0 {
            return;
        }
        for (v, n) in &report.missing_values {
            let share = *n as f64 / report.steps as f64;
            if share <= WARN_MISSING_SHARE {
                continue;
            }
            let column = self
                .columns
                .iter()
                .find(|c| c.var == *v)
                .map_or("", |c| self.headers[c.index].as_str());
            let fate = match v {
                Variable::Precip => "set to 0 where missing",
                Variable::TAir | Variable::Sw | Variable::Ppfd => {
                    "gaps up to max_gap_hours filled, longer ones leave the steps missing"
                }
                v if *v == self.plan.humidity => {
                    "gaps up to max_gap_hours filled, longer ones leave the steps missing"
                }
                Variable::Pressure => {
                    "gaps up to max_gap_hours filled, longer ones take the elevation's pressure"
                }
                _ => "gaps up to max_gap_hours filled, longer ones absent",
            };
            report.warnings.push(format!(
                "{} is missing in {:.1} % of the steps ({n} of {}, column `{column}`): {fate}",
                v.name(),
                100.0 * share,
                report.steps
            ));
        }
    }
}

/// VPD (kPa) from the humidity variable in use (`humidity`, in the project's unit), air
/// temperature (°C) and pressure (kPa); NaN when either input is NaN. Shared by the CSV reader and
/// the NetCDF grid reader so both derive VPD alike.
pub(crate) fn vpd_from_humidity_kpa(
    humidity: Variable,
    t_air_c: f64,
    value: f64,
    pressure_kpa: f64,
) -> f64 {
    // The FAO-56 helpers clamp at 0 with f64::max, which would turn NaN into 0.
    if t_air_c.is_nan() || value.is_nan() {
        return f64::NAN;
    }
    match humidity {
        Variable::Rh => vpd_from_rh_kpa(t_air_c, value),
        Variable::DewPoint => vpd_from_dew_point_kpa(t_air_c, value),
        Variable::VapourPressure => (saturation_vapour_pressure_kpa(t_air_c) - value).max(0.0),
        Variable::SpecificHumidity => {
            // e = q·p / (ε + (1 − ε)·q) with ε = 0.622, the ratio of the molar masses of
            // water and dry air (common practice in meteorology).
            let e = value * pressure_kpa / (0.622 + 0.378 * value);
            (saturation_vapour_pressure_kpa(t_air_c) - e).max(0.0)
        }
        _ => value,
    }
}

/// A time from the fields a pattern or the separate columns gave.
fn build_time(parts: Parts) -> Result<LocalTime, String> {
    let year = parts.year.ok_or("no year")?;
    let year = i32::try_from(year).map_err(|_| format!("year {year} is outside 1–9999"))?;
    let hour = parts.hour.unwrap_or(0);
    let minute = parts.minute.unwrap_or(0);
    if hour == 24 && minute != 0 {
        return Err(format!(
            "hour 24 must have minute 0 (the end of the day), not {minute}"
        ));
    }
    if hour > 24 {
        return Err(format!("hour {hour} is outside 0–24"));
    }
    let t = match (parts.doy, parts.month, parts.day) {
        (Some(doy), _, _) => LocalTime::from_year_doy(year, doy, hour, minute),
        (None, Some(m), Some(d)) => LocalTime::from_ymdhm_24(year, m, d, hour, minute),
        _ => return Err("the pattern gives no month and day (or day of year)".into()),
    };
    t.map_err(|e| e.to_string())
}

/// A CSV-level error (a row with the wrong number of fields, an I/O failure) with its place.
fn csv_error(path: &Path, e: csv::Error, line: u64) -> ForcingError {
    match e.kind() {
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => ForcingError::Data {
            path: path.to_path_buf(),
            line,
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

impl Iterator for CsvReader {
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
                    // Read on to learn what the file covers (errors past here do not matter).
                    while !self.eof {
                        match self.read_row() {
                            Ok(true) => {}
                            _ => self.eof = true,
                        }
                    }
                    let show =
                        |t: Option<LocalTime>| t.map_or("…".to_string(), |t| t.to_string());
                    let covers = match (self.report.file_first, self.report.file_last) {
                        (Some(a), Some(b)) => format!(
                            "the file covers the steps from {a} to {b} ({} rows)",
                            self.report.rows_read
                        ),
                        _ => "the file has no data rows".to_string(),
                    };
                    return Some(Err(ForcingError::EmptyPeriod {
                        path: self.path.clone(),
                        message: format!(
                            "no step between {} and {}: {covers}",
                            show(self.from),
                            show(self.to)
                        ),
                    }));
                }
                self.finish_report();
                None
            }
            Err(e) => {
                self.done = true;
                Some(Err(e))
            }
        }
    }
}
