//! `isodisc plot`: SVG figures from a run folder — a one-page overview of the run, the seasonal
//! course of daily Δ per pathway and for the ecosystem (each day's point as opaque as its GPP is
//! large, with GPP-weighted running means), predicted δ13C of respiration against observations,
//! Keeling plots (δ13C against 1/CO2, Keeling 1958) of chosen groups with their fitted lines, and
//! ensemble envelopes; and maps of one field and month of gridded priors (`--map`, see
//! [`map_svg`]).
//!
//! Made for slides and papers: time axes ticked at month starts (year starts for long runs),
//! typographic axis titles with units, legends in their own row above the plot so they hide no
//! data, and series that differ in dash pattern and marker as well as colour, so they stay apart
//! in greyscale. Text is sized to stay readable with a figure shrunk to half a slide. SVG needs no
//! system library; text stays SVG `<text>`.
//!
//! [`PlotPlan::figures`] builds every figure in memory; [`PlotPlan::draw`] writes them.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use plotters::coord::Shift;
use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint};
use plotters::element::DashedPathElement;
use plotters::prelude::*;

use crate::cli::{MatchArg, PlotArgs};
use crate::commands::compare::{CsvTable, Keyed, observed_series};
use crate::commands::keeling::SampleReader;
use crate::error::{Error, Result};
use crate::forcing::time::{LocalDate, LocalTime};
use crate::output::write_atomic;

/// Size of a single figure (pixels), 16:10.
const SIZE: (u32, u32) = (1200, 750);
/// One panel of the overview page; the page is 2 panels wide and 3 high.
const PANEL: (u32, u32) = (1100, 720);
/// Font sizes (pixels as drawn): at half a 1280-pixel-wide slide a figure is drawn at about half
/// its size, so tick labels of 26 px stay at 13 px or more. plotters writes an SVG font size of
/// its size / 1.24 (points), so these are passed through [`font`].
const FONT_TITLE: u32 = 32;
const FONT_AXIS: u32 = 30;
const FONT_TICK: u32 = 26;
const FONT_NOTE: u32 = 22;

/// The plotters font of `px` pixels as drawn.
fn font(px: u32) -> (&'static str, f64) {
    (FONT, px as f64 * 1.24)
}
const LINE_WIDTH: u32 = 4;
const FONT: &str = "sans-serif";
/// Okabe–Ito colours of clearly different lightness (black, blue, orange, bluish green,
/// vermillion), so that they also stay apart in greyscale.
const COLOURS: [RGBColor; 5] = [
    RGBColor(0, 0, 0),
    RGBColor(0, 114, 178),
    RGBColor(230, 159, 0),
    RGBColor(0, 158, 115),
    RGBColor(213, 94, 0),
];
/// Dash patterns (dash, gap in pixels); None is a solid line.
const DASHES: [Option<(u32, u32)>; 4] = [None, Some((18, 9)), Some((4, 7)), Some((24, 6))];
/// Days of the GPP-weighted running mean drawn through daily Δ.
const RUNNING_DAYS: usize = 15;
const MONTHS: [&str; 12] = [
    "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
];

/// How a series is drawn: an optional line (dash pattern `DASHES[k]`) and an optional marker
/// (0 circle, 1 triangle, 2 square, 3 diamond, 4 cross).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Mark {
    dash: Option<usize>,
    marker: Option<usize>,
    /// With a line: a marker every this many points (so lines differ in greyscale by marker too).
    marker_every: usize,
}

impl Mark {
    fn line(dash: usize) -> Self {
        Mark {
            dash: Some(dash),
            marker: None,
            marker_every: 0,
        }
    }
    fn line_marked(dash: usize, marker: usize, every: usize) -> Self {
        Mark {
            dash: Some(dash),
            marker: Some(marker),
            marker_every: every.max(1),
        }
    }
    fn points(marker: usize) -> Self {
        Mark {
            dash: None,
            marker: Some(marker),
            marker_every: 1,
        }
    }
}

/// One series of a figure. NaN values break a line and draw no marker.
struct Series {
    label: String,
    points: Vec<(f64, f64)>,
    colour: RGBColor,
    mark: Mark,
    /// Opacity of each point's marker (0–1), e.g. the day's GPP relative to a large day's.
    opacity: Option<Vec<f64>>,
    /// Listed in the legend (a series drawn twice, as points and as a line, is listed once).
    in_legend: bool,
}

impl Series {
    fn new(
        label: impl Into<String>,
        points: Vec<(f64, f64)>,
        colour: RGBColor,
        mark: Mark,
    ) -> Self {
        Series {
            label: label.into(),
            points,
            colour,
            mark,
            opacity: None,
            in_legend: true,
        }
    }
}

/// A shaded band between a lower and an upper curve.
struct Band {
    label: String,
    x: Vec<f64>,
    low: Vec<f64>,
    high: Vec<f64>,
    colour: RGBColor,
    opacity: f64,
}

/// How the x axis is ticked and labelled.
enum XAxis {
    /// Days since 1970-01-01: ticks at month starts ("Jan", "Feb", …) or year starts.
    Days,
    /// Categories 0, 1, … named by their labels (months of an ensemble: "Jan", …).
    Categories(Vec<String>),
    /// A linear axis over the given range.
    Linear(f64, f64),
}

/// An x–y figure (or one panel of a page).
struct Figure {
    title: String,
    x_label: String,
    y_label: String,
    x_axis: XAxis,
    /// A line of small print under the legend (how to read the figure).
    note: Option<String>,
    bands: Vec<Band>,
    series: Vec<Series>,
}

/// What one file holds: a figure, or a page of panels (two columns).
struct Page {
    title: Option<String>,
    panels: Vec<Figure>,
}

impl From<Figure> for Page {
    fn from(f: Figure) -> Self {
        Page {
            title: None,
            panels: vec![f],
        }
    }
}

/// A validated `isodisc plot` invocation.
#[derive(Debug, Clone)]
pub struct PlotPlan {
    dir: PathBuf,
    out: PathBuf,
    keeling: Option<(PathBuf, PathBuf, Vec<String>)>,
    observed: Option<(PathBuf, String)>,
    /// `--map VARIABLE --month YYYY-MM` of DIR/priors_grid.nc.
    map: Option<(String, String)>,
}

impl PlotPlan {
    /// Checks that the folder holds a run (daily.csv) or an ensemble (quantiles_monthly.csv) and
    /// builds the output folder's path.
    pub fn from_args(args: &PlotArgs) -> Result<Self> {
        let map = match (&args.map, &args.month) {
            (Some(v), Some(m)) => {
                if crate::priors_grid::parse_month(m).is_none() {
                    return Err(Error::msg(format!("--month {m}: not a month (YYYY-MM)")));
                }
                if !args.dir.join(GRID_FILE).is_file() {
                    return Err(Error::msg(format!(
                        "--map {v}: {} has no {GRID_FILE}",
                        args.dir.display()
                    )));
                }
                Some((v.clone(), m.clone()))
            }
            _ => None,
        };
        if map.is_none()
            && !args.dir.join("daily.csv").is_file()
            && !args.dir.join("quantiles_monthly.csv").is_file()
            && !args.dir.join("posterior.csv").is_file()
        {
            return Err(Error::msg(format!(
                "{}: neither daily.csv, quantiles_monthly.csv nor posterior.csv here; give the \
                 folder written by `isodisc run --out`, `isodisc ensemble --out` or `isodisc fit --out`",
                args.dir.display()
            )));
        }
        let keeling = match (&args.keeling, &args.samples) {
            (Some(k), Some(s)) if !args.groups.is_empty() => {
                Some((k.clone(), s.clone(), args.groups.clone()))
            }
            (None, None) => None,
            _ => {
                return Err(Error::msg(
                    "Keeling plots need --keeling FITS.csv, --samples SAMPLES.csv and --groups",
                ));
            }
        };
        Ok(Self {
            dir: args.dir.clone(),
            out: args.out.clone().unwrap_or_else(|| args.dir.join("figures")),
            keeling,
            observed: args
                .observed
                .clone()
                .map(|p| (p, args.observed_column.clone())),
            map,
        })
    }

