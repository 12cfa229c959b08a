//! Per-sample input checks shared by the observation fits. The error message (and its allocation)
//! is built only when a value fails, so validating a million samples costs no allocation.

use crate::error::{ModelError, Result};

/// Errors unless every value is finite, naming the first bad one as `name[i]`.
pub(crate) fn finite_series(name: &str, values: &[f64]) -> Result<()> {
    series(name, values, |v| v.is_finite(), "must be finite")
}

/// Errors unless every value is finite and > 0, naming the first bad one as `name[i]`.
pub(crate) fn positive_series(name: &str, values: &[f64]) -> Result<()> {
    series(
        name,
        values,
        |v| v.is_finite() && v > 0.0,
        "must be a finite value > 0",
    )
}

fn series(name: &str, values: &[f64], ok: impl Fn(f64) -> bool, rule: &str) -> Result<()> {
    match values.iter().position(|&v| !ok(v)) {
        None => Ok(()),
        Some(i) => Err(ModelError::InvalidInput {
            name: format!("{name}[{i}]"),
            value: values[i],
            reason: format!("sample {i} {rule}"),
        }),
    }
}
