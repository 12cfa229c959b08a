//! The `[pools]` block of a site file, and dotted-path overrides for ensembles.
//!
//! ```toml
//! [pools]
//! method = "exact"                # or "dopri5" (then rtol, atol apply)
//! temperature_response = "q10"    # or "lloyd-taylor"
//! q10 = 2.0
//! t_ref_c = 10.0
//! moisture_min = 0.1
//!
//! [[pools.pool]]                  # optional: when present, the list is the whole network
//! name = "leaf_labile"
//! turnover_days = 1.0             # or turnover_years
//! respired_fraction = 0.25
//! kind = "autotrophic"
//! transfers = { transport_labile = 1.0 }
//! assimilation_share = 1.0
//! ```
//!
//! Values are checked when the network and settings are built ([`PoolsConfig::build`]).

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use super::integrate::{DEFAULT_ATOL, DEFAULT_RTOL, Method, PoolSettings};
use super::network::{DAYS_PER_YEAR, DEFAULT_CUE, PoolKind, PoolNetwork, PoolSpec};
use super::response::{
    DEFAULT_MOISTURE_MIN, DEFAULT_Q10, DEFAULT_T_REF_C, EnvironmentResponse, TemperatureResponse,
};
use super::state::R_VPDB_DEFAULT;
use crate::error::{ModelError, Result, closest_name};

/// Integration method named in a site file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MethodName {
    /// Exact exponential (default).
    #[default]
    Exact,
    /// Dormand–Prince 5(4) with `rtol` and `atol`.
    Dopri5,
}

/// Temperature response named in a site file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TemperatureResponseName {
    /// Q10 with `q10` and `t_ref_c` (default).
    #[default]
    Q10,
    /// Lloyd & Taylor (1994) normalised at `t_ref_c`: `"lloyd-taylor"` (the older
    /// `"lloyd_taylor"` is still read).
    #[serde(rename = "lloyd-taylor", alias = "lloyd_taylor")]
    LloydTaylor,
}

/// The `[pools]` block. Every field has a default, so an absent block means the default model.
#[derive(Debug, Clone, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields, default)]
pub struct PoolsConfig {
    /// Integration method; default `exact`.
    pub method: MethodName,
    /// Dopri5 relative tolerance, dimensionless; default 1e-10.
    pub rtol: f64,
    /// Dopri5 absolute tolerance, gC m⁻²; default 1e-12.
    pub atol: f64,
    /// Temperature response; default `q10`.
    pub temperature_response: TemperatureResponseName,
    /// Q10 (dimensionless, [1, 10]); default 2.
    pub q10: f64,
    /// Reference temperature of the response, °C ([−20, 40]); default 10.
    pub t_ref_c: f64,
    /// Floor of the moisture factor, dimensionless ([0, 1]); default 0.1.
    pub moisture_min: f64,
    /// 13C/12C ratio of VPDB; default 0.0111802 (Werner & Brand 2001).
    pub r_vpdb: f64,
    /// Carbon-use efficiency of the default network (dimensionless, [0, 1]); default 0.5. Only
    /// allowed when `pool` is absent.
    pub cue: Option<f64>,
    /// The pools (`[[pools.pool]]`); absent means the default four-pool network.
    pub pool: Option<Vec<PoolEntry>>,
}

impl Default for PoolsConfig {
    fn default() -> Self {
        PoolsConfig {
            method: MethodName::Exact,
            rtol: DEFAULT_RTOL,
            atol: DEFAULT_ATOL,
            temperature_response: TemperatureResponseName::Q10,
            q10: DEFAULT_Q10,
            t_ref_c: DEFAULT_T_REF_C,
            moisture_min: DEFAULT_MOISTURE_MIN,
            r_vpdb: R_VPDB_DEFAULT,
            cue: None,
            pool: None,
        }
    }
}