    /// Every file (or folder) the figures are drawn from: the output must not hold one.
    fn inputs(&self) -> Vec<PathBuf> {
        let mut inputs = vec![
            self.dir.join("daily.csv"),
            self.dir.join("quantiles_monthly.csv"),
            self.dir.join("posterior.csv"),
        ];
        if let Some((fits, samples, _)) = &self.keeling {
            inputs.extend([fits.clone(), samples.clone()]);
        }
        if let Some((observed, _)) = &self.observed {
            inputs.push(observed.clone());
        }
        if self.map.is_some() {
            inputs.push(self.dir.join(GRID_FILE));
        }
        inputs
    }

    /// Draws every figure the inputs allow and returns the files written: all into a temporary
    /// folder that replaces the figures folder only when every figure is drawn.
    pub fn draw(&self) -> Result<Vec<PathBuf>> {
        crate::output::write_figures(&self.out, &self.inputs(), |tmp| self.draw_into(tmp))
    }

    /// Every figure the inputs allow, drawn in memory: (file name, SVG text).
    pub fn figures(&self) -> Result<Vec<(String, String)>> {
        let daily_path = self.dir.join("daily.csv");
        let daily = if daily_path.is_file() {
            Some(CsvTable::read(&daily_path)?)
        } else {
            None
        };
        let mut pages: Vec<(String, Page)> = Vec::new();
        if let Some(daily) = &daily {
            if let Some(page) = overview_page(daily)? {
                pages.push(("overview.svg".to_string(), page));
            }
            pages.push((
                "discrimination_daily.svg".to_string(),
                discrimination_figure(daily)?.into(),
            ));
            if let Some(fig) = respiration_figure(daily, self.observed.as_ref())? {
                pages.push(("d13c_respiration.svg".to_string(), fig.into()));
            }
        }
        if let Some((fits, samples, groups)) = &self.keeling {
            for (group, fig) in keeling_figures(fits, samples, groups)? {
                pages.push((format!("keeling_{}.svg", file_stem(&group)), fig.into()));
            }
        }
        let quantiles = self.dir.join("quantiles_monthly.csv");
        if quantiles.is_file() {
            for (variable, fig) in ensemble_figures(&CsvTable::read(&quantiles)?)? {
                pages.push((format!("ensemble_{}.svg", file_stem(&variable)), fig.into()));
            }
        }
        if self.dir.join("posterior.csv").is_file() {
            pages.extend(fit_pages(&self.dir)?);
        }
        let mut svgs = pages
            .into_iter()
            .map(|(name, page)| Ok((name, render(&page)?)))
            .collect::<Result<Vec<_>>>()?;
        if let Some((variable, month)) = &self.map {
            let grid = crate::priors_grid::read_priors_grid(&self.dir.join(GRID_FILE))?;
            svgs.push((
                format!("map_{}_{month}.svg", file_stem(variable)),
                map_svg(&grid, variable, month)?,
            ));
        }
        Ok(svgs)
    }

    /// Writes every figure into `tmp` (the temporary folder that becomes the figures folder) and
    /// returns the paths they will have in the figures folder.
    fn draw_into(&self, tmp: &std::path::Path) -> Result<Vec<PathBuf>> {
        let mut written = Vec::new();
        for (name, svg) in self.figures()? {
            write_atomic(&tmp.join(&name), svg.as_bytes())?;
            written.push(self.out.join(name));
        }
        Ok(written)
    }

    /// Draws and lists the files written.
    pub fn run(&self) -> Result<()> {
        for p in self.draw()? {
            println!("{}", p.display());
        }
        Ok(())
    }
}

/// A name made safe for a file name.
fn file_stem(name: &str) -> String {
    name.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The typographic name and unit of a run's or an ensemble's variable, for axis titles;
/// `per` is the period of a sum ("d", "month", "yr").
fn axis_title(column: &str, per: &str) -> String {
    match column {
        "discrimination" => "Δ (‰)".to_string(),
        "discrimination_c3" => "Δ of C₃ plants (‰)".to_string(),
        "discrimination_c4" => "Δ of C₄ plants (‰)".to_string(),
        "c4_share" => "C₄ share of GPP (–)".to_string(),
        "gpp" => format!("GPP (g C m⁻² {per}⁻¹)"),
        "reco" => format!("Ecosystem respiration (g C m⁻² {per}⁻¹)"),
        "d13c_respiration" => "δ¹³C of respiration (‰ VPDB)".to_string(),
        "d13c_assimilate" => "δ¹³C of the assimilate (‰ VPDB)".to_string(),
        "d13c_bulk_leaf" => "δ¹³C of bulk leaf (‰ VPDB)".to_string(),
        "disequilibrium" => "Disequilibrium δR − δA (‰)".to_string(),
        "beta" => "Soil-water factor β (–)".to_string(),
        other => other.replace('_', " "),
    }
}

/// A date's days since 1970-01-01.
fn day_number(year: i32, month: u32) -> f64 {
    LocalTime::from_ymdhm(year, month, 1, 0, 0)
        .map(|t| t.date().days() as f64)
        .unwrap_or(f64::NAN)
}

fn date_of(days: f64) -> LocalDate {
    LocalTime::from_minutes((days.round() as i64) * 1440).date()
}

/// Ticks of a time axis from `x0` to `x1` (days since 1970-01-01): month starts labelled "Jan",
/// "Feb", … for runs up to about two years (every third month labelled beyond 14 months), year
/// starts labelled "2025" for longer runs. Returns (tick, label) with empty labels for unlabelled
/// ticks, and the axis title's years ("2025" or "2025–2027").
fn time_ticks(x0: f64, x1: f64) -> (Vec<(f64, String)>, String) {
    // x1 is the end of the last day: its date is the day before.
    let (a, b) = (date_of(x0), date_of(x1 - 1.0));
    let years = if a.year() == b.year() {
        a.year().to_string()
    } else {
        format!("{}–{}", a.year(), b.year())
    };
    let span_months = (b.year() - a.year()) * 12 + b.month() as i32 - a.month() as i32;
    let mut ticks = Vec::new();
    if span_months > 30 {
        let step = ((b.year() - a.year()) / 8 + 1).max(1);
        for y in (a.year()..=b.year() + 1).filter(|y| (y - a.year()) % step == 0) {
            let d = day_number(y, 1);
            if d >= x0 && d <= x1 {
                ticks.push((d, y.to_string()));
            }
        }
        return (ticks, years);
    }
    let every = if span_months > 14 { 3 } else { 1 };
    for y in a.year()..=b.year() {
        for m in 1..=12u32 {
            let d = day_number(y, m);
            if d < x0 || d > x1 {
                continue;
            }
            let label = if (m - 1) % every == 0 {
                if m == 1 && a.year() != b.year() {
                    y.to_string()
                } else {
                    MONTHS[m as usize - 1].to_string()
                }
            } else {
                String::new()
            };
            ticks.push((d, label));
        }
    }
    (ticks, years)
}

/// About five round ticks between `lo` and `hi` (1, 2 or 5 times a power of ten apart).
fn nice_ticks(lo: f64, hi: f64) -> Vec<f64> {
    if hi.is_nan() || lo.is_nan() || hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / 5.0;
    let p = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * p)
        .min_by(|a, b| (a / raw).ln().abs().total_cmp(&(b / raw).ln().abs()))
        .unwrap_or(p);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// A tick label: as few decimals as the tick spacing needs, and a true minus sign.
fn tick_label(v: f64, step: f64) -> String {
    let decimals = if step > 0.0 && step.is_finite() {
        (-step.log10().floor()).max(0.0) as usize
    } else {
        1
    };
    let s = format!("{v:.decimals$}");
    let s = if s
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    };
    s.replace('-', "−")
}

