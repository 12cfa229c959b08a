//! The simulation of one site over its weather: the site model step by step, the carbon/13C pools
//! after it (spun up from the first year's mean forcing and, with an atmospheric history, through
//! that history), and the daily, monthly and annual aggregates. Output files are not written here:
//! a [`StepSink`] receives every step (the `run` command writes `steps.csv` from it; an ensemble
//! member ignores it), so the same code serves single runs, ensembles and batches.

use std::cell::Cell;

use isodisc_model::isotopes::product_delta_permil;
use isodisc_model::leaf::Pathway;
use isodisc_model::observations::{LagSettings, lag_analysis};
use isodisc_model::phenology::running_mean_step;
use isodisc_model::pools::response::T_SOIL_RANGE_C;
use isodisc_model::pools::{
    AtmosphereHistory, Forcing, MeanDrivers, PoolModel, PoolState, StepResult,
};
use isodisc_model::site::{SiteDrivers, SiteModel, SiteStep, StepLight};
use isodisc_model::temperature::GrowthTemperature;

use crate::error::{Context, Error, Result};
use crate::forcing::{ForcingError, ForcingStep, LocalDate, LocalTime};
use crate::site::Site;

/// Grams of carbon per µmol of CO2.
pub const GC_PER_UMOL: f64 = 12.011e-6;
/// Seconds per day.
const SECONDS_PER_DAY: f64 = 86_400.0;
/// Time constant (days) of the running mean of air temperature that stands for soil temperature
/// (common practice, from memory: soil lags and damps the air); the cold rule uses the same.
pub use isodisc_model::phenology::SOIL_TEMPERATURE_LAG_DAYS;
/// Longest lag (days) searched for the effective lag of δR behind the assimilate.
pub const MAX_LAG_DAYS: usize = 20;

/// The respiration part of a step, per m² of ground.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RespirationStep {
    /// Ecosystem respiration (µmol m⁻² s⁻¹).
    pub reco_umol_m2_s: f64,
    /// Autotrophic respiration (µmol m⁻² s⁻¹).
    pub ra_umol_m2_s: f64,
    /// Heterotrophic respiration (µmol m⁻² s⁻¹).
    pub rh_umol_m2_s: f64,
    /// Carbon leaving the pools unrespired through `export` transfers (µmol m⁻² s⁻¹).
    pub export_umol_m2_s: f64,
    /// δ13C of ecosystem respiration (‰).
    pub d13c_reco: f64,
    /// δ13C of autotrophic respiration (‰).
    pub d13c_ra: f64,
    /// δ13C of heterotrophic respiration (‰).
    pub d13c_rh: f64,
}

/// What a sink receives for each step.
#[derive(Debug, Clone, Copy)]
pub struct StepView<'a> {
    /// The weather of the step.
    pub forcing: &'a ForcingStep,
    /// The drivers the model saw (None: missing step).
    pub drivers: Option<&'a SiteDrivers>,
    /// The site's result (None: missing step).
    pub site: Option<&'a SiteStep>,
    /// The pools' result (None: missing step).
    pub respiration: Option<&'a RespirationStep>,
    /// Index of the C3 and C4 vegetation in the site's list.
    pub c3: Option<usize>,
    /// Index of the C4 vegetation.
    pub c4: Option<usize>,
}

