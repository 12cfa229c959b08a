//! `isodisc plot`: SVG figures from a run folder — the seasonal course of GPP-weighted daily Δ per
//! pathway and for the ecosystem, predicted δ13C of respiration against observations, Keeling
//! plots (δ13C against 1/CO2, Keeling 1958) of chosen groups with their fitted lines, and ensemble
//! envelopes. Series differ in dash pattern or marker as well as colour, so the figures survive
//! greyscale printing. SVG needs no system library; text stays SVG `<text>`.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

use crate::cli::{MatchArg, PlotArgs};
use crate::commands::compare::{CsvTable, Keyed, observed_series};
use crate::commands::keeling::SampleReader;
use crate::error::{Error, Result};
use crate::forcing::time::LocalTime;
use crate::output::write_atomic;
use crate::simulate::PERIOD_COLUMNS;

/// Figure size (pixels).
const SIZE: (u32, u32) = (960, 600);
/// Font sizes (pixels): title, axis titles, tick labels and legend.
const FONT_TITLE: u32 = 30;
const FONT_AXIS: u32 = 24;
const FONT_TICK: u32 = 19;
/// Okabe–Ito colours of clearly different lightness (black, blue, orange, bluish green), so that
/// they also stay apart in greyscale; each series has its own dash pattern or marker too.
const COLOURS: [RGBColor; 4] = [
    RGBColor(0, 0, 0),
    RGBColor(0, 114, 178),
    RGBColor(230, 159, 0),
    RGBColor(0, 158, 115),
];
/// Dash patterns (dash, gap in pixels); None is a solid line.
const DASHES: [Option<(u32, u32)>; 4] = [None, Some((12, 6)), Some((3, 4)), Some((16, 4))];

/// How a series is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Mark {
    /// A line with dash pattern `DASHES[i]`; NaN values break it.
    Line(usize),
    /// Unjoined markers: 0 circle, 1 triangle, 2 cross.
    Points(usize),
}