/// Values of a daily.csv column, gaps as NaN.
fn column_or_nan(daily: &CsvTable, column: &str, n: usize) -> Result<Vec<f64>> {
    if daily.has(column) {
        daily.numbers(daily.column(column)?)
    } else {
        Ok(vec![f64::NAN; n])
    }
}

/// The days (since 1970-01-01) of daily.csv's rows.
fn days_of(daily: &CsvTable) -> Result<Vec<f64>> {
    Ok(daily
        .times(daily.column("period")?)?
        .iter()
        .map(|t| t.date().days() as f64)
        .collect())
}

fn zip_points(x: &[f64], y: &[f64]) -> Vec<(f64, f64)> {
    x.iter().copied().zip(y.iter().copied()).collect()
}

/// Weighted running mean over `width` rows centred on each row: Σ w·v / Σ w over the rows with a
/// finite value and a positive weight; NaN where the window has no weight.
pub fn weighted_running_mean(values: &[f64], weights: &[f64], width: usize) -> Vec<f64> {
    let half = width / 2;
    (0..values.len())
        .map(|i| {
            let lo = i.saturating_sub(half);
            let hi = (i + half + 1).min(values.len());
            let (mut sw, mut swv) = (0.0, 0.0);
            for j in lo..hi {
                if values[j].is_finite() && weights[j].is_finite() && weights[j] > 0.0 {
                    sw += weights[j];
                    swv += weights[j] * values[j];
                }
            }
            if sw > 0.0 { swv / sw } else { f64::NAN }
        })
        .collect()
}

/// Opacity of each day's point: its weight relative to the 90th percentile of the positive
/// weights, between 0.06 (a day that fixes almost nothing) and 1.
fn opacities(weights: &[f64]) -> Vec<f64> {
    let mut pos: Vec<f64> = weights
        .iter()
        .copied()
        .filter(|w| w.is_finite() && *w > 0.0)
        .collect();
    pos.sort_by(f64::total_cmp);
    let reference = pos
        .get(((pos.len() as f64 * 0.9) as usize).min(pos.len().saturating_sub(1)))
        .copied()
        .unwrap_or(1.0);
    weights
        .iter()
        .map(|w| {
            if w.is_finite() && *w > 0.0 {
                (w / reference).clamp(0.06, 1.0)
            } else {
                0.06
            }
        })
        .collect()
}

/// Daily Δ per pathway and for the ecosystem: each day a point as opaque as the day's GPP is
/// large (so days that fix almost nothing do not draw the eye), and a GPP-weighted running mean.
/// Without GPP columns, plain daily lines.
fn discrimination_series(daily: &CsvTable) -> Result<(Vec<Series>, Option<String>)> {
    let days = days_of(daily)?;
    let mut series = Vec::new();
    let weighted = daily.has("gpp");
    for (i, (col, gpp_col, label)) in [
        ("discrimination", "gpp", "ecosystem"),
        ("discrimination_c3", "gpp_c3", "C₃"),
        ("discrimination_c4", "gpp_c4", "C₄"),
    ]
    .into_iter()
    .enumerate()
    {
        if !daily.has(col) {
            continue;
        }
        let values = daily.numbers(daily.column(col)?)?;
        if values.iter().all(|v| !v.is_finite()) {
            continue;
        }
        let colour = COLOURS[i];
        if weighted {
            let gpp = column_or_nan(daily, gpp_col, values.len())?;
            series.push(Series {
                opacity: Some(opacities(&gpp)),
                in_legend: false,
                ..Series::new(label, zip_points(&days, &values), colour, Mark::points(i))
            });
            let mean = weighted_running_mean(&values, &gpp, RUNNING_DAYS);
            series.push(Series::new(
                label,
                zip_points(&days, &mean),
                colour,
                Mark::line_marked(i, i, 30),
            ));
        } else {
            series.push(Series::new(
                label,
                zip_points(&days, &values),
                colour,
                Mark::line_marked(i, i, 30),
            ));
        }
    }
    if series.is_empty() {
        daily.column("discrimination")?;
    }
    let note = weighted.then(|| {
        format!(
            "Points: days, fainter the less carbon the day fixed. Lines: {RUNNING_DAYS}-day \
             GPP-weighted means."
        )
    });
    Ok((series, note))
}

fn day_figure(title: &str, y_label: String, series: Vec<Series>) -> Figure {
    Figure {
        title: title.to_string(),
        x_label: String::new(),
        y_label,
        x_axis: XAxis::Days,
        note: None,
        bands: Vec::new(),
        series,
    }
}

/// Seasonal course of the daily Δ: ecosystem, C3 and C4 (columns that exist).
fn discrimination_figure(daily: &CsvTable) -> Result<Figure> {
    let (series, note) = discrimination_series(daily)?;
    Ok(Figure {
        note,
        ..day_figure(
            "¹³C discrimination by photosynthesis",
            axis_title("discrimination", "d"),
            series,
        )
    })
}

/// Predicted δR (when daily.csv has `d13c_respiration`) with the observations (when given).
fn respiration_figure(
    daily: &CsvTable,
    observed: Option<&(PathBuf, String)>,
) -> Result<Option<Figure>> {
    const COLUMN: &str = "d13c_respiration";
    let mut series = Vec::new();
    if daily.has(COLUMN) {
        let values = daily.numbers(daily.column(COLUMN)?)?;
        series.push(Series::new(
            "predicted",
            zip_points(&days_of(daily)?, &values),
            COLOURS[0],
            Mark::line(0),
        ));
    } else if observed.is_some() {
        eprintln!("isodisc plot: daily.csv has no column {COLUMN}; drawing the observations alone");
    }
    if let Some((path, column)) = observed {
        let table = CsvTable::read(path)?;
        let obs: Keyed = observed_series(&table, column, MatchArg::Daily)?;
        series.push(Series::new(
            "observed (daily mean)",
            obs.iter().map(|(&d, &v)| (d as f64, v)).collect(),
            COLOURS[4],
            Mark::points(1),
        ));
    }
    if series.is_empty() {
        return Ok(None);
    }
    Ok(Some(day_figure(
        "δ¹³C of ecosystem respiration",
        axis_title(COLUMN, "d"),
        series,
    )))
}

/// The one-page overview of a run: Δ per pathway and ecosystem; GPP per pathway; the C4 share;
/// δR and the assimilate; β; the disequilibrium. None when daily.csv has no GPP (not a run's).
fn overview_page(daily: &CsvTable) -> Result<Option<Page>> {
    if !daily.has("gpp") {
        return Ok(None);
    }
    let days = days_of(daily)?;
    let n = days.len();
    let col = |c: &str| column_or_nan(daily, c, n);
    let mut panels = Vec::new();

    let (series, note) = discrimination_series(daily)?;
    panels.push(Figure {
        note,
        ..day_figure(
            "a. ¹³C discrimination",
            axis_title("discrimination", "d"),
            series,
        )
    });

    let mut gpp = Vec::new();
    for (i, (c, label)) in [("gpp", "total"), ("gpp_c3", "C₃"), ("gpp_c4", "C₄")]
        .into_iter()
        .enumerate()
    {
        let v = col(c)?;
        if v.iter().any(|x| x.is_finite()) {
            gpp.push(Series::new(
                label,
                zip_points(&days, &v),
                COLOURS[i],
                Mark::line_marked(i, i, 30),
            ));
        }
    }
    panels.push(day_figure(
        "b. Gross primary production",
        axis_title("gpp", "d"),
        gpp,
    ));

    let share = col("c4_share")?;
    panels.push(day_figure(
        "c. C₄ share of GPP",
        axis_title("c4_share", "d"),
        vec![Series::new(
            "C₄ share",
            zip_points(&days, &share),
            COLOURS[2],
            Mark::line(0),
        )],
    ));

    let mut iso = Vec::new();
    let resp = col("d13c_respiration")?;
    if resp.iter().any(|x| x.is_finite()) {
        iso.push(Series::new(
            "respiration (δR)",
            zip_points(&days, &resp),
            COLOURS[0],
            Mark::line(0),
        ));
    }
    let assim = col("d13c_assimilate")?;
    let total_gpp = col("gpp")?;
    iso.push(Series {
        opacity: Some(opacities(&total_gpp)),
        ..Series::new(
            "assimilate (δA), daily",
            zip_points(&days, &assim),
            COLOURS[1],
            Mark::points(0),
        )
    });
    panels.push(day_figure(
        "d. δ¹³C of respiration and of the assimilate",
        "δ¹³C (‰ VPDB)".to_string(),
        iso,
    ));

    let beta = col("beta")?;
    panels.push(day_figure(
        "e. Soil-water stress",
        axis_title("beta", "d"),
        vec![Series::new(
            "β (1: no stress)",
            zip_points(&days, &beta),
            COLOURS[3],
            Mark::line(0),
        )],
    ));

    let dis = col("disequilibrium")?;
    panels.push(day_figure(
        "f. Isotopic disequilibrium",
        axis_title("disequilibrium", "d"),
        vec![Series::new(
            "δR − δA",
            zip_points(&days, &dis),
            COLOURS[4],
            Mark::line(0),
        )],
    ));
    Ok(Some(Page {
        title: Some("Overview of the run, day by day (local standard time)".to_string()),
        panels,
    }))
}

