//! Summaries over members: mean, sample standard deviation (n − 1) and the 5/25/50/75/95 %
//! quantiles of each period's value, and the Spearman rank correlation of each varied parameter
//! with the annual flux-weighted Δ and δR (with the t-test p-value of
//! `isodisc_model::observations::stats`).
//!
//! Quantiles are R's type 8 (Hyndman & Fan 1996, Am. Stat.; median-unbiased), as computed by
//! statrs' `Data::quantile`; numpy's default is type 7, so its figures differ slightly for small
//! ensembles. NaN values (a pathway absent, a month without photosynthesis) are left out.

use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use isodisc_model::observations::spearman;
use statrs::statistics::{Data, OrderStatistics};

use super::spec::EnsembleSpec;
use super::{KEPT, Member, MemberStatus, kept_col};
use crate::error::Result;
use crate::output::{AtomicFile, fmt_num};

/// The variables of `quantiles_monthly.csv` and `quantiles_annual.csv`.
pub const SUMMARY_VARIABLES: [&str; 7] = [
    "discrimination",
    "discrimination_c3",
    "discrimination_c4",
    "c4_share",
    "gpp",
    "d13c_respiration",
    "disequilibrium",
];

/// The annual outputs that sensitivities are computed for.
pub const SENSITIVITY_OUTPUTS: [&str; 2] = ["discrimination", "d13c_respiration"];

/// Summary of one variable over members, in the variable's unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stats {
    /// Members with a finite value.
    pub n: usize,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation (n − 1); NaN when n < 2.
    pub sd: f64,
    /// 5, 25, 50, 75 and 95 % quantiles (R type 8); NaN when n = 0.
    pub quantiles: [f64; 5],
}

/// The quantile probabilities of [`Stats::quantiles`].
pub const PROBABILITIES: [f64; 5] = [0.05, 0.25, 0.5, 0.75, 0.95];

/// Mean, sd and quantiles of the non-NaN `values`.
pub fn stats(values: impl IntoIterator<Item = f64>) -> Stats {
    let v: Vec<f64> = values.into_iter().filter(|x| !x.is_nan()).collect();
    let n = v.len();
    if n == 0 {
        return Stats {
            n,
            mean: f64::NAN,
            sd: f64::NAN,
            quantiles: [f64::NAN; 5],
        };
    }
    let mean = v.iter().sum::<f64>() / n as f64;
    let sd = if n > 1 {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
    } else {
        f64::NAN
    };
    let mut data = Data::new(v);
    Stats {
        n,
        mean,
        sd,
        quantiles: PROBABILITIES.map(|p| data.quantile(p)),
    }
}

/// Per period (in the order of the first member that ran): its key and the [`Stats`] of every
/// [`KEPT`] variable over the members that ran.
pub fn period_stats(members: &[Member], annual: bool) -> Vec<(String, Vec<Stats>)> {
    fn rows_of(m: &Member, annual: bool) -> Option<&Vec<(String, Vec<f64>)>> {
        m.periods()
            .map(|p| if annual { &p.annual } else { &p.monthly })
    }
    let pick = |m| rows_of(m, annual);
    let Some(first) = members.iter().find_map(pick) else {
        return Vec::new();
    };
    first
        .iter()
        .enumerate()
        .map(|(k, (key, _))| {
            let per_var = (0..KEPT.len())
                .map(|c| {
                    stats(members.iter().filter_map(pick).map(|rows| {
                        rows.get(k)
                            .filter(|(kk, _)| kk == key)
                            .map_or(f64::NAN, |(_, v)| v[c])
                    }))
                })
                .collect();
            (key.clone(), per_var)
        })
        .collect()
}

/// Writes `quantiles_monthly.csv` or `quantiles_annual.csv`.
pub fn write_quantiles(path: &Path, members: &[Member], annual: bool) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    writeln!(f.writer(), "period,variable,mean,sd,p05,p25,p50,p75,p95")?;
    let mut line = String::new();
    for (key, per_var) in period_stats(members, annual) {
        for var in SUMMARY_VARIABLES {
            let s = per_var[kept_col(var)];
            line.clear();
            let _ = write!(line, "{key},{var}");
            for x in [s.mean, s.sd].into_iter().chain(s.quantiles) {
                line.push(',');
                fmt_num(&mut line, x);
            }
            line.push('\n');
            f.writer().write_all(line.as_bytes())?;
        }
    }
    f.commit()
}

