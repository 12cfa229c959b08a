//! The model's error type. Every variant names what was wrong and the value that was given, so the
//! runner can add the file, line and column and print the whole chain.

use std::fmt;

/// An error from the model crate.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelError {
    /// A parameter is NaN, infinite or outside its valid range.
    InvalidParameter {
        /// Parameter name as used by `--set` and the site file (e.g. `vcmax25`).
        name: String,
        /// The value that was given.
        value: f64,
        /// Inclusive lower bound of the valid range.
        min: f64,
        /// Inclusive upper bound of the valid range.
        max: f64,
    },
    /// A parameter name that no parameter set knows.
    UnknownParameter {
        /// The name that was given.
        name: String,
        /// The closest known name, if any is close.
        suggestion: Option<String>,
    },
    /// A driver or input value (temperature, PPFD, CO2, ...) is NaN or out of range.
    InvalidInput {
        /// Input name with its unit (e.g. `t_leaf_c`).
        name: String,
        /// The value that was given.
        value: f64,
        /// Why it was refused, including the valid range.
        reason: String,
    },
    /// A structurally invalid configuration (e.g. a pool network whose fractions exceed 1).
    InvalidConfig(String),
    /// A numerical method failed (an ODE step, a root search that lost its bracket).
    Numerical(String),
}

impl fmt::Display for ModelError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ModelError::InvalidParameter {
                name,
                value,
                min,
                max,
            } => write!(
                f,
                "parameter `{name}` = {} is outside its valid range [{}, {}]",
                show_value(*value),
                show_bound(*min),
                show_bound(*max)
            ),
            ModelError::UnknownParameter { name, suggestion } => {
                write!(f, "unknown parameter `{name}`")?;
                if let Some(s) = suggestion {
                    write!(f, " (did you mean `{s}`?)")?;
                }
                Ok(())
            }
            ModelError::InvalidInput {
                name,
                value,
                reason,
            } => write!(f, "input `{name}` = {}: {reason}", show_value(*value)),
            ModelError::InvalidConfig(msg) => write!(f, "invalid configuration: {msg}"),
            ModelError::Numerical(msg) => write!(f, "numerical failure: {msg}"),
        }
    }
}

/// A value as given, readable: as written for ordinary magnitudes, in scientific notation when
/// it would take more than about fifteen digits (1e308 rather than 309 digits).
pub fn show_value(x: f64) -> String {
    if x == 0.0 || !x.is_finite() || (1e-4..1e15).contains(&x.abs()) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

/// A range bound as a reader wants it: at most six decimals, so that a round-off tolerance added
/// to a bound (1 + 1e-9) shows as the bound itself (1); very large or small bounds in
/// scientific notation.
pub fn show_bound(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    if !(1e-4..1e12).contains(&x.abs()) {
        return format!("{x:e}");
    }
    let s = format!("{x:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.to_string() }
}

impl std::error::Error for ModelError {}

/// Result alias for the model crate.
pub type Result<T> = std::result::Result<T, ModelError>;

/// Checks that `value` is within `[min, max]` (never NaN), naming the parameter if not. Infinity
/// passes only where the bound itself is infinite (conductances and tpu25 take `inf`: none).
#[inline]
pub fn check_range(name: &str, value: f64, min: f64, max: f64) -> Result<f64> {
    if value >= min && value <= max {
        Ok(value)
    } else {
        Err(parameter_error(name, value, min, max))
    }
}

#[cold]
#[inline(never)]
fn parameter_error(name: &str, value: f64, min: f64, max: f64) -> ModelError {
    ModelError::InvalidParameter {
        name: name.to_string(),
        value,
        min,
        max,
    }
}

/// Checks that an input (driver) value is finite and within `[min, max]`. Called in every step's
/// hot path, so the error is built out of line.
#[inline]
pub fn check_input(name: &str, value: f64, min: f64, max: f64) -> Result<f64> {
    if value.is_finite() && value >= min && value <= max {
        Ok(value)
    } else {
        Err(input_error(name, value, min, max))
    }
}

#[cold]
#[inline(never)]
fn input_error(name: &str, value: f64, min: f64, max: f64) -> ModelError {
    ModelError::InvalidInput {
        name: name.to_string(),
        value,
        reason: format!("valid range is [{}, {}]", show_bound(min), show_bound(max)),
    }
}

/// The known name closest to `name` by edit distance, if it is close enough to be a likely typo.
pub fn closest_name<'a>(name: &str, known: impl IntoIterator<Item = &'a str>) -> Option<String> {
    known
        .into_iter()
        .map(|k| (edit_distance(name, k), k))
        .filter(|(d, k)| *d <= (k.len().max(name.len()) / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k.to_string())
}

/// Levenshtein distance between two strings, by characters.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for (i, ca) in a.chars().enumerate() {
        cur[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != *cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_known_pairs() {
        // Classic textbook pair (common practice).
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(
            closest_name("vcmax", ["vcmax25", "jmax25", "g1"]).as_deref(),
            Some("vcmax25")
        );
        assert_eq!(closest_name("zzzzzz", ["g1", "g0"]), None);
    }

    #[test]
    fn range_check_rejects_nan_and_out_of_range() {
        assert!(check_range("g1", f64::NAN, 0.0, 10.0).is_err());
        assert!(check_range("g1", 11.0, 0.0, 10.0).is_err());
        assert_eq!(check_range("g1", 4.0, 0.0, 10.0), Ok(4.0));
        assert!(check_range("g1", f64::INFINITY, 0.0, 10.0).is_err());
        assert_eq!(
            check_range("gm", f64::INFINITY, 0.01, f64::INFINITY),
            Ok(f64::INFINITY)
        );
    }
}