/// Keeling plots of the chosen groups: the samples, the OLS, GMR and York lines of the fits file,
/// each with its own dash and marker, and the Miller–Tans source δ13C as a marker at 1/c = 0 (its
/// line lives on other axes).
fn keeling_figures(
    fits: &Path,
    samples: &Path,
    groups: &[String],
) -> Result<Vec<(String, Figure)>> {
    let table = CsvTable::read(fits)?;
    let group_col = table.column("group")?;
    let method_col = table.column("method")?;
    let intercepts = table.numbers(table.column("intercept")?)?;
    let slopes = table.numbers(table.column("slope")?)?;
    let starts = table.times(table.column("start")?)?;
    let ends = table.times(table.column("end")?)?;
    let rows: Vec<usize> = (0..intercepts.len()).collect();
    let mut span: HashMap<&str, (LocalTime, LocalTime)> = HashMap::new();
    for g in groups {
        let i = rows
            .iter()
            .find(|&&i| table.cell(i, group_col) == g)
            .ok_or_else(|| Error::msg(format!("{}: no group `{g}`", fits.display())))?;
        span.insert(g, (starts[*i], ends[*i]));
    }
    // x is 1/c in mol mmol⁻¹ (1000/c with c in µmol mol⁻¹): numbers near 2.5, not 0.0025.
    const X_SCALE: f64 = 1000.0;
    // Samples join a group by the `group` column when it names the group, else by the group's
    // time span (night and window groups).
    let mut by_name: HashMap<&str, Vec<(f64, f64)>> = HashMap::new();
    let mut by_time: HashMap<&str, Vec<(f64, f64)>> = HashMap::new();
    SampleReader::open(samples)?.for_each(|s| {
        let name = std::str::from_utf8(s.group).unwrap_or("");
        for g in groups {
            let (a, b) = span[g.as_str()];
            let point = (X_SCALE / s.co2, s.d13c);
            if name == g {
                by_name.entry(g.as_str()).or_default().push(point);
            }
            if s.time >= a && s.time <= b {
                by_time.entry(g.as_str()).or_default().push(point);
            }
        }
        Ok(())
    })?;
    let mut out = Vec::new();
    for g in groups {
        let pts = by_name
            .remove(g.as_str())
            .or_else(|| by_time.remove(g.as_str()))
            .unwrap_or_default();
        let x_max = pts.iter().map(|p| p.0).fold(0.0, f64::max) * 1.05;
        let mut series = vec![Series::new(
            "samples",
            pts,
            RGBColor(90, 90, 90),
            Mark::points(4),
        )];
        let methods = [
            ("ols", "OLS", 0),
            ("gmr", "GMR", 1),
            ("york", "York", 2),
            ("miller-tans", "Miller–Tans", 3),
        ];
        for (method, name, k) in methods {
            let Some(&i) = rows
                .iter()
                .find(|&&i| table.cell(i, group_col) == g && table.cell(i, method_col) == method)
            else {
                continue;
            };
            if !intercepts[i].is_finite() {
                continue;
            }
            let label = format!("{name}: source {} ‰", tick_label(intercepts[i], 0.01));
            let colour = COLOURS[k + 1];
            if method == "miller-tans" {
                series.push(Series::new(
                    label,
                    vec![(0.0, intercepts[i])],
                    colour,
                    Mark::points(3),
                ));
                continue;
            }
            // The line from 1/c = 0, where its intercept is the source δ13C; markers at the
            // intercept and the far end and, staggered by method, along the line.
            let x: Vec<f64> = (0..=12).map(|j| x_max * j as f64 / 12.0).collect();
            let line: Vec<(f64, f64)> = x
                .iter()
                .map(|&x| (x, intercepts[i] + slopes[i] * x / X_SCALE))
                .collect();
            series.push(Series::new(label, line, colour, Mark::line_marked(k, k, 4)));
        }
        out.push((
            g.clone(),
            Figure {
                title: format!("Keeling plot, group {g}"),
                x_label: "1/CO₂ (mol mmol⁻¹)".to_string(),
                y_label: "δ¹³C of CO₂ (‰ VPDB)".to_string(),
                x_axis: XAxis::Linear(0.0, x_max.max(1e-6)),
                note: Some(
                    "Lines start at 1/CO₂ = 0, where their intercept is the source's δ¹³C."
                        .to_string(),
                ),
                bands: Vec::new(),
                series,
            },
        ));
    }
    Ok(out)
}

/// Envelopes of an ensemble: per variable, the 5–95 % and 25–75 % bands, the median and the mean,
/// by month in file order.
fn ensemble_figures(q: &CsvTable) -> Result<Vec<(String, Figure)>> {
    // The ensemble writes `period` (YYYY-MM); `month` is accepted too.
    let month_col = q.column("period").or_else(|_| q.column("month"))?;
    let var_col = q.column("variable")?;
    let cols =
        ["mean", "p05", "p25", "p50", "p75", "p95"].map(|c| q.column(c).and_then(|i| q.numbers(i)));
    let [mean, p05, p25, p50, p75, p95] = cols;
    let (mean, p05, p25, p50, p75, p95) = (mean?, p05?, p25?, p50?, p75?, p95?);
    let mut variables: Vec<String> = Vec::new();
    for i in 0..mean.len() {
        let v = q.cell(i, var_col);
        if !variables.iter().any(|x| x == v) {
            variables.push(v.to_string());
        }
    }
    let mut out = Vec::new();
    for var in variables {
        let rows: Vec<usize> = (0..mean.len())
            .filter(|&i| q.cell(i, var_col) == var)
            .collect();
        let periods: Vec<String> = rows
            .iter()
            .map(|&i| q.cell(i, month_col).to_string())
            .collect();
        let years: Vec<&str> = periods.iter().filter_map(|p| p.get(..4)).collect();
        let multi_year = years.first() != years.last();
        // "2025-03" → "Mar" ("Mar 2026" where a run spans years and a year starts).
        let labels = periods
            .iter()
            .map(|p| {
                let month = p.get(5..7).and_then(|m| m.parse::<usize>().ok());
                match month {
                    Some(m @ 1..=12) if multi_year && m == 1 => p[..4].to_string(),
                    Some(m @ 1..=12) => MONTHS[m - 1].to_string(),
                    _ => p.clone(),
                }
            })
            .collect();
        let x: Vec<f64> = (0..rows.len()).map(|j| j as f64).collect();
        let pick = |s: &[f64]| rows.iter().map(|&i| s[i]).collect::<Vec<_>>();
        let bands = vec![
            Band {
                label: "5–95 %".to_string(),
                x: x.clone(),
                low: pick(&p05),
                high: pick(&p95),
                colour: COLOURS[1],
                opacity: 0.2,
            },
            Band {
                label: "25–75 %".to_string(),
                x: x.clone(),
                low: pick(&p25),
                high: pick(&p75),
                colour: COLOURS[1],
                opacity: 0.45,
            },
        ];
        let series = vec![
            Series::new(
                "median",
                zip_points(&x, &pick(&p50)),
                COLOURS[0],
                Mark::line_marked(0, 0, 1),
            ),
            Series::new(
                "mean",
                zip_points(&x, &pick(&mean)),
                COLOURS[4],
                Mark::line_marked(1, 1, 1),
            ),
        ];
        let year_span = match (years.first(), years.last()) {
            (Some(a), Some(b)) if a != b => format!("{a}–{b}"),
            (Some(a), _) => a.to_string(),
            _ => String::new(),
        };
        out.push((
            var.clone(),
            Figure {
                title: format!("Ensemble spread by month: {}", axis_title(&var, "month")),
                x_label: year_span,
                y_label: axis_title(&var, "month"),
                x_axis: XAxis::Categories(labels),
                note: None,
                bands,
                series,
            },
        ));
    }
    Ok(out)
}

