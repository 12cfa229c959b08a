//! Steady-state diagnostics: pool sizes, δ13C per pool and the mean age of respired carbon.
//!
//! Ages follow the moment method for linear compartment systems at steady state (Rasmussen et
//! al. 2016, J. Math. Biol., from memory): the first age moment m of the pool contents x* solves
//! 0 = M·m + x* (ageing adds one day per day of content), so m = (−M)⁻¹·x* and pool i's mean age is
//! m_i/x*_i. A well-mixed pool releases carbon of its own age distribution, so the mean age of a
//! respiration path is the mean of the pool ages weighted by that path's flux from each pool.
//! The system's mean transit time is total storage over throughput (Bolin & Rodhe 1973, Tellus,
//! from memory); it equals the mean age of everything leaving (respired and exported).

use super::expm::solve_in_place;
use super::integrate::PoolModel;
use super::state::Forcing;
use crate::error::{ModelError, Result, check_input};

/// One pool at steady state.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolReport {
    /// Pool name.
    pub name: String,
    /// Carbon content, gC m⁻².
    pub c_g_m2: f64,
    /// δ13C, ‰ vs VPDB; `None` for a pool that receives no carbon.
    pub d13c_permil: Option<f64>,
    /// Mean age of the pool's carbon, days; `None` for a pool that receives no carbon.
    pub mean_age_days: Option<f64>,
}

/// The network at steady state under constant forcing.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyStateReport {
    /// Per pool, in network order.
    pub pools: Vec<PoolReport>,
    /// Mean age of autotrophic respiration, days (`None` if there is none).
    pub mean_age_ra_days: Option<f64>,
    /// Mean age of heterotrophic respiration, days (`None` if there is none).
    pub mean_age_rh_days: Option<f64>,
    /// Mean age of all respiration, days (`None` if there is none).
    pub mean_age_respired_days: Option<f64>,
    /// Mean transit time: total storage / assimilation, days.
    pub mean_transit_time_days: f64,
}

impl PoolModel {
    /// Pool sizes, δ and mean ages at the steady state of constant `forcing`, whose assimilation
    /// must be positive (gC m⁻² day⁻¹).
    pub fn steady_state_report(&self, forcing: &Forcing) -> Result<SteadyStateReport> {
        self.steady_state_report_at(forcing, None)
    }

    /// [`PoolModel::steady_state_report`] with the turnover multiplier `turnover_factor`
    /// (dimensionless) when given; see [`PoolModel::steady_state_at`].
    pub fn steady_state_report_at(
        &self,
        forcing: &Forcing,
        turnover_factor: Option<f64>,
    ) -> Result<SteadyStateReport> {
        check_input(
            "assimilation_gc_m2_day",
            forcing.assimilation_gc_m2_day,
            f64::MIN_POSITIVE,
            f64::MAX,
        )?;
        let state = self.steady_state_at(forcing, turnover_factor)?;
        let env = self.turnover_factor(forcing, turnover_factor)?;
        let n = self.network().len();
        let x = state.c12_g_m2();
        let (mut mat, _) = self.pool_block(env, false);
        let mut m1: Vec<f64> = x.iter().map(|v| -v).collect();
        solve_in_place(&mut mat, n, &mut m1, 1, n, 1)?;
        let ages: Vec<Option<f64>> = (0..n).map(|i| (x[i] > 0.0).then(|| m1[i] / x[i])).collect();
        let r_std = self.settings().r_standard();
        let pools = self
            .network()
            .pools()
            .iter()
            .enumerate()
            .map(|(i, p)| PoolReport {
                name: p.name.clone(),
                c_g_m2: state.pool_c_g_m2(i),
                d13c_permil: state.pool_d13c_permil(i, r_std),
                mean_age_days: ages[i],
            })
            .collect();
        // Flux-weighted mean of pool ages over the pools feeding a path.
        let rates = self.outflow_rates(env);
        let weighted = |keep: &dyn Fn(bool) -> bool| {
            let (mut w, mut wa) = (0.0, 0.0);
            for i in 0..n {
                let (resp, _, auto) = rates[i];
                if keep(auto) && x[i] > 0.0 {
                    w += resp * x[i];
                    wa += resp * x[i] * m1[i] / x[i];
                }
            }
            (w > 0.0).then(|| wa / w)
        };
        let input12: f64 = rates
            .iter()
            .zip(x)
            .map(|(&(resp, export, _), &xi)| (resp + export) * xi)
            .sum();
        if input12 <= 0.0 {
            return Err(ModelError::Numerical("steady state with no outflow".into()));
        }
        Ok(SteadyStateReport {
            pools,
            mean_age_ra_days: weighted(&|auto| auto),
            mean_age_rh_days: weighted(&|auto| !auto),
            mean_age_respired_days: weighted(&|_| true),
            // Outflow equals inflow at steady state; 12C alone gives the same ratio as total C.
            mean_transit_time_days: x.iter().sum::<f64>() / input12,
        })
    }
}
