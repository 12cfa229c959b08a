//! The pool network as data: pools with turnover times, respired fractions, transfers and
//! post-photosynthetic fractionations, validated once when the network is built.
//!
//! The network is a linear donor-controlled compartment model: each pool loses carbon at
//! k = 1/τ times its content; a fraction of that outflow is respired, the rest is passed on to
//! other pools by fixed fractions or exported (it leaves the system without being respired, e.g.
//! harvest or leaching) by an explicit fraction named [`EXPORT`]. The respired fraction, the
//! transfers and the export of a pool must account for all its outflow: carbon that would leave by
//! no named path is an error, not a silent loss.

use std::collections::HashSet;

use serde::{Deserialize, Serialize};

use crate::error::{ModelError, Result, check_range};

/// Days per year used to convert turnover times given in years (Julian year).
pub const DAYS_PER_YEAR: f64 = 365.25;

/// Largest allowed turnover time, days (about 2700 years).
pub const MAX_TURNOVER_DAYS: f64 = 1e6;

/// The reserved transfer target that sends carbon out of the system without respiration
/// (`transfers = { soil = 0.3, export = 0.7 }`); no pool may take this name.
pub const EXPORT: &str = "export";

/// Tolerance on the sum of a pool's transfer and export fractions (round-off of decimal input).
pub const FRACTION_SUM_TOL: f64 = 1e-9;

/// Largest allowed |ε| of a post-photosynthetic fractionation, ‰.
pub const MAX_ABS_EPSILON_PERMIL: f64 = 100.0;

/// Whose respiration a pool's respired flux counts as (`"autotrophic"` or `"heterotrophic"` in
/// a site file).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PoolKind {
    /// Plant (autotrophic) respiration, Ra.
    Autotrophic,
    /// Microbial (heterotrophic) respiration, Rh.
    Heterotrophic,
}

/// One pool as the user describes it (not yet validated; see [`PoolNetwork::new`]).
#[derive(Debug, Clone, PartialEq)]
pub struct PoolSpec {
    /// Unique name, used in transfers and parameter paths (e.g. `soil`).
    pub name: String,
    /// Turnover time at reference conditions, days, in (0, 1e6].
    pub turnover_days: f64,
    /// Fraction of the pool's outflow that is respired, in [0, 1].
    pub respired_fraction: f64,
    /// Whether the respired flux is autotrophic or heterotrophic.
    pub kind: PoolKind,
    /// Fractions of the non-respired outflow sent to other pools, by target name, or out of the
    /// system by the target [`EXPORT`]; each in [0, 1]. Unless the pool respires all its outflow
    /// they sum to 1 (±[`FRACTION_SUM_TOL`]).
    pub transfers: Vec<(String, f64)>,
    /// Share of assimilation that enters this pool, in [0, 1]; the shares of all pools sum to 1.
    pub assimilation_share: f64,
    /// Whether the turnover rate is scaled by the soil temperature and moisture response.
    pub responds_to_environment: bool,
    /// Fractionation of the respired flux against the pool, ‰ (flux ratio = pool ratio·(1 + ε/1000)).
    pub epsilon_respiration_permil: f64,
    /// Fractionation of the transferred and exported flux against the pool, ‰.
    pub epsilon_transfer_permil: f64,
}

impl PoolSpec {
    /// A pool with no transfers, no assimilation, ε = 0, responding to the environment when it is
    /// heterotrophic. `turnover_days` in days; `respired_fraction` in [0, 1].
    pub fn new(name: &str, turnover_days: f64, respired_fraction: f64, kind: PoolKind) -> Self {
        PoolSpec {
            name: name.to_string(),
            turnover_days,
            respired_fraction,
            kind,
            transfers: Vec::new(),
            assimilation_share: 0.0,
            responds_to_environment: kind == PoolKind::Heterotrophic,
            epsilon_respiration_permil: 0.0,
            epsilon_transfer_permil: 0.0,
        }
    }

    /// Adds a transfer of `fraction` (of the non-respired outflow, in [0, 1]) to pool `target`
    /// (or out of the system when `target` is [`EXPORT`]).
    pub fn transfer_to(mut self, target: &str, fraction: f64) -> Self {
        self.transfers.push((target.to_string(), fraction));
        self
    }

    /// Sets the share of assimilation the pool receives, in [0, 1].
    pub fn with_assimilation_share(mut self, share: f64) -> Self {
        self.assimilation_share = share;
        self
    }

    /// Sets the fractionations of the respired and of the transferred flux, ‰.
    pub fn with_epsilons(mut self, respiration_permil: f64, transfer_permil: f64) -> Self {
        self.epsilon_respiration_permil = respiration_permil;
        self.epsilon_transfer_permil = transfer_permil;
        self
    }
}

/// A validated pool network. Pools keep the order in which they were given.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolNetwork {
    specs: Vec<PoolSpec>,
    /// Transfers resolved to indices: `(source, target, fraction)`.
    links: Vec<(usize, usize, f64)>,
}

