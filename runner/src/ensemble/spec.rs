//! The ensemble spec (TOML): which site parameters vary, with which distribution, and how the
//! members are sampled. The format is documented in `docs/ensembles.md`:
//!
//! ```toml
//! sampling = "latin-hypercube"        # or "random"
//!
//! [param."vegetation.c3.g1"]
//! distribution = "truncated-normal"   # fixed | uniform | normal | log-normal | truncated-normal
//! mean = 4.1
//! sd = 0.8
//! min = 1.5
//! max = 7.0
//! ```
//!
//! Every distribution is sampled through its inverse CDF from a uniform number in (0, 1), so Latin
//! hypercube and plain random sampling share one code path. Log-normal takes `meanlog` and `sdlog`
//! (mean and sd of ln x, as in R's `qlnorm`); the truncated normal is the normal restricted to
//! [min, max], sampled between cdf(min) and cdf(max).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use isodisc_model::error::check_range;
use serde::Deserialize;
use statrs::distribution::{ContinuousCDF, LogNormal, Normal};
use toml::Spanned;

use crate::error::{Error, Result};

/// How the members' uniform numbers are drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sampling {
    /// One draw per stratum of width 1/N for every parameter (McKay, Beckman & Conover 1979).
    LatinHypercube,
    /// Independent uniform draws.
    Random,
}

impl Sampling {
    /// The name used in spec files.
    pub fn as_str(self) -> &'static str {
        match self {
            Sampling::LatinHypercube => "latin-hypercube",
            Sampling::Random => "random",
        }
    }
}

/// A parameter's distribution, in the parameter's own unit. The spec parser validates the fields
/// (sd > 0, min < max, finite values) before it builds one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Dist {
    /// Always `value`.
    Fixed {
        /// The value.
        value: f64,
    },
    /// Uniform on [min, max].
    Uniform {
        /// Lower bound.
        min: f64,
        /// Upper bound (> min).
        max: f64,
    },
    /// Normal with `mean` and standard deviation `sd`.
    Normal {
        /// Mean.
        mean: f64,
        /// Standard deviation (> 0).
        sd: f64,
    },
    /// Log-normal: ln x is normal with mean `meanlog` and sd `sdlog`.
    LogNormal {
        /// Mean of ln x.
        meanlog: f64,
        /// Standard deviation of ln x (> 0).
        sdlog: f64,
    },
    /// Normal with `mean` and `sd` restricted to [min, max].
    TruncatedNormal {
        /// Mean of the untruncated normal.
        mean: f64,
        /// Standard deviation of the untruncated normal (> 0).
        sd: f64,
        /// Lower bound.
        min: f64,
        /// Upper bound (> min).
        max: f64,
    },
}

impl Dist {
    /// The distribution's name in spec files.
    pub fn name(&self) -> &'static str {
        match self {
            Dist::Fixed { .. } => "fixed",
            Dist::Uniform { .. } => "uniform",
            Dist::Normal { .. } => "normal",
            Dist::LogNormal { .. } => "log-normal",
            Dist::TruncatedNormal { .. } => "truncated-normal",
        }
    }

    /// True for `fixed`: no randomness, no sensitivity.
    pub fn is_fixed(&self) -> bool {
        matches!(self, Dist::Fixed { .. })
    }

    /// The value whose CDF is `u` (0 < u < 1), in the parameter's unit.
    pub fn quantile(&self, u: f64) -> f64 {
        // Parameters were validated when the spec was read, so the constructors cannot fail.
        let normal = |m: f64, s: f64| Normal::new(m, s).expect("validated normal");
        match *self {
            Dist::Fixed { value } => value,
            Dist::Uniform { min, max } => min + u * (max - min),
            Dist::Normal { mean, sd } => normal(mean, sd).inverse_cdf(u),
            Dist::LogNormal { meanlog, sdlog } => LogNormal::new(meanlog, sdlog)
                .expect("validated log-normal")
                .inverse_cdf(u),
            Dist::TruncatedNormal { mean, sd, min, max } => {
                let n = normal(mean, sd);
                let (lo, hi) = (n.cdf(min), n.cdf(max));
                n.inverse_cdf(lo + u * (hi - lo)).clamp(min, max)
            }
        }
    }
}

