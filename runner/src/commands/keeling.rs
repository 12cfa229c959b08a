//! `isodisc keeling`: the source δ13C of each group of canopy-air samples by Keeling plots (OLS,
//! geometric mean, York; Keeling 1958) and Miller–Tans (2003), with the model's quality flags.
//!
//! The samples file is streamed once; each sample goes to its group by a hash lookup, so the work
//! is O(n) in samples (a million samples in ten thousand groups take well under a second). The
//! fits run in parallel over groups. Groups come from the `group` column, from nights (sunset to
//! sunrise from the site's position, or fixed local hours) or from fixed time windows.

use std::borrow::Cow;
use std::collections::HashMap;
use std::io::{self, BufWriter, Write};
use std::ops::Range;
use std::path::{Path, PathBuf};

use isodisc_model::canopy::solar::{Location, SunTimes};
use isodisc_model::observations::{
    Bootstrap, KeelingData, KeelingFit, KeelingMethod, KeelingSettings,
};
use rayon::prelude::*;
use serde::Deserialize;

use super::blocks::{BlockDone, CsvBlocks, Rows};
use crate::cli::{ByArg, KeelingArgs};
use crate::error::{Context, Error, Result};
use crate::forcing::time::{LocalDate, LocalTime};
use crate::numfmt::parse_f64;
use crate::output::{AtomicFile, fmt_num};

/// Columns of the output, in order (see `docs/observations.md` for units).
pub const OUTPUT_COLUMNS: [&str; 16] = [
    "group",
    "start",
    "end",
    "n",
    "co2_min",
    "co2_max",
    "co2_range",
    "method",
    "intercept",
    "intercept_se",
    "ci95_low",
    "ci95_high",
    "slope",
    "r2",
    "flags",
    "bootstrap_se",
];

/// Largest CO2 mole fraction a sample may have (µmol mol⁻¹): 10 %, far above any canopy air.
pub const CO2_MAX_UMOL_MOL: f64 = 100_000.0;

/// Range of a sample's δ13C (‰ VPDB): wider than any natural CO2 (about −60‰ to +10‰).
pub const D13C_RANGE_PERMIL: (f64, f64) = (-100.0, 50.0);

/// Minutes in a day.
const DAY_MIN: i64 = 1440;

/// The name of a method in the output: the flag-style names of the command line.
pub fn method_label(method: KeelingMethod) -> &'static str {
    match method {
        KeelingMethod::Ols => "ols",
        KeelingMethod::GeometricMean => "gmr",
        KeelingMethod::York => "york",
        KeelingMethod::MillerTans => "miller-tans",
    }
}

/// How samples are grouped, validated.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Grouping {
    /// The `group` column when present, else one group.
    Default,
    /// The `group` column.
    Column,
    /// Sunset to sunrise at this location; the night is named by its evening's date.
    NightSun(Location),
    /// Local hours from `start_h` to `end_h` (wrapping past midnight when start > end).
    NightHours { start_h: f64, end_h: f64 },
    /// Fixed windows of this many minutes, aligned to local midnight of 1970-01-01.
    Window { minutes: i64 },
}

/// A validated `isodisc keeling` invocation.
#[derive(Debug, Clone)]
pub struct KeelingPlan {
    samples: PathBuf,
    grouping: Grouping,
    background: Option<(f64, f64)>,
    settings: KeelingSettings,
    out: Option<PathBuf>,
}

/// Just the keys of `[site]` that solar geometry needs; the rest of the site file is ignored.
#[derive(Deserialize)]
struct SitePosition {
    site: SitePositionBlock,
}

#[derive(Deserialize)]
struct SitePositionBlock {
    latitude: f64,
    longitude: f64,
    utc_offset_h: f64,
}

/// Reads latitude (°), longitude (°) and UTC offset (h) from a site file's `[site]` table.
pub fn site_location(path: &Path) -> Result<Location> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("cannot read the site file {}", path.display()))?;
    let pos: SitePosition = toml::from_str(&text).map_err(|e| {
        Error::msg(format!(
            "{}: [site] needs latitude, longitude and utc_offset_h: {}",
            path.display(),
            e.message()
        ))
    })?;
    let s = pos.site;
    Location::new(s.latitude, s.longitude, s.utc_offset_h)
        .with_context(|| format!("{}: [site]", path.display()))
}