/// Receives every step in time order.
pub trait StepSink {
    /// One step.
    fn step(&mut self, view: &StepView<'_>) -> Result<()>;
    /// The pools at the end of a day (pool C in gC m⁻² and δ13C in ‰, in network order).
    fn pools_daily(&mut self, _date: LocalDate, _c_g_m2: &[f64], _d13c: &[f64]) -> Result<()> {
        Ok(())
    }
}

/// A sink that keeps nothing.
pub struct NoSink;

impl StepSink for NoSink {
    fn step(&mut self, _view: &StepView<'_>) -> Result<()> {
        Ok(())
    }
}

/// Columns of `daily.csv`, `monthly.csv` and `annual.csv`: name, unit, meaning.
pub const PERIOD_COLUMNS: &[(&str, &str, &str)] = &[
    ("period", "YYYY-MM-DD, YYYY-MM or YYYY", "the period"),
    ("steps", "count", "steps in the period"),
    ("filled_steps", "count", "steps with a gap-filled driver"),
    (
        "missing_steps",
        "count",
        "steps left empty (long gaps); not in the sums",
    ),
    ("gpp", "gC m-2", "GPP summed over the period"),
    ("gpp_c3", "gC m-2", "C3 GPP summed over the period"),
    ("gpp_c4", "gC m-2", "C4 GPP summed over the period"),
    ("c4_share", "-", "gpp_c4 / gpp"),
    (
        "discrimination",
        "permil",
        "GPP-weighted ecosystem discrimination",
    ),
    (
        "discrimination_c3",
        "permil",
        "GPP-weighted discrimination of the C3 part",
    ),
    (
        "discrimination_c4",
        "permil",
        "GPP-weighted discrimination of the C4 part",
    ),
    (
        "d13c_assimilate",
        "permil VPDB",
        "GPP-weighted d13C of the assimilate",
    ),
    ("ci_ca_c3", "-", "GPP-weighted ci/ca of the C3 part"),
    ("ci_ca_c4", "-", "GPP-weighted ci/ca of the C4 part"),
    ("reco", "gC m-2", "ecosystem respiration summed"),
    ("ra", "gC m-2", "autotrophic respiration summed"),
    ("rh", "gC m-2", "heterotrophic respiration summed"),
    (
        "nee",
        "gC m-2",
        "net ecosystem exchange, reco - gpp (positive: a source)",
    ),
    (
        "export",
        "gC m-2",
        "carbon leaving the pools unrespired by their `export` transfers, summed (0 by default)",
    ),
    (
        "d13c_respiration",
        "permil VPDB",
        "respiration-weighted d13C of ecosystem respiration",
    ),
    (
        "d13c_ra",
        "permil VPDB",
        "respiration-weighted d13C of autotrophic respiration",
    ),
    (
        "d13c_rh",
        "permil VPDB",
        "respiration-weighted d13C of heterotrophic respiration",
    ),
    (
        "disequilibrium",
        "permil",
        "d13c_respiration - d13c_assimilate over the period",
    ),
    (
        "isoflux_disequilibrium",
        "permil gC m-2",
        "reco x disequilibrium",
    ),
    ("t_air", "degC", "mean air temperature"),
    ("vpd", "kPa", "mean VPD"),
    ("ppfd", "umol m-2 s-1", "mean PPFD"),
    ("precip", "mm", "precipitation summed"),
    ("transpiration", "mm", "transpiration summed"),
    ("soil_evaporation", "mm", "soil evaporation summed"),
    ("beta", "-", "mean soil-water factor"),
    (
        "complete",
        "0/1",
        "1 when the run has every step of the period, 0 for part of it",
    ),
];

/// Index of a period column among the values of a [`PeriodRow`] (which omit `period`).
pub fn period_col(name: &str) -> usize {
    PERIOD_COLUMNS
        .iter()
        .position(|c| c.0 == name)
        .unwrap_or_else(|| panic!("unknown period column {name}"))
        - 1
}

/// A finished period: its key and its values in the order of [`PERIOD_COLUMNS`] after `period`.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodRow {
    /// YYYY-MM-DD, YYYY-MM or YYYY.
    pub key: String,
    /// Values.
    pub values: Vec<f64>,
}

/// Diagnostics of the pools over the run.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolDiagnostics {
    /// Mean age of respired carbon at the spin-up steady state (days).
    pub mean_age_respired_days: Option<f64>,
    /// Mean age of autotrophic and heterotrophic respiration (days).
    pub mean_age_ra_days: Option<f64>,
    /// Mean age of heterotrophic respiration (days).
    pub mean_age_rh_days: Option<f64>,
    /// Lag (days) at which daily δR correlates best with the daily δ13C of the assimilate of
    /// earlier days; None when too few days.
    pub effective_lag_days: Option<usize>,
    /// The correlation at that lag.
    pub effective_lag_r: f64,
    /// Mean forcing of the first year that the spin-up used.
    pub spin_up: MeanDrivers,
    /// Mean discrimination (‰) of the first year that the spin-up used.
    pub spin_up_discrimination_permil: f64,
    /// Whether an atmospheric history was used.
    pub with_history: bool,
    /// Pool names in network order.
    pub pool_names: Vec<String>,
}

/// Everything a simulation returns besides what the sink received.
#[derive(Debug, Clone)]
pub struct Simulated {
    /// Daily, monthly and annual rows.
    pub periods: [Vec<PeriodRow>; 3],
    /// Pool diagnostics.
    pub pools: PoolDiagnostics,
}

/// Runs a site over its forcing steps.
pub fn simulate(
    site: &Site,
    steps: impl Iterator<Item = std::result::Result<ForcingStep, ForcingError>>,
    step_minutes: u32,
    sink: &mut dyn StepSink,
) -> Result<Simulated> {
    simulate_lit(site, steps, step_minutes, sink, &[])
}

/// The light of every step of `steps` at `site`, with each vegetation's leaf temperature terms
/// (`SiteModel::shared_light`; None where the step is missing or its light cannot be computed;
/// the run then computes it and reports the error in context), for [`simulate_lit`].
pub fn step_lights(
    site: &Site,
    steps: &[ForcingStep],
    step_minutes: u32,
) -> Vec<Option<StepLight>> {
    let Ok(model) = SiteModel::new(site.settings.clone()) else {
        return Vec::new();
    };
    // The growth temperature as `site_step` gives it, for the leaves' temperature terms.
    let mut growth = GrowthTemperature::new();
    steps
        .iter()
        .map(|f| {
            let mut d = drivers(site, f, step_minutes)?;
            d.t_growth_c = growth.push((d.year, d.day_of_year), d.t_air_c);
            model.shared_light(&d).ok()
        })
        .collect()
}

