//! The runner's error: a message with an optional cause, printed as a chain.

use std::error::Error as StdError;
use std::fmt;

/// An error with context. `Display` shows this level; [`Error::chain`] shows all of them.
#[derive(Debug)]
pub struct Error {
    message: String,
    source: Option<Box<dyn StdError + Send + Sync + 'static>>,
}

/// Result alias for the runner.
pub type Result<T> = std::result::Result<T, Error>;

impl Error {
    /// An error with a message and no cause.
    pub fn msg(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
            source: None,
        }
    }

    /// The message and every cause, joined by ": ", as printed to the user.
    pub fn chain(&self) -> String {
        let mut out = self.message.clone();
        let mut cur: Option<&(dyn StdError + 'static)> = self.source.as_deref().map(|e| e as _);
        while let Some(e) = cur {
            out.push_str(": ");
            out.push_str(&e.to_string());
            cur = e.source();
        }
        out
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl StdError for Error {
    fn source(&self) -> Option<&(dyn StdError + 'static)> {
        self.source.as_deref().map(|e| e as _)
    }
}

/// Adds a message in front of an error.
pub trait Context<T> {
    /// Wraps the error with `message`.
    fn context(self, message: impl Into<String>) -> Result<T>;
    /// Wraps the error with a lazily built message.
    fn with_context<F: FnOnce() -> String>(self, f: F) -> Result<T>;
}

impl<T, E: StdError + Send + Sync + 'static> Context<T> for std::result::Result<T, E> {
    fn context(self, message: impl Into<String>) -> Result<T> {
        self.map_err(|e| Error {
            message: message.into(),
            source: Some(Box::new(e)),
        })
    }

    fn with_context<F: FnOnce() -> String>(self, f: F) -> Result<T> {
        self.map_err(|e| Error {
            message: f(),
            source: Some(Box::new(e)),
        })
    }
}

macro_rules! from_error {
    ($($t:ty),*) => {$(
        impl From<$t> for Error {
            fn from(e: $t) -> Self {
                Error::msg(e.to_string())
            }
        }
    )*};
}
impl From<std::io::Error> for Error {
    fn from(e: std::io::Error) -> Self {
        Error {
            message: "input/output".into(),
            source: Some(Box::new(e)),
        }
    }
}

impl Error {
    /// True when the cause is a closed output pipe (`isodisc … | head`): not an error to report.
    pub fn is_broken_pipe(&self) -> bool {
        let mut cur: Option<&(dyn StdError + 'static)> = Some(self);
        while let Some(e) = cur {
            if let Some(io) = e.downcast_ref::<std::io::Error>()
                && io.kind() == std::io::ErrorKind::BrokenPipe
            {
                return true;
            }
            cur = e.source();
        }
        false
    }
}

from_error!(csv::Error, serde_json::Error, isodisc_model::ModelError);
