//! The coupled solution of demand (photosynthesis) and supply (diffusion through the boundary layer
//! and stomata, with Medlyn stomata) for one leaf.
//!
//! Supply: A = gb_c(ca − cs) = (gs/1.6)(cs − ci). The solver searches ci in a bracket with Brent's
//! method on r(ci) = A(ci) − (gs/1.6)(cs − ci), where A(ci) is the demand (with mesophyll conductance
//! inside it), cs = ca − A/gb_c and gs from Medlyn at (A, cs). r < 0 at ci = 0 (A < 0 there) and
//! r ≥ A > 0 at ci = ca when the leaf can fix carbon, so the bracket always holds and the search
//! cannot diverge. A leaf that cannot fix carbon even at ci = ca respires through g0: the bracket
//! then lies above ca and is widened until it holds; with g0 = 0 its stomata are shut and ci = ca.
//! A leaf with g0 = 0 whose stomatal ci lies below its compensation point fixes no carbon: A = 0,
//! gs = 0, ci at the compensation point.

use super::Limitation;
use super::stomata::{GB_H2O_PER_CO2, GS_H2O_PER_CO2, Medlyn};
use crate::error::{ModelError, Result};
use crate::numerics::brent;

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

/// Tolerance on ci (µmol mol⁻¹) of the root search.
const CI_TOL: f64 = 1e-9;

/// Distance (µmol mol⁻¹) above the stomatal ci at which a root is taken to be the compensation
/// point instead (far above the root search's tolerance, far below any real drawdown).
const COMPENSATION_TOL: f64 = 1e-6;

pub(crate) fn solve(
    demand: impl Fn(f64) -> (f64, f64, Limitation),
    stomata: &Medlyn,
    ca: f64,
    gb_h2o: f64,
) -> Result<Coupled> {
    let gbc = gb_h2o / GB_H2O_PER_CO2;
    let state = |ci: f64| {
        let (a, cc, lim) = demand(ci);
        let cs = ca - a / gbc;
        let gs = stomata.conductance(a, cs);
        let r = a - gs / GS_H2O_PER_CO2 * (cs - ci);
        (
            r,
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
    let (r_hi, at_ca) = state(ca);
    if at_ca.a_net <= 0.0 && stomata.g0 <= 0.0 {
        // Stomata shut: no exchange through them; the leaf sits at ambient CO2.
        return Ok(Coupled {
            gs: 0.0,
            cs: ca,
            ..at_ca
        });
    }
    // Without g0 and boundary layer Medlyn gives ci = ca(1 − 1/slope) exactly; with them the root lies
    // close by. Splitting the bracket there saves most of the search.
    let guess = ca * (1.0 - 1.0 / stomata.slope);
    let (r_guess, at_guess) = state(guess);
    if r_guess == 0.0 {
        return Ok(at_guess);
    }
    let (mut lo, mut rl) = (0.0, f64::NAN);
    let (mut hi, mut rh) = (ca, r_hi);
    if r_guess < 0.0 {
        (lo, rl) = (guess, r_guess);
    } else {
        (hi, rh) = (guess, r_guess);
    }
    if rl.is_nan() {
        rl = state(lo).0;
    }
    let mut widen = 0;
    while rh < 0.0 {
        (lo, rl) = (hi, rh);
        hi *= 2.0;
        rh = state(hi).0;
        widen += 1;
        if widen > 60 {
            return Err(ModelError::Numerical(format!(
                "no bracket for the leaf's intercellular CO2 above ca = {ca}"
            )));
        }
    }
    let ci = brent(|x| state(x).0, lo, hi, rl, rh, CI_TOL, 200).ok_or_else(|| {
        ModelError::Numerical(format!("leaf CO2 root search failed at ca = {ca}"))
    })?;
    let found = state(ci).1;
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
