//! `isodisc compare`: a run's predictions against observations — n, bias, MAE, RMSE, Pearson r,
//! r² and the Nash–Sutcliffe efficiency (Nash & Sutcliffe 1970) on matched days or steps — and,
//! with `--lags`, the correlation of the observations with a predicted driver averaged over a
//! window ending k days earlier (docs/science.md). The statistics are the model's
//! (`isodisc_model::observations`); this module only reads, matches and prints.

use std::collections::BTreeMap;
use std::io::{self, Write};
use std::path::PathBuf;

use isodisc_model::observations::{LagAnalysis, LagSettings, Scores, lag_analysis, scores};
use serde_json::json;

use crate::cli::{CompareArgs, CompareFormat, MatchArg};
use crate::error::{Context, Error, Result};
use crate::output::{AtomicFile, json_num, plural};
pub(crate) use crate::table::CsvTable;

/// A series keyed by day (days since 1970-01-01) or by minute, several values per key averaged.
pub(crate) type Keyed = BTreeMap<i64, f64>;

/// Averages values that share a key; NaN values (gaps) are left out.
pub(crate) fn keyed_mean(keys: &[i64], values: &[f64]) -> Keyed {
    let mut sums: BTreeMap<i64, (f64, usize)> = BTreeMap::new();
    for (&k, &v) in keys.iter().zip(values) {
        if !v.is_nan() {
            let e = sums.entry(k).or_insert((0.0, 0));
            e.0 += v;
            e.1 += 1;
        }
    }
    sums.into_iter()
        .map(|(k, (s, n))| (k, s / n as f64))
        .collect()
}

/// The numbers of `column` (empty cells are gaps, NaN), refusing values no measurement can have:
/// a δ13C column (`d13c…`, or `intercept`: the source δ13C of `isodisc keeling`) outside −100‰ to
/// +50‰, a CO2 column (`co2…`) outside (0, 100 000] µmol mol⁻¹. The error names file, line and
/// column.
pub(crate) fn physical_numbers(table: &CsvTable, column: &str) -> Result<Vec<f64>> {
    use super::keeling::{CO2_MAX_UMOL_MOL, D13C_RANGE_PERMIL};
    let col = table.column(column)?;
    let values = table.numbers(col)?;
    let range = if column.starts_with("d13c") || column == "intercept" {
        Some((
            D13C_RANGE_PERMIL.0,
            D13C_RANGE_PERMIL.1,
            "the δ13C range [-100, 50] ‰",
        ))
    } else if column.starts_with("co2") {
        Some((
            f64::MIN_POSITIVE,
            CO2_MAX_UMOL_MOL,
            "the CO2 range (0, 100000] µmol mol⁻¹",
        ))
    } else {
        None
    };
    if let Some((lo, hi, what)) = range
        && let Some(i) = values
            .iter()
            .position(|v| !v.is_nan() && !(lo..=hi).contains(v))
    {
        return Err(table.bad(i, col, &format!("is outside {what}")));
    }
    Ok(values)
}

/// The predicted file's series of `column` keyed by day (from `period`, daily files) or by minute
/// (from `time`, step files).
pub(crate) fn predicted_series(table: &CsvTable, column: &str, by: MatchArg) -> Result<Keyed> {
    let values = physical_numbers(table, column)?;
    let keys: Vec<i64> = match by {
        MatchArg::Daily => {
            let col = table.column("period").map_err(|e| {
                Error::msg(format!(
                    "--match daily needs a run's daily.csv (a `period` column of days): {e}"
                ))
            })?;
            let times = table.times(col)?;
            times.iter().map(|t| t.date().days()).collect()
        }
        MatchArg::Step => {
            let col = table.column("time").map_err(|e| {
                Error::msg(format!(
                    "--match step needs a run's steps.csv (a `time` column): {e}"
                ))
            })?;
            table.times(col)?.iter().map(|t| t.minutes()).collect()
        }
    };
    Ok(keyed_mean(&keys, &values))
}

/// The observed file's series of `column`, keyed like [`predicted_series`]; several observations
/// in one day (or at one time) are averaged.
pub(crate) fn observed_series(table: &CsvTable, column: &str, by: MatchArg) -> Result<Keyed> {
    let values = physical_numbers(table, column)?;
    let times = table.time_column()?;
    let keys: Vec<i64> = times
        .iter()
        .map(|t| match by {
            MatchArg::Daily => t.date().days(),
            MatchArg::Step => t.minutes(),
        })
        .collect();
    Ok(keyed_mean(&keys, &values))
}

/// A validated `isodisc compare` invocation.
#[derive(Debug, Clone)]
pub struct ComparePlan {
    predicted: PathBuf,
    observed: PathBuf,
    variable: String,
    observed_column: String,
    match_by: MatchArg,
    lags: Option<LagSettings>,
    driver: String,
    format: CompareFormat,
    out: Option<PathBuf>,
}

/// What `isodisc compare` found.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// Scores of predicted against observed (units of the variable; r, r², NSE dimensionless).
    pub scores: Scores,
    /// Lag correlations (k in days), when asked for.
    pub lags: Option<LagAnalysis>,
}

impl ComparePlan {
    /// Validates the arguments: the format, the lag settings and that lags are daily.
    pub fn from_args(args: &CompareArgs) -> Result<Self> {
        let lags = match args.lags {
            Some(k) => {
                if args.match_by != MatchArg::Daily {
                    return Err(Error::msg("--lags works on days: use --match daily"));
                }
                Some(LagSettings::new(k, args.window).context("--lags/--window")?)
            }
            None => None,
        };
        if let Some(out) = &args.out {
            crate::output::check_not_input(
                "--out",
                out,
                &[args.predicted.clone(), args.observed.clone()],
            )?;
        }
        Ok(Self {
            predicted: args.predicted.clone(),
            observed: args.observed.clone(),
            variable: args.variable.clone(),
            observed_column: args
                .observed_column
                .clone()
                .unwrap_or_else(|| args.variable.clone()),
            match_by: args.match_by,
            lags,
            driver: args.driver.clone(),
            format: args.format,
            out: args.out.clone(),
        })
    }

