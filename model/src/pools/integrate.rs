//! Integration of the pools over one forcing step, forcing held constant.
//!
//! For each isotope the pools obey the linear system y' = M·y + s·A, where M holds the turnover
//! rates (scaled by the environmental factor for responsive pools) and the transfers, s the
//! assimilation shares and A that isotope's assimilation. Each outgoing flux of pool j carries
//! 12C at k_j·y12_j times its share, and 13C at k_j·α·y13_j times its share with α = 1 + ε/1000,
//! so its 13C/12C ratio is α times the pool's. Three accumulators (Ra, Rh, export) collect what
//! leaves, and a constant "input" state carries A, so the system augmented to n + 4 states is
//! z' = B·z with every column of B except the input's summing to zero: mass is conserved to
//! round-off by either method.
//!
//! - [`Method::Exact`]: z(h) = e^{B h}·z(0), the exact solution of the constant-coefficient
//!   system (the augmented-matrix form of y(h) = e^{Mh}y0 + ∫e^{Ms}ds·sA). e^{Bh} is cached
//!   and reused while the step length and environmental factor repeat.
//! - [`Method::Dopri5`]: Dormand–Prince 5(4) from `ode_solvers` on the same system, with sparse
//!   output (its default dense output extrapolates the end value from the first internal step).
//!
//! `Exact` is the default: it is exact to round-off whatever the step (hourly or yearly), and in
//! the benchmark (`model/benches/pools.rs`) it is several times faster than Dopri5 at rtol 1e-10.

use std::cell::Cell;

use ode_solvers::{DVector, Dopri5, OutputType, System};

use super::expm::{Expm, solve_in_place};
use super::network::{PoolKind, PoolNetwork};
use super::response::EnvironmentResponse;
use super::state::{Flux, Forcing, PoolState, R_VPDB_DEFAULT, StepResult};
use crate::error::{ModelError, Result, check_input, check_range};

/// Default relative tolerance of Dopri5, dimensionless.
pub const DEFAULT_RTOL: f64 = 1e-10;
/// Default absolute tolerance of Dopri5, gC m⁻² (13C pools are ~1% of 12C, so keep it small).
pub const DEFAULT_ATOL: f64 = 1e-12;
/// Number of accumulator states (Ra, Rh, export) at the end of the augmented system.
const ACCUMULATORS: usize = 3;
/// Longest accepted step, days (100 years; spin-up uses 1-year steps).
pub const MAX_STEP_DAYS: f64 = 36_525.0;

/// How a step is integrated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// Exact exponential of the linear system (default).
    Exact,
    /// Adaptive Dormand–Prince 5(4) from `ode_solvers` with sparse output.
    Dopri5 {
        /// Relative tolerance, dimensionless, in [1e-14, 1e-2].
        rtol: f64,
        /// Absolute tolerance, gC m⁻², in [1e-20, 1].
        atol: f64,
    },
}

impl Default for Method {
    /// [`Method::Exact`].
    fn default() -> Self {
        Method::Exact
    }
}

impl Method {
    /// Dopri5 with the default tolerances ([`DEFAULT_RTOL`], [`DEFAULT_ATOL`]).
    pub fn dopri5() -> Self {
        Method::Dopri5 {
            rtol: DEFAULT_RTOL,
            atol: DEFAULT_ATOL,
        }
    }

    fn validate(self) -> Result<Self> {
        if let Method::Dopri5 { rtol, atol } = self {
            check_range("rtol", rtol, 1e-14, 1e-2)?;
            check_range("atol", atol, 1e-20, 1.0)?;
        }
        Ok(self)
    }
}

/// Validated settings of the pool model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoolSettings {
    method: Method,
    response: EnvironmentResponse,
    r_standard: f64,
}

impl Default for PoolSettings {
    /// Exact method, Q10 = 2 at 10 °C with moisture floor 0.1, R_VPDB = 0.0111802.
    fn default() -> Self {
        PoolSettings {
            method: Method::Exact,
            response: EnvironmentResponse::default(),
            r_standard: R_VPDB_DEFAULT,
        }
    }
}