/// [`simulate`] with the light of step i taken from `lights[i]` where there is one (from
/// [`step_lights`] of the same weather): the result is the same as [`simulate`]'s, since the site
/// model recomputes any light that does not match its site and step.
pub fn simulate_lit(
    site: &Site,
    steps: impl Iterator<Item = std::result::Result<ForcingStep, ForcingError>>,
    step_minutes: u32,
    sink: &mut dyn StepSink,
    lights: &[Option<StepLight>],
) -> Result<Simulated> {
    simulate_keeping(site, steps, step_minutes, sink, lights, Kept::ALL)
}

/// Which period rows a simulation sums up (the effective lag of the pools' diagnostics needs the
/// daily rows: it is None without them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Kept {
    /// Daily rows.
    pub daily: bool,
    /// Monthly rows.
    pub monthly: bool,
    /// Annual rows.
    pub annual: bool,
}

impl Kept {
    /// Every period.
    pub const ALL: Kept = Kept {
        daily: true,
        monthly: true,
        annual: true,
    };
}

/// [`simulate_lit`] keeping only the periods `kept` asks for: the periods left out come back
/// empty, and everything else is what [`simulate_lit`] gives, to the bit (a caller that reads
/// only some periods, as a fit's evaluations or an ensemble's members, saves the sums of the
/// others at every step).
pub fn simulate_keeping(
    site: &Site,
    steps: impl Iterator<Item = std::result::Result<ForcingStep, ForcingError>>,
    step_minutes: u32,
    sink: &mut dyn StepSink,
    lights: &[Option<StepLight>],
    kept: Kept,
) -> Result<Simulated> {
    let light = |i: usize| lights.get(i).and_then(Option::as_ref);
    let mut index = 0usize;
    let mut model = SiteModel::new(site.settings.clone())?;
    let has = |p: Pathway| {
        site.settings
            .vegetation
            .iter()
            .position(|v| v.pathway() == p)
    };
    let (c3, c4) = (has(Pathway::C3), has(Pathway::C4));
    let step_days = f64::from(step_minutes) / 1440.0;

    // The first year is run through the site model and held back: its mean forcing sets the
    // pools' starting state, which the rest of the run needs before it can write anything.
    let mut steps = steps.peekable();
    let mut growth = GrowthTemperature::new();
    // δ13C of the leaf labile pool after the previous step: the leaves' respiratory substrate.
    let substrate = Cell::new(None);
    let mut first_year: Vec<(ForcingStep, Option<SiteDrivers>, Option<SiteStep>)> = Vec::new();
    let mut year_end: Option<LocalTime> = None;
    while let Some(item) = steps.peek() {
        let time = match item {
            Ok(f) => f.time,
            Err(_) => {
                let e = steps.next().expect("peeked").expect_err("peeked an error");
                return Err(e).with_context(|| format!("site {}", site.path.display()));
            }
        };
        let end = *year_end.get_or_insert(time.plus_minutes(365 * 1440));
        if time >= end {
            break;
        }
        let f = steps.next().expect("peeked").expect("peeked a step");
        // The pools start after this year, so its leaves respire their current assimilate (e′ = e).
        let (d, s) = site_step(
            site,
            &mut model,
            &f,
            step_minutes,
            &mut growth,
            None,
            light(index),
        )?;
        index += 1;
        first_year.push((f, d, s));
    }
    let mut pools = Pools::start(site, &first_year, step_minutes)?;
    if first_year.len() as f64 * step_days >= 365.0 {
        pools.cycle(&first_year, step_days)?;
    }

    let mut aggs = [
        Aggregator::new(PeriodKind::Daily, step_minutes),
        Aggregator::new(PeriodKind::Monthly, step_minutes),
        Aggregator::new(PeriodKind::Annual, step_minutes),
    ];
    // The step's drivers and site step by reference: they are moved no further.
    let mut process = |f: &ForcingStep,
                       d: Option<&SiteDrivers>,
                       s: Option<&SiteStep>,
                       sink: &mut dyn StepSink|
     -> Result<()> {
        // The step's day, converted to a calendar date once for every period.
        let date = f.time.date();
        let ymd = {
            let (y, m, d) = crate::forcing::time::civil_from_days(date.days());
            (y as i32, m, d)
        };
        // The pools as they stand at the end of the day just closed, before this step moves them.
        if aggs[0].current_key_differs(ymd) {
            pools.end_of_day(sink, aggs[0].current_date)?;
        }
        let resp = match (d, s) {
            (Some(d), Some(s)) => Some(pools.step(date, d, s, step_days)?),
            _ => None,
        };
        substrate.set(pools.leaf_substrate_d13c());
        let view = StepView {
            forcing: f,
            drivers: d,
            site: s,
            respiration: resp.as_ref(),
            c3,
            c4,
        };
        sink.step(&view)?;
        // The daily periods are followed for the pools' days even when their sums are not kept.
        aggs[0].add(&view, date, ymd, step_days * SECONDS_PER_DAY, kept.daily);
        for (a, on) in aggs[1..].iter_mut().zip([kept.monthly, kept.annual]) {
            if on {
                a.add(&view, date, ymd, step_days * SECONDS_PER_DAY, true);
            }
        }
        Ok(())
    };
    for (f, d, s) in &first_year {
        process(f, d.as_ref(), s.as_ref(), sink)?;
    }
    drop(first_year);
    for item in steps {
        let f = item.with_context(|| format!("site {}", site.path.display()))?;
        let (d, s) = site_step(
            site,
            &mut model,
            &f,
            step_minutes,
            &mut growth,
            substrate.get(),
            light(index),
        )?;
        index += 1;
        process(&f, d.as_ref(), s.as_ref(), sink)?;
    }
    if aggs[0].current.is_some() {
        pools.end_of_day(sink, aggs[0].current_date)?;
    }
    for (a, on) in aggs.iter_mut().zip([kept.daily, kept.monthly, kept.annual]) {
        if on {
            a.flush();
        }
    }
    let [daily, monthly, annual] = aggs.map(|a| a.rows);
    let mut diagnostics = pools.diagnostics;
    let (lag, r) = effective_lag(&daily);
    diagnostics.effective_lag_days = lag;
    diagnostics.effective_lag_r = r;
    Ok(Simulated {
        periods: [daily, monthly, annual],
        pools: diagnostics,
    })
}