/// One `[[pools.pool]]` entry; see [`PoolSpec`] for the meaning and ranges of the fields.
#[derive(Debug, Clone, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct PoolEntry {
    /// Unique pool name.
    pub name: String,
    /// Turnover time, days (give this or `turnover_years`).
    #[serde(default)]
    pub turnover_days: Option<f64>,
    /// Turnover time, years of 365.25 days (give this or `turnover_days`).
    #[serde(default)]
    pub turnover_years: Option<f64>,
    /// Fraction of the outflow that is respired, [0, 1].
    pub respired_fraction: f64,
    /// `"autotrophic"` or `"heterotrophic"`.
    pub kind: PoolKind,
    /// Fractions of the non-respired outflow by target pool, or out of the system by the target
    /// `export`; unless `respired_fraction` is 1 they sum to 1. Default none.
    #[serde(default)]
    pub transfers: BTreeMap<String, f64>,
    /// Share of assimilation, [0, 1]; default 0.
    #[serde(default)]
    pub assimilation_share: f64,
    /// Whether turnover follows soil temperature and moisture; default: heterotrophic pools do.
    #[serde(default)]
    pub responds_to_environment: Option<bool>,
    /// ε of the respired flux, ‰; default 0.
    #[serde(default)]
    pub epsilon_respiration_permil: f64,
    /// ε of the transferred and exported flux, ‰; default 0.
    #[serde(default)]
    pub epsilon_transfer_permil: f64,
}

impl PoolEntry {
    fn to_spec(&self) -> Result<PoolSpec> {
        let turnover_days = match (self.turnover_days, self.turnover_years) {
            (Some(d), None) => d,
            (None, Some(y)) => y * DAYS_PER_YEAR,
            _ => {
                return Err(ModelError::InvalidConfig(format!(
                    "pool `{}`: give exactly one of turnover_days and turnover_years",
                    self.name
                )));
            }
        };
        let mut spec = PoolSpec::new(&self.name, turnover_days, self.respired_fraction, self.kind)
            .with_assimilation_share(self.assimilation_share)
            .with_epsilons(
                self.epsilon_respiration_permil,
                self.epsilon_transfer_permil,
            );
        if let Some(r) = self.responds_to_environment {
            spec.responds_to_environment = r;
        }
        spec.transfers = self
            .transfers
            .iter()
            .map(|(t, f)| (t.clone(), *f))
            .collect();
        Ok(spec)
    }

    fn from_spec(spec: &PoolSpec) -> Self {
        PoolEntry {
            name: spec.name.clone(),
            turnover_days: Some(spec.turnover_days),
            turnover_years: None,
            respired_fraction: spec.respired_fraction,
            kind: spec.kind,
            transfers: spec.transfers.iter().cloned().collect(),
            assimilation_share: spec.assimilation_share,
            responds_to_environment: Some(spec.responds_to_environment),
            epsilon_respiration_permil: spec.epsilon_respiration_permil,
            epsilon_transfer_permil: spec.epsilon_transfer_permil,
        }
    }
}

/// Top-level parameters reachable by [`PoolsConfig::set_param`].
const GLOBAL_PARAMS: [&str; 7] = [
    "rtol",
    "atol",
    "q10",
    "t_ref_c",
    "moisture_min",
    "r_vpdb",
    "cue",
];
/// Per-pool parameters reachable as `<pool>.<param>`.
const POOL_PARAMS: [&str; 6] = [
    "turnover_days",
    "turnover_years",
    "respired_fraction",
    "assimilation_share",
    "epsilon_respiration_permil",
    "epsilon_transfer_permil",
];

impl PoolsConfig {
    /// Validates everything and builds the network and the settings.
    pub fn build(&self) -> Result<(PoolNetwork, PoolSettings)> {
        let network = match (&self.pool, self.cue) {
            (None, cue) => PoolNetwork::default_four_pool_with_cue(cue.unwrap_or(DEFAULT_CUE))?,
            (Some(_), Some(_)) => {
                return Err(ModelError::InvalidConfig(
                    "`cue` applies to the default network only; with a pool list set each \
                     pool's respired_fraction"
                        .into(),
                ));
            }
            (Some(entries), None) => PoolNetwork::new(
                entries
                    .iter()
                    .map(PoolEntry::to_spec)
                    .collect::<Result<_>>()?,
            )?,
        };
        let method = match self.method {
            MethodName::Exact => Method::Exact,
            MethodName::Dopri5 => Method::Dopri5 {
                rtol: self.rtol,
                atol: self.atol,
            },
        };
        let temperature = match self.temperature_response {
            TemperatureResponseName::Q10 => TemperatureResponse::Q10 {
                q10: self.q10,
                t_ref_c: self.t_ref_c,
            },
            TemperatureResponseName::LloydTaylor => TemperatureResponse::LloydTaylor {
                t_ref_c: self.t_ref_c,
            },
        };
        let response = EnvironmentResponse::new(temperature, self.moisture_min)?;
        let settings = PoolSettings::new(method, response, self.r_vpdb)?;
        Ok((network, settings))
    }