    /// Reads both files, matches them and computes the scores (and lags).
    pub fn compare(&self) -> Result<Comparison> {
        let pred_table = CsvTable::read(&self.predicted)?;
        let obs_table = CsvTable::read(&self.observed)?;
        let pred = predicted_series(&pred_table, &self.variable, self.match_by)?;
        let obs = observed_series(&obs_table, &self.observed_column, self.match_by)?;
        let (p, o): (Vec<f64>, Vec<f64>) = obs
            .iter()
            .filter_map(|(k, &o)| pred.get(k).map(|&p| (p, o)))
            .unzip();
        let scores = scores(&p, &o)?;
        let lags = match &self.lags {
            Some(settings) => {
                let driver = predicted_series(&pred_table, &self.driver, MatchArg::Daily)?;
                // One slot per day from the first to the last day of either series; gaps are NaN.
                let first = pred.keys().chain(obs.keys()).min().copied().unwrap_or(0);
                let last = pred.keys().chain(obs.keys()).max().copied().unwrap_or(-1);
                let days = (first..=last).collect::<Vec<_>>();
                let series = |s: &Keyed| -> Vec<f64> {
                    days.iter()
                        .map(|d| s.get(d).copied().unwrap_or(f64::NAN))
                        .collect()
                };
                Some(lag_analysis(&series(&obs), &series(&driver), settings))
            }
            None => None,
        };
        Ok(Comparison { scores, lags })
    }

    /// Compares and prints (or writes `--out`).
    pub fn run(&self) -> Result<()> {
        let c = self.compare()?;
        match &self.out {
            Some(path) => {
                let mut f = AtomicFile::create(path)?;
                self.write(f.writer(), &c)?;
                f.commit()
            }
            None => {
                let stdout = io::stdout();
                let mut w = stdout.lock();
                self.write(&mut w, &c)?;
                w.flush()?;
                Ok(())
            }
        }
    }

    fn write(&self, w: &mut dyn Write, c: &Comparison) -> Result<()> {
        match self.format {
            CompareFormat::Json => {
                serde_json::to_writer_pretty(&mut *w, &self.json(c))?;
                writeln!(w)?;
                Ok(())
            }
            CompareFormat::Table => self.table(w, c),
        }
    }

    fn json(&self, c: &Comparison) -> serde_json::Value {
        let s = &c.scores;
        let mut v = json!({
            "variable": self.variable,
            "predicted": self.predicted.display().to_string(),
            "observed": self.observed.display().to_string(),
            "match": match self.match_by { MatchArg::Daily => "daily", MatchArg::Step => "step" },
            "scores": {
                "n": s.n, "bias": json_num(s.bias), "mae": json_num(s.mae),
                "rmse": json_num(s.rmse), "r": json_num(s.r), "r2": json_num(s.r2),
                "nse": json_num(s.nse),
            },
        });
        if let (Some(l), Some(settings)) = (&c.lags, &self.lags) {
            v["lags"] = json!({
                "driver": self.driver,
                "window_days": settings.window_days(),
                "best_k": l.best_lag_days,
                "table": l.lags.iter().map(|x| json!({
                    "k": x.lag_days, "n": x.n, "r": json_num(x.r), "p": json_num(x.p_value),
                })).collect::<Vec<_>>(),
            });
        }
        v
    }

    fn table(&self, w: &mut dyn Write, c: &Comparison) -> Result<()> {
        let f = |v: f64| {
            if v.is_nan() {
                "-".to_string()
            } else {
                format!("{v:.4}")
            }
        };
        let s = &c.scores;
        writeln!(
            w,
            "{} (predicted {}) against observed {} ({}), matched {}",
            self.variable,
            self.predicted.display(),
            self.observed_column,
            self.observed.display(),
            match self.match_by {
                MatchArg::Daily => "by day",
                MatchArg::Step => "by timestamp",
            }
        )?;
        writeln!(w, "n     {}", s.n)?;
        writeln!(w, "bias  {}  (predicted - observed)", f(s.bias))?;
        writeln!(w, "mae   {}", f(s.mae))?;
        writeln!(w, "rmse  {}", f(s.rmse))?;
        writeln!(w, "r     {}", f(s.r))?;
        writeln!(w, "r2    {}", f(s.r2))?;
        writeln!(w, "nse   {}", f(s.nse))?;
        if let (Some(l), Some(settings)) = (&c.lags, &self.lags) {
            writeln!(
                w,
                "\nlag k (days): observed against {} averaged over {} ending k days earlier",
                self.driver,
                plural(settings.window_days() as u64, "day")
            )?;
            writeln!(w, "{:>4}  {:>5}  {:>8}  {:>10}", "k", "n", "r", "p")?;
            for x in &l.lags {
                let p = if x.p_value.is_nan() {
                    "-".to_string()
                } else {
                    format!("{:.3e}", x.p_value)
                };
                writeln!(w, "{:>4}  {:>5}  {:>8}  {:>10}", x.lag_days, x.n, f(x.r), p)?;
            }
            match l.best_lag_days {
                Some(k) => writeln!(w, "best k = {k} (largest |r|)")?,
                None => writeln!(w, "best k: none (too few matched days)")?,
            }
        }
        Ok(())
    }
}