impl PoolSettings {
    /// Validates the method's tolerances and the standard's ratio `r_standard` (13C/12C, in
    /// [0.0105, 0.0115], which spans every VPDB value in use).
    pub fn new(method: Method, response: EnvironmentResponse, r_standard: f64) -> Result<Self> {
        Ok(PoolSettings {
            method: method.validate()?,
            response,
            r_standard: check_range("r_vpdb", r_standard, 0.0105, 0.0115)?,
        })
    }

    /// The integration method.
    pub fn method(&self) -> Method {
        self.method
    }

    /// The environmental response.
    pub fn response(&self) -> EnvironmentResponse {
        self.response
    }

    /// 13C/12C ratio of the δ standard.
    pub fn r_standard(&self) -> f64 {
        self.r_standard
    }
}

/// Per-pool rate constants derived once from the network.
#[derive(Debug, Clone)]
struct Rates {
    k_ref_per_day: Vec<f64>,
    respired: Vec<f64>,
    responsive: Vec<bool>,
    autotrophic: Vec<bool>,
    alpha_resp: Vec<f64>,
    alpha_transfer: Vec<f64>,
    export: Vec<f64>,
    shares: Vec<f64>,
    links: Vec<(usize, usize, f64)>,
    any_epsilon: bool,
}

/// Cached exponentials for one (step, environmental factor) pair.
#[derive(Debug, Clone)]
struct Cache {
    step_days: f64,
    env_factor: f64,
    e12: Vec<f64>,
    e13: Vec<f64>,
}

/// The pool model: a network, its settings and the working buffers of the integrator.
#[derive(Debug, Clone)]
pub struct PoolModel {
    network: PoolNetwork,
    settings: PoolSettings,
    rates: Rates,
    expm: Expm,
    scratch: Vec<f64>,
    cache: Option<Cache>,
    /// The last (soil temperature, moisture) → turnover factor of the response: within a day the
    /// caller holds both, so the factor is reused rather than recomputed.
    last_factor: Cell<Option<(u64, u64, f64)>>,
}

impl PoolModel {
    /// A model of `network` with `settings`.
    pub fn new(network: PoolNetwork, settings: PoolSettings) -> Self {
        let n = network.len();
        let specs = network.pools();
        let rates = Rates {
            k_ref_per_day: specs.iter().map(|p| 1.0 / p.turnover_days).collect(),
            respired: specs.iter().map(|p| p.respired_fraction).collect(),
            responsive: specs.iter().map(|p| p.responds_to_environment).collect(),
            autotrophic: specs
                .iter()
                .map(|p| p.kind == PoolKind::Autotrophic)
                .collect(),
            alpha_resp: specs
                .iter()
                .map(|p| 1.0 + p.epsilon_respiration_permil / 1000.0)
                .collect(),
            alpha_transfer: specs
                .iter()
                .map(|p| 1.0 + p.epsilon_transfer_permil / 1000.0)
                .collect(),
            export: (0..n).map(|i| network.export_fraction(i)).collect(),
            shares: specs.iter().map(|p| p.assimilation_share).collect(),
            links: network.links().to_vec(),
            any_epsilon: specs
                .iter()
                .any(|p| p.epsilon_respiration_permil != 0.0 || p.epsilon_transfer_permil != 0.0),
        };
        let m = n + 4;
        PoolModel {
            network,
            settings,
            rates,
            expm: Expm::new(m),
            scratch: vec![0.0; m * m],
            cache: None,
            last_factor: Cell::new(None),
        }
    }

    /// The network.
    pub fn network(&self) -> &PoolNetwork {
        &self.network
    }

    /// The settings.
    pub fn settings(&self) -> &PoolSettings {
        &self.settings
    }

    /// Size of the augmented system: pools, input, Ra, Rh, export.
    fn dim(&self) -> usize {
        self.network.len() + 4
    }