/// Range of the finite values, padded by 5 % (and to a unit width when flat).
fn padded_range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = if hi > lo { 0.05 * (hi - lo) } else { 0.5 };
    (lo - pad, hi + pad)
}

/// Runs of consecutive finite points: a gap breaks a line.
fn finite_runs(points: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    points
        .split(|p| !(p.0.is_finite() && p.1.is_finite()))
        .filter(|r| !r.is_empty())
        .map(<[_]>::to_vec)
        .collect()
}

fn plot_err(what: &str) -> impl Fn(DrawingAreaErrorKind<std::io::Error>) -> Error + '_ {
    move |e| Error::msg(format!("cannot draw {what}: {e}"))
}

/// Draws a figure or a page into an SVG string.
fn render(page: &Page) -> Result<String> {
    let mut svg = String::new();
    let what = page.title.clone().unwrap_or_else(|| {
        page.panels
            .first()
            .map_or(String::new(), |f| f.title.clone())
    });
    let err = plot_err(&what);
    {
        let size = if page.panels.len() == 1 {
            SIZE
        } else {
            let rows = page.panels.len().div_ceil(2) as u32;
            (2 * PANEL.0, rows * PANEL.1 + 70)
        };
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        root.fill(&WHITE).map_err(&err)?;
        if page.panels.len() == 1 {
            draw_panel(&root, &page.panels[0])?;
        } else {
            let area = match &page.title {
                Some(t) => root.titled(t, font(FONT_TITLE + 6)).map_err(&err)?,
                None => root.clone(),
            };
            let rows = page.panels.len().div_ceil(2);
            for (cell, fig) in area.split_evenly((rows, 2)).iter().zip(&page.panels) {
                draw_panel(cell, fig)?;
            }
        }
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

/// Width (pixels) that `text` takes at `size`, roughly: legend entries are laid out with it.
fn text_width(text: &str, size: u32) -> i32 {
    (text.chars().count() as f64 * size as f64 * 0.56) as i32
}

/// The legend's entries: (label, what to draw beside it).
enum Swatch {
    Series(RGBColor, Mark),
    Band(RGBColor, f64),
}

/// Draws the legend in rows from the top of `area`, wrapping at its width; returns its height.
fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    entries: &[(String, Swatch)],
    dry_run: bool,
) -> std::result::Result<i32, DrawingAreaErrorKind<DB::ErrorType>> {
    let width = area.dim_in_pixel().0 as i32;
    let row_h = FONT_TICK as i32 + 14;
    let (mut x, mut y) = (90, 0);
    let swatch_w = 56;
    for (label, swatch) in entries {
        let w = swatch_w + 10 + text_width(label, FONT_TICK) + 34;
        if x + w > width - 10 && x > 90 {
            x = 90;
            y += row_h;
        }
        if !dry_run {
            let cy = y + row_h / 2;
            match swatch {
                Swatch::Series(colour, mark) => {
                    let style = ShapeStyle::from(colour).stroke_width(LINE_WIDTH);
                    if let Some(k) = mark.dash {
                        area.draw(&legend_line(
                            x,
                            cy,
                            swatch_w,
                            DASHES[k % DASHES.len()],
                            style,
                        ))?;
                    }
                    if let Some(k) = mark.marker {
                        area.draw(&marker(k, (x + swatch_w / 2, cy), 8, *colour, 1.0))?;
                    }
                }
                Swatch::Band(colour, opacity) => {
                    area.draw(&Rectangle::new(
                        [(x, cy - 10), (x + swatch_w, cy + 10)],
                        colour.mix(*opacity).filled(),
                    ))?;
                }
            }
            area.draw(&Text::new(
                label.clone(),
                (x + swatch_w + 10, cy - FONT_TICK as i32 / 2),
                font(FONT_TICK).into_font().color(&BLACK),
            ))?;
        }
        x += w;
    }
    Ok(y + row_h)
}

fn draw_panel<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, fig: &Figure) -> Result<()>
where
    DB::ErrorType: 'static,
{
    let err = |e: DrawingAreaErrorKind<DB::ErrorType>| {
        Error::msg(format!("cannot draw {}: {e}", fig.title))
    };
    let area = area.titled(&fig.title, font(FONT_TITLE)).map_err(err)?;
    // The legend: one entry per listed series and band, in a row (or rows) above the plot.
    let mut entries: Vec<(String, Swatch)> = Vec::new();
    for b in &fig.bands {
        entries.push((b.label.clone(), Swatch::Band(b.colour, b.opacity)));
    }
    for s in fig.series.iter().filter(|s| s.in_legend) {
        entries.push((s.label.clone(), Swatch::Series(s.colour, s.mark)));
    }
    let legend_h = draw_legend(&area, &entries, true).map_err(err)?;
    let note_h = if fig.note.is_some() {
        FONT_NOTE as i32 + 10
    } else {
        0
    };
    let (top, plot_area) = area.split_vertically(legend_h + note_h + 6);
    draw_legend(&top, &entries, false).map_err(err)?;
    if let Some(note) = &fig.note {
        top.draw(&Text::new(
            note.clone(),
            (90, legend_h + 2),
            font(FONT_NOTE).into_font().color(&RGBColor(60, 60, 60)),
        ))
        .map_err(err)?;
    }

    let all = || {
        fig.series
            .iter()
            .flat_map(|s| s.points.iter().copied())
            .chain(fig.bands.iter().flat_map(|b| {
                b.x.iter()
                    .zip(&b.low)
                    .chain(b.x.iter().zip(&b.high))
                    .map(|(x, y)| (*x, *y))
            }))
    };
    let (x0, x1) = match &fig.x_axis {
        XAxis::Days => {
            // From the first day to the end of the last: a year's run is 1 Jan to 1 Jan.
            let (lo, hi) = all()
                .map(|p| p.0)
                .filter(|x| x.is_finite())
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
                    (a.min(x), b.max(x))
                });
            if lo.is_finite() {
                (lo, hi + 1.0)
            } else {
                (0.0, 1.0)
            }
        }
        XAxis::Categories(labels) => (-0.5, labels.len() as f64 - 0.5),
        XAxis::Linear(a, b) => (*a, *b),
    };
    let (y0, y1) = padded_range(all().filter(|p| p.0 >= x0 && p.0 <= x1).map(|p| p.1));
    let (ticks, x_title): (Vec<(f64, String)>, String) = match &fig.x_axis {
        XAxis::Days => {
            let (t, years) = time_ticks(x0, x1);
            let title = if fig.x_label.is_empty() {
                format!("{years} (local standard time)")
            } else {
                fig.x_label.clone()
            };
            (t, title)
        }
        XAxis::Categories(labels) => (
            labels
                .iter()
                .enumerate()
                .map(|(j, l)| (j as f64, l.clone()))
                .collect(),
            fig.x_label.clone(),
        ),
        XAxis::Linear(a, b) => {
            let t = nice_ticks(*a, *b);
            let step = if t.len() > 1 { t[1] - t[0] } else { 1.0 };
            (
                t.iter().map(|&v| (v, tick_label(v, step))).collect(),
                fig.x_label.clone(),
            )
        }
    };
    let y_ticks = nice_ticks(y0, y1);
    let y_step = if y_ticks.len() > 1 {
        y_ticks[1] - y_ticks[0]
    } else {
        1.0
    };
    let labels: HashMap<u64, String> = ticks
        .iter()
        .map(|(v, l)| (v.to_bits(), l.clone()))
        .collect();
    let x_keys: Vec<f64> = ticks.iter().map(|t| t.0).collect();
    let mut chart = ChartBuilder::on(&plot_area)
        .margin_left(10)
        .margin_right(30)
        .margin_bottom(8)
        .x_label_area_size(if x_title.is_empty() { 50 } else { 84 })
        .y_label_area_size(120)
        .build_cartesian_2d(
            Ticked {
                lo: x0,
                hi: x1,
                keys: x_keys,
            },
            Ticked {
                lo: y0,
                hi: y1,
                keys: y_ticks,
            },
        )
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc(x_title.as_str())
        .y_desc(fig.y_label.as_str())
        .axis_desc_style(font(FONT_AXIS))
        .label_style(font(FONT_TICK))
        .x_label_formatter(&|x| labels.get(&x.to_bits()).cloned().unwrap_or_default())
        .y_label_formatter(&|y| tick_label(*y, y_step))
        .bold_line_style(RGBColor(225, 225, 225))
        .light_line_style(TRANSPARENT)
        .axis_style(ShapeStyle::from(&BLACK).stroke_width(2))
        .draw()
        .map_err(err)?;
    for b in &fig.bands {
        let outline: Vec<(f64, f64)> =
            b.x.iter()
                .zip(&b.high)
                .chain(b.x.iter().zip(&b.low).rev())
                .map(|(x, y)| (*x, *y))
                .filter(|p| p.1.is_finite())
                .collect();
        chart
            .draw_series(std::iter::once(Polygon::new(
                outline,
                b.colour.mix(b.opacity).filled(),
            )))
            .map_err(err)?;
    }
    // Points first, lines over them, so a running mean is not hidden by its days.
    let (points_only, lined): (Vec<&Series>, Vec<&Series>) =
        fig.series.iter().partition(|s| s.mark.dash.is_none());
    for s in points_only.into_iter().chain(lined) {
        let style = ShapeStyle::from(&s.colour).stroke_width(LINE_WIDTH);
        if let Some(k) = s.mark.dash {
            for run in finite_runs(&s.points) {
                match DASHES[k % DASHES.len()] {
                    None => chart.draw_series(LineSeries::new(run, style)),
                    Some((on, off)) => {
                        chart.draw_series(DashedLineSeries::new(run, on, off, style))
                    }
                }
                .map_err(err)?;
            }
        }
        if let Some(k) = s.mark.marker {
            let every = s.mark.marker_every.max(1);
            // Markers of lines are staggered by pattern so markers of two lines do not coincide.
            let offset = if s.mark.dash.is_some() {
                (k * every / 3) % every
            } else {
                0
            };
            let base = area.get_base_pixel();
            let points = s.points.iter().enumerate().filter(|(i, p)| {
                p.0.is_finite() && p.1.is_finite() && (i + every - offset) % every == 0
            });
            for (i, p) in points {
                let alpha = s.opacity.as_ref().map_or(1.0, |o| o[i]);
                let (px, py) = chart.backend_coord(p);
                // Daily points are smaller than the markers that tell lines apart.
                let r = if s.opacity.is_some() { 5 } else { 8 };
                area.draw(&marker(k, (px - base.0, py - base.1), r, s.colour, alpha))
                    .map_err(err)?;
            }
        }
    }
    Ok(())
}