/// Parses `--night-hours START-END` (local hours 0–24, e.g. `19-6`).
fn parse_night_hours(text: &str) -> Result<(f64, f64)> {
    let bad = || {
        Error::msg(format!(
            "--night-hours `{text}`: expected START-END in local hours 0–24, e.g. 19-6"
        ))
    };
    let (a, b) = text.split_once('-').ok_or_else(bad)?;
    let start: f64 = a.trim().parse().map_err(|_| bad())?;
    let end: f64 = b.trim().parse().map_err(|_| bad())?;
    if !((0.0..=24.0).contains(&start) && (0.0..=24.0).contains(&end)) || start == end {
        return Err(bad());
    }
    Ok((start, end))
}

/// Parses `--window`: a whole number followed by `m` (minutes), `h` or `d`.
pub fn parse_window_minutes(text: &str) -> Result<i64> {
    let bad = || {
        Error::msg(format!(
            "--window `{text}`: expected a whole number and m, h or d (30m, 6h, 1d)"
        ))
    };
    let t = text.trim();
    let unit = match t.chars().last() {
        Some('m') => 1,
        Some('h') => 60,
        Some('d') => DAY_MIN,
        _ => return Err(bad()),
    };
    let n: i64 = t[..t.len() - 1].trim().parse().map_err(|_| bad())?;
    match n.checked_mul(unit) {
        Some(m) if n > 0 && m <= 366 * DAY_MIN => Ok(m),
        _ => Err(bad()),
    }
}

impl KeelingPlan {
    /// Validates the arguments: grouping options that belong together, the site file's position,
    /// the background and the fit settings.
    pub fn from_args(args: &KeelingArgs) -> Result<Self> {
        let by = args.by;
        if by != Some(ByArg::Night) && (args.site.is_some() || args.night_hours.is_some()) {
            return Err(Error::msg("--site and --night-hours need --by night"));
        }
        if by != Some(ByArg::Window) && args.window.is_some() {
            return Err(Error::msg("--window needs --by window"));
        }
        let grouping = match by {
            None => Grouping::Default,
            Some(ByArg::Group) => Grouping::Column,
            Some(ByArg::Night) => match (&args.site, &args.night_hours) {
                (Some(site), _) => Grouping::NightSun(site_location(site)?),
                (None, Some(h)) => {
                    let (start_h, end_h) = parse_night_hours(h)?;
                    Grouping::NightHours { start_h, end_h }
                }
                (None, None) => {
                    return Err(Error::msg(
                        "--by night needs --site SITE.toml (sunset to sunrise) or \
                         --night-hours START-END",
                    ));
                }
            },
            Some(ByArg::Window) => {
                let w = args
                    .window
                    .as_deref()
                    .ok_or_else(|| Error::msg("--by window needs --window (e.g. 6h, 1d)"))?;
                Grouping::Window {
                    minutes: parse_window_minutes(w)?,
                }
            }
        };
        let background = match (args.background_co2, args.background_d13c) {
            (Some(c), Some(d)) => {
                if !(c > 0.0
                    && c <= CO2_MAX_UMOL_MOL
                    && (D13C_RANGE_PERMIL.0..=D13C_RANGE_PERMIL.1).contains(&d))
                {
                    return Err(Error::msg(format!(
                        "--background-co2 {c} --background-d13c {d}: CO2 must be in (0, 100000] µmol mol⁻¹ \
                         and δ13C in [-100, 50] ‰"
                    )));
                }
                Some((c, d))
            }
            _ => None,
        };
        let mut settings = KeelingSettings::default()
            .with_min_co2_range(args.min_co2_range)
            .context("--min-co2-range")?;
        if let Some(n) = args.bootstrap {
            settings =
                settings.with_bootstrap(Bootstrap::new(n, args.seed).context("--bootstrap")?);
        }
        if let Some(out) = &args.out {
            let mut inputs = vec![args.samples.clone()];
            inputs.extend(args.site.clone());
            crate::output::check_not_input("--out", out, &inputs)?;
        }
        Ok(Self {
            samples: args.samples.clone(),
            grouping,
            background,
            settings,
            out: args.out.clone(),
        })
    }

