//! Data streams of a fit: one observation file and the model variable it measures. Files are read
//! as `isodisc compare` reads them (a `time`, `date` or `start` column; `isodisc keeling --out`
//! output gives its `intercept` and `intercept_se`, one row per night from its geometric-mean
//! regression (`method` = gmr; Pataki et al. 2003), rows with a flag left out); a `month` column (YYYY-MM) pairs the
//! observations with monthly sums or means instead of days. The δ13C of bulk leaf organic matter
//! ([`BULK_LEAF`]) is one sample per row over a window of days (`start`, `end`), compared with the
//! GPP-weighted δ13C of the assimilate of that window. Each row is one datum with its own
//! standard deviation: a column, or one stated value (`--sd`).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use crate::commands::compare::{CsvTable, physical_numbers};
use crate::error::{Error, Result};
use crate::simulate::{PERIOD_COLUMNS, PeriodRow, period_col};

use super::Likelihood;

/// The variable of bulk-leaf samples: δ13C of bulk leaf organic matter (‰ VPDB) over a window of
/// days, compared with the GPP-weighted δ13C of the assimilate of the window (a common practice:
/// leaf organic matter integrates the assimilate of the days it was built from).
pub const BULK_LEAF: &str = "d13c_bulk_leaf";

/// How a stream's observations meet the model's periods.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pairing {
    /// One observation per day (YYYY-MM-DD).
    Daily,
    /// One observation per month (YYYY-MM): monthly sums or flux-weighted means.
    Monthly,
    /// One observation per window of days (`start` to `end`, both included): the GPP-weighted
    /// daily δ13C of the assimilate over the window ([`window_assimilate_d13c`]).
    Window,
}

impl Pairing {
    /// The name written to run.json.
    pub fn name(self) -> &'static str {
        match self {
            Pairing::Daily => "daily",
            Pairing::Monthly => "monthly",
            Pairing::Window => "window: GPP-weighted daily d13c_assimilate",
        }
    }
}

/// The GPP-weighted mean δ13C of the assimilate (‰ VPDB, both pathways together) of daily rows
/// `rows`: Σ GPPd·δd / Σ GPPd over the days with GPP > 0, with GPPd the day's `gpp` (gC m⁻²) and δd
/// its `d13c_assimilate`. Since δd is itself the GPP-weighted mean of the day's steps, this is the
/// GPP-weighted mean of every step of the window. NaN when the window has no GPP.
pub fn window_assimilate_d13c(rows: &[PeriodRow]) -> f64 {
    let (g, d) = (period_col("gpp"), period_col("d13c_assimilate"));
    let (mut sum_g, mut sum_gd) = (0.0, 0.0);
    for r in rows {
        let (gpp, delta) = (r.values[g], r.values[d]);
        if gpp > 0.0 && delta.is_finite() {
            sum_g += gpp;
            sum_gd += gpp * delta;
        }
    }
    if sum_g > 0.0 {
        sum_gd / sum_g
    } else {
        f64::NAN
    }
}

/// The Keeling-plot method whose intercepts a stream takes from `isodisc keeling --out`.
pub const KEELING_METHOD: &str = "gmr";

/// One observation.
#[derive(Debug, Clone, PartialEq)]
pub struct Obs {
    /// The day (YYYY-MM-DD) or month (YYYY-MM) it is paired with; a window's first day.
    pub key: String,
    /// A window's last day (YYYY-MM-DD, included); None for a day or a month.
    pub end: Option<String>,
    /// Its line in the file.
    pub line: u64,
    /// The observed value (unit of the variable).
    pub value: f64,
    /// Its standard deviation (same unit, > 0).
    pub sd: f64,
    /// Index of its period among the model's daily or monthly rows, a window's first day (set by
    /// [`Stream::pair`]).
    pub row: usize,
    /// A window's last daily row (set by [`Stream::pair`]); `row` otherwise.
    pub end_row: usize,
}

/// One observed stream.
#[derive(Debug, Clone, PartialEq)]
pub struct Stream {
    /// The observation file.
    pub file: PathBuf,
    /// The model's period column it measures (as in daily.csv).
    pub variable: String,
    /// The file's column read.
    pub column: String,
    /// The file's standard-deviation column, or None for a stated `--sd`.
    pub sd_column: Option<String>,
    /// How the observations meet the model's periods.
    pub pairing: Pairing,
    /// The observations within the run's period, in file order.
    pub obs: Vec<Obs>,
    /// Observations left out because their period was not run.
    pub outside: usize,
    /// Index among the sampled parameters of this variable's model-error SD (`error.<variable>`).
    pub error_param: Option<usize>,
}

/// The standard-deviation columns looked for, in order, for observed column `column`.
fn sd_columns(column: &str) -> Vec<String> {
    let mut c = vec![format!("{column}_sd"), "sd".to_string()];
    if column == "intercept" {
        c.insert(0, "intercept_se".to_string());
    }
    c
}