/// A linear axis from `lo` to `hi` with ticks (and grid lines) exactly at `keys`: month starts,
/// categories or round numbers, not plotters' own choice.
struct Ticked {
    lo: f64,
    hi: f64,
    keys: Vec<f64>,
}

impl Ranged for Ticked {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        let span = limit.1 - limit.0;
        if span == 0 || self.hi.is_nan() || self.lo.is_nan() || self.hi <= self.lo {
            return limit.1;
        }
        let fraction = (value - self.lo) / (self.hi - self.lo);
        limit.0 + (span as f64 * fraction + 1e-3).floor() as i32
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.keys.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.lo..self.hi
    }
}

/// A short legend line with the series' dash pattern.
fn legend_line<DB: DrawingBackend>(
    x: i32,
    y: i32,
    width: i32,
    dash: Option<(u32, u32)>,
    style: ShapeStyle,
) -> DynElement<'static, DB, (i32, i32)> {
    let ends = vec![(x, y), (x + width, y)];
    match dash {
        None => PathElement::new(ends, style).into_dyn(),
        Some((on, off)) => DashedPathElement::new(ends, on, off, style).into_dyn(),
    }
}

/// Marker `k` (0 circle, 1 triangle, 2 square, 3 diamond, other cross) centred on the pixel
/// `at`, at `opacity`.
fn marker<DB: DrawingBackend>(
    k: usize,
    at: (i32, i32),
    r: i32,
    colour: RGBColor,
    opacity: f64,
) -> DynElement<'static, DB, (i32, i32)> {
    let fill = colour.mix(opacity).filled();
    let (x, y) = at;
    let d = r * 4 / 3;
    match k {
        0 => Circle::new(at, r as u32, fill).into_dyn(),
        1 => TriangleMarker::new(at, d as u32, fill).into_dyn(),
        2 => Rectangle::new([(x - r, y - r), (x + r, y + r)], fill).into_dyn(),
        3 => Polygon::new(vec![(x, y - d), (x + d, y), (x, y + d), (x - d, y)], fill).into_dyn(),
        _ => Cross::new(
            at,
            r as u32,
            ShapeStyle::from(&colour.mix(opacity)).stroke_width(3),
        )
        .into_dyn(),
    }
}