    /// Fills `out` (m×m row-major, per day) with the augmented rate matrix B of one isotope at
    /// environmental factor `env`, times `scale` (the step length for the exact method).
    fn rate_matrix(&self, env: f64, heavy: bool, scale: f64, out: &mut [f64]) {
        let r = &self.rates;
        let n = self.network.len();
        let m = n + 4;
        let (ra, rh, ex) = (n + 1, n + 2, n + 3);
        out.fill(0.0);
        for j in 0..n {
            let k = r.k_ref_per_day[j] * if r.responsive[j] { env } else { 1.0 } * scale;
            let (a_r, a_t) = if heavy {
                (r.alpha_resp[j], r.alpha_transfer[j])
            } else {
                (1.0, 1.0)
            };
            let resp = k * r.respired[j] * a_r;
            let moved = k * (1.0 - r.respired[j]) * a_t;
            out[j * m + j] = -(resp + moved);
            let acc = if r.autotrophic[j] { ra } else { rh };
            out[acc * m + j] = resp;
            out[ex * m + j] = moved * r.export[j];
            out[j * m + n] = r.shares[j] * scale;
        }
        for &(s, t, f) in &r.links {
            let k = r.k_ref_per_day[s] * if r.responsive[s] { env } else { 1.0 } * scale;
            let a_t = if heavy { r.alpha_transfer[s] } else { 1.0 };
            out[t * m + s] += k * (1.0 - r.respired[s]) * a_t * f;
        }
    }

    /// Checks a state's size against the network.
    fn check_state(&self, state: &PoolState) -> Result<()> {
        if state.len() == self.network.len() {
            Ok(())
        } else {
            Err(ModelError::InvalidConfig(format!(
                "pool state has {} pools, the network has {}",
                state.len(),
                self.network.len()
            )))
        }
    }

    /// Advances `state` by `step_days` (days, in (0, 36525]) under constant `forcing`, and
    /// returns what left the pools over the step (gC m⁻², with 12C and 13C).
    pub fn step(
        &mut self,
        state: &mut PoolState,
        forcing: &Forcing,
        step_days: f64,
    ) -> Result<StepResult> {
        self.step_with(self.settings.method, state, forcing, step_days, None)
    }

    /// [`PoolModel::step`] with the exact method whatever the settings (for spin-up), and with
    /// the turnover multiplier `turnover_factor` instead of the one at the forcing's soil
    /// temperature and moisture when it is given.
    pub(crate) fn step_exactly(
        &mut self,
        state: &mut PoolState,
        forcing: &Forcing,
        step_days: f64,
        turnover_factor: Option<f64>,
    ) -> Result<StepResult> {
        self.step_with(Method::Exact, state, forcing, step_days, turnover_factor)
    }

    /// The multiplier of the responsive pools' turnover rates: `turnover_factor` when given
    /// (checked: finite, in (0, 1e3]), else the response at the forcing's soil temperature and
    /// moisture.
    pub(crate) fn turnover_factor(
        &self,
        forcing: &Forcing,
        turnover_factor: Option<f64>,
    ) -> Result<f64> {
        match turnover_factor {
            Some(f) => check_input("turnover_factor", f, f64::MIN_POSITIVE, 1e3),
            None => {
                let key = (forcing.t_soil_c.to_bits(), forcing.moisture.to_bits());
                if let Some((t, m, f)) = self.last_factor.get()
                    && (t, m) == key
                {
                    return Ok(f);
                }
                let f = self
                    .settings
                    .response
                    .factor(forcing.t_soil_c, forcing.moisture)?;
                self.last_factor.set(Some((key.0, key.1, f)));
                Ok(f)
            }
        }
    }

