//! The affine-invariant ensemble sampler of Goodman & Weare (2010, Commun. Appl. Math. Comput.
//! Sci. 5, 65–80) with their stretch move (a = 2), run as two half-ensembles: every walker of one
//! half proposes from a walker of the other half, which stays fixed while the half moves, so the
//! proposals of a half are independent and are evaluated in parallel (Foreman-Mackey et al. 2013,
//! PASP 125, 306).
//!
//! Reproducibility: walker w draws from its own generator, seeded from (seed, w) only, and every
//! result is applied in walker order, so the draws are identical for any number of threads.
//! Memory: the kept positions (a few numbers per draw) and at most `payload_steps` thinned steps
//! of payloads; nothing an evaluation makes besides its payload is kept.

use indicatif::ProgressBar;
use rand::Rng;
use rand::rngs::StdRng;
use rayon::prelude::*;

use super::diagnostics::ess_bulk;
use crate::ensemble::sample::{open_unit, stream};
use crate::error::{Error, Result};

/// What one evaluation of the target returns.
#[derive(Debug, Clone)]
pub struct Eval<T> {
    /// ln p(data | θ); −∞ refuses the point.
    pub log_likelihood: f64,
    /// ln p(θ); −∞ outside the prior's support.
    pub log_prior: f64,
    /// Anything the caller wants back for kept draws (e.g. predictions at the observations).
    pub payload: T,
}

impl<T> Eval<T> {
    /// ln p(θ | data) up to a constant; NaN counts as −∞.
    pub fn log_posterior(&self) -> f64 {
        let lp = self.log_likelihood + self.log_prior;
        if lp.is_nan() { f64::NEG_INFINITY } else { lp }
    }
}

/// Settings of a sampling run.
#[derive(Debug, Clone, PartialEq)]
pub struct SamplerSettings {
    /// Walkers (even, ≥ 2 × parameters + 2 advised; at least 4).
    pub walkers: usize,
    /// Steps of every walker discarded before draws are kept.
    pub warmup_steps: usize,
    /// Stop when the smallest bulk ESS over the parameters reaches this.
    pub target_ess: f64,
    /// Stop before an ensemble step would take the evaluations past this.
    pub max_evaluations: u64,
    /// Kept steps between two ESS checks at least (and at least a tenth of those kept, so the
    /// checks cost a fixed share of the run however long it gets).
    pub check_every: usize,
    /// Most kept steps whose payloads are held (thinned evenly by doubling the stride).
    pub payload_steps: usize,
    /// Seed of the walkers' generators.
    pub seed: u64,
    /// Tries per walker to find a starting point of finite posterior density.
    pub start_tries: usize,
}

impl SamplerSettings {
    /// Checks the settings; `dim` is the number of sampled parameters.
    pub fn check(&self, dim: usize) -> Result<()> {
        if self.walkers < 4 || !self.walkers.is_multiple_of(2) {
            return Err(Error::msg(format!(
                "--walkers {}: use an even number, at least 4",
                self.walkers
            )));
        }
        if dim == 0 {
            return Err(Error::msg(
                "nothing to fit: the spec has no parameter that is not `fixed`",
            ));
        }
        if self.target_ess.is_nan() || self.target_ess <= 0.0 {
            return Err(Error::msg(format!(
                "--ess {}: must be > 0",
                self.target_ess
            )));
        }
        let least = (self.walkers * (self.warmup_steps + 1 + MIN_KEPT_STEPS)) as u64;
        if self.max_evaluations < least {
            return Err(Error::msg(format!(
                "--max-evaluations {}: {} walkers need at least {least} evaluations to start, \
                 warm up for {} steps and keep {MIN_KEPT_STEPS} steps",
                self.max_evaluations, self.walkers, self.warmup_steps
            )));
        }
        Ok(())
    }
}

/// Fewest kept steps: the ESS needs two halves of six draws per walker.
pub const MIN_KEPT_STEPS: usize = 12;

/// The stretch move's scale (Goodman & Weare 2010 use a = 2).
pub const STRETCH_A: f64 = 2.0;

const TAG_WALKER: u64 = 0x7761_6c6b_6572; // "walker"