/// One series of a figure.
struct Series {
    label: String,
    points: Vec<(f64, f64)>,
    colour: RGBColor,
    mark: Mark,
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

/// An x–y figure.
struct Figure {
    title: String,
    x_label: String,
    y_label: String,
    x_range: Option<(f64, f64)>,
    x_fmt: Box<dyn Fn(f64) -> String>,
    /// Where the legend goes; the y axis leaves room above the data for an upper legend.
    legend: SeriesLabelPosition,
    bands: Vec<Band>,
    series: Vec<Series>,
}

/// A validated `isodisc plot` invocation.
#[derive(Debug, Clone)]
pub struct PlotPlan {
    dir: PathBuf,
    out: PathBuf,
    keeling: Option<(PathBuf, PathBuf, Vec<String>)>,
    observed: Option<(PathBuf, String)>,
}

impl PlotPlan {
    /// Checks that the folder holds a run (daily.csv) or an ensemble (quantiles_monthly.csv) and
    /// builds the output folder's path.
    pub fn from_args(args: &PlotArgs) -> Result<Self> {
        if !args.dir.join("daily.csv").is_file()
            && !args.dir.join("quantiles_monthly.csv").is_file()
        {
            return Err(Error::msg(format!(
                "{}: neither daily.csv nor quantiles_monthly.csv here; give the folder written by \
                 `isodisc run --out` or `isodisc ensemble --out`",
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
        })
    }

    /// Every file (or folder) the figures are drawn from: the output must not hold one.
    fn inputs(&self) -> Vec<PathBuf> {
        let mut inputs = vec![
            self.dir.join("daily.csv"),
            self.dir.join("quantiles_monthly.csv"),
        ];
        if let Some((fits, samples, _)) = &self.keeling {
            inputs.extend([fits.clone(), samples.clone()]);
        }
        if let Some((observed, _)) = &self.observed {
            inputs.push(observed.clone());
        }
        inputs
    }

    /// Draws every figure the inputs allow and returns the files written: all into a temporary
    /// folder that replaces the figures folder only when every figure is drawn.
    pub fn draw(&self) -> Result<Vec<PathBuf>> {
        crate::output::write_figures(&self.out, &self.inputs(), |tmp| self.draw_into(tmp))
    }

    fn draw_into(&self, tmp: &std::path::Path) -> Result<Vec<PathBuf>> {
        let daily_path = self.dir.join("daily.csv");
        let daily = if daily_path.is_file() {
            Some(CsvTable::read(&daily_path)?)
        } else {
            None
        };
        let mut written = Vec::new();
        let mut save = |name: &str, fig: Figure| -> Result<()> {
            write_atomic(&tmp.join(name), render(&fig)?.as_bytes())?;
            written.push(self.out.join(name));
            Ok(())
        };
        if let Some(daily) = &daily {
            save("discrimination_daily.svg", discrimination_figure(daily)?)?;
            if let Some(fig) = respiration_figure(daily, self.observed.as_ref())? {
                save("d13c_respiration.svg", fig)?;
            }
        }
        if let Some((fits, samples, groups)) = &self.keeling {
            for (group, fig) in keeling_figures(fits, samples, groups)? {
                save(&format!("keeling_{}.svg", file_stem(&group)), fig)?;
            }
        }
        let quantiles = self.dir.join("quantiles_monthly.csv");
        if quantiles.is_file() {
            for (variable, fig) in ensemble_figures(&CsvTable::read(&quantiles)?)? {
                save(&format!("ensemble_{}.svg", file_stem(&variable)), fig)?;
            }
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

/// The unit of a run's period column, from the run's own column table.
fn unit_of(column: &str) -> &'static str {
    PERIOD_COLUMNS
        .iter()
        .find(|c| c.0 == column)
        .map_or("units as in the run", |c| c.1)
}

/// Unit text for axis titles: permil as ‰.
fn pretty_unit(unit: &str) -> String {
    unit.replace("permil", "‰")
}

/// Days since 1970-01-01 as a date label.
fn date_label(days: f64) -> String {
    LocalTime::from_minutes((days.round() as i64) * 1440)
        .date()
        .to_string()
}

fn date_figure(title: &str, y_label: String, series: Vec<Series>) -> Figure {
    Figure {
        title: title.to_string(),
        x_label: "date (local standard time)".to_string(),
        y_label,
        x_range: None,
        x_fmt: Box::new(date_label),
        legend: SeriesLabelPosition::UpperRight,
        bands: Vec::new(),
        series,
    }
}

fn keyed_points(k: &Keyed) -> Vec<(f64, f64)> {
    k.iter().map(|(&d, &v)| (d as f64, v)).collect()
}

/// Daily points of a daily.csv column, gaps kept as NaN so lines break there.
fn daily_points(daily: &CsvTable, column: &str) -> Result<Vec<(f64, f64)>> {
    let days = daily.times(daily.column("period")?)?;
    let values = daily.numbers(daily.column(column)?)?;
    Ok(days
        .iter()
        .zip(values)
        .map(|(t, v)| (t.date().days() as f64, v))
        .collect())
}

/// Seasonal course of the GPP-weighted daily Δ: ecosystem, C3 and C4 (columns that exist).
fn discrimination_figure(daily: &CsvTable) -> Result<Figure> {
    let mut series = Vec::new();
    for (i, (col, label)) in [
        ("discrimination", "ecosystem"),
        ("discrimination_c3", "C3"),
        ("discrimination_c4", "C4"),
    ]
    .into_iter()
    .enumerate()
    {
        if daily.has(col) {
            series.push(Series {
                label: label.to_string(),
                points: daily_points(daily, col)?,
                colour: COLOURS[i],
                mark: Mark::Line(i),
            });
        }
    }
    if series.is_empty() {
        daily.column("discrimination")?;
    }
    Ok(date_figure(
        "GPP-weighted daily 13C discrimination",
        "Δ (‰)".to_string(),
        series,
    ))
}

/// Predicted δR (when daily.csv has `d13c_respiration`) with the observations (when given).
fn respiration_figure(
    daily: &CsvTable,
    observed: Option<&(PathBuf, String)>,
) -> Result<Option<Figure>> {
    const COLUMN: &str = "d13c_respiration";
    let mut series = Vec::new();
    if daily.has(COLUMN) {
        series.push(Series {
            label: "predicted".to_string(),
            points: daily_points(daily, COLUMN)?,
            colour: COLOURS[0],
            mark: Mark::Line(0),
        });
    } else if observed.is_some() {
        eprintln!("isodisc plot: daily.csv has no column {COLUMN}; drawing the observations alone");
    }
    if let Some((path, column)) = observed {
        let table = CsvTable::read(path)?;
        series.push(Series {
            label: "observed (daily mean)".to_string(),
            points: keyed_points(&observed_series(&table, column, MatchArg::Daily)?),
            colour: COLOURS[2],
            mark: Mark::Points(0),
        });
    }
    if series.is_empty() {
        return Ok(None);
    }
    Ok(Some(date_figure(
        "δ13C of ecosystem respiration",
        "δR (‰ VPDB)".to_string(),
        series,
    )))
}

/// Keeling plots of the chosen groups: the samples and the OLS, GMR and York lines of the fits
/// file (Miller–Tans fits live on other axes and are left out).
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
    // Samples join a group by the `group` column when it names the group, else by the group's
    // time span (night and window groups).
    let mut by_name: HashMap<&str, Vec<(f64, f64)>> = HashMap::new();
    let mut by_time: HashMap<&str, Vec<(f64, f64)>> = HashMap::new();
    SampleReader::open(samples)?.for_each(|s| {
        let name = std::str::from_utf8(s.group).unwrap_or("");
        for g in groups {
            let (a, b) = span[g.as_str()];
            let point = (1.0 / s.co2, s.d13c);
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
        let mut series = vec![Series {
            label: "samples".to_string(),
            points: pts,
            colour: COLOURS[0],
            mark: Mark::Points(0),
        }];
        for (k, method) in ["ols", "gmr", "york"].into_iter().enumerate() {
            if let Some(&i) = rows
                .iter()
                .find(|&&i| table.cell(i, group_col) == g && table.cell(i, method_col) == method)
                && intercepts[i].is_finite()
            {
                // The line from 1/c = 0, where its intercept is the source δ13C.
                let line = |x: f64| (x, intercepts[i] + slopes[i] * x);
                series.push(Series {
                    label: format!("{method}: source {:.2} ‰", intercepts[i]),
                    points: vec![line(0.0), line(x_max)],
                    colour: COLOURS[k + 1],
                    mark: Mark::Line(k + 1),
                });
            }
        }
        out.push((
            g.clone(),
            Figure {
                title: format!("Keeling plot, group {g}"),
                x_label: "1/CO2 (mol µmol⁻¹)".to_string(),
                y_label: "δ13C of CO2 (‰ VPDB)".to_string(),
                x_range: Some((0.0, x_max.max(1e-6))),
                x_fmt: Box::new(|x| format!("{x:.5}")),
                // Lines rise from the intercept towards the samples at the upper right.
                legend: SeriesLabelPosition::LowerRight,
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
        let months: Vec<String> = rows
            .iter()
            .map(|&i| q.cell(i, month_col).to_string())
            .collect();
        let x: Vec<f64> = (0..rows.len()).map(|j| j as f64).collect();
        let pick = |s: &[f64]| rows.iter().map(|&i| s[i]).collect::<Vec<_>>();
        let line = |s: &[f64]| x.iter().copied().zip(pick(s)).collect::<Vec<_>>();
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
            Series {
                label: "median".to_string(),
                points: line(&p50),
                colour: COLOURS[0],
                mark: Mark::Line(0),
            },
            Series {
                label: "mean".to_string(),
                points: line(&mean),
                colour: COLOURS[2],
                mark: Mark::Line(1),
            },
        ];
        let n = rows.len();
        out.push((
            var.clone(),
            Figure {
                title: format!("Ensemble of {var}, by month"),
                x_label: "month".to_string(),
                y_label: format!("{var} ({})", pretty_unit(unit_of(&var))),
                x_range: Some((-0.5, n as f64 - 0.5)),
                legend: SeriesLabelPosition::UpperRight,
                x_fmt: Box::new(move |x| {
                    let j = x.round();
                    if (x - j).abs() < 1e-6 && j >= 0.0 && (j as usize) < n {
                        months[j as usize].clone()
                    } else {
                        String::new()
                    }
                }),
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

/// Draws a figure into an SVG string.
fn render(fig: &Figure) -> Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        draw_on(&root, fig)?;
        root.present().map_err(plot_err(&fig.title))?;
    }
    Ok(svg)
}

fn draw_on(root: &DrawingArea<SVGBackend, Shift>, fig: &Figure) -> Result<()> {
    let err = plot_err(&fig.title);
    root.fill(&WHITE).map_err(&err)?;
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
    let (x0, x1) = fig
        .x_range
        .unwrap_or_else(|| padded_range(all().map(|p| p.0)));
    let (y0, mut y1) = padded_range(all().filter(|p| p.0 >= x0 && p.0 <= x1).map(|p| p.1));
    if matches!(fig.legend, SeriesLabelPosition::UpperRight) {
        // Head room for the legend, so it does not hide data.
        y1 += 0.06 * (fig.series.len() + fig.bands.len()) as f64 * (y1 - y0);
    }
    let mut chart = ChartBuilder::on(root)
        .caption(&fig.title, ("sans-serif", FONT_TITLE))
        .margin(18)
        .x_label_area_size(64)
        .y_label_area_size(84)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(&err)?;
    chart
        .configure_mesh()
        .x_desc(fig.x_label.as_str())
        .y_desc(fig.y_label.as_str())
        .axis_desc_style(("sans-serif", FONT_AXIS))
        .label_style(("sans-serif", FONT_TICK))
        .x_labels(7)
        .x_label_formatter(&|x| (fig.x_fmt)(*x))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(&err)?;
    for b in &fig.bands {
        let outline: Vec<(f64, f64)> =
            b.x.iter()
                .zip(&b.high)
                .chain(b.x.iter().zip(&b.low).rev())
                .map(|(x, y)| (*x, *y))
                .filter(|p| p.1.is_finite())
                .collect();
        let fill = b.colour.mix(b.opacity).filled();
        chart
            .draw_series(std::iter::once(Polygon::new(outline, fill)))
            .map_err(&err)?
            .label(b.label.as_str())
            .legend(move |(x, y)| Rectangle::new([(x, y - 7), (x + 24, y + 7)], fill));
    }
    for s in &fig.series {
        let style = ShapeStyle::from(&s.colour).stroke_width(3);
        match s.mark {
            Mark::Line(k) => {
                let dash = DASHES[k % DASHES.len()];
                let mut first = true;
                for run in finite_runs(&s.points) {
                    let anno = match dash {
                        None => chart.draw_series(LineSeries::new(run, style)),
                        Some((on, off)) => {
                            chart.draw_series(DashedLineSeries::new(run, on, off, style))
                        }
                    }
                    .map_err(&err)?;
                    if std::mem::take(&mut first) {
                        anno.label(s.label.as_str())
                            .legend(move |(x, y)| legend_line(x, y, dash, style));
                    }
                }
            }
            Mark::Points(k) => {
                let pts = finite_runs(&s.points).concat();
                let colour = s.colour;
                chart
                    .draw_series(pts.iter().map(|&p| marker(k, p, colour)))
                    .map_err(&err)?
                    .label(s.label.as_str())
                    .legend(move |(x, y)| marker(k, (x + 12, y), colour));
            }
        }
    }
    chart
        .configure_series_labels()
        .position(fig.legend.clone())
        .legend_area_size(44)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", FONT_TICK))
        .draw()
        .map_err(&err)?;
    Ok(())
}

/// A short legend line with the series' dash pattern.
fn legend_line<DB: DrawingBackend>(
    x: i32,
    y: i32,
    dash: Option<(u32, u32)>,
    style: ShapeStyle,
) -> DynElement<'static, DB, (i32, i32)> {
    let ends = vec![(x, y), (x + 30, y)];
    match dash {
        None => PathElement::new(ends, style).into_dyn(),
        Some((on, off)) => DashedPathElement::new(ends, on, off, style).into_dyn(),
    }
}

/// Marker `k` (0 circle, 1 triangle, other cross) at `at`.
fn marker<C, DB: DrawingBackend>(k: usize, at: C, colour: RGBColor) -> DynElement<'static, DB, C>
where
    C: Clone + 'static,
{
    let style = ShapeStyle::from(&colour).filled();
    match k {
        0 => Circle::new(at, 5, style).into_dyn(),
        1 => TriangleMarker::new(at, 6, style).into_dyn(),
        _ => Cross::new(at, 5, ShapeStyle::from(&colour).stroke_width(2)).into_dyn(),
    }
}