    /// Overrides one parameter by a dotted path, for ensembles. Paths: `rtol`, `atol`, `q10`,
    /// `t_ref_c`, `moisture_min`, `r_vpdb`, `cue` (default network only), and per pool
    /// `<pool>.turnover_days`, `<pool>.turnover_years`, `<pool>.respired_fraction`,
    /// `<pool>.assimilation_share`, `<pool>.epsilon_respiration_permil`,
    /// `<pool>.epsilon_transfer_permil`, `<pool>.transfers.<target>` (an existing transfer).
    ///
    /// Setting a pool parameter while the default network is in use first writes the default
    /// network out as an explicit pool list (with the current `cue`, which is then cleared), so set
    /// `cue` before pool parameters. Values are range-checked by [`PoolsConfig::build`]; unknown
    /// paths are refused here, with the closest known path suggested.
    pub fn set_param(&mut self, path: &str, value: f64) -> Result<()> {
        match path {
            "rtol" => self.rtol = value,
            "atol" => self.atol = value,
            "q10" => self.q10 = value,
            "t_ref_c" => self.t_ref_c = value,
            "moisture_min" => self.moisture_min = value,
            "r_vpdb" => self.r_vpdb = value,
            "cue" => self.cue = Some(value),
            _ => return self.set_pool_param(path, value),
        }
        Ok(())
    }

    fn set_pool_param(&mut self, path: &str, value: f64) -> Result<()> {
        let unknown = |this: &Self| {
            let known = this.known_paths();
            ModelError::UnknownParameter {
                name: path.to_string(),
                suggestion: closest_name(path, known.iter().map(String::as_str)),
            }
        };
        let Some((pool_name, param)) = path.split_once('.') else {
            return Err(unknown(self));
        };
        let entries = self.explicit_entries()?;
        let Some(entry) = entries.iter_mut().find(|e| e.name == pool_name) else {
            return Err(unknown(self));
        };
        match param {
            "turnover_days" => {
                entry.turnover_days = Some(value);
                entry.turnover_years = None;
            }
            "turnover_years" => {
                entry.turnover_years = Some(value);
                entry.turnover_days = None;
            }
            "respired_fraction" => entry.respired_fraction = value,
            "assimilation_share" => entry.assimilation_share = value,
            "epsilon_respiration_permil" => entry.epsilon_respiration_permil = value,
            "epsilon_transfer_permil" => entry.epsilon_transfer_permil = value,
            other => match other
                .strip_prefix("transfers.")
                .and_then(|t| entry.transfers.get_mut(t))
            {
                Some(f) => *f = value,
                None => return Err(unknown(self)),
            },
        }
        Ok(())
    }

    /// The pool list, writing out the default network first if none is given.
    fn explicit_entries(&mut self) -> Result<&mut Vec<PoolEntry>> {
        if self.pool.is_none() {
            let net = PoolNetwork::default_four_pool_with_cue(self.cue.unwrap_or(DEFAULT_CUE))?;
            self.pool = Some(net.pools().iter().map(PoolEntry::from_spec).collect());
            self.cue = None;
        }
        Ok(self.pool.as_mut().expect("filled above"))
    }

    /// Every path `set_param` accepts with the current pools.
    pub fn known_paths(&self) -> Vec<String> {
        let mut out: Vec<String> = GLOBAL_PARAMS.iter().map(|s| s.to_string()).collect();
        let names: Vec<(String, Vec<String>)> = match &self.pool {
            Some(entries) => entries
                .iter()
                .map(|e| (e.name.clone(), e.transfers.keys().cloned().collect()))
                .collect(),
            None => PoolNetwork::default_four_pool()
                .pools()
                .iter()
                .map(|p| {
                    (
                        p.name.clone(),
                        p.transfers.iter().map(|(t, _)| t.clone()).collect(),
                    )
                })
                .collect(),
        };
        for (name, targets) in names {
            out.extend(POOL_PARAMS.iter().map(|p| format!("{name}.{p}")));
            out.extend(targets.iter().map(|t| format!("{name}.transfers.{t}")));
        }
        out
    }
}