/// Why sampling stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// The smallest bulk ESS reached the target.
    TargetEss,
    /// The evaluation budget ran out first.
    MaxEvaluations,
}

/// The kept draws and what is known about the run.
#[derive(Debug, Clone)]
pub struct Chain<T> {
    /// Parameters per draw.
    pub dim: usize,
    /// Walkers.
    pub walkers: usize,
    /// Positions of kept steps: step-major, then walker, then parameter.
    pub positions: Vec<f64>,
    /// ln-likelihood per kept draw (step-major, then walker).
    pub log_likelihood: Vec<f64>,
    /// ln-prior per kept draw.
    pub log_prior: Vec<f64>,
    /// Index (0-based, counted from the first warm-up step) of the first kept step.
    pub first_kept_step: usize,
    /// Thinned kept steps with every walker's payload: (kept step index, payloads by walker).
    pub payloads: Vec<(usize, Vec<T>)>,
    /// Evaluations of the target, starting points included.
    pub evaluations: u64,
    /// Proposals accepted / made after warm-up.
    pub accepted: u64,
    /// Proposals made after warm-up.
    pub proposed: u64,
    /// The point of highest posterior density seen (warm-up included) and its evaluation.
    pub best: (Vec<f64>, f64, f64),
    /// Why it stopped.
    pub stop: Stop,
}

impl<T> Chain<T> {
    /// Kept steps.
    pub fn kept_steps(&self) -> usize {
        self.log_likelihood.len() / self.walkers
    }

    /// Parameter `j` of every walker as one sequence per walker (walkers as chains).
    pub fn per_walker(&self, j: usize) -> Vec<Vec<f64>> {
        let n = self.kept_steps();
        (0..self.walkers)
            .map(|w| {
                (0..n)
                    .map(|s| self.positions[(s * self.walkers + w) * self.dim + j])
                    .collect()
            })
            .collect()
    }

    /// Share of the proposals after warm-up that were accepted.
    pub fn acceptance_rate(&self) -> f64 {
        self.accepted as f64 / self.proposed.max(1) as f64
    }

    /// The smallest bulk ESS over the parameters (an undefined ESS counts as 0).
    pub fn min_ess(&self) -> f64 {
        (0..self.dim)
            .map(|j| {
                let e = ess_bulk(&self.per_walker(j));
                if e.is_nan() { 0.0 } else { e }
            })
            .fold(f64::INFINITY, f64::min)
    }
}

struct Walker<T> {
    x: Vec<f64>,
    eval: Eval<T>,
    rng: StdRng,
    accepted: bool,
}

