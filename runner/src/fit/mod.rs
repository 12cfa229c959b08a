//! Calibration of a site to its measurements (docs/fit.md): the priors of an ensemble spec, the
//! data streams (observations paired with the model's daily or monthly values), their Gaussian or
//! Student-t likelihood, the Goodman & Weare ensemble sampler ([`sampler`]) and the convergence
//! diagnostics ([`diagnostics`]).

pub mod diagnostics;
pub mod sampler;
pub mod streams;

use statrs::distribution::{Continuous, ContinuousCDF, LogNormal, Normal, StudentsT, Uniform};

use crate::ensemble::spec::Dist;

/// ln of the prior density of `dist` at `x` (statrs densities; the truncated normal renormalised
/// by Φ(max) − Φ(min)); −∞ outside the support. `fixed` has no density and is never sampled: NaN.
pub fn ln_prior(dist: &Dist, x: f64) -> f64 {
    // The spec parser validated every field, so the constructors cannot fail.
    match *dist {
        Dist::Fixed { .. } => f64::NAN,
        Dist::Uniform { min, max } => Uniform::new(min, max).expect("validated uniform").ln_pdf(x),
        Dist::Normal { mean, sd } => Normal::new(mean, sd).expect("validated normal").ln_pdf(x),
        Dist::LogNormal { meanlog, sdlog } => {
            if x > 0.0 {
                LogNormal::new(meanlog, sdlog)
                    .expect("validated log-normal")
                    .ln_pdf(x)
            } else {
                f64::NEG_INFINITY
            }
        }
        Dist::TruncatedNormal { mean, sd, min, max } => {
            if (min..=max).contains(&x) {
                let n = Normal::new(mean, sd).expect("validated normal");
                n.ln_pdf(x) - (n.cdf(max) - n.cdf(min)).ln()
            } else {
                f64::NEG_INFINITY
            }
        }
    }
}

/// The error model of the observations.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Likelihood {
    /// yᵢ ~ Normal(mᵢ, sᵢ).
    Gaussian,
    /// yᵢ ~ mᵢ + sᵢ·t(ν): heavier tails, for outliers.
    StudentT {
        /// Degrees of freedom ν (> 0).
        dof: f64,
    },
}

impl Likelihood {
    /// ln p(y | m, s) of one observation y with model value m and total standard deviation s > 0
    /// (statrs densities). A non-finite model value gives −∞.
    pub fn ln_density(&self, y: f64, m: f64, s: f64) -> f64 {
        if !m.is_finite() {
            return f64::NEG_INFINITY;
        }
        match *self {
            Likelihood::Gaussian => Normal::new(m, s).map_or(f64::NEG_INFINITY, |d| d.ln_pdf(y)),
            Likelihood::StudentT { dof } => {
                StudentsT::new(m, s, dof).map_or(f64::NEG_INFINITY, |d| d.ln_pdf(y))
            }
        }
    }

    /// The name used on the command line and in run.json.
    pub fn name(&self) -> &'static str {
        match self {
            Likelihood::Gaussian => "gaussian",
            Likelihood::StudentT { .. } => "student-t",
        }
    }
}
