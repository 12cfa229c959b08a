//! Errors of the forcing reader. A data error says where (file, 1-based line as an editor shows
//! it, column name and number), what was there, and what was expected.

use std::fmt;
use std::path::PathBuf;

use isodisc_model::ModelError;

/// What kind of data error a [`ForcingError::Data`] is, for callers that branch on it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataErrorKind {
    /// A cell that should hold a number does not.
    Number,
    /// A cell that should hold a time does not.
    Time,
    /// A timestamp that is earlier than or equal to the one before it.
    TimeOrder,
    /// Two consecutive timestamps further apart or closer than the expected step.
    IrregularStep,
    /// A number outside what the variable can physically be (RH > 105 %, kelvin in a °C
    /// column, strongly negative radiation, ...).
    Range,
    /// A row that the CSV parser could not split (e.g. the wrong number of fields).
    Csv,
}

/// An error while setting up or reading the weather file.
#[derive(Debug)]
pub enum ForcingError {
    /// The `[forcing]` settings are invalid (a required variable not mapped, a bad value, an
    /// unknown unit).
    Config {
        /// What is wrong and how to fix it.
        message: String,
    },
    /// The weather file does not exist.
    FileNotFound {
        /// The path that was tried (after joining it to the site file's folder).
        path: PathBuf,
    },
    /// The weather file could not be read.
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// A mapped column is not in the file's header.
    MissingColumn {
        /// The file.
        path: PathBuf,
        /// The isodisc variable (or `time`) the column was mapped to.
        variable: String,
        /// The column name that was not found.
        column: String,
        /// The closest header if one is close, the line taken as the header and its first fields,
        /// and a hint when the header looks split wrongly (one field holding tabs or `;`).
        detail: String,
    },
    /// A column used by the reader appears twice in the header.
    DuplicateColumn {
        /// The file.
        path: PathBuf,
        /// The line taken as the header (1-based).
        header_line: u64,
        /// The repeated name.
        column: String,
        /// Its first and second column numbers, 1-based.
        numbers: (usize, usize),
    },
    /// A bad value in the data.
    Data {
        /// The file.
        path: PathBuf,
        /// Line number, 1-based, counting the header as line 1.
        line: u64,
        /// Column header (empty for a whole-row problem).
        column: String,
        /// Column number, 1-based (0 for a whole-row problem).
        column_number: usize,
        /// The cell as written.
        value: String,
        /// The kind of problem.
        kind: DataErrorKind,
        /// What is wrong and what is expected.
        problem: String,
    },
    /// A NetCDF weather file that cannot be read or holds a bad value; the message names the
    /// file, variable and index.
    NetCdf {
        /// What is wrong, where.
        message: String,
    },
    /// No step of the file falls between the requested `from` and `to`.
    EmptyPeriod {
        /// The file.
        path: PathBuf,
        /// What was asked for and what the file covers.
        message: String,
    },
}

impl fmt::Display for ForcingError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ForcingError::Config { message } => write!(f, "forcing settings: {message}"),
            ForcingError::FileNotFound { path } => {
                write!(f, "weather file {} not found", path.display())
            }
            ForcingError::Io { path, source } => {
                write!(f, "cannot read weather file {}: {source}", path.display())
            }
            ForcingError::MissingColumn {
                path,
                variable,
                column,
                detail,
            } => write!(
                f,
                "{}: column `{column}` (mapped to {variable}) is not in the header{detail}",
                path.display()
            ),
            ForcingError::DuplicateColumn {
                path,
                header_line,
                column,
                numbers,
            } => write!(
                f,
                "{}, line {header_line}: the header names `{column}` twice, columns no. {} and no. {};                  rename one so that isodisc knows which to read",
                path.display(),
                numbers.0,
                numbers.1
            ),
            ForcingError::Data {
                path,
                line,
                column,
                column_number,
                value,
                problem,
                ..
            } => {
                if *column_number == 0 {
                    write!(f, "{}, line {line}: {problem}", path.display())
                } else {
                    write!(
                        f,
                        "{}, line {line}, column `{column}` (no. {column_number}), value `{value}`: {problem}",
                        path.display()
                    )
                }
            }
            ForcingError::NetCdf { message } => write!(f, "{message}"),
            ForcingError::EmptyPeriod { path, message } => {
                write!(f, "{}: {message}", path.display())
            }
        }
    }
}

impl std::error::Error for ForcingError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            ForcingError::Io { source, .. } => Some(source),
            _ => None,
        }
    }
}

impl From<ModelError> for ForcingError {
    fn from(e: ModelError) -> Self {
        ForcingError::Config {
            message: e.to_string(),
        }
    }
}