/// The figures of a fit folder (`isodisc fit --out`): the walkers' traces and the marginal
/// densities of every parameter (one page each, a panel per parameter), and each stream's
/// posterior-predictive band over its observations.
fn fit_pages(dir: &Path) -> Result<Vec<(String, Page)>> {
    let post = CsvTable::read(&dir.join("posterior.csv"))?;
    let walker = post.numbers(post.column("walker")?)?;
    let step = post.numbers(post.column("step")?)?;
    let first = post.column("step")? + 1;
    let last = post.column("log_likelihood")?;
    let walkers = walker.iter().fold(0.0f64, |a, w| a.max(*w)) as usize + 1;
    let (s0, s1) = step
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), s| {
            (a.min(*s), b.max(*s))
        });
    let mut traces = Vec::new();
    let mut marginals = Vec::new();
    for col in first..last {
        let name = post.header_name(col).to_string();
        let v = post.numbers(col)?;
        let series = (0..walkers)
            .map(|w| {
                let pts = (0..v.len())
                    .filter(|&i| walker[i] as usize == w)
                    .map(|i| (step[i], v[i]))
                    .collect();
                let mut s = Series::new(
                    format!("walker {w}"),
                    pts,
                    COLOURS[w % 5],
                    Mark::line(w % 4),
                );
                s.in_legend = false;
                s
            })
            .collect();
        traces.push(Figure {
            title: format!("Trace: {name}"),
            x_label: "step".to_string(),
            y_label: name.clone(),
            x_axis: XAxis::Linear(s0, s1.max(s0 + 1.0)),
            note: Some(format!("{walkers} walkers, kept steps only")),
            bands: Vec::new(),
            series,
        });
        // A histogram of 30 bins, as a density (integrates to 1), drawn as a stepped line.
        let (lo, hi) = v
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
                (a.min(*x), b.max(*x))
            });
        let bins = 30usize;
        let width = ((hi - lo) / bins as f64).max(1e-12);
        let mut counts = vec![0usize; bins];
        for x in &v {
            counts[(((x - lo) / width) as usize).min(bins - 1)] += 1;
        }
        let mut pts = Vec::new();
        for (k, c) in counts.iter().enumerate() {
            let d = *c as f64 / (v.len() as f64 * width);
            pts.push((lo + k as f64 * width, d));
            pts.push((lo + (k + 1) as f64 * width, d));
        }
        marginals.push(Figure {
            title: format!("Posterior: {name}"),
            x_label: name.clone(),
            y_label: "density".to_string(),
            x_axis: XAxis::Linear(lo, hi.max(lo + 1e-9)),
            note: Some(format!("{} draws, 30 bins", v.len())),
            bands: Vec::new(),
            series: vec![Series::new("posterior", pts, COLOURS[1], Mark::line(0))],
        });
    }
    let mut pages = vec![
        (
            "fit_traces.svg".to_string(),
            Page {
                title: Some("Walker traces".to_string()),
                panels: traces,
            },
        ),
        (
            "fit_marginals.svg".to_string(),
            Page {
                title: Some("Marginal posterior densities".to_string()),
                panels: marginals,
            },
        ),
    ];
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)?
        .flatten()
        .map(|e| e.path())
        .filter(|p| {
            p.file_name()
                .and_then(|n| n.to_str())
                .is_some_and(|n| n.starts_with("predictive_") && n.ends_with(".csv"))
        })
        .collect();
    files.sort();
    for f in files {
        let stem = f
            .file_stem()
            .and_then(|s| s.to_str())
            .unwrap_or("predictive")
            .to_string();
        let variable = stem.trim_start_matches("predictive_").to_string();
        let t = CsvTable::read(&f)?;
        let (x, x_axis) = if t.has("month") {
            let col = t.column("month")?;
            let labels: Vec<String> = (0..t.numbers(t.column("observed")?)?.len())
                .map(|i| t.cell(i, col).to_string())
                .collect();
            (
                (0..labels.len()).map(|i| i as f64).collect::<Vec<_>>(),
                XAxis::Categories(labels),
            )
        } else if t.has("start") && t.has("end") {
            // A window's sample (bulk leaf) is drawn at the middle of its window.
            let day = |c: &str| -> Result<Vec<f64>> {
                Ok(t.times(t.column(c)?)?
                    .iter()
                    .map(|d| d.date().days() as f64)
                    .collect())
            };
            let (starts, ends) = (day("start")?, day("end")?);
            let mid = starts
                .iter()
                .zip(&ends)
                .map(|(a, b)| 0.5 * (a + b))
                .collect();
            (mid, XAxis::Days)
        } else {
            let days: Vec<f64> = t
                .time_column()?
                .iter()
                .map(|d| d.date().days() as f64)
                .collect();
            (days, XAxis::Days)
        };
        let get = |c: &str| t.column(c).and_then(|i| t.numbers(i));
        let (obs, p05, p50, p95) = (
            get("observed")?,
            get("model_p05")?,
            get("model_p50")?,
            get("model_p95")?,
        );
        pages.push((
            format!("fit_{}.svg", file_stem(&stem)),
            Figure {
                title: format!("Posterior predictive: {}", axis_title(&variable, "day")),
                x_label: String::new(),
                y_label: axis_title(&variable, "day"),
                x_axis,
                note: Some("band: 5–95 % of the model over posterior draws".to_string()),
                bands: vec![Band {
                    label: "model 5–95 %".to_string(),
                    x: x.clone(),
                    low: p05,
                    high: p95,
                    colour: COLOURS[1],
                    opacity: 0.3,
                }],
                series: vec![
                    Series::new(
                        "model median",
                        zip_points(&x, &p50),
                        COLOURS[1],
                        Mark::line(0),
                    ),
                    Series::new(
                        "observed",
                        zip_points(&x, &obs),
                        COLOURS[0],
                        Mark::points(0),
                    ),
                ],
            }
            .into(),
        ));
    }
    Ok(pages)
}

// ---------------------------------------------------------------------------------------------
// Maps of gridded priors (`--map VARIABLE --month YYYY-MM`, docs/priors.md).

/// File of gridded priors that `--map` reads in DIR.
pub const GRID_FILE: &str = "priors_grid.nc";
/// Colour of a land cell without a value.
const NO_VALUE: RGBColor = RGBColor(150, 150, 150);
/// Colour of a cell outside the land mask (not run).
const NOT_RUN: RGBColor = RGBColor(228, 232, 236);
/// Colour steps of the map and its bar: adjacent cells of one step are drawn as one rectangle.
const MAP_STEPS: usize = 64;
/// Viridis anchors (matplotlib's viridis at 0, 0.25, 0.5, 0.75, 1; from memory): sequential,
/// lightness rising monotonically, readable in greyscale and by colour-blind readers.
const VIRIDIS: [(u8, u8, u8); 5] = [
    (68, 1, 84),
    (59, 82, 139),
    (33, 145, 140),
    (94, 201, 98),
    (253, 231, 37),
];
/// Diverging anchors for variables of both signs, centred on 0: ColorBrewer's RdYlBu reversed
/// (from memory), blue below 0 and red above, a pale yellow middle that stays apart from the
/// pale grey-blue of cells not run.
const DIVERGING: [(u8, u8, u8); 5] = [
    (69, 117, 180),
    (145, 191, 219),
    (255, 255, 191),
    (252, 141, 89),
    (215, 48, 39),
];

/// Colour at `t` in 0–1 along piecewise-linear `anchors`.
fn ramp(anchors: &[(u8, u8, u8)], t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0) * (anchors.len() - 1) as f64;
    let i = (t.floor() as usize).min(anchors.len() - 2);
    let f = t - i as f64;
    let mix = |a: u8, b: u8| (a as f64 + (b as f64 - a as f64) * f).round() as u8;
    let (a, b) = (anchors[i], anchors[i + 1]);
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// A field's values for display: factor and unit label. Fluxes (kg C m⁻² s⁻¹) are shown in
/// g C m⁻² d⁻¹ (× 1000 × 86,400), which reads without exponents.
fn map_units(units: &str) -> (f64, &'static str) {
    match units {
        "kg m-2 s-1" => (86_400e3, "g C m⁻² d⁻¹"),
        "1e-3 kg m-2 s-1" => (86_400e3, "‰ g C m⁻² d⁻¹"),
        "1e-3" => (1.0, "‰"),
        _ => (1.0, ""),
    }
}

/// Ticks between `lo` and `hi` degrees at a step of 0.5, 1, 2, 5, 10, 15, 30, 60 or 90 degrees
/// giving about five of them (30° steps of latitude and 60° of longitude on a global map).
fn degree_ticks(lo: f64, hi: f64) -> Vec<f64> {
    let raw = (hi - lo) / 5.0;
    let step = [0.5, 1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 60.0, 90.0]
        .into_iter()
        .min_by(|a, b| (a / raw).ln().abs().total_cmp(&(b / raw).ln().abs()))
        .unwrap_or(1.0);
    let (first, last) = ((lo / step).ceil() as i64, (hi / step).floor() as i64);
    (first..=last).map(|k| k as f64 * step).collect()
}

/// A latitude or longitude tick label: 30°N, 0°, 120°W.
fn degrees_label(v: f64, pos: char, neg: char) -> String {
    let a = v.abs();
    let s = if (a - a.round()).abs() < 1e-9 {
        format!("{a:.0}°")
    } else {
        format!("{a:.1}°")
    };
    match v {
        v if v > 1e-9 => format!("{s}{pos}"),
        v if v < -1e-9 => format!("{s}{neg}"),
        _ => s,
    }
}

