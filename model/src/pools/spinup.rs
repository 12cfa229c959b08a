//! Spin-up through an atmospheric history, so that old carbon carries the older atmosphere.
//!
//! The pools start at the steady state of the history's first year (at the mean turnover
//! multiplier when the drivers give one), with the assimilate's δ from
//! the atmosphere and a mean discrimination Δ̄: δp = (δa − Δ̄)/(1 + Δ̄/1000) (Farquhar, Ehleringer
//! & Hubick 1989, Annu. Rev. Plant Physiol.). They are then stepped exactly, one year at a time
//! (the last step shorter if needed), to the run's start year. Each step uses the history's δa
//! interpolated linearly at the step's midpoint, which follows a linearly changing atmosphere
//! without a half-year lag.

use super::integrate::PoolModel;
use super::network::DAYS_PER_YEAR;
use super::state::{Forcing, PoolState};
use crate::error::{ModelError, Result, check_input, check_range};
use crate::isotopes::product_delta_permil;

/// One row of an atmospheric history.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AtmosphereRow {
    /// Calendar year (decimal years allowed).
    pub year: f64,
    /// CO2 mole fraction, µmol mol⁻¹ (validated; the pools do not use it).
    pub co2_umol_mol: f64,
    /// δ13C of atmospheric CO2, ‰ vs VPDB.
    pub d13c_permil: f64,
}

/// A validated atmospheric history: at least one row, years strictly increasing, values finite.
#[derive(Debug, Clone, PartialEq)]
pub struct AtmosphereHistory {
    rows: Vec<AtmosphereRow>,
}

impl AtmosphereHistory {
    /// Validates `rows`; errors name the row (0-based) and the field. Years in [−1e5, 1e5],
    /// CO2 in (0, 1e5] µmol mol⁻¹, δ13C in [−50, 10] ‰.
    pub fn new(rows: Vec<AtmosphereRow>) -> Result<Self> {
        if rows.is_empty() {
            return Err(ModelError::InvalidConfig(
                "the atmospheric history has no rows".into(),
            ));
        }
        for (i, r) in rows.iter().enumerate() {
            check_input(&format!("history[{i}].year"), r.year, -1e5, 1e5)?;
            check_input(
                &format!("history[{i}].co2_umol_mol"),
                r.co2_umol_mol,
                f64::MIN_POSITIVE,
                1e5,
            )?;
            check_input(
                &format!("history[{i}].d13c_permil"),
                r.d13c_permil,
                -50.0,
                10.0,
            )?;
            if i > 0 && r.year <= rows[i - 1].year {
                return Err(ModelError::InvalidInput {
                    name: format!("history[{i}].year"),
                    value: r.year,
                    reason: format!(
                        "years must increase strictly; the previous row has {}",
                        rows[i - 1].year
                    ),
                });
            }
        }
        Ok(AtmosphereHistory { rows })
    }

    /// The rows.
    pub fn rows(&self) -> &[AtmosphereRow] {
        &self.rows
    }

    /// δ13C of CO2 at `year` (‰), interpolated linearly and held constant beyond the ends.
    pub fn d13c_at(&self, year: f64) -> f64 {
        let r = &self.rows;
        let i = r.partition_point(|row| row.year <= year);
        if i == 0 {
            return r[0].d13c_permil;
        }
        if i == r.len() {
            return r[r.len() - 1].d13c_permil;
        }
        let (a, b) = (&r[i - 1], &r[i]);
        a.d13c_permil + (b.d13c_permil - a.d13c_permil) * (year - a.year) / (b.year - a.year)
    }
}

/// Long-term mean drivers of a site for spin-up.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeanDrivers {
    /// Mean assimilation entering the pools, gC m⁻² day⁻¹.
    pub assimilation_gc_m2_day: f64,
    /// Mean soil temperature, °C.
    pub t_soil_c: f64,
    /// Mean moisture index β, dimensionless, in [0, 1].
    pub moisture: f64,
    /// Mean over the year of the responsive pools' turnover multiplier f(T)·g(θ)
    /// (dimensionless); when given it is used instead of the multiplier at `t_soil_c` and
    /// `moisture`, which for a convex f(T) underestimates the mean turnover.
    pub turnover_factor: Option<f64>,
}

impl PoolModel {
    /// Spins the pools up through `history` to `start_year` (which must lie within the history's
    /// years) under constant `drivers` and a mean discrimination `mean_discrimination_permil`
    /// (‰, in [−10, 40]), always with the exact method. Returns the state at `start_year`.
    pub fn spin_up_with_history(
        &mut self,
        history: &AtmosphereHistory,
        mean_discrimination_permil: f64,
        drivers: &MeanDrivers,
        start_year: f64,
    ) -> Result<PoolState> {
        let disc = check_range(
            "mean_discrimination_permil",
            mean_discrimination_permil,
            -10.0,
            40.0,
        )?;
        let first = history.rows[0].year;
        let last = history.rows[history.rows.len() - 1].year;
        check_input("start_year", start_year, first, last)?;
        let forcing_at = |year: f64| Forcing {
            assimilation_gc_m2_day: drivers.assimilation_gc_m2_day,
            d13c_assimilate_permil: product_delta_permil(history.d13c_at(year), disc),
            t_soil_c: drivers.t_soil_c,
            moisture: drivers.moisture,
        };
        let mut state = self.steady_state_at(&forcing_at(first), drivers.turnover_factor)?;
        let mut t = first;
        while t < start_year {
            let h_years = (start_year - t).min(1.0);
            self.step_exactly(
                &mut state,
                &forcing_at(t + 0.5 * h_years),
                h_years * DAYS_PER_YEAR,
                drivers.turnover_factor,
            )?;
            t += h_years;
        }
        Ok(state)
    }
}