/// The site model's step for one forcing step (None for a missing step).
fn site_step(
    site: &Site,
    model: &mut SiteModel,
    f: &ForcingStep,
    step_minutes: u32,
    growth: &mut GrowthTemperature,
    substrate: Option<f64>,
    light: Option<&StepLight>,
) -> Result<(Option<SiteDrivers>, Option<SiteStep>)> {
    let Some(mut d) = drivers(site, f, step_minutes) else {
        return Ok((None, None));
    };
    d.t_growth_c = growth.push((d.year, d.day_of_year), d.t_air_c);
    d.d13c_leaf_substrate_permil = substrate;
    // A range error from inside the model points at the weather file's line it came from.
    let s = match light {
        Some(l) => model.step_lit(&d, l),
        None => model.step(&d),
    };
    let s = s.with_context(|| {
        format!(
            "{}: step {} (weather file {}, line {})",
            site.path.display(),
            f.time,
            site.dir().join(&site.file.forcing.path).display(),
            f.line
        )
    })?;
    Ok((Some(d), Some(s)))
}

/// The model's drivers for a forcing step, or None when a driver is missing.
pub fn drivers(site: &Site, f: &ForcingStep, step_minutes: u32) -> Option<SiteDrivers> {
    if f.missing {
        return None;
    }
    let pick = |constant: Option<f64>, col: Option<f64>| constant.or(col).filter(|v| v.is_finite());
    let co2 = pick(site.co2, f.co2_umol_mol)?;
    let d13c = pick(site.d13c_co2, f.d13c_co2_permil)?;
    let lai = if site.lai_from_forcing {
        Some(f.lai.filter(|l| l.is_finite())?)
    } else {
        None
    };
    let hour_start = f.time.hour_fraction();
    Some(SiteDrivers {
        year: f.time.year(),
        day_of_year: f.time.day_of_year(),
        hour_start,
        hour_end: (hour_start + f64::from(step_minutes) / 60.0).min(24.0),
        t_air_c: f.t_air_c,
        vpd_kpa: f.vpd_kpa,
        sw_w_m2: f.sw_w_m2,
        ppfd_umol_m2_s: f.ppfd_umol_m2_s,
        co2_umol_mol: co2,
        d13c_co2_permil: d13c,
        o2_mmol_mol: site.o2,
        pressure_kpa: f.pressure_kpa,
        precip_mm: f.precip_mm,
        swc_m3_m3: f.swc_m3_m3,
        lai_m2_m2: lai,
        wind_m_s: f.wind_m_s,
        t_growth_c: f.t_air_c,
        d13c_leaf_substrate_permil: None,
    })
}

/// The pools during a run.
struct Pools {
    model: PoolModel,
    state: PoolState,
    t_soil_c: f64,
    last_d13c_assimilate: f64,
    /// Soil temperature (°C) and moisture held for the day.
    soil_of_day: Option<(LocalDate, f64, f64)>,
    r_standard: f64,
    diagnostics: PoolDiagnostics,
}