/// Writes `members.csv`: one row per member and year (one row with an empty year for a member
/// that did not run), its parameters and its annual [`KEPT`] values.
pub fn write_members(path: &Path, spec: &EnsembleSpec, members: &[Member]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    let mut line = String::from("member,status");
    for p in &spec.params {
        let _ = write!(line, ",{}", p.path);
    }
    line.push_str(",year");
    for k in KEPT {
        let _ = write!(line, ",{k}");
    }
    line.push('\n');
    f.writer().write_all(line.as_bytes())?;
    for (i, m) in members.iter().enumerate() {
        let status = match &m.status {
            MemberStatus::Ok(_) => "ok",
            MemberStatus::Invalid(_) => "invalid",
            MemberStatus::Failed(_) => "failed",
        };
        let mut prefix = format!("{i},{status}");
        for x in &m.params {
            prefix.push(',');
            fmt_num(&mut prefix, *x);
        }
        let rows: Vec<(&str, &[f64])> = match m.periods() {
            Some(p) => p
                .annual
                .iter()
                .map(|(k, v)| (k.as_str(), v.as_slice()))
                .collect(),
            None => vec![("", &[])],
        };
        for (year, values) in rows {
            line.clear();
            let _ = write!(line, "{prefix},{year}");
            for c in 0..KEPT.len() {
                line.push(',');
                fmt_num(&mut line, values.get(c).copied().unwrap_or(f64::NAN));
            }
            line.push('\n');
            f.writer().write_all(line.as_bytes())?;
        }
    }
    f.commit()
}

/// One sensitivity: a varied parameter against an annual output of one year.
#[derive(Debug, Clone, PartialEq)]
pub struct Sensitivity {
    /// Parameter path.
    pub parameter: String,
    /// Year (YYYY).
    pub year: String,
    /// Output name (a [`SENSITIVITY_OUTPUTS`] entry).
    pub output: String,
    /// Members used.
    pub n: usize,
    /// Spearman's rank correlation (dimensionless).
    pub spearman_r: f64,
    /// Two-sided p-value (dimensionless).
    pub p_value: f64,
}

/// Spearman correlations of every non-fixed parameter with the annual Δ and δR, per year.
pub fn sensitivities(spec: &EnsembleSpec, members: &[Member]) -> Vec<Sensitivity> {
    let ran: Vec<&Member> = members.iter().filter(|m| m.periods().is_some()).collect();
    let years: Vec<String> = ran
        .first()
        .and_then(|m| m.periods())
        .map(|p| p.annual.iter().map(|(k, _)| k.clone()).collect())
        .unwrap_or_default();
    let mut out = Vec::new();
    for (j, p) in spec.params.iter().enumerate() {
        if p.dist.is_fixed() {
            continue;
        }
        let x: Vec<f64> = ran.iter().map(|m| m.params[j]).collect();
        for (k, year) in years.iter().enumerate() {
            for output in SENSITIVITY_OUTPUTS {
                let c = kept_col(output);
                let y: Vec<f64> = ran
                    .iter()
                    .map(|m| {
                        m.periods()
                            .and_then(|p| p.annual.get(k))
                            .map_or(f64::NAN, |(_, v)| v[c])
                    })
                    .collect();
                let r = spearman(&x, &y).expect("same lengths");
                out.push(Sensitivity {
                    parameter: p.path.clone(),
                    year: year.clone(),
                    output: output.to_string(),
                    n: r.n,
                    spearman_r: r.r,
                    p_value: r.p_value,
                });
            }
        }
    }
    out
}

/// Writes `sensitivity.csv`.
pub fn write_sensitivity(path: &Path, spec: &EnsembleSpec, members: &[Member]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    writeln!(f.writer(), "parameter,year,output,n,spearman_r,p_value")?;
    let mut line = String::new();
    for s in sensitivities(spec, members) {
        line.clear();
        let _ = write!(line, "{},{},{},{},", s.parameter, s.year, s.output, s.n);
        fmt_num(&mut line, s.spearman_r);
        line.push(',');
        // p-values are often far below the 1e-6 that fmt_num rounds to: keep them in full.
        if s.p_value.is_finite() {
            let _ = write!(line, "{:e}", s.p_value);
        }
        line.push('\n');
        f.writer().write_all(line.as_bytes())?;
    }
    f.commit()
}
