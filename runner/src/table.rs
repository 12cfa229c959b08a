//! A small CSV file read whole, with lookups by column name and numbers and times that name the
//! file, line and column when a cell is bad. Run outputs, observation files and histories are
//! small; weather files are streamed by [`crate::forcing`] instead.

use std::path::{Path, PathBuf};

use crate::error::{Context, Error, Result};
use crate::forcing::time::LocalTime;

/// A whole CSV file held in memory (run outputs and observation files are small), with lookups by
/// column name whose errors list the known columns.
pub(crate) struct CsvTable {
    path: PathBuf,
    header: Vec<String>,
    rows: Vec<csv::StringRecord>,
}

impl CsvTable {
    /// Reads `path` (cells trimmed, lines starting with `#` skipped).
    pub(crate) fn read(path: &Path) -> Result<Self> {
        let mut rdr = csv::ReaderBuilder::new()
            .trim(csv::Trim::All)
            .comment(Some(b'#'))
            .from_path(path)
            .with_context(|| format!("cannot open {}", path.display()))?;
        let header = rdr
            .headers()
            .with_context(|| format!("cannot read the header of {}", path.display()))?
            .iter()
            .map(String::from)
            .collect();
        let rows = rdr
            .records()
            .collect::<std::result::Result<Vec<_>, _>>()
            .with_context(|| format!("cannot read {}", path.display()))?;
        Ok(Self {
            path: path.to_path_buf(),
            header,
            rows,
        })
    }

    /// True when the file has a column `name`.
    pub(crate) fn has(&self, name: &str) -> bool {
        self.header.iter().any(|h| h == name)
    }

    /// The index of column `name`, or an error naming the file and its known columns.
    pub(crate) fn column(&self, name: &str) -> Result<usize> {
        self.header.iter().position(|h| h == name).ok_or_else(|| {
            Error::msg(format!(
                "{} has no column {name}; known: {}",
                self.path.display(),
                self.header.join(", ")
            ))
        })
    }

    /// The first of `names` that exists, or an error listing them and the known columns.
    fn first_column(&self, names: &[&str]) -> Result<usize> {
        names
            .iter()
            .find_map(|n| self.header.iter().position(|h| h == n))
            .ok_or_else(|| {
                Error::msg(format!(
                    "{} has no {} column; known: {}",
                    self.path.display(),
                    names.join(" or "),
                    self.header.join(", ")
                ))
            })
    }

    /// The line in the file of data row `row` (0 = first data row).
    pub(crate) fn line(&self, row: usize) -> u64 {
        self.rows
            .get(row)
            .and_then(|r| r.position())
            .map_or(0, |p| p.line())
    }

    /// An error naming the file, line, column (number and name) and the cell's text.
    pub(crate) fn bad(&self, row: usize, col: usize, why: &str) -> Error {
        Error::msg(format!(
            "{}: line {}, column {} ({}): `{}` {why}",
            self.path.display(),
            self.line(row),
            col + 1,
            self.header[col],
            &self.rows[row][col]
        ))
    }

    /// The name of column `col`.
    pub(crate) fn header_name(&self, col: usize) -> &str {
        &self.header[col]
    }

    /// The text of row `row` (0 = first data row), column `col`.
    pub(crate) fn cell(&self, row: usize, col: usize) -> &str {
        &self.rows[row][col]
    }

    /// The numbers of column `col`; an empty cell (a gap) is NaN.
    pub(crate) fn numbers(&self, col: usize) -> Result<Vec<f64>> {
        (0..self.rows.len())
            .map(|i| {
                let s = &self.rows[i][col];
                if s.is_empty() {
                    return Ok(f64::NAN);
                }
                match s.parse::<f64>() {
                    Ok(v) if v.is_finite() => Ok(v),
                    Ok(_) => Err(self.bad(i, col, "is not a finite number")),
                    Err(_) => Err(self.bad(i, col, "is not a number")),
                }
            })
            .collect()
    }

    /// The times of column `col`: ISO `YYYY-MM-DDTHH:MM[:SS]`, or a date `YYYY-MM-DD` (midnight).
    pub(crate) fn times(&self, col: usize) -> Result<Vec<LocalTime>> {
        (0..self.rows.len())
            .map(|i| {
                let s = &self.rows[i][col];
                let t = if s.len() == 10 {
                    LocalTime::parse_date(s)
                } else {
                    LocalTime::parse_iso(s)
                };
                t.map_err(|e| self.bad(i, col, &e.to_string()))
            })
            .collect()
    }

    /// The times of the `time` column, else the `date` column, else the `start` column (the
    /// start of each group in `isodisc keeling` output, which so feeds `compare --observed`).
    pub(crate) fn time_column(&self) -> Result<Vec<LocalTime>> {
        self.times(self.first_column(&["time", "date", "start"])?)
    }
}