/// The map of `variable` in `month` (YYYY-MM) of gridded priors, as SVG text: each cell its colour
/// (grey where a land cell has no value, pale where the cell was not run), a colour bar, lat/lon
/// axes.
pub fn map_svg(
    grid: &crate::priors_grid::GridPriors,
    variable: &str,
    month: &str,
) -> Result<String> {
    let field = grid.field(variable).ok_or_else(|| {
        let names: Vec<&str> = grid.fields.iter().map(|f| f.name.as_str()).collect();
        Error::msg(format!(
            "--map {variable}: no such variable in {GRID_FILE}; it has {}",
            names.join(", ")
        ))
    })?;
    let t = crate::priors_grid::parse_month(month)
        .and_then(|m| grid.month_starts.iter().position(|x| *x == m))
        .ok_or_else(|| {
            let (a, b) = (
                grid.month_starts[0],
                grid.month_starts[grid.month_starts.len() - 1],
            );
            Error::msg(format!(
                "--month {month}: not a month of {GRID_FILE} ({:04}-{:02} to {:04}-{:02})",
                a.0, a.1, b.0, b.1
            ))
        })?;
    let (nx, nc) = (grid.lon.len(), grid.n_cells());
    let (factor, unit) = map_units(&field.units);
    let values: Vec<f64> = field.values[t * nc..(t + 1) * nc]
        .iter()
        .zip(&grid.land_mask)
        .map(|(v, m)| if *m == 1 { v * factor } else { f64::NAN })
        .collect();
    let (lo, hi) = values
        .iter()
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(*v), b.max(*v))
        });
    let diverging = lo < 0.0 && hi > 0.0;
    let (lo, hi) = match (lo.is_finite(), diverging) {
        (false, _) => (0.0, 1.0),
        (true, true) => (-lo.abs().max(hi), lo.abs().max(hi)),
        (true, false) if hi > lo => (lo, hi),
        (true, false) => (lo - 0.5, hi + 0.5),
    };
    let anchors: &[(u8, u8, u8)] = if diverging { &DIVERGING } else { &VIRIDIS };
    let step_of = |v: f64| {
        (((v - lo) / (hi - lo)) * MAP_STEPS as f64).clamp(0.0, MAP_STEPS as f64 - 1.0) as usize
    };
    let step_colour = |k: usize| ramp(anchors, (k as f64 + 0.5) / MAP_STEPS as f64);
    // Rectangles: runs of adjacent cells of one colour along each latitude row.
    let mut rects: Vec<([f64; 2], [f64; 2], RGBColor)> = Vec::new();
    for (i, lat_b) in grid.lat_bnds.iter().enumerate() {
        let mut j = 0;
        while j < nx {
            let colour_of = |j: usize| {
                let c = i * nx + j;
                match (grid.land_mask[c], values[c]) {
                    (0, _) => NOT_RUN,
                    (_, v) if v.is_finite() => step_colour(step_of(v)),
                    _ => NO_VALUE,
                }
            };
            let colour = colour_of(j);
            let mut k = j + 1;
            while k < nx && colour_of(k) == colour && grid.lon_bnds[k][0] == grid.lon_bnds[k - 1][1]
            {
                k += 1;
            }
            rects.push((
                [grid.lon_bnds[j][0], grid.lon_bnds[k - 1][1]],
                *lat_b,
                colour,
            ));
            j = k;
        }
    }
    let fold = |b: &[[f64; 2]]| {
        b.iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, z), [x, y]| {
                (a.min(*x), z.max(*y))
            })
    };
    let (x0, x1) = fold(&grid.lon_bnds);
    let (y0, y1) = fold(&grid.lat_bnds);

    let title = format!("{variable}, {month}");
    let mut svg = String::new();
    {
        let err = plot_err(&title);
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(&err)?;
        let area = root.titled(&title, font(FONT_TITLE)).map_err(&err)?;
        let (subtitle, area) = area.split_vertically(FONT_NOTE as i32 + 14);
        subtitle
            .draw(&Text::new(
                field.long_name.clone(),
                (SIZE.0 as i32 / 2, 4),
                font(FONT_NOTE)
                    .into_font()
                    .color(&RGBColor(60, 60, 60))
                    .pos(plotters::style::text_anchor::Pos::new(
                        plotters::style::text_anchor::HPos::Center,
                        plotters::style::text_anchor::VPos::Top,
                    )),
            ))
            .map_err(&err)?;
        let (map_area, bar_area) = area.split_horizontally(SIZE.0 - 230);
        // Equal degrees per pixel along both axes (plate carrée): the spare room becomes margin.
        let (label_x, label_y, pad) = (110, 60, 16);
        let (w, h) = map_area.dim_in_pixel();
        let (avail_w, avail_h) = (
            (w as i32 - label_x - 2 * pad) as f64,
            (h as i32 - label_y - 2 * pad) as f64,
        );
        let scale = (avail_w / (x1 - x0)).min(avail_h / (y1 - y0));
        let spare_w = ((avail_w - scale * (x1 - x0)) / 2.0) as i32;
        let spare_h = ((avail_h - scale * (y1 - y0)) / 2.0) as i32;
        let map_area = map_area.margin(spare_h, spare_h, spare_w, spare_w);
        let mut chart = ChartBuilder::on(&map_area)
            .margin(pad)
            .x_label_area_size(label_y)
            .y_label_area_size(label_x)
            .build_cartesian_2d(
                Ticked {
                    lo: x0,
                    hi: x1,
                    keys: degree_ticks(x0, x1),
                },
                Ticked {
                    lo: y0,
                    hi: y1,
                    keys: degree_ticks(y0, y1),
                },
            )
            .map_err(&err)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_label_formatter(&|v| degrees_label(*v, 'E', 'W'))
            .y_label_formatter(&|v| degrees_label(*v, 'N', 'S'))
            .label_style(font(FONT_TICK))
            .axis_style(ShapeStyle::from(&BLACK).stroke_width(2))
            .draw()
            .map_err(&err)?;
        chart
            .draw_series(
                rects
                    .iter()
                    .map(|([w, e], [s, n], c)| Rectangle::new([(*w, *n), (*e, *s)], c.filled())),
            )
            .map_err(&err)?;
        // The colour bar, with the unit above it and a key to the two greys below.
        let (bar_top, bar_rest) = bar_area.split_vertically(60);
        bar_top
            .draw(&Text::new(
                unit.to_string(),
                (10, 30),
                font(FONT_AXIS).into_font(),
            ))
            .map_err(&err)?;
        let (bar_main, key) = bar_rest.split_vertically(SIZE.1 as i32 - 260);
        let mut bar = ChartBuilder::on(&bar_main)
            .margin(16)
            .y_label_area_size(0)
            .right_y_label_area_size(120)
            .build_cartesian_2d(0.0..1.0, lo..hi)
            .map_err(&err)?;
        let ticks = nice_ticks(lo, hi);
        let tick_step = if ticks.len() > 1 {
            ticks[1] - ticks[0]
        } else {
            hi - lo
        };
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_labels(ticks.len().max(2))
            .y_label_formatter(&|v| tick_label(*v, tick_step))
            .label_style(font(FONT_TICK))
            .draw()
            .map_err(&err)?;
        let dv = (hi - lo) / MAP_STEPS as f64;
        bar.draw_series((0..MAP_STEPS).map(|k| {
            let a = lo + k as f64 * dv;
            Rectangle::new([(0.0, a + dv), (1.0, a)], step_colour(k).filled())
        }))
        .map_err(&err)?;
        for (row, (colour, label)) in [(NO_VALUE, "no value"), (NOT_RUN, "not run")]
            .into_iter()
            .enumerate()
        {
            let y = 20 + row as i32 * 40;
            key.draw(&Rectangle::new([(16, y), (46, y + 26)], colour.filled()))
                .map_err(&err)?;
            key.draw(&Text::new(label, (56, y), font(FONT_NOTE).into_font()))
                .map_err(&err)?;
        }
        root.present().map_err(&err)?;
    }
    Ok(svg)
}