    /// Reads, groups and fits the samples; writes the table or the CSV file.
    pub fn run(&self) -> Result<()> {
        let reader = SampleReader::open(&self.samples)?;
        let has_sd = reader.has_sd();
        let has_bg = reader.has_background();
        let grouping = match self.grouping {
            Grouping::Default if reader.has_group() => Grouping::Column,
            Grouping::Column if !reader.has_group() => {
                return Err(Error::msg(format!(
                    "{}: --by group needs a `group` column; known: {}",
                    self.samples.display(),
                    reader.known_columns()
                )));
            }
            g => g,
        };
        let (groups, skipped) = collect_groups(reader, grouping)?;
        if skipped > 0 {
            eprintln!(
                "isodisc keeling: {skipped} daytime samples belong to no night and were left out"
            );
        }
        let mut methods = vec![KeelingMethod::Ols, KeelingMethod::GeometricMean];
        if has_sd {
            methods.push(KeelingMethod::York);
        }
        if self.background.is_some() || has_bg {
            methods.push(KeelingMethod::MillerTans);
        }
        let rows: Vec<Vec<(KeelingFit, usize)>> = groups
            .par_iter()
            .enumerate()
            .map(|(gi, g)| {
                methods
                    .iter()
                    .map(|&m| {
                        self.fit_group(g, m)
                            .map(|f| (f, gi))
                            .with_context(|| format!("group {}", g.label))
                    })
                    .collect::<Result<Vec<_>>>()
            })
            .collect::<Result<_>>()?;
        let cells = rows
            .iter()
            .flatten()
            .map(|(fit, gi)| row_cells(&groups[*gi], fit));
        match &self.out {
            Some(path) => {
                let mut f = AtomicFile::create(path)?;
                write_csv(f.writer(), cells)
                    .with_context(|| format!("cannot write {}", path.display()))?;
                f.commit()
            }
            None => {
                let stdout = io::stdout();
                let mut w = BufWriter::new(stdout.lock());
                write_table(&mut w, cells.collect())?;
                w.flush()?;
                Ok(())
            }
        }
    }

    fn fit_group(&self, g: &Group, method: KeelingMethod) -> Result<KeelingFit> {
        let mut data = KeelingData::new(&g.co2, &g.d13c)?;
        if !g.co2_sd.is_empty() {
            data = data.with_sd(&g.co2_sd, &g.d13c_sd)?;
        }
        data = match self.background {
            Some((c, d)) => data.with_background(c, d)?,
            None if !g.co2_bg.is_empty() => data.with_background_series(&g.co2_bg, &g.d13c_bg)?,
            None => data,
        };
        Ok(data.fit(method, &self.settings)?)
    }
}

/// The output cells of one fit: `intercept` is the source δ13C for every method (the Miller–Tans
/// slope), `slope` the fitted line's own slope.
fn row_cells(g: &Group, fit: &KeelingFit) -> Vec<String> {
    let mut cells = vec![
        g.label.clone(),
        g.start.to_string(),
        g.end.to_string(),
        fit.n.to_string(),
    ];
    let mut num = |v: f64| {
        let mut s = String::new();
        fmt_num(&mut s, v);
        s
    };
    let nums = [
        fit.co2_min_umol_mol,
        fit.co2_max_umol_mol,
        fit.co2_range_umol_mol,
    ]
    .map(&mut num);
    cells.extend(nums);
    cells.push(method_label(fit.method).to_string());
    let nums = [
        fit.source_d13c_permil,
        fit.source_se_permil,
        fit.ci95_low_permil,
        fit.ci95_high_permil,
        fit.slope,
        fit.r2,
    ]
    .map(&mut num);
    cells.extend(nums);
    cells.push(fit.flags.names().collect::<Vec<_>>().join(";"));
    cells.push(num(fit.bootstrap_se_permil));
    cells
}