/// Default carbon-use efficiency of the default network (NPP/GPP), dimensionless; about 0.5 is
/// common practice (from memory).
pub const DEFAULT_CUE: f64 = 0.5;

impl PoolNetwork {
    /// Validates the pools and builds the network.
    ///
    /// Rejected, with the pool (and target) named: empty list, duplicate or empty names, a pool
    /// named [`EXPORT`], turnover outside (0, 1e6] days, fractions outside [0, 1], a pool that
    /// respires less than all its outflow and whose transfer and export fractions do not sum to 1
    /// (carbon would vanish, or be created),
    /// transfers to the pool itself or to unknown pools, |ε| above 100‰, assimilation shares not
    /// summing to 1 (±1e-9), and networks where some carbon could never leave (a closed loop with
    /// no respiration or export), which would have no steady state.
    pub fn new(specs: Vec<PoolSpec>) -> Result<Self> {
        if specs.is_empty() {
            return Err(ModelError::InvalidConfig(
                "the pool network has no pools".into(),
            ));
        }
        let mut seen = HashSet::new();
        for p in &specs {
            if p.name.trim().is_empty() {
                return Err(ModelError::InvalidConfig("a pool has an empty name".into()));
            }
            if p.name == EXPORT {
                return Err(ModelError::InvalidConfig(format!(
                    "a pool is named `{EXPORT}`, which is reserved for the export of carbon out of \
                     the system (`transfers = {{ {EXPORT} = ... }}`): rename the pool"
                )));
            }
            if !seen.insert(p.name.as_str()) {
                return Err(ModelError::InvalidConfig(format!(
                    "pool `{}` is defined twice",
                    p.name
                )));
            }
        }
        let mut links = Vec::new();
        let mut share_sum = 0.0;
        for (i, p) in specs.iter().enumerate() {
            let n = &p.name;
            // Turnover must be strictly positive: the smallest positive f64 is the lower bound.
            check_range(
                &format!("{n}.turnover_days"),
                p.turnover_days,
                f64::MIN_POSITIVE,
                MAX_TURNOVER_DAYS,
            )?;
            check_range(
                &format!("{n}.respired_fraction"),
                p.respired_fraction,
                0.0,
                1.0,
            )?;
            check_range(
                &format!("{n}.assimilation_share"),
                p.assimilation_share,
                0.0,
                1.0,
            )?;
            for (label, eps) in [
                ("epsilon_respiration_permil", p.epsilon_respiration_permil),
                ("epsilon_transfer_permil", p.epsilon_transfer_permil),
            ] {
                check_range(
                    &format!("{n}.{label}"),
                    eps,
                    -MAX_ABS_EPSILON_PERMIL,
                    MAX_ABS_EPSILON_PERMIL,
                )?;
            }
            share_sum += p.assimilation_share;
            let mut sum = 0.0;
            for (target, f) in &p.transfers {
                check_range(&format!("{n}.transfers.{target}"), *f, 0.0, 1.0)?;
                if target == n {
                    return Err(ModelError::InvalidConfig(format!(
                        "pool `{n}` transfers to itself"
                    )));
                }
                sum += f;
                if target == EXPORT {
                    continue;
                }
                let j = specs
                    .iter()
                    .position(|q| &q.name == target)
                    .ok_or_else(|| {
                        ModelError::InvalidConfig(format!(
                            "pool `{n}` transfers to unknown pool `{target}`"
                        ))
                    })?;
                if links.iter().any(|&(s, t, _)| s == i && t == j) {
                    return Err(ModelError::InvalidConfig(format!(
                        "pool `{n}` lists its transfer to `{target}` twice"
                    )));
                }
                links.push((i, j, *f));
            }
            if p.transfers.iter().filter(|(t, _)| t == EXPORT).count() > 1 {
                return Err(ModelError::InvalidConfig(format!(
                    "pool `{n}` lists `{EXPORT}` twice"
                )));
            }
            if sum > 1.0 + FRACTION_SUM_TOL {
                return Err(ModelError::InvalidConfig(format!(
                    "pool `{n}`: transfer and export fractions sum to {sum}, more than 1"
                )));
            }
            let kept = 1.0 - p.respired_fraction;
            if kept > 0.0 && sum < 1.0 - FRACTION_SUM_TOL {
                return Err(ModelError::InvalidConfig(format!(
                    "pool `{n}`: it respires {r} of its outflow and its transfer and export fractions \
                     sum to {sum}, so {lost:.4} of the carbon leaving it would go nowhere; make the \
                     fractions sum to 1, sending the rest out of the system explicitly with \
                     `{EXPORT} = {rest:.4}` in its transfers if that is meant",
                    r = p.respired_fraction,
                    lost = kept * (1.0 - sum),
                    rest = 1.0 - sum,
                )));
            }
        }
        if (share_sum - 1.0).abs() > 1e-9 {
            return Err(ModelError::InvalidConfig(format!(
                "assimilation shares sum to {share_sum}, not 1"
            )));
        }
        let net = PoolNetwork { specs, links };
        net.check_drains()?;
        Ok(net)
    }

