//! The coupled solution of demand (photosynthesis) and supply (diffusion through the boundary layer
//! and stomata, with Medlyn stomata) for one leaf.
//!
//! Supply: A = gb_c(ca − cs) = (gs/1.6)(cs − ci). The solver searches ci in a bracket on
//! r(ci) = A(ci) − (gs/1.6)(cs − ci), where A(ci) is the demand (with mesophyll conductance inside
//! it), cs = ca − A/gb_c and gs from Medlyn at (A, cs): by Newton's method with the analytic
//! derivative, kept inside the bracket (a step that would leave it bisects), and ended when a sign
//! change of r within the tolerance is confirmed — as tight a guarantee as Brent's method (kept as
//! the reference, [`RootSearch::Brent`]) with about half its evaluations. r < 0 at ci = 0 (A < 0
//! there) and r ≥ A > 0 at ci = ca when the leaf can fix carbon, so the bracket always holds and the
//! search cannot diverge. A leaf that cannot fix carbon even at ci = ca respires through g0: the bracket
//! then lies above ca and is widened until it holds; with g0 = 0 its stomata are shut and ci = ca.
//! A leaf with g0 = 0 whose stomatal ci lies below its compensation point fixes no carbon: A = 0,
//! gs = 0, ci at the compensation point.

use super::Limitation;
use super::stomata::{GB_H2O_PER_CO2, GS_H2O_PER_CO2, Medlyn};
use crate::error::{ModelError, Result};
use crate::numerics::{brent, newton_bracketed};

/// The solved state of a leaf (before discrimination).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Coupled {
    pub a_net: f64,
    pub gs: f64,
    pub cs: f64,
    pub ci: f64,
    pub cc: f64,
    pub limitation: Limitation,
}

/// Tolerance on ci (µmol mol⁻¹) of the root search: the root lies within this distance of the
/// ci returned.
pub const CI_TOL_UMOL_MOL: f64 = 1e-9;

/// Length (µmol mol⁻¹) of the Newton step below which the search checks that it has converged:
/// a hundredth of the tolerance, so that the answer agrees with the root to far better than the
/// tolerance even where convergence is slow (near a kink of the demand).
const NEWTON_STEP_TOL: f64 = 1e-2 * CI_TOL_UMOL_MOL;

/// Distance (µmol mol⁻¹) above the stomatal ci at which a root is taken to be the compensation
/// point instead (far above the root search's tolerance, far below any real drawdown).
const COMPENSATION_TOL: f64 = 1e-6;

/// How the coupled leaf is solved for ci.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RootSearch {
    /// Newton's method on r(ci) with the analytic derivative, safeguarded by the bracket (a step
    /// that would leave it bisects instead) and ended only when a sign change of r is confirmed
    /// within [`CI_TOL_UMOL_MOL`] of the answer: what every solve uses.
    Newton,
    /// Brent's bracketing method to the tolerance given (µmol mol⁻¹): the reference the checks
    /// compare [`RootSearch::Newton`] with.
    Brent {
        /// Tolerance on ci (µmol mol⁻¹).
        ci_tol_umol_mol: f64,
    },
}