fn write_csv(w: &mut dyn Write, rows: impl Iterator<Item = Vec<String>>) -> csv::Result<()> {
    let mut out = csv::Writer::from_writer(w);
    out.write_record(OUTPUT_COLUMNS)?;
    for r in rows {
        out.write_record(&r)?;
    }
    out.flush()?;
    Ok(())
}

/// Aligned columns; empty cells (undefined values) show as `-`.
fn write_table(w: &mut dyn Write, rows: Vec<Vec<String>>) -> Result<()> {
    let mut width: Vec<usize> = OUTPUT_COLUMNS.iter().map(|c| c.chars().count()).collect();
    for r in &rows {
        for (wd, c) in width.iter_mut().zip(r) {
            *wd = (*wd).max(c.chars().count().max(1));
        }
    }
    let line = |w: &mut dyn Write, cells: &mut dyn Iterator<Item = &str>| -> io::Result<()> {
        let text: Vec<String> = cells
            .zip(&width)
            .map(|(c, wd)| format!("{:<wd$}", if c.is_empty() { "-" } else { c }))
            .collect();
        writeln!(w, "{}", text.join("  ").trim_end())
    };
    line(w, &mut OUTPUT_COLUMNS.iter().copied())?;
    for r in &rows {
        line(w, &mut r.iter().map(String::as_str))?;
    }
    Ok(())
}

/// One group's samples, in file order.
#[derive(Debug)]
struct Group {
    label: String,
    start: LocalTime,
    end: LocalTime,
    co2: Vec<f64>,
    d13c: Vec<f64>,
    co2_sd: Vec<f64>,
    d13c_sd: Vec<f64>,
    co2_bg: Vec<f64>,
    d13c_bg: Vec<f64>,
}

impl Group {
    fn new(label: String) -> Self {
        let t0 = LocalTime::from_minutes(0);
        Self {
            label,
            start: t0,
            end: t0,
            co2: Vec::new(),
            d13c: Vec::new(),
            co2_sd: Vec::new(),
            d13c_sd: Vec::new(),
            co2_bg: Vec::new(),
            d13c_bg: Vec::new(),
        }
    }

    fn push(&mut self, s: &Sample) {
        if self.co2.is_empty() {
            (self.start, self.end) = (s.time, s.time);
        }
        self.start = self.start.min(s.time);
        self.end = self.end.max(s.time);
        self.co2.push(s.co2);
        self.d13c.push(s.d13c);
        if let Some((c, d)) = s.sd {
            self.co2_sd.push(c);
            self.d13c_sd.push(d);
        }
        if let Some((c, d)) = s.bg {
            self.co2_bg.push(c);
            self.d13c_bg.push(d);
        }
    }
}

/// Hours of sunset and sunrise (local standard time) of each day, computed once per day.
struct NightClock {
    location: Location,
    cache: HashMap<i64, (f64, f64)>,
}

impl NightClock {
    /// (sunset, sunrise) hours of `date`: polar night makes the whole day night, polar day none.
    fn sun(&mut self, date: LocalDate) -> Result<(f64, f64)> {
        if let Some(&v) = self.cache.get(&date.days()) {
            return Ok(v);
        }
        let times = self
            .location
            .sun_times(date.year(), date.day_of_year())
            .with_context(|| format!("sunset and sunrise on {date}"))?;
        let v = match times {
            SunTimes::RiseAndSet {
                sunrise_hour_lst,
                sunset_hour_lst,
            } => (sunset_hour_lst, sunrise_hour_lst),
            SunTimes::PolarNight => (0.0, 24.0),
            SunTimes::PolarDay => (f64::INFINITY, f64::NEG_INFINITY),
        };
        self.cache.insert(date.days(), v);
        Ok(v)
    }
}

/// The calendar day `days` after 1970-01-01.
fn day(days: i64) -> LocalDate {
    LocalTime::from_minutes(days * DAY_MIN).date()
}