/// Samples the posterior `eval` by the stretch move in the current rayon pool. `start` draws a
/// walker's starting point (from the prior, say) with that walker's generator; a start of
/// non-finite posterior density is drawn again, `start_tries` times at most. `progress` ticks one
/// per evaluation.
pub fn sample<T, S, F>(
    settings: &SamplerSettings,
    start: S,
    eval: F,
    progress: &ProgressBar,
) -> Result<Chain<T>>
where
    T: Clone + Send + Sync,
    S: Fn(&mut StdRng) -> Vec<f64> + Sync,
    F: Fn(&[f64]) -> Eval<T> + Sync,
{
    let n_w = settings.walkers;
    // Starting points, each walker on its own generator.
    let started: Vec<(Walker<T>, u64)> = (0..n_w)
        .into_par_iter()
        .map(|w| {
            let mut rng = stream(settings.seed, TAG_WALKER, w as u64);
            let mut tries = 0;
            loop {
                let x = start(&mut rng);
                let e = eval(&x);
                tries += 1;
                progress.inc(1);
                if e.log_posterior().is_finite() || tries >= settings.start_tries {
                    let walker = Walker {
                        x,
                        eval: e,
                        rng,
                        accepted: false,
                    };
                    return (walker, tries as u64);
                }
            }
        })
        .collect();
    let mut evaluations: u64 = started.iter().map(|s| s.1).sum();
    let mut walkers: Vec<Walker<T>> = started.into_iter().map(|s| s.0).collect();
    if let Some(w) = walkers
        .iter()
        .position(|w| !w.eval.log_posterior().is_finite())
    {
        return Err(Error::msg(format!(
            "walker {w}: no starting point of finite posterior density in {} draws from the \
             prior (the model fails there or the data are impossible under it)",
            settings.start_tries
        )));
    }
    let dim = walkers[0].x.len();
    let mut chain = Chain {
        dim,
        walkers: n_w,
        positions: Vec::new(),
        log_likelihood: Vec::new(),
        log_prior: Vec::new(),
        first_kept_step: settings.warmup_steps,
        payloads: Vec::new(),
        evaluations: 0,
        accepted: 0,
        proposed: 0,
        best: (Vec::new(), f64::NAN, f64::NAN),
        stop: Stop::MaxEvaluations,
    };
    let mut best_lp = f64::NEG_INFINITY;
    let mut note_best = |walkers: &[Walker<T>], chain: &mut Chain<T>| {
        for w in walkers {
            let lp = w.eval.log_posterior();
            if lp > best_lp {
                best_lp = lp;
                chain.best = (w.x.clone(), w.eval.log_likelihood, w.eval.log_prior);
            }
        }
    };
    note_best(&walkers, &mut chain);
    let mut stride = 1usize;
    let mut step = 0usize;
    let mut next_check = MIN_KEPT_STEPS.max(settings.check_every);
    while evaluations + n_w as u64 <= settings.max_evaluations {
        let half = n_w / 2;
        for moving_first in [true, false] {
            let (a, b) = walkers.split_at_mut(half);
            let (moving, fixed) = if moving_first { (a, b) } else { (b, a) };
            let fixed: &[Walker<T>] = fixed;
            moving.par_iter_mut().for_each(|w| {
                let j = (w.rng.next_u64() % fixed.len() as u64) as usize;
                let u = open_unit(&mut w.rng);
                let z = ((STRETCH_A - 1.0) * u + 1.0).powi(2) / STRETCH_A;
                let y: Vec<f64> =
                    w.x.iter()
                        .zip(&fixed[j].x)
                        .map(|(xk, xj)| xj + z * (xk - xj))
                        .collect();
                let e = eval(&y);
                let log_ratio =
                    (dim as f64 - 1.0) * z.ln() + e.log_posterior() - w.eval.log_posterior();
                let accept = open_unit(&mut w.rng).ln() < log_ratio;
                w.accepted = accept;
                if accept {
                    w.x = y;
                    w.eval = e;
                }
            });
        }
        evaluations += n_w as u64;
        progress.inc(n_w as u64);
        note_best(&walkers, &mut chain);
        if step >= settings.warmup_steps {
            let kept = step - settings.warmup_steps;
            chain.proposed += n_w as u64;
            chain.accepted += walkers.iter().filter(|w| w.accepted).count() as u64;
            for w in &walkers {
                chain.positions.extend_from_slice(&w.x);
                chain.log_likelihood.push(w.eval.log_likelihood);
                chain.log_prior.push(w.eval.log_prior);
            }
            if kept.is_multiple_of(stride) {
                chain.payloads.push((
                    kept,
                    walkers.iter().map(|w| w.eval.payload.clone()).collect(),
                ));
                if chain.payloads.len() > settings.payload_steps.max(1) {
                    stride *= 2;
                    chain.payloads.retain(|(k, _)| k % stride == 0);
                }
            }
            let n_kept = kept + 1;
            if n_kept >= next_check {
                next_check = (n_kept + settings.check_every.max(1)).max(n_kept * 11 / 10);
                if chain.min_ess() >= settings.target_ess {
                    chain.stop = Stop::TargetEss;
                    break;
                }
            }
        }
        step += 1;
    }
    chain.evaluations = evaluations;
    if chain.kept_steps() < MIN_KEPT_STEPS {
        return Err(Error::msg(format!(
            "only {} steps kept after the warm-up (at least {MIN_KEPT_STEPS} needed): raise \
             --max-evaluations",
            chain.kept_steps()
        )));
    }
    if chain.stop == Stop::MaxEvaluations && chain.min_ess() >= settings.target_ess {
        chain.stop = Stop::TargetEss;
    }
    Ok(chain)
}