    /// Every pool must reach, through transfers, a pool that respires or exports something;
    /// otherwise carbon piles up for ever and the rate matrix is singular.
    fn check_drains(&self) -> Result<()> {
        let n = self.specs.len();
        let mut drains: Vec<bool> = (0..n).map(|i| self.leak_fraction(i) > 0.0).collect();
        // Propagate "reaches a drain" backwards along links until nothing changes (n passes at most).
        for _ in 0..n {
            for &(s, t, f) in &self.links {
                if f > 0.0 && drains[t] {
                    drains[s] = true;
                }
            }
        }
        match drains.iter().position(|d| !d) {
            Some(i) => Err(ModelError::InvalidConfig(format!(
                "carbon entering pool `{}` can never leave the system (no respiration or export \
                 downstream): no steady state",
                self.specs[i].name
            ))),
            None => Ok(()),
        }
    }

    /// Fraction of pool `i`'s outflow that leaves the system (respired or exported).
    fn leak_fraction(&self, i: usize) -> f64 {
        let p = &self.specs[i];
        p.respired_fraction + (1.0 - p.respired_fraction) * self.export_fraction(i)
    }

    /// The default four-pool network, with carbon-use efficiency [`DEFAULT_CUE`].
    pub fn default_four_pool() -> Self {
        Self::default_four_pool_with_cue(DEFAULT_CUE)
            .expect("the default network and CUE are valid")
    }

    /// The default four-pool network with a given carbon-use efficiency `cue` in [0, 1]
    /// (dimensionless, NPP/GPP). Defaults, all *from memory* or common practice, to be replaced by
    /// site values where known:
    ///
    /// | pool | turnover | respired fraction | kind | passes the rest to |
    /// |---|---|---|---|---|
    /// | `leaf_labile` | 1 day | (1 − CUE)/2 | autotrophic | `transport_labile` (all) |
    /// | `transport_labile` | 5 days | makes total Ra = (1 − CUE)·GPP | autotrophic | `litter` (all) |
    /// | `litter` (structural biomass and litter) | 2 years | 0.7 | heterotrophic | `soil` (all) |
    /// | `soil` (soil organic matter) | 30 years | 1 | heterotrophic | — |
    ///
    /// All assimilation enters `leaf_labile`; all ε are 0; nothing is exported, so at steady state
    /// every fixed carbon atom is respired. The 0.7/0.3 split of litter decay between CO2 and
    /// humus is common practice (from memory).
    pub fn default_four_pool_with_cue(cue: f64) -> Result<Self> {
        let cue = check_range("cue", cue, 0.0, 1.0)?;
        let (r_leaf, r_transport) = labile_respired_fractions(cue);
        Self::new(vec![
            PoolSpec::new("leaf_labile", 1.0, r_leaf, PoolKind::Autotrophic)
                .transfer_to("transport_labile", 1.0)
                .with_assimilation_share(1.0),
            PoolSpec::new("transport_labile", 5.0, r_transport, PoolKind::Autotrophic)
                .transfer_to("litter", 1.0),
            PoolSpec::new("litter", 2.0 * DAYS_PER_YEAR, 0.7, PoolKind::Heterotrophic)
                .transfer_to("soil", 1.0),
            PoolSpec::new("soil", 30.0 * DAYS_PER_YEAR, 1.0, PoolKind::Heterotrophic),
        ])
    }

    /// Number of pools.
    pub fn len(&self) -> usize {
        self.specs.len()
    }

    /// Always false: a valid network has at least one pool.
    pub fn is_empty(&self) -> bool {
        self.specs.is_empty()
    }

    /// The pools, in order.
    pub fn pools(&self) -> &[PoolSpec] {
        &self.specs
    }

    /// Index of the pool called `name`, if any.
    pub fn index_of(&self, name: &str) -> Option<usize> {
        self.specs.iter().position(|p| p.name == name)
    }

    /// Transfers as `(source index, target index, fraction of non-respired outflow)`.
    pub fn links(&self) -> &[(usize, usize, f64)] {
        &self.links
    }

    /// Fraction of pool `i`'s non-respired outflow that is exported out of the system (its
    /// [`EXPORT`] transfer; 0 when it has none).
    pub fn export_fraction(&self, i: usize) -> f64 {
        self.specs[i]
            .transfers
            .iter()
            .filter(|(t, _)| t == EXPORT)
            .map(|(_, f)| f)
            .sum()
    }

    /// The specs, for rebuilding a modified network.
    pub fn into_specs(self) -> Vec<PoolSpec> {
        self.specs
    }
}

/// Respired fractions of the two labile pools that make autotrophic respiration (1 − CUE) of
/// assimilation: the leaf pool respires half of it, the transport pool the rest of what reaches it.
pub(crate) fn labile_respired_fractions(cue: f64) -> (f64, f64) {
    let r_leaf = (1.0 - cue) / 2.0;
    // r_leaf < 1 always (cue ≥ 0), so the division is safe.
    let r_transport = ((1.0 - cue) - r_leaf) / (1.0 - r_leaf);
    (r_leaf, r_transport)
}