/// The night a time belongs to, as days since 1970-01-01 of its evening; None in daytime.
fn night_of(time: LocalTime, sunset_h: f64, sunrise_h: f64) -> Option<i64> {
    let h = time.hour_fraction();
    let d = time.date().days();
    if sunset_h > sunrise_h {
        // The night runs past midnight: the evening part belongs to today, the morning to
        // yesterday's night.
        if h >= sunset_h {
            Some(d)
        } else if h < sunrise_h {
            Some(d - 1)
        } else {
            None
        }
    } else if h >= sunset_h && h < sunrise_h {
        Some(d)
    } else {
        None
    }
}

/// Streams the samples into groups; returns them in output order and the number of samples that
/// fell in no group (daytime, when grouping by night).
fn collect_groups(reader: SampleReader, grouping: Grouping) -> Result<(Vec<Group>, usize)> {
    let mut groups: Vec<Group> = Vec::new();
    let mut by_name: HashMap<Vec<u8>, usize> = HashMap::new();
    let mut by_key: HashMap<i64, usize> = HashMap::new();
    let mut keys: Vec<i64> = Vec::new();
    let mut clock = match grouping {
        Grouping::NightSun(location) => Some(NightClock {
            location,
            cache: HashMap::new(),
        }),
        _ => None,
    };
    let mut skipped = 0usize;
    let (mut last_name, mut last_group): (Vec<u8>, Option<usize>) = (Vec::new(), None);
    reader.for_each(|s| {
        let key = match grouping {
            Grouping::Column => {
                // Samples of a group usually come together: the last group is checked first.
                let i = match last_group {
                    Some(i) if s.group == last_name.as_slice() => i,
                    _ => {
                        let i = match by_name.get(s.group) {
                            Some(&i) => i,
                            None => {
                                let label = String::from_utf8_lossy(s.group).into_owned();
                                groups.push(Group::new(label));
                                by_name.insert(s.group.to_vec(), groups.len() - 1);
                                groups.len() - 1
                            }
                        };
                        last_name.clear();
                        last_name.extend_from_slice(s.group);
                        last_group = Some(i);
                        i
                    }
                };
                groups[i].push(s);
                return Ok(());
            }
            Grouping::Default => 0,
            Grouping::Window { minutes } => s.time.minutes().div_euclid(minutes),
            Grouping::NightHours { start_h, end_h } => match night_of(s.time, start_h, end_h) {
                Some(k) => k,
                None => {
                    skipped += 1;
                    return Ok(());
                }
            },
            Grouping::NightSun(_) => {
                let clock = clock.as_mut().expect("clock set for NightSun");
                let (set, rise) = clock.sun(s.time.date())?;
                let night = match night_of(s.time, set, rise) {
                    // Before sunrise the night is yesterday's, which began at yesterday's sunset.
                    Some(k) if k < s.time.date().days() => {
                        let (set_y, _) = clock.sun(day(k))?;
                        (set_y < 24.0).then_some(k)
                    }
                    other => other,
                };
                match night {
                    Some(k) => k,
                    None => {
                        skipped += 1;
                        return Ok(());
                    }
                }
            }
        };
        let i = *by_key.entry(key).or_insert_with(|| {
            groups.push(Group::new(String::new()));
            keys.push(key);
            groups.len() - 1
        });
        groups[i].push(s);
        Ok(())
    })?;
    if !matches!(grouping, Grouping::Column) {
        for (g, &k) in groups.iter_mut().zip(&keys) {
            g.label = match grouping {
                Grouping::Default => "all".to_string(),
                Grouping::Window { minutes } => LocalTime::from_minutes(k * minutes).to_string(),
                _ => day(k).to_string(),
            };
        }
        let mut order: Vec<usize> = (0..groups.len()).collect();
        order.sort_by_key(|&i| keys[i]);
        let mut taken: Vec<Option<Group>> = groups.into_iter().map(Some).collect();
        groups = order.into_iter().filter_map(|i| taken[i].take()).collect();
    }
    Ok((groups, skipped))
}

