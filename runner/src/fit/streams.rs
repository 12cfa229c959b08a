//! Data streams of a fit: one observation file and the model variable it measures. Files are read
//! as `isodisc compare` reads them (a `time`, `date` or `start` column; `isodisc keeling --out`
//! output gives its `intercept` and `intercept_se`, one row per night from its geometric-mean
//! regression (`method` = gmr; Pataki et al. 2003), rows with a flag left out); a `month` column (YYYY-MM) pairs the
//! observations with monthly sums or means instead of days. Each row is one datum with its own
//! standard deviation: a column, or one stated value (`--sd`).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use crate::commands::compare::{CsvTable, physical_numbers};
use crate::error::{Error, Result};
use crate::simulate::{PERIOD_COLUMNS, PeriodRow, period_col};

use super::Likelihood;

/// The Keeling-plot method whose intercepts a stream takes from `isodisc keeling --out`.
pub const KEELING_METHOD: &str = "gmr";

/// One observation.
#[derive(Debug, Clone, PartialEq)]
pub struct Obs {
    /// The day (YYYY-MM-DD) or month (YYYY-MM) it is paired with.
    pub key: String,
    /// Its line in the file.
    pub line: u64,
    /// The observed value (unit of the variable).
    pub value: f64,
    /// Its standard deviation (same unit, > 0).
    pub sd: f64,
    /// Index of its period among the model's daily or monthly rows (set by [`Stream::pair`]).
    pub row: usize,
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
    /// Paired with monthly rows (else daily).
    pub monthly: bool,
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
        if !PERIOD_COLUMNS.iter().skip(1).any(|c| c.0 == variable) {
            return Err(at(format!(
                "`{variable}` is not a column of a run's daily.csv; known: {}",
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
        let monthly = table.has("month");
        let keys: Vec<String> = if monthly {
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
                line: table.line(i),
                value: values[i],
                sd: sds[i],
                row: usize::MAX,
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
            monthly,
            obs,
            outside: 0,
            error_param: None,
        })
    }

    /// Pairs the observations with the rows of a reference simulation (`daily`, `monthly`): those
    /// whose day or month was not run are left out; an observation on a period where the model
    /// has no value (Δ on a day without GPP, say) is an error naming its line.
    pub fn pair(&mut self, daily: &[PeriodRow], monthly: &[PeriodRow]) -> Result<()> {
        let rows = if self.monthly { monthly } else { daily };
        let index: HashMap<&str, usize> = rows
            .iter()
            .enumerate()
            .map(|(i, r)| (r.key.as_str(), i))
            .collect();
        let col = period_col(&self.variable);
        let before = self.obs.len();
        let (first, last) = (
            self.obs.first().map(|o| o.key.clone()).unwrap_or_default(),
            self.obs.last().map(|o| o.key.clone()).unwrap_or_default(),
        );
        self.obs.retain(|o| index.contains_key(o.key.as_str()));
        self.outside = before - self.obs.len();
        if self.obs.is_empty() {
            return Err(Error::msg(format!(
                "--observed {} (--variable {}): none of its {before} observations ({first} to \
                 {last}) falls within the period run ({} to {})",
                self.file.display(),
                self.variable,
                rows.first().map_or("-", |r| r.key.as_str()),
                rows.last().map_or("-", |r| r.key.as_str()),
            )));
        }
        for o in &mut self.obs {
            o.row = index[o.key.as_str()];
            if !rows[o.row].values[col].is_finite() {
                return Err(Error::msg(format!(
                    "{}: line {}: the model has no {} for {} (e.g. no GPP that day); leave \
                     that observation out",
                    self.file.display(),
                    o.line,
                    self.variable,
                    o.key
                )));
            }
        }
        Ok(())
    }

    /// The model's values at the observations.
    pub fn predictions(&self, daily: &[PeriodRow], monthly: &[PeriodRow], out: &mut Vec<f64>) {
        let rows = if self.monthly { monthly } else { daily };
        let col = period_col(&self.variable);
        out.extend(
            self.obs
                .iter()
                .map(|o| rows.get(o.row).map_or(f64::NAN, |r| r.values[col])),
        );
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