    fn step_with(
        &mut self,
        method: Method,
        state: &mut PoolState,
        forcing: &Forcing,
        step_days: f64,
        turnover_factor: Option<f64>,
    ) -> Result<StepResult> {
        self.check_state(state)?;
        let h = check_input("step_days", step_days, f64::MIN_POSITIVE, MAX_STEP_DAYS)?;
        let (in12, in13) = forcing.isotope_inputs(self.settings.r_standard)?;
        let env = self.turnover_factor(forcing, turnover_factor)?;
        let (acc12, acc13) = match method {
            Method::Exact => self.step_exact(state, in12, in13, env, h)?,
            Method::Dopri5 { rtol, atol } => {
                self.step_dopri5(state, in12, in13, env, h, rtol, atol)?
            }
        };
        let flux = |i: usize| Flux {
            c12_g_m2: acc12[i],
            c13_g_m2: acc13[i],
        };
        Ok(StepResult {
            ra: flux(0),
            rh: flux(1),
            export: flux(2),
            r_standard: self.settings.r_standard,
        })
    }

    /// Exact step; returns the (Ra, Rh, export) accumulators of each isotope.
    fn step_exact(
        &mut self,
        state: &mut PoolState,
        in12: f64,
        in13: f64,
        env: f64,
        h: f64,
    ) -> Result<([f64; 3], [f64; 3])> {
        let hit = self
            .cache
            .as_ref()
            .is_some_and(|c| c.step_days == h && c.env_factor == env);
        if !hit {
            let m = self.dim();
            let mut a = std::mem::take(&mut self.scratch);
            let mut cache = self.cache.take().unwrap_or_else(|| Cache {
                step_days: h,
                env_factor: env,
                e12: vec![0.0; m * m],
                e13: vec![0.0; m * m],
            });
            self.rate_matrix(env, false, h, &mut a);
            self.expm.exp(&a, ACCUMULATORS, &mut cache.e12)?;
            if self.rates.any_epsilon {
                self.rate_matrix(env, true, h, &mut a);
                self.expm.exp(&a, ACCUMULATORS, &mut cache.e13)?;
            } else {
                cache.e13.copy_from_slice(&cache.e12);
            }
            cache.step_days = h;
            cache.env_factor = env;
            self.scratch = a;
            self.cache = Some(cache);
        }
        let cache = self.cache.as_ref().expect("filled above");
        let acc12 = apply(&cache.e12, &mut state.c12, in12);
        let acc13 = apply(&cache.e13, &mut state.c13, in13);
        Ok((acc12, acc13))
    }

    /// Dopri5 step on both isotopes at once; returns the accumulators of each isotope.
    #[allow(clippy::too_many_arguments)]
    fn step_dopri5(
        &self,
        state: &mut PoolState,
        in12: f64,
        in13: f64,
        env: f64,
        h: f64,
        rtol: f64,
        atol: f64,
    ) -> Result<([f64; 3], [f64; 3])> {
        let (sys, y0) = self.ode_system(state, in12, in13, env);
        let n = self.network.len();
        let m = n + 4;
        let mut solver = Dopri5::new(sys, 0.0, h, h, y0, rtol, atol);
        solver.set_output(OutputType::Sparse);
        solver
            .integrate()
            .map_err(|e| ModelError::Numerical(format!("Dopri5 pool step: {e:?}")))?;
        let y = solver
            .y_out()
            .last()
            .ok_or_else(|| ModelError::Numerical("Dopri5 returned no output".into()))?;
        state.c12.copy_from_slice(&y.as_slice()[..n]);
        state.c13.copy_from_slice(&y.as_slice()[m..m + n]);
        let acc = |o: usize| [y[o + n + 1], y[o + n + 2], y[o + n + 3]];
        Ok((acc(0), acc(m)))
    }

    /// The augmented linear system of both isotopes (12C block, then 13C block) and its start
    /// vector, for an ODE solver.
    fn ode_system(
        &self,
        state: &PoolState,
        in12: f64,
        in13: f64,
        env: f64,
    ) -> (LinearSystem, DVector<f64>) {
        let n = self.network.len();
        let m = n + 4;
        let mut b12 = vec![0.0; m * m];
        let mut b13 = vec![0.0; m * m];
        self.rate_matrix(env, false, 1.0, &mut b12);
        self.rate_matrix(env, true, 1.0, &mut b13);
        let mut y0 = DVector::zeros(2 * m);
        for i in 0..n {
            y0[i] = state.c12[i];
            y0[m + i] = state.c13[i];
        }
        y0[n] = in12;
        y0[m + n] = in13;
        (LinearSystem { m, b12, b13 }, y0)
    }