/// One sample as read, borrowed from the reader's record.
pub(crate) struct Sample<'r> {
    /// Sample time (local standard time).
    pub time: LocalTime,
    /// CO2 (µmol mol⁻¹), > 0.
    pub co2: f64,
    /// δ13C (‰).
    pub d13c: f64,
    /// Raw `group` cell (empty without the column).
    pub group: &'r [u8],
    /// (co2_sd µmol mol⁻¹, d13c_sd ‰), both > 0, when both columns exist.
    pub sd: Option<(f64, f64)>,
    /// (co2_bg µmol mol⁻¹, d13c_bg ‰), when both columns exist.
    pub bg: Option<(f64, f64)>,
}

/// A streaming reader of a samples file: checks the header, then parses blocks of rows on all
/// threads, with positions for the error messages.
pub(crate) struct SampleReader {
    rows: CsvBlocks,
    cols: SampleColumns,
}

/// Where a samples file keeps each quantity.
struct SampleColumns {
    header: Vec<String>,
    time: usize,
    co2: usize,
    d13c: usize,
    group: Option<usize>,
    sd: Option<(usize, usize)>,
    bg: Option<(usize, usize)>,
}

/// One row's numbers and where its group's name is.
struct ParsedSample {
    time: LocalTime,
    co2: f64,
    d13c: f64,
    group: Name,
    sd: Option<(f64, f64)>,
    bg: Option<(f64, f64)>,
}

/// Where a group name is: in the block's text, or (a quoted name) in the block's own names.
#[derive(Clone)]
enum Name {
    Text(Range<usize>),
    Quoted(Range<usize>),
}

/// A block's samples up to its first bad row, and the names that were quoted.
struct ParsedBlock {
    samples: Vec<ParsedSample>,
    quoted: Vec<u8>,
}

impl SampleReader {
    /// Opens `path` and finds its columns; `time`, `co2` and `d13c` are required, the SD and
    /// background columns come in pairs.
    pub(crate) fn open(path: &Path) -> Result<Self> {
        let (rows, header) = CsvBlocks::open(path)?;
        let find = |name: &str| header.iter().position(|h| h == name);
        let known = header.join(", ");
        let need = |name: &str| {
            find(name).ok_or_else(|| {
                Error::msg(format!(
                    "{} has no column {name}; known: {known}",
                    path.display()
                ))
            })
        };
        let pair = |a: &str, b: &str| -> Result<Option<(usize, usize)>> {
            match (find(a), find(b)) {
                (Some(i), Some(j)) => Ok(Some((i, j))),
                (None, None) => Ok(None),
                _ => Err(Error::msg(format!(
                    "{}: columns {a} and {b} go together; found only one",
                    path.display()
                ))),
            }
        };
        let cols = SampleColumns {
            time: need("time")?,
            co2: need("co2")?,
            d13c: need("d13c")?,
            group: find("group"),
            sd: pair("co2_sd", "d13c_sd")?,
            bg: pair("co2_bg", "d13c_bg")?,
            header,
        };
        Ok(Self { rows, cols })
    }

    pub(crate) fn has_group(&self) -> bool {
        self.cols.group.is_some()
    }

    pub(crate) fn has_sd(&self) -> bool {
        self.cols.sd.is_some()
    }

    pub(crate) fn has_background(&self) -> bool {
        self.cols.bg.is_some()
    }

    pub(crate) fn known_columns(&self) -> String {
        self.cols.header.join(", ")
    }

    /// Calls `f` on each row in file order; the first bad cell or an error from `f` stops the
    /// reading. Blocks of lines are split and parsed on all threads while this thread hands the
    /// previous ones to `f`.
    pub(crate) fn for_each(self, mut f: impl FnMut(&Sample) -> Result<()>) -> Result<()> {
        let cols = &self.cols;
        self.rows.for_each_block(
            |block| cols.parse_block(block),
            |text, parsed: ParsedBlock| {
                for s in &parsed.samples {
                    f(&Sample {
                        time: s.time,
                        co2: s.co2,
                        d13c: s.d13c,
                        group: match &s.group {
                            Name::Text(r) => &text[r.clone()],
                            Name::Quoted(r) => &parsed.quoted[r.clone()],
                        },
                        sd: s.sd,
                        bg: s.bg,
                    })?;
                }
                Ok(())
            },
        )
    }
}