impl Stream {
    /// Reads stream `index` (1-based in messages): `variable` from `file`, with the stated `sd`
    /// (> 0) or the file's SD column.
    pub fn read(file: &Path, variable: &str, sd: Option<f64>, index: usize) -> Result<Self> {
        let at = |msg: String| {
            Error::msg(format!(
                "--observed {} (stream {index}, --variable {variable}): {msg}",
                file.display()
            ))
        };
        if variable != BULK_LEAF && !PERIOD_COLUMNS.iter().skip(1).any(|c| c.0 == variable) {
            return Err(at(format!(
                "`{variable}` is not a column of a run's daily.csv nor {BULK_LEAF}; known: {}, \
                 {BULK_LEAF}",
                PERIOD_COLUMNS[1..]
                    .iter()
                    .map(|c| c.0)
                    .collect::<Vec<_>>()
                    .join(", ")
            )));
        }
        if let Some(s) = sd
            && !(s > 0.0 && s.is_finite())
        {
            return Err(at(format!("--sd {s}: must be a finite number > 0")));
        }
        let table = CsvTable::read(file)?;
        let column = if table.has(variable) {
            variable.to_string()
        } else if variable == BULK_LEAF {
            return Err(at(format!(
                "no column `{BULK_LEAF}` (bulk-leaf samples: start,end,{BULK_LEAF}[,sd])"
            )));
        } else if table.has("intercept") {
            "intercept".to_string()
        } else {
            return Err(at(format!(
                "no column `{variable}` (nor `intercept`, as `isodisc keeling --out` writes)"
            )));
        };
        let values = physical_numbers(&table, &column)?;
        let (sd_column, sds) = match sd {
            Some(s) => (None, vec![s; values.len()]),
            None => {
                let Some(name) = sd_columns(&column).into_iter().find(|c| table.has(c)) else {
                    return Err(at(format!(
                        "no standard deviation: give --sd or a column {}",
                        sd_columns(&column).join(" or ")
                    )));
                };
                let col = table.column(&name)?;
                let sds = table.numbers(col)?;
                for (i, (v, s)) in values.iter().zip(&sds).enumerate() {
                    if !v.is_nan() && (s.is_nan() || *s <= 0.0) {
                        return Err(table.bad(i, col, "must be a standard deviation > 0"));
                    }
                }
                (Some(name), sds)
            }
        };
        let pairing = if variable == BULK_LEAF {
            Pairing::Window
        } else if table.has("month") {
            Pairing::Monthly
        } else {
            Pairing::Daily
        };
        let mut ends: Vec<Option<String>> = vec![None; values.len()];
        let keys: Vec<String> = if pairing == Pairing::Window {
            let (c_start, c_end) = (table.column("start")?, table.column("end")?);
            let day = |i: usize, c: usize| {
                crate::forcing::LocalTime::parse_date(table.cell(i, c))
                    .map_err(|_| table.bad(i, c, "is not a date YYYY-MM-DD"))
            };
            (0..values.len())
                .map(|i| {
                    let (start, end) = (day(i, c_start)?, day(i, c_end)?);
                    if end < start {
                        return Err(table.bad(
                            i,
                            c_end,
                            &format!("is before the window's start {}", table.cell(i, c_start)),
                        ));
                    }
                    ends[i] = Some(table.cell(i, c_end).to_string());
                    Ok(table.cell(i, c_start).to_string())
                })
                .collect::<Result<_>>()?
        } else if pairing == Pairing::Monthly {
            let col = table.column("month")?;
            (0..values.len())
                .map(|i| {
                    let s = table.cell(i, col);
                    crate::forcing::LocalTime::parse_date(&format!("{s}-01"))
                        .map(|_| s.to_string())
                        .map_err(|_| table.bad(i, col, "is not a month YYYY-MM"))
                })
                .collect::<Result<_>>()?
        } else {
            table
                .time_column()?
                .iter()
                .map(|t| format!("{:04}-{:02}-{:02}", t.year(), t.month(), t.day()))
                .collect()
        };
        // `isodisc keeling --out`: one method's fit per group, and only unflagged fits.
        let keep_row = |i: usize| -> bool {
            if column != "intercept" {
                return true;
            }
            let method = table
                .column("method")
                .map(|c| table.cell(i, c) == KEELING_METHOD);
            let unflagged = table.column("flags").map(|c| table.cell(i, c).is_empty());
            method.unwrap_or(true) && unflagged.unwrap_or(true)
        };
        let obs: Vec<Obs> = (0..values.len())
            .filter(|&i| !values[i].is_nan() && keep_row(i))
            .map(|i| Obs {
                key: keys[i].clone(),
                end: ends[i].clone(),
                line: table.line(i),
                value: values[i],
                sd: sds[i],
                row: usize::MAX,
                end_row: usize::MAX,
            })
            .collect();
        if obs.is_empty() {
            return Err(at("no observations (every value is empty)".into()));
        }
        Ok(Self {
            file: file.to_path_buf(),
            variable: variable.to_string(),
            column,
            sd_column,
            pairing,
            obs,
            outside: 0,
            error_param: None,
        })
    }