impl Pools {
    /// Spins the pools up from the first year's mean assimilation and mean turnover rates.
    fn start(
        site: &Site,
        first_year: &[(ForcingStep, Option<SiteDrivers>, Option<SiteStep>)],
        step_minutes: u32,
    ) -> Result<Self> {
        let (network, settings) = site.pools.build()?;
        let mut model = PoolModel::new(network, settings);
        let step_s = f64::from(step_minutes) * 60.0;
        let (mut gpp_gc, mut w_disc, mut w_d13c_air, mut t_sum, mut beta_sum, mut n) =
            (0.0, 0.0, 0.0, 0.0, 0.0, 0usize);
        let mut seconds = 0.0;
        let mut first_time = None;
        for (f, d, s) in first_year {
            let (Some(d), Some(s)) = (d, s) else { continue };
            first_time.get_or_insert(f.time);
            let g = s.gpp_umol_m2_s * step_s * GC_PER_UMOL;
            gpp_gc += g;
            if g > 0.0 {
                w_disc += g * s.discrimination_permil;
                w_d13c_air += g * d.d13c_co2_permil;
            }
            t_sum += d.t_air_c;
            beta_sum += s.beta;
            n += 1;
            seconds += step_s;
        }
        if n == 0 || gpp_gc <= 0.0 {
            return Err(crate::error::Error::msg(format!(
                "{}: the first year of the run has no step with photosynthesis, so the pools cannot \
                 be started at a steady state (a run of cold months alone, when frost or frozen soil \
                 stops photosynthesis, or of leafless months: run a whole year)",
                site.path.display()
            )));
        }
        let days = seconds / SECONDS_PER_DAY;
        let t_mean = (t_sum / n as f64).clamp(T_SOIL_RANGE_C.0, T_SOIL_RANGE_C.1);
        let mean = MeanDrivers {
            assimilation_gc_m2_day: gpp_gc / days,
            t_soil_c: t_mean,
            moisture: beta_sum / n as f64,
            turnover_factor: Some(mean_turnover_factor(
                &model,
                first_year,
                t_mean,
                step_s / SECONDS_PER_DAY,
            )?),
        };
        let mean_disc = w_disc / gpp_gc;
        let mean_d13c_air = w_d13c_air / gpp_gc;
        let r_standard = model.settings().r_standard();
        let steady_forcing = Forcing {
            assimilation_gc_m2_day: mean.assimilation_gc_m2_day,
            d13c_assimilate_permil: product_delta_permil(mean_d13c_air, mean_disc),
            t_soil_c: mean.t_soil_c,
            moisture: mean.moisture,
        };
        let report = model.steady_state_report_at(&steady_forcing, mean.turnover_factor)?;
        let state = match &site.history {
            Some(h) => {
                let t0 = first_time.expect("n > 0");
                // Beyond the history's last year its last value holds: carry the pools to there.
                let last = h.rows().last().map_or(f64::INFINITY, |r| r.year);
                let start_year =
                    (f64::from(t0.year()) + f64::from(t0.day_of_year() - 1) / 365.25).min(last);
                model
                    .spin_up_with_history(h, mean_disc, &mean, start_year)
                    .with_context(|| {
                        format!(
                            "{}: spin-up through the atmospheric history to {start_year:.2}",
                            site.path.display()
                        )
                    })?
            }
            None => model.steady_state_at(&steady_forcing, mean.turnover_factor)?,
        };
        let pool_names = model
            .network()
            .pools()
            .iter()
            .map(|p| p.name.clone())
            .collect();
        Ok(Self {
            model,
            state,
            t_soil_c: mean.t_soil_c,
            last_d13c_assimilate: steady_forcing.d13c_assimilate_permil,
            soil_of_day: None,
            r_standard,
            diagnostics: PoolDiagnostics {
                mean_age_respired_days: report.mean_age_respired_days,
                mean_age_ra_days: report.mean_age_ra_days,
                mean_age_rh_days: report.mean_age_rh_days,
                effective_lag_days: None,
                effective_lag_r: f64::NAN,
                spin_up: mean,
                spin_up_discrimination_permil: mean_disc,
                with_history: site.history.is_some(),
                pool_names,
            },
        })
    }

    /// Runs the first (whole) year once through the pools from their steady state and keeps the
    /// pools it ends with, so the fast pools start where the year's end leaves them rather than at
    /// their annual mean (they would release their surplus in the first weeks otherwise) and the
    /// slower ones a year nearer the cycle a repeating year settles into. Soil temperature and the
    /// assimilate's δ restart as before.
    fn cycle(
        &mut self,
        first_year: &[(ForcingStep, Option<SiteDrivers>, Option<SiteStep>)],
        step_days: f64,
    ) -> Result<()> {
        let (t_soil_c, d13c) = (self.t_soil_c, self.last_d13c_assimilate);
        for (f, d, s) in first_year {
            if let (Some(d), Some(s)) = (d, s) {
                self.step(f.time.date(), d, s, step_days)?;
            }
        }
        self.t_soil_c = t_soil_c;
        self.last_d13c_assimilate = d13c;
        self.soil_of_day = None;
        Ok(())
    }