/// One varied (or fixed) parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSpec {
    /// Dotted path in the site file (see [`crate::site::Site::set_param`]).
    pub path: String,
    /// Its distribution.
    pub dist: Dist,
    /// Line of its table in the spec file.
    pub line: usize,
}

/// A validated ensemble spec.
#[derive(Debug, Clone, PartialEq)]
pub struct EnsembleSpec {
    /// The spec file.
    pub path: PathBuf,
    /// Its text (for checksums).
    pub text: String,
    /// Sampling scheme.
    pub sampling: Sampling,
    /// Parameters, sorted by path.
    pub params: Vec<ParamSpec>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSpec {
    #[serde(default)]
    sampling: Option<Spanned<String>>,
    #[serde(default)]
    param: BTreeMap<String, Spanned<RawParam>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawParam {
    distribution: Spanned<String>,
    value: Option<Spanned<f64>>,
    min: Option<Spanned<f64>>,
    max: Option<Spanned<f64>>,
    mean: Option<Spanned<f64>>,
    sd: Option<Spanned<f64>>,
    meanlog: Option<Spanned<f64>>,
    sdlog: Option<Spanned<f64>>,
}

/// 1-based line of a byte offset.
pub(crate) fn line_of(text: &str, offset: usize) -> usize {
    text[..offset.min(text.len())].matches('\n').count() + 1
}

/// A TOML error as `file: line N: message`, unknown keys named with the closest known key.
pub(crate) fn toml_error(path: &Path, text: &str, e: &toml::de::Error) -> Error {
    let line = e.span().map(|s| line_of(text, s.start)).unwrap_or(1);
    let msg = e.message().trim();
    let msg = match msg.strip_prefix("unknown field `") {
        Some(rest) => {
            let (key, expected) = rest.split_once('`').unwrap_or((rest, ""));
            let known: Vec<&str> = expected.split('`').skip(1).step_by(2).collect();
            let hint = isodisc_model::error::closest_name(key, known.iter().copied())
                .map(|k| format!(" (did you mean `{k}`?)"))
                .unwrap_or_default();
            format!(
                "unknown key `{key}`{hint}; known keys: {}",
                known.join(", ")
            )
        }
        None => msg.to_string(),
    };
    Error::msg(format!("{}: line {line}: {msg}", path.display()))
}

impl EnsembleSpec {
    /// Reads and validates a spec file.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path)
            .map_err(|e| Error::msg(format!("cannot read the spec {}: {e}", path.display())))?;
        Self::parse(path, text)
    }

    /// Validates a spec's text; `path` is used in messages.
    pub fn parse(path: &Path, text: String) -> Result<Self> {
        let raw: RawSpec = toml::from_str(&text).map_err(|e| toml_error(path, &text, &e))?;
        let at = |offset: usize, msg: String| {
            Error::msg(format!(
                "{}: line {}: {msg}",
                path.display(),
                line_of(&text, offset)
            ))
        };
        let sampling = match &raw.sampling {
            None => Sampling::LatinHypercube,
            Some(s) => match s.get_ref().as_str() {
                "latin-hypercube" => Sampling::LatinHypercube,
                "random" => Sampling::Random,
                o => {
                    return Err(at(
                        s.span().start,
                        format!("sampling = \"{o}\": use \"latin-hypercube\" or \"random\""),
                    ));
                }
            },
        };
        let mut params = Vec::new();
        for (name, p) in &raw.param {
            let line = line_of(&text, p.span().start);
            let p = p.get_ref();
            let keys: [(&str, &Option<Spanned<f64>>); 7] = [
                ("value", &p.value),
                ("min", &p.min),
                ("max", &p.max),
                ("mean", &p.mean),
                ("sd", &p.sd),
                ("meanlog", &p.meanlog),
                ("sdlog", &p.sdlog),
            ];
            let dname = p.distribution.get_ref().as_str();
            let needed: &[&str] = match dname {
                "fixed" => &["value"],
                "uniform" => &["min", "max"],
                "normal" => &["mean", "sd"],
                "log-normal" => &["meanlog", "sdlog"],
                "truncated-normal" => &["mean", "sd", "min", "max"],
                o => {
                    return Err(at(
                        p.distribution.span().start,
                        format!(
                            "[param.\"{name}\"] distribution = \"{o}\": use fixed, uniform, \
                             normal, log-normal or truncated-normal"
                        ),
                    ));
                }
            };
            for (key, v) in keys {
                match (needed.contains(&key), v) {
                    (false, Some(v)) => {
                        return Err(at(
                            v.span().start,
                            format!(
                                "[param.\"{name}\"] key `{key}` does not apply to a {dname} \
                                 distribution (it takes {})",
                                needed.join(", ")
                            ),
                        ));
                    }
                    (true, None) => {
                        return Err(Error::msg(format!(
                            "{}: line {line}: [param.\"{name}\"] a {dname} distribution needs `{key}` \
                             (it takes {})",
                            path.display(),
                            needed.join(", ")
                        )));
                    }
                    _ => {}
                }
            }
            let get = |key: &str| -> Result<f64> {
                let (_, v) = keys.iter().find(|(k, _)| *k == key).expect("known key");
                let v = v.as_ref().expect("checked present");
                check_range(key, *v.get_ref(), f64::MIN, f64::MAX)
                    .map_err(|e| at(v.span().start, format!("[param.\"{name}\"] {e}")))
            };
            let positive = |key: &str| -> Result<f64> {
                let x = get(key)?;
                if x > 0.0 {
                    Ok(x)
                } else {
                    Err(Error::msg(format!(
                        "{}: line {line}: [param.\"{name}\"] `{key}` = {x} must be > 0",
                        path.display()
                    )))
                }
            };
            let bounds = || -> Result<(f64, f64)> {
                let (lo, hi) = (get("min")?, get("max")?);
                if lo < hi {
                    Ok((lo, hi))
                } else {
                    Err(Error::msg(format!(
                        "{}: line {line}: [param.\"{name}\"] min = {lo} must be below max = {hi}",
                        path.display()
                    )))
                }
            };
            let dist = match dname {
                "fixed" => Dist::Fixed {
                    value: get("value")?,
                },
                "uniform" => {
                    let (min, max) = bounds()?;
                    Dist::Uniform { min, max }
                }
                "normal" => Dist::Normal {
                    mean: get("mean")?,
                    sd: positive("sd")?,
                },
                "log-normal" => Dist::LogNormal {
                    meanlog: get("meanlog")?,
                    sdlog: positive("sdlog")?,
                },
                _ => {
                    let (mean, sd) = (get("mean")?, positive("sd")?);
                    let (min, max) = bounds()?;
                    let n = Normal::new(mean, sd).map_err(|e| Error::msg(e.to_string()))?;
                    // Inverse-CDF sampling needs a window the normal actually reaches.
                    if n.cdf(max) - n.cdf(min) < 1e-9 {
                        return Err(Error::msg(format!(
                            "{}: line {line}: [param.\"{name}\"] [min, max] = [{min}, {max}] lies \
                             too far in the tail of normal({mean}, {sd}) to sample",
                            path.display()
                        )));
                    }
                    Dist::TruncatedNormal { mean, sd, min, max }
                }
            };
            params.push(ParamSpec {
                path: name.clone(),
                dist,
                line,
            });
        }
        Ok(Self {
            path: path.to_path_buf(),
            text,
            sampling,
            params,
        })
    }
}