    /// Pairs the observations with the rows of a reference simulation (`daily`, `monthly`): those
    /// whose day, month or window was not run at all are left out; a window that reaches outside
    /// the days run, and an observation on a period where the model has no value (Δ on a day
    /// without GPP, a window without GPP), are errors naming the line.
    pub fn pair(&mut self, daily: &[PeriodRow], monthly: &[PeriodRow]) -> Result<()> {
        let rows = if self.pairing == Pairing::Monthly {
            monthly
        } else {
            daily
        };
        let (first_run, last_run) = (
            rows.first().map_or("-", |r| r.key.as_str()),
            rows.last().map_or("-", |r| r.key.as_str()),
        );
        let index: HashMap<&str, usize> = rows
            .iter()
            .enumerate()
            .map(|(i, r)| (r.key.as_str(), i))
            .collect();
        let before = self.obs.len();
        let (first, last) = (
            self.obs.first().map(|o| o.key.clone()).unwrap_or_default(),
            self.obs.last().map(|o| o.key.clone()).unwrap_or_default(),
        );
        if self.pairing == Pairing::Window {
            // Keys are YYYY-MM-DD, so their text order is their time order.
            for o in &self.obs {
                let end = o.end.as_deref().unwrap_or(&o.key);
                let touches = end >= first_run && o.key.as_str() <= last_run;
                let inside = o.key.as_str() >= first_run && end <= last_run;
                if touches && !inside {
                    return Err(Error::msg(format!(
                        "{}: line {}: the window {} to {end} reaches outside the days run \
                         ({first_run} to {last_run}); its GPP-weighted assimilate would miss \
                         days: run those days (--from, --to) or leave the sample out",
                        self.file.display(),
                        o.line,
                        o.key
                    )));
                }
            }
            self.obs.retain(|o| {
                let end = o.end.as_deref().unwrap_or(&o.key);
                end >= first_run && o.key.as_str() <= last_run
            });
        } else {
            self.obs.retain(|o| index.contains_key(o.key.as_str()));
        }
        self.outside = before - self.obs.len();
        if self.obs.is_empty() {
            return Err(Error::msg(format!(
                "--observed {} (--variable {}): none of its {before} observations ({first} to \
                 {last}) falls within the period run ({first_run} to {last_run})",
                self.file.display(),
                self.variable,
            )));
        }
        for o in &mut self.obs {
            match &o.end {
                Some(end) => {
                    o.row = rows.partition_point(|r| r.key.as_str() < o.key.as_str());
                    o.end_row = rows
                        .partition_point(|r| r.key.as_str() <= end.as_str())
                        .saturating_sub(1);
                }
                None => {
                    o.row = index[o.key.as_str()];
                    o.end_row = o.row;
                }
            }
        }
        let mut values = Vec::new();
        self.predictions(daily, monthly, &mut values);
        for (o, v) in self.obs.iter().zip(values) {
            if !v.is_finite() {
                let when = match &o.end {
                    Some(end) => format!("the window {} to {end} (no GPP in it)", o.key),
                    None => format!("{} (e.g. no GPP that day)", o.key),
                };
                return Err(Error::msg(format!(
                    "{}: line {}: the model has no {} for {when}; leave that observation out",
                    self.file.display(),
                    o.line,
                    self.variable,
                )));
            }
        }
        Ok(())
    }

    /// The model's values at the observations.
    pub fn predictions(&self, daily: &[PeriodRow], monthly: &[PeriodRow], out: &mut Vec<f64>) {
        match self.pairing {
            Pairing::Window => out.extend(self.obs.iter().map(|o| {
                daily
                    .get(o.row..=o.end_row)
                    .map_or(f64::NAN, window_assimilate_d13c)
            })),
            Pairing::Daily | Pairing::Monthly => {
                let rows = if self.pairing == Pairing::Monthly {
                    monthly
                } else {
                    daily
                };
                let col = period_col(&self.variable);
                out.extend(
                    self.obs
                        .iter()
                        .map(|o| rows.get(o.row).map_or(f64::NAN, |r| r.values[col])),
                );
            }
        }
    }

    /// ln-likelihood of the observations given the model's values `m` (one per observation) and
    /// the model-error SD `sigma` (0 for none): Σ ln p(yᵢ | mᵢ, √(sdᵢ² + σ²)).
    pub fn log_likelihood(&self, m: &[f64], sigma: f64, lik: &Likelihood) -> f64 {
        self.obs
            .iter()
            .zip(m)
            .map(|(o, &m)| lik.ln_density(o.value, m, (o.sd * o.sd + sigma * sigma).sqrt()))
            .sum()
    }
}