impl SampleColumns {
    fn parse_block(&self, block: &[u8]) -> BlockDone<ParsedBlock> {
        let n = self.header.len();
        let mut parsed = ParsedBlock {
            samples: Vec::with_capacity(block.len() / 32),
            quoted: Vec::new(),
        };
        let mut cells = Vec::with_capacity(n);
        let mut rows = Rows::new(block);
        let error = loop {
            let Some((at, row)) = rows.next_cells(&mut cells, n) else {
                break None;
            };
            if let Err(why) = row {
                break Some((at, why));
            }
            match self.parse_row(&cells) {
                Ok(mut s) => {
                    if let Some(g) = self.group {
                        let name = cells[g].trim_ascii();
                        s.group = match &cells[g] {
                            Cow::Borrowed(_) => {
                                let start = name.as_ptr() as usize - block.as_ptr() as usize;
                                Name::Text(start..start + name.len())
                            }
                            Cow::Owned(_) => {
                                let start = parsed.quoted.len();
                                parsed.quoted.extend_from_slice(name);
                                Name::Quoted(start..parsed.quoted.len())
                            }
                        };
                    }
                    parsed.samples.push(s);
                }
                Err(rest) => break Some((at, rest)),
            }
        };
        BlockDone {
            out: parsed,
            lines: rows.lines_seen(),
            error,
        }
    }

    /// One row's sample (its group not yet placed), or the message after `line N`.
    fn parse_row(&self, cells: &[Cow<'_, [u8]>]) -> std::result::Result<ParsedSample, String> {
        let cell = |i: usize| cells[i].trim_ascii();
        let bad = |i: usize, why: &str| {
            format!(
                ", column {} ({}): `{}` {why}",
                i + 1,
                self.header[i],
                String::from_utf8_lossy(cell(i))
            )
        };
        let num = |i: usize| -> std::result::Result<f64, String> {
            parse_f64(cell(i))
                .filter(|v| v.is_finite())
                .ok_or_else(|| bad(i, "is not a number"))
        };
        let positive = |i: usize| -> std::result::Result<f64, String> {
            let v = num(i)?;
            if v > 0.0 {
                Ok(v)
            } else {
                Err(bad(i, "must be > 0"))
            }
        };
        // Physical ranges (docs/observations.md): CO2 above 0 and at most 100 000 µmol mol⁻¹
        // (10 %, far above any canopy air); δ13C from −100‰ to +50‰ (beyond any natural CO2).
        let co2 = |i: usize| -> std::result::Result<f64, String> {
            let v = positive(i)?;
            if v <= CO2_MAX_UMOL_MOL {
                Ok(v)
            } else {
                Err(bad(i, "is outside the CO2 range (0, 100000] µmol mol⁻¹"))
            }
        };
        let delta = |i: usize| -> std::result::Result<f64, String> {
            let v = num(i)?;
            if (D13C_RANGE_PERMIL.0..=D13C_RANGE_PERMIL.1).contains(&v) {
                Ok(v)
            } else {
                Err(bad(i, "is outside the δ13C range [-100, 50] ‰"))
            }
        };
        let time = std::str::from_utf8(cell(self.time))
            .ok()
            .and_then(|s| LocalTime::parse_iso(s).ok())
            .ok_or_else(|| bad(self.time, "is not a time YYYY-MM-DDTHH:MM[:SS]"))?;
        Ok(ParsedSample {
            time,
            co2: co2(self.co2)?,
            d13c: delta(self.d13c)?,
            group: Name::Text(0..0),
            sd: self
                .sd
                .map(|(a, b)| Ok::<_, String>((positive(a)?, positive(b)?)))
                .transpose()?,
            bg: self
                .bg
                .map(|(a, b)| Ok::<_, String>((co2(a)?, delta(b)?)))
                .transpose()?,
        })
    }
}