    fn step(
        &mut self,
        date: LocalDate,
        d: &SiteDrivers,
        s: &SiteStep,
        step_days: f64,
    ) -> Result<RespirationStep> {
        // Soil temperature: running mean of air temperature with a time constant of a week, held
        // within the range of the decomposition response (snow and soil insulate the deep cold).
        self.t_soil_c = running_mean_step(
            self.t_soil_c,
            d.t_air_c,
            step_days,
            SOIL_TEMPERATURE_LAG_DAYS,
        )
        .clamp(T_SOIL_RANGE_C.0, T_SOIL_RANGE_C.1);
        if s.d13c_assimilate_permil.is_finite() {
            self.last_d13c_assimilate = s.d13c_assimilate_permil;
        }
        // Heterotrophic rates follow the soil's temperature and moisture as they stand at the first
        // step of each day: the weekly running mean hardly moves within a day, and holding them lets
        // the exact method reuse its matrix exponential for the rest of the day.
        let (t_soil_c, moisture) = match self.soil_of_day {
            Some((day, t, m)) if day == date => (t, m),
            _ => {
                self.soil_of_day = Some((date, self.t_soil_c, s.beta));
                (self.t_soil_c, s.beta)
            }
        };
        let forcing = Forcing {
            assimilation_gc_m2_day: s.gpp_umol_m2_s * SECONDS_PER_DAY * GC_PER_UMOL,
            d13c_assimilate_permil: self.last_d13c_assimilate,
            t_soil_c,
            moisture,
        };
        let r: StepResult = self.model.step(&mut self.state, &forcing, step_days)?;
        let per_s = 1.0 / (step_days * SECONDS_PER_DAY * GC_PER_UMOL);
        let delta = |x: Option<f64>| x.unwrap_or(f64::NAN);
        Ok(RespirationStep {
            reco_umol_m2_s: r.reco().c_g_m2() * per_s,
            ra_umol_m2_s: r.ra.c_g_m2() * per_s,
            rh_umol_m2_s: r.rh.c_g_m2() * per_s,
            export_umol_m2_s: r.export.c_g_m2() * per_s,
            d13c_reco: delta(r.d13c_reco_permil()),
            d13c_ra: delta(r.d13c_ra_permil()),
            d13c_rh: delta(r.d13c_rh_permil()),
        })
    }

    /// δ13C (‰) of the pool that receives the largest share of assimilation (the leaf labile pool
    /// of the default network), if it holds carbon.
    fn leaf_substrate_d13c(&self) -> Option<f64> {
        let pools = self.model.network().pools();
        let i = (0..pools.len()).max_by(|&a, &b| {
            pools[a]
                .assimilation_share
                .total_cmp(&pools[b].assimilation_share)
        })?;
        self.state.pool_d13c_permil(i, self.r_standard)
    }

    fn end_of_day(&mut self, sink: &mut dyn StepSink, date: Option<LocalDate>) -> Result<()> {
        let Some(date) = date else { return Ok(()) };
        let n = self.state.len();
        let c: Vec<f64> = (0..n).map(|i| self.state.pool_c_g_m2(i)).collect();
        let d: Vec<f64> = (0..n)
            .map(|i| {
                self.state
                    .pool_d13c_permil(i, self.r_standard)
                    .unwrap_or(f64::NAN)
            })
            .collect();
        sink.pools_daily(date, &c, &d)
    }
}

/// Mean over the first year of the responsive pools' turnover multiplier f(T)·g(β), with soil
/// temperature and moisture as the run will see them (the running mean of air temperature started
/// at the year's mean, held with β from each day's first step): the pools' steady state at the
/// mean of the rates, not at the rate of the mean temperature, is what a repeating year keeps.
fn mean_turnover_factor(
    model: &PoolModel,
    first_year: &[(ForcingStep, Option<SiteDrivers>, Option<SiteStep>)],
    t_start_c: f64,
    step_days: f64,
) -> Result<f64> {
    let response = model.settings().response();
    let (mut t_soil, mut held, mut sum, mut n) = (t_start_c, None, 0.0, 0usize);
    for (f, d, s) in first_year {
        let (Some(d), Some(s)) = (d, s) else { continue };
        t_soil = running_mean_step(t_soil, d.t_air_c, step_days, SOIL_TEMPERATURE_LAG_DAYS)
            .clamp(T_SOIL_RANGE_C.0, T_SOIL_RANGE_C.1);
        let factor = match held {
            Some((day, factor)) if day == f.time.date() => factor,
            _ => {
                let factor = response.factor(t_soil, s.beta)?;
                held = Some((f.time.date(), factor));
                factor
            }
        };
        sum += factor;
        n += 1;
    }
    Ok(sum / n.max(1) as f64)
}