    /// Steady state under constant `forcing` (step length plays no part): solves M·y = −s·A for
    /// each isotope directly.
    pub fn steady_state(&self, forcing: &Forcing) -> Result<PoolState> {
        self.steady_state_at(forcing, None)
    }

    /// Steady state under constant assimilation, with the responsive pools' turnover multiplied
    /// by `turnover_factor` (dimensionless, in (0, 1e3]) when given, instead of the response at
    /// the forcing's soil temperature and moisture. For a year of changing weather, the steady
    /// state of the year's mean factor — the mean of f(T)·g(θ) over the year, not f at the mean
    /// T — is the state a repeating year returns to, up to the covariance of input and turnover
    /// within the year (the pools' carbon balance is linear in the rates: dC/dt = I − k·f(t)·C,
    /// whose yearly mean vanishes for a C that hardly moves within the year when
    /// C = Ī/(k·f̄); common practice, derivation here).
    pub fn steady_state_at(
        &self,
        forcing: &Forcing,
        turnover_factor: Option<f64>,
    ) -> Result<PoolState> {
        let (in12, in13) = forcing.isotope_inputs(self.settings.r_standard)?;
        let env = self.turnover_factor(forcing, turnover_factor)?;
        let c12 = self.solve_pools(env, false, in12)?;
        let c13 = self.solve_pools(env, true, in13)?;
        Ok(PoolState { c12, c13 })
    }

    /// Solves M·y = −rhs_scale·s (M the pool block of the rate matrix, per day).
    fn solve_pools(&self, env: f64, heavy: bool, input: f64) -> Result<Vec<f64>> {
        let n = self.network.len();
        let (mut mat, mut y) = self.pool_block(env, heavy);
        for (yi, s) in y.iter_mut().zip(&self.rates.shares) {
            *yi = -s * input;
        }
        solve_in_place(&mut mat, n, &mut y, 1, n, 1)?;
        // Round-off can leave −1e-30 in an empty pool; contents are never negative.
        Ok(y.into_iter().map(|v| v.max(0.0)).collect())
    }

    /// The n×n pool block M of the rate matrix (per day) and a zeroed n-vector.
    pub(crate) fn pool_block(&self, env: f64, heavy: bool) -> (Vec<f64>, Vec<f64>) {
        let n = self.network.len();
        let m = n + 4;
        let mut full = vec![0.0; m * m];
        self.rate_matrix(env, heavy, 1.0, &mut full);
        let mut mat = vec![0.0; n * n];
        for i in 0..n {
            mat[i * n..(i + 1) * n].copy_from_slice(&full[i * m..i * m + n]);
        }
        (mat, vec![0.0; n])
    }

    /// Per-day outflow rates of pool i to (respiration, export) at factor `env`, for 12C.
    pub(crate) fn outflow_rates(&self, env: f64) -> Vec<(f64, f64, bool)> {
        let r = &self.rates;
        (0..self.network.len())
            .map(|j| {
                let k = r.k_ref_per_day[j] * if r.responsive[j] { env } else { 1.0 };
                (
                    k * r.respired[j],
                    k * (1.0 - r.respired[j]) * r.export[j],
                    r.autotrophic[j],
                )
            })
            .collect()
    }
}

/// z ← E·z for one isotope, with z = (pools, input, 0, 0, 0); writes the pools back and returns
/// the three accumulators (the input's own row is not needed: the input is constant). The
/// default four-pool network takes a copy of the same sums with its size known when compiled.
fn apply(e: &[f64], pools: &mut [f64], input: f64) -> [f64; 3] {
    match <&mut [f64; 4]>::try_from(&mut *pools) {
        Ok(four) => apply_sized(e, four, input),
        Err(_) => apply_any(e, pools, input),
    }
}