/// The coupled solution for a leaf whose `demand(ci)` gives (A, dA/dci, cc, limitation).
pub(crate) fn solve(
    demand: impl Fn(f64) -> (f64, f64, f64, Limitation),
    stomata: &Medlyn,
    ca: f64,
    gb_h2o: f64,
    search: RootSearch,
) -> Result<Coupled> {
    let gbc = gb_h2o / GB_H2O_PER_CO2;
    // r(ci), dr/dci and the leaf's state at ci. With cs = ca − A/gb_c and gs from Medlyn:
    // dr/dci = A′ − (gs′/1.6)(cs − ci) − (gs/1.6)(cs′ − 1), cs′ = −A′/gb_c,
    // gs′ = 1.6·slope·(A′cs − A·cs′)/cs² where A > 0 and cs > 0, else 0.
    let state = |ci: f64| {
        let (a, da, cc, lim) = demand(ci);
        let cs = ca - a / gbc;
        let gs = stomata.conductance(a, cs);
        let r = a - gs / GS_H2O_PER_CO2 * (cs - ci);
        let dcs = -da / gbc;
        let dgs = if a > 0.0 && cs > 0.0 {
            GS_H2O_PER_CO2 * stomata.slope * (da * cs - a * dcs) / (cs * cs)
        } else {
            0.0
        };
        let dr = da - dgs / GS_H2O_PER_CO2 * (cs - ci) - gs / GS_H2O_PER_CO2 * (dcs - 1.0);
        (
            r,
            dr,
            Coupled {
                a_net: a,
                gs,
                cs,
                ci,
                cc,
                limitation: lim,
            },
        )
    };
    // Without g0 and boundary layer Medlyn gives ci = ca(1 − 1/slope) exactly; with them the root lies
    // close by. Splitting the bracket there saves most of the search, and Newton starts there.
    let guess = ca * (1.0 - 1.0 / stomata.slope);
    let at_guess = state(guess);
    // A rises with ci, so a leaf fixing carbon at the guess fixes carbon at ca, where then
    // r ≥ A > 0: ca needs no evaluation. Otherwise it decides whether the stomata are shut.
    let at_ca = if at_guess.2.a_net > 0.0 {
        None
    } else {
        let at_ca = state(ca);
        if at_ca.2.a_net <= 0.0 && stomata.g0 <= 0.0 {
            // Stomata shut: no exchange through them; the leaf sits at ambient CO2.
            return Ok(Coupled {
                gs: 0.0,
                cs: ca,
                ..at_ca.2
            });
        }
        Some(at_ca)
    };
    if at_guess.0 == 0.0 {
        return Ok(at_guess.2);
    }
    // The bracket [lo, hi] with r(lo) < 0 < r(hi), and the evaluated point Newton starts from.
    // r(0) < 0 (A < 0 there) is known without evaluating it.
    let (mut lo, mut hi, mut start) = if at_guess.0 < 0.0 {
        (guess, ca, (guess, at_guess))
    } else {
        (0.0, guess, (guess, at_guess))
    };
    if let Some(at_ca) = at_ca.filter(|_| at_guess.0 < 0.0) {
        let mut top = (ca, at_ca);
        let mut widen = 0;
        while top.1.0 < 0.0 {
            (lo, start) = (top.0, top);
            hi = top.0 * 2.0;
            top = (hi, state(hi));
            widen += 1;
            if widen > 60 {
                return Err(ModelError::Numerical(format!(
                    "no bracket for the leaf's intercellular CO2 above ca = {ca}"
                )));
            }
        }
    }
    let failed = || ModelError::Numerical(format!("leaf CO2 root search failed at ca = {ca}"));
    let found = match search {
        RootSearch::Newton => {
            let (x, (r, dr, s)) = start;
            newton_bracketed(
                state,
                (x, r, dr, s),
                (lo, hi),
                CI_TOL_UMOL_MOL,
                NEWTON_STEP_TOL,
                200,
            )
            .ok_or_else(failed)?
            .1
        }
        RootSearch::Brent { ci_tol_umol_mol } => {
            let ci = brent(
                |x| state(x).0,
                lo,
                hi,
                state(lo).0,
                state(hi).0,
                ci_tol_umol_mol,
                200,
            )
            .ok_or_else(failed)?;
            state(ci).2
        }
    };
    // Without g0, r(ci) = A·(1 − slope·(cs − ci)/cs) has two roots: the stomatal one,
    // ci = cs(1 − 1/slope), and A = 0 at the compensation point. When the stomatal ci lies below
    // the compensation point only the second is left: stomata are shut, the leaf fixes nothing
    // and sits at its compensation point with A = 0 (never a vanishing "positive" A with a Δ).
    if stomata.g0 <= 0.0 && found.ci - found.cs * (1.0 - 1.0 / stomata.slope) > COMPENSATION_TOL {
        return Ok(Coupled {
            a_net: 0.0,
            gs: 0.0,
            cs: ca,
            cc: found.ci,
            ..found
        });
    }
    Ok(found)
}