/// The lag (days) at which daily δR correlates best with the daily δ13C of the assimilate of
/// earlier days (largest |r|), and that r.
fn effective_lag(daily: &[PeriodRow]) -> (Option<usize>, f64) {
    let dr: Vec<f64> = daily
        .iter()
        .map(|r| r.values[period_col("d13c_respiration")])
        .collect();
    let dp: Vec<f64> = daily
        .iter()
        .map(|r| r.values[period_col("d13c_assimilate")])
        .collect();
    let Ok(settings) = LagSettings::new(MAX_LAG_DAYS.min(dr.len().saturating_sub(3)), 1) else {
        return (None, f64::NAN);
    };
    let lag = lag_analysis(&dr, &dp, &settings);
    match lag.best_lag_days {
        Some(k) => (Some(k), lag.lags.get(k).map_or(f64::NAN, |l| l.r)),
        None => (None, f64::NAN),
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PeriodKind {
    Daily,
    Monthly,
    Annual,
}

/// A period's identity: (year, month, day) with the parts finer than the period set to 0.
type PeriodKey = (i32, u32, u32);

impl PeriodKind {
    /// The period of the day `(year, month, day)`.
    fn key(self, (y, m, d): PeriodKey) -> PeriodKey {
        match self {
            PeriodKind::Daily => (y, m, d),
            PeriodKind::Monthly => (y, m, 0),
            PeriodKind::Annual => (y, 0, 0),
        }
    }

    /// YYYY-MM-DD, YYYY-MM or YYYY.
    fn label(self, (y, m, d): PeriodKey) -> String {
        match self {
            PeriodKind::Daily => format!("{y:04}-{m:02}-{d:02}"),
            PeriodKind::Monthly => format!("{y:04}-{m:02}"),
            PeriodKind::Annual => format!("{y:04}"),
        }
    }
}

/// Running sums of one period.
#[derive(Debug, Clone, Default)]
struct Sums {
    steps: usize,
    filled: usize,
    missing: usize,
    gpp: f64,
    gpp_c3: f64,
    gpp_c4: f64,
    w_disc: f64,
    w_disc_c3: f64,
    w_disc_c4: f64,
    w_d13c: f64,
    w_cica_c3: f64,
    w_cica_c4: f64,
    reco: f64,
    ra: f64,
    rh: f64,
    export: f64,
    w_d13c_reco: f64,
    w_d13c_ra: f64,
    w_d13c_rh: f64,
    t_air: f64,
    vpd: f64,
    ppfd: f64,
    n_drivers: usize,
    precip: f64,
    transpiration: f64,
    soil_evaporation: f64,
    beta: f64,
}

impl Sums {
    fn row(&self) -> Vec<f64> {
        let ratio = |a: f64, b: f64| if b > 0.0 { a / b } else { f64::NAN };
        let mean = |a: f64, n: usize| if n > 0 { a / n as f64 } else { f64::NAN };
        let d13c_p = ratio(self.w_d13c, self.gpp);
        let d13c_r = ratio(self.w_d13c_reco, self.reco);
        let diseq = d13c_r - d13c_p;
        vec![
            self.steps as f64,
            self.filled as f64,
            self.missing as f64,
            self.gpp,
            self.gpp_c3,
            self.gpp_c4,
            ratio(self.gpp_c4, self.gpp),
            ratio(self.w_disc, self.gpp),
            ratio(self.w_disc_c3, self.gpp_c3),
            ratio(self.w_disc_c4, self.gpp_c4),
            d13c_p,
            ratio(self.w_cica_c3, self.gpp_c3),
            ratio(self.w_cica_c4, self.gpp_c4),
            self.reco,
            self.ra,
            self.rh,
            self.reco - self.gpp,
            self.export,
            d13c_r,
            ratio(self.w_d13c_ra, self.ra),
            ratio(self.w_d13c_rh, self.rh),
            diseq,
            self.reco * diseq,
            mean(self.t_air, self.n_drivers),
            mean(self.vpd, self.n_drivers),
            mean(self.ppfd, self.n_drivers),
            self.precip,
            self.transpiration,
            self.soil_evaporation,
            mean(self.beta, self.n_drivers),
        ]
    }
}

struct Aggregator {
    kind: PeriodKind,
    step_minutes: u32,
    current: Option<(PeriodKey, Sums)>,
    current_date: Option<LocalDate>,
    rows: Vec<PeriodRow>,
}

impl Aggregator {
    fn new(kind: PeriodKind, step_minutes: u32) -> Self {
        Self {
            kind,
            step_minutes,
            current: None,
            current_date: None,
            rows: Vec::new(),
        }
    }

    /// True when a period is open and the day `ymd` belongs to another one.
    fn current_key_differs(&self, ymd: PeriodKey) -> bool {
        self.current
            .as_ref()
            .is_some_and(|(k, _)| *k != self.kind.key(ymd))
    }

    /// Adds the step `v` of the day `date`, `ymd` its (year, month, day), to its period: its
    /// sums when `sum` is set, else only where the period starts and ends (no row is kept).
    fn add(&mut self, v: &StepView<'_>, date: LocalDate, ymd: PeriodKey, step_s: f64, sum: bool) {
        let f = v.forcing;
        let key = self.kind.key(ymd);
        if self.current.as_ref().is_none_or(|(k, _)| *k != key) {
            if sum {
                self.flush();
            }
            self.current = Some((key, Sums::default()));
        }
        self.current_date = Some(date);
        if !sum {
            return;
        }
        let (_, sums) = self.current.as_mut().expect("set above");
        sums.steps += 1;
        sums.filled += usize::from(f.filled);
        let (Some(_), Some(s)) = (v.drivers, v.site) else {
            sums.missing += 1;
            return;
        };
        let to_gc = step_s * GC_PER_UMOL;
        let g = s.gpp_umol_m2_s * to_gc;
        sums.gpp += g;
        if g > 0.0 {
            sums.w_disc += g * s.discrimination_permil;
            sums.w_d13c += g * s.d13c_assimilate_permil;
        }
        for (idx, gpp_part, w_disc, w_cica) in [
            (
                v.c3,
                &mut sums.gpp_c3,
                &mut sums.w_disc_c3,
                &mut sums.w_cica_c3,
            ),
            (
                v.c4,
                &mut sums.gpp_c4,
                &mut sums.w_disc_c4,
                &mut sums.w_cica_c4,
            ),
        ] {
            if let Some(i) = idx {
                let p = &s.pathways[i];
                let gp = p.gpp_umol_m2_s * to_gc;
                *gpp_part += gp;
                if gp > 0.0 {
                    *w_disc += gp * p.canopy.discrimination_permil;
                    *w_cica += gp * p.canopy.ci_ca;
                }
            }
        }
        if let Some(r) = v.respiration {
            let (reco, ra, rh) = (
                r.reco_umol_m2_s * to_gc,
                r.ra_umol_m2_s * to_gc,
                r.rh_umol_m2_s * to_gc,
            );
            sums.reco += reco;
            sums.ra += ra;
            sums.rh += rh;
            sums.export += r.export_umol_m2_s * to_gc;
            if reco > 0.0 {
                sums.w_d13c_reco += reco * r.d13c_reco;
            }
            if ra > 0.0 {
                sums.w_d13c_ra += ra * r.d13c_ra;
            }
            if rh > 0.0 {
                sums.w_d13c_rh += rh * r.d13c_rh;
            }
        }
        sums.t_air += f.t_air_c;
        sums.vpd += f.vpd_kpa;
        sums.ppfd += f.ppfd_umol_m2_s;
        sums.n_drivers += 1;
        sums.precip += f.precip_mm;
        sums.transpiration += s.transpiration_mm;
        sums.soil_evaporation += s.soil_evaporation_mm;
        sums.beta += s.beta;
    }

    fn flush(&mut self) {
        if let Some((key, sums)) = self.current.take() {
            let (y, m, d) = key;
            let start = |y, m| LocalTime::from_ymdhm(y, m, d.max(1), 0, 0);
            let end = match self.kind {
                PeriodKind::Daily => start(y, m).map(|t| t.plus_minutes(1440)),
                PeriodKind::Monthly if m == 12 => start(y + 1, 1),
                PeriodKind::Monthly => start(y, m + 1),
                PeriodKind::Annual => start(y + 1, 1),
            };
            // Steps in the whole period (−1 past year 9999, where no period is complete).
            let expected = match (start(y, m.max(1)), end) {
                (Ok(a), Ok(b)) => (b.minutes() - a.minutes()) / i64::from(self.step_minutes),
                _ => -1,
            };
            let mut values = sums.row();
            values.push(f64::from(u8::from(sums.steps as i64 == expected)));
            self.rows.push(PeriodRow {
                key: self.kind.label(key),
                values,
            });
        }
    }
}

/// Reads an atmospheric history file (`year,co2,d13c`), naming file, line and column on errors.
pub fn read_history(path: &std::path::Path) -> Result<AtmosphereHistory> {
    use isodisc_model::pools::AtmosphereRow;
    let table = crate::table::CsvTable::read(path)
        .with_context(|| format!("atmospheric history {}", path.display()))?;
    let column = |name: &str| table.column(name).and_then(|c| table.numbers(c));
    let (years, co2, d13c) = (column("year")?, column("co2")?, column("d13c")?);
    let rows = years
        .iter()
        .zip(&co2)
        .zip(&d13c)
        .map(|((&year, &co2_umol_mol), &d13c_permil)| AtmosphereRow {
            year,
            co2_umol_mol,
            d13c_permil,
        })
        .collect();
    AtmosphereHistory::new(rows).map_err(|e| {
        // The model names the row as `history[i].field`: turn i into the file's line.
        let row = match &e {
            isodisc_model::ModelError::InvalidInput { name, .. } => name
                .strip_prefix("history[")
                .and_then(|r| r.split(']').next())
                .and_then(|i| i.parse::<usize>().ok()),
            _ => None,
        };
        match row {
            Some(i) => Error::msg(format!(
                "atmospheric history {}: line {}: {e}",
                path.display(),
                table.line(i)
            )),
            None => Error::msg(format!("atmospheric history {}: {e}", path.display())),
        }
    })
}