/// One row of E·z: Σ E[i][j]·pools[j] over the pools, plus E[i][n]·input.
#[inline(always)]
fn apply_row(e: &[f64], i: usize, pools: &[f64], input: f64) -> f64 {
    let n = pools.len();
    let row = &e[i * (n + 4)..i * (n + 4) + n + 1];
    row[..n]
        .iter()
        .zip(pools.iter())
        .map(|(a, b)| a * b)
        .sum::<f64>()
        + row[n] * input
}

fn apply_sized<const N: usize>(e: &[f64], pools: &mut [f64; N], input: f64) -> [f64; 3] {
    let acc = [
        apply_row(e, N + 1, pools, input),
        apply_row(e, N + 2, pools, input),
        apply_row(e, N + 3, pools, input),
    ];
    let new: [f64; N] = std::array::from_fn(|i| apply_row(e, i, pools, input));
    *pools = new;
    acc
}

fn apply_any(e: &[f64], pools: &mut [f64], input: f64) -> [f64; 3] {
    let n = pools.len();
    let acc = [
        apply_row(e, n + 1, pools, input),
        apply_row(e, n + 2, pools, input),
        apply_row(e, n + 3, pools, input),
    ];
    let new: Vec<f64> = (0..n).map(|i| apply_row(e, i, pools, input)).collect();
    pools.copy_from_slice(&new);
    acc
}

/// z' = B·z for the 12C and 13C blocks side by side (per day).
struct LinearSystem {
    m: usize,
    b12: Vec<f64>,
    b13: Vec<f64>,
}

impl System<f64, DVector<f64>> for LinearSystem {
    fn system(&self, _t: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let m = self.m;
        for (block, b) in [(0, &self.b12), (m, &self.b13)] {
            let z = &y.as_slice()[block..block + m];
            for i in 0..m {
                dy[block + i] = b[i * m..(i + 1) * m]
                    .iter()
                    .zip(z)
                    .map(|(a, v)| a * v)
                    .sum();
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TRAP_TOL: f64 = 1e-7;

    /// The ode_solvers trap (CRATES.md): with the default dense output and dx equal to the whole
    /// step, the "final" value is interpolated from the first internal step; sparse output returns
    /// the true end value. Reference: the exact exponential of the same linear system.
    #[test]
    fn dense_output_with_dx_step_misses_the_end_value_but_sparse_does_not() {
        let mut model = PoolModel::new(PoolNetwork::default_four_pool(), PoolSettings::default());
        let forcing = Forcing {
            assimilation_gc_m2_day: 10.0,
            d13c_assimilate_permil: -27.0,
            t_soil_c: 15.0,
            moisture: 0.8,
        };
        let start =
            PoolState::from_totals(&[5.0, 20.0, 600.0, 9000.0], &[-26.0; 4], 0.0111802).unwrap();
        let h = 1.0;
        let mut exact = start.clone();
        model.step(&mut exact, &forcing, h).unwrap();
        let (in12, in13) = forcing.isotope_inputs(R_VPDB_DEFAULT).unwrap();
        let env = model.settings.response.factor(15.0, 0.8).unwrap();
        let rel_err = |output: OutputType| {
            let (sys, y0) = model.ode_system(&start, in12, in13, env);
            let mut s = Dopri5::new(sys, 0.0, h, h, y0, 1e-10, 1e-12);
            s.set_output(output);
            s.integrate().unwrap();
            let y = s.y_out().last().unwrap().clone();
            (0..4)
                .map(|i| ((y[i] - exact.c12[i]) / exact.c12[i]).abs())
                .fold(0.0, f64::max)
        };
        assert!(rel_err(OutputType::Sparse) < TRAP_TOL);
        assert!(rel_err(OutputType::Dense) > 100.0 * TRAP_TOL);
    }
}
