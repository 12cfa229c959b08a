//! Leaf area from the weather, and the cold rule that stops photosynthesis in frost and frozen soil.
//!
//! **Growing Season Index** (Jolly, Nemani & Running 2005, Global Change Biol.): each day gets
//! iGSI = iTmin · iVPD · iPhoto, three linear ramps of the day's minimum air temperature (0 at or
//! below −2 °C, 1 at or above 5 °C), the day's mean vapour pressure deficit (1 at or below 0.9 kPa,
//! 0 at or above 4.1 kPa) and the photoperiod (0 at or below 10 h, 1 at or above 11 h); the GSI is
//! the running mean of iGSI over 21 days. LAI = lai_min + (lai_max − lai_min)·GSI.
//!
//! - Kind `gsi`: the index as published (trees: deciduous with lai_min = 0, evergreen with
//!   lai_min > 0).
//! - Kind `gsi-soil-water`: the daily index is also multiplied by the day's mean soil-water factor
//!   β (0–1), so grasses and crops lose their leaves in dry seasons as well as cold ones. Adding a
//!   water term to the GSI is common practice for water-limited vegetation (e.g. Forkel et al.
//!   2014, Biogeosciences, from memory); the form used here (a plain product with β) is ours.
//! - Kind `gsi-budburst` (deciduous trees): the `gsi` index, but LAI stays at lai_min each year
//!   until budburst. Budburst is a thermal-time (spring-warming) model: forcing F = Σ max(T̄ − 5 °C, 0)
//!   over the completed days since 1 January (1 July in the southern hemisphere, latitude < 0), with
//!   T̄ the day's mean air temperature; budburst is the first day with F ≥ F* = 200 °C·d. Thermal
//!   time above 5 °C is the forcing of Cannell & Smith (1983, J. Appl. Ecol.) and Murray, Cannell &
//!   Smith (1989, J. Appl. Ecol.); F* = 200 °C·d is a mid value of their thermal times to budburst
//!   of well-chilled temperate broadleaf trees (from memory; they count from 1 February, and at
//!   temperate sites January adds few degree-days). Chilling is not modelled. The sum and the
//!   budburst are cleared at each 1 January (1 July in the south), so leaves that fell in autumn
//!   stay off through mild winter spells. At the start of a run the days since that date are counted
//!   as if all had the first step's temperature, so a run that starts in summer starts in leaf.
//! - The window holds completed days: the LAI of a day is set by the 21 days before it. At the
//!   start of a run the window is filled with the index of the first step (its temperature standing
//!   for the day's minimum, its VPD for the day's mean), so a run that starts in winter starts
//!   leafless and one that starts in summer starts in leaf.
//! - Photoperiod: sunrise to sunset with the Sun's centre at 90.833° zenith (NOAA solar equations;
//!   see [`crate::canopy::solar`]); 24 h in polar day, 0 in polar night.
//!
//! **Cold rule** (per step, for every pathway): photosynthetic capacity is multiplied by
//! f_cold = iTmin(minimum air temperature of the last 24 h), the same ramp as the GSI's
//! (−2 °C → 0, 5 °C → 1); and photosynthesis stops (f_cold = 0) while the soil is frozen: soil
//! temperature ≤ 0 °C, when roots can take up no water (common practice; from memory). Soil
//! temperature is the running mean of air temperature with a 7-day time constant (common practice,
//! from memory), started at the first step's air temperature. With f_cold = 0 the leaves are not
//! solved at all: no assimilation, stomata closed, no transpiration. Because the last 24 h include
//! the current step, f_cold > 0 implies an air temperature above −2 °C, so the leaf model is never
//! asked for a temperature below its valid range, whatever the weather.

use std::collections::VecDeque;

use crate::error::{ModelError, Result, check_range};

/// Minimum-temperature ramp of the GSI, °C: (index 0 at or below, index 1 at or above). Jolly,
/// Nemani & Running (2005).
pub const GSI_TMIN_C: (f64, f64) = (-2.0, 5.0);
/// VPD ramp of the GSI, kPa: (index 1 at or below, index 0 at or above). Jolly et al. (2005).
pub const GSI_VPD_KPA: (f64, f64) = (0.9, 4.1);
/// Photoperiod ramp of the GSI, hours: (index 0 at or below, index 1 at or above). Jolly et al.
/// (2005).
pub const GSI_PHOTOPERIOD_H: (f64, f64) = (10.0, 11.0);
/// Length of the GSI's running mean, days. Jolly et al. (2005).
pub const GSI_WINDOW_DAYS: usize = 21;
/// Time constant of the running mean of air temperature that stands for soil temperature, days
/// (common practice, from memory: the soil lags and damps the air).
pub const SOIL_TEMPERATURE_LAG_DAYS: f64 = 7.0;
/// Base temperature of the budburst forcing, °C: day-degrees above 5 °C (Cannell & Smith 1983;
/// Murray, Cannell & Smith 1989).
pub const BUDBURST_BASE_C: f64 = 5.0;
/// Forcing to budburst F*, °C·d above [`BUDBURST_BASE_C`]: a mid value of the thermal times of
/// well-chilled temperate broadleaf trees in Murray, Cannell & Smith (1989, J. Appl. Ecol.; from
/// memory).
pub const BUDBURST_FORCING_DEGREE_DAYS: f64 = 200.0;
/// Soil temperature at or below which the soil is frozen and photosynthesis stops, °C.
pub const FROZEN_SOIL_C: f64 = 0.0;

/// A linear ramp: 0 at or below `lo`, 1 at or above `hi`, linear between.
pub fn ramp(x: f64, lo: f64, hi: f64) -> f64 {
    ((x - lo) / (hi - lo)).clamp(0.0, 1.0)
}

/// The GSI's minimum-temperature index (0–1) for a daily minimum air temperature (°C).
pub fn index_tmin(tmin_c: f64) -> f64 {
    ramp(tmin_c, GSI_TMIN_C.0, GSI_TMIN_C.1)
}

/// The GSI's VPD index (0–1) for a daily mean vapour pressure deficit (kPa).
pub fn index_vpd(vpd_kpa: f64) -> f64 {
    1.0 - ramp(vpd_kpa, GSI_VPD_KPA.0, GSI_VPD_KPA.1)
}

/// The GSI's photoperiod index (0–1) for a day length (hours).
pub fn index_photoperiod(photoperiod_h: f64) -> f64 {
    ramp(photoperiod_h, GSI_PHOTOPERIOD_H.0, GSI_PHOTOPERIOD_H.1)
}

/// One day's index iGSI = iTmin · iVPD · iPhoto (Jolly et al. 2005), dimensionless.
pub fn daily_gsi(tmin_c: f64, vpd_kpa: f64, photoperiod_h: f64) -> f64 {
    index_tmin(tmin_c) * index_vpd(vpd_kpa) * index_photoperiod(photoperiod_h)
}

/// One step of a running mean with time constant `tau_days`: the mean moves towards `x` by
/// 1 − exp(−step/τ).
pub fn running_mean_step(mean: f64, x: f64, step_days: f64, tau_days: f64) -> f64 {
    mean + (1.0 - (-step_days / tau_days).exp()) * (x - mean)
}

/// Which phenology drives LAI.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PhenologyKind {
    /// The Growing Season Index as published: minimum temperature, VPD and photoperiod.
    Gsi,
    /// The index times the day's mean soil-water factor β (grasses, crops).
    GsiSoilWater,
    /// The published index, with LAI held at lai_min until a thermal-time budburst (deciduous
    /// trees).
    GsiBudburst,
}

impl PhenologyKind {
    /// Every kind, in the order of [`PhenologyKind::as_str`]'s names.
    pub const ALL: [PhenologyKind; 3] = [
        PhenologyKind::Gsi,
        PhenologyKind::GsiSoilWater,
        PhenologyKind::GsiBudburst,
    ];

    /// `gsi`, `gsi-soil-water` or `gsi-budburst`.
    pub fn as_str(self) -> &'static str {
        match self {
            PhenologyKind::Gsi => "gsi",
            PhenologyKind::GsiSoilWater => "gsi-soil-water",
            PhenologyKind::GsiBudburst => "gsi-budburst",
        }
    }

    /// The kind called `name`; the error lists the names.
    pub fn parse(name: &str) -> Result<Self> {
        Self::ALL
            .into_iter()
            .find(|k| k.as_str() == name)
            .ok_or_else(|| {
                ModelError::InvalidConfig(format!(
                    "phenology = \"{name}\": use \"gsi\" (minimum temperature, VPD, photoperiod) or \
                     \"gsi-soil-water\" (also soil water; grasses and crops) or \"gsi-budburst\" \
                     (leafless until a thermal-time budburst; deciduous trees)"
                ))
            })
    }
}

/// Phenology settings of one pathway.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PhenologySettings {
    kind: PhenologyKind,
    lai_min_m2_m2: f64,
    lai_max_m2_m2: f64,
}

impl PhenologySettings {
    /// LAI between `lai_min_m2_m2` (GSI = 0) and `lai_max_m2_m2` (GSI = 1), both in [0, 20] m² m⁻²
    /// with min ≤ max.
    pub fn new(kind: PhenologyKind, lai_min_m2_m2: f64, lai_max_m2_m2: f64) -> Result<Self> {
        check_range("lai_max", lai_max_m2_m2, 0.0, 20.0)?;
        check_range("lai_min", lai_min_m2_m2, 0.0, lai_max_m2_m2)?;
        Ok(Self {
            kind,
            lai_min_m2_m2,
            lai_max_m2_m2,
        })
    }

    /// The kind.
    pub fn kind(&self) -> PhenologyKind {
        self.kind
    }

    /// LAI when the GSI is 0 (m² m⁻²).
    pub fn lai_min_m2_m2(&self) -> f64 {
        self.lai_min_m2_m2
    }

    /// LAI when the GSI is 1 (m² m⁻²).
    pub fn lai_max_m2_m2(&self) -> f64 {
        self.lai_max_m2_m2
    }

    /// LAI for a GSI in [0, 1] (m² m⁻²).
    pub fn lai_for(&self, gsi: f64) -> f64 {
        self.lai_min_m2_m2 + (self.lai_max_m2_m2 - self.lai_min_m2_m2) * gsi.clamp(0.0, 1.0)
    }
}

/// The weather of one day so far.
#[derive(Debug, Clone, Copy, PartialEq)]
struct DaySoFar {
    key: (i32, u32),
    tmin_c: f64,
    t_sum: f64,
    vpd_sum: f64,
    beta_sum: f64,
    n: usize,
    photoperiod_h: f64,
}

/// Whether `year` has 366 days (Gregorian).
fn is_leap(year: i32) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

/// Day of year of 1 July in `year`.
fn first_of_july(year: i32) -> u32 {
    if is_leap(year) { 183 } else { 182 }
}

/// The forcing season of day `key` = (year, day of year): the year in which it began (1 January in
/// the north, 1 July in the south) and the number of days from its start to the day (0 on the
/// first day).
pub fn forcing_season(key: (i32, u32), southern: bool) -> (i32, u32) {
    let (year, doy) = key;
    if !southern {
        return (year, doy.saturating_sub(1));
    }
    let july = first_of_july(year);
    if doy >= july {
        (year, doy - july)
    } else {
        let prev = year - 1;
        let days_prev = if is_leap(prev) { 366 } else { 365 };
        (prev, doy + days_prev - first_of_july(prev))
    }
}

/// The budburst state: the forcing season, the forcing summed so far (°C·d) and whether budburst
/// has happened in it.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Budburst {
    season: i32,
    forcing_degree_days: f64,
    burst: bool,
}

/// The state of a GSI phenology: the 21-day window of daily indices, the day in progress and the
/// budburst state (kind `gsi-budburst`).
#[derive(Debug, Clone, PartialEq)]
pub struct Phenology {
    settings: PhenologySettings,
    window: VecDeque<f64>,
    day: Option<DaySoFar>,
    southern: bool,
    budburst: Option<Budburst>,
}

impl Phenology {
    /// A phenology with an empty window (filled at the first step), in the northern hemisphere.
    pub fn new(settings: PhenologySettings) -> Self {
        Self {
            settings,
            window: VecDeque::with_capacity(GSI_WINDOW_DAYS + 1),
            day: None,
            southern: false,
            budburst: None,
        }
    }

    /// The same phenology at a site at `latitude_deg` (°, north positive): south of the equator
    /// the budburst forcing counts from 1 July instead of 1 January.
    pub fn at_latitude(mut self, latitude_deg: f64) -> Self {
        self.southern = latitude_deg < 0.0;
        self
    }

    /// The budburst forcing summed over the completed days of the current season (°C·d above
    /// [`BUDBURST_BASE_C`]); NaN before the first step or for kinds without budburst.
    pub fn forcing_degree_days(&self) -> f64 {
        self.budburst.map_or(f64::NAN, |b| b.forcing_degree_days)
    }

    /// Whether budburst has happened in the current season (always true for kinds without one).
    pub fn budburst(&self) -> bool {
        self.budburst.is_none_or(|b| b.burst)
    }

    /// Adds one completed day of mean air temperature `t_mean_c` (°C) to the budburst forcing.
    fn add_forcing_day(&mut self, key: (i32, u32), t_mean_c: f64) {
        let (season, _) = forcing_season(key, self.southern);
        if let Some(b) = &mut self.budburst {
            if b.season != season {
                *b = Budburst {
                    season,
                    forcing_degree_days: 0.0,
                    burst: false,
                };
            }
            b.forcing_degree_days += (t_mean_c - BUDBURST_BASE_C).max(0.0);
            b.burst |= b.forcing_degree_days >= BUDBURST_FORCING_DEGREE_DAYS;
        }
    }

    /// The settings.
    pub fn settings(&self) -> &PhenologySettings {
        &self.settings
    }

    /// The current GSI (21-day mean of the daily index, 0–1); NaN before the first step.
    pub fn gsi(&self) -> f64 {
        if self.window.is_empty() {
            f64::NAN
        } else {
            self.window.iter().sum::<f64>() / self.window.len() as f64
        }
    }

    fn index(&self, tmin_c: f64, vpd_kpa: f64, beta: f64, photoperiod_h: f64) -> f64 {
        let i = daily_gsi(tmin_c, vpd_kpa, photoperiod_h);
        match self.settings.kind {
            PhenologyKind::Gsi | PhenologyKind::GsiBudburst => i,
            PhenologyKind::GsiSoilWater => i * beta.clamp(0.0, 1.0),
        }
    }

    /// Takes one step's weather (day `key` = (year, day of year), air temperature °C, VPD kPa,
    /// soil-water factor β 0–1, the day's photoperiod in hours) and returns the LAI for the step
    /// (m² m⁻²), set by the completed days before it.
    pub fn step(
        &mut self,
        key: (i32, u32),
        t_air_c: f64,
        vpd_kpa: f64,
        beta: f64,
        photoperiod_h: f64,
    ) -> f64 {
        if self.window.is_empty() {
            let first = self.index(t_air_c, vpd_kpa, beta, photoperiod_h);
            self.window
                .extend(std::iter::repeat_n(first, GSI_WINDOW_DAYS));
            if self.settings.kind == PhenologyKind::GsiBudburst {
                let (season, days_before) = forcing_season(key, self.southern);
                let forcing = f64::from(days_before) * (t_air_c - BUDBURST_BASE_C).max(0.0);
                self.budburst = Some(Budburst {
                    season,
                    forcing_degree_days: forcing,
                    burst: forcing >= BUDBURST_FORCING_DEGREE_DAYS,
                });
            }
        }
        match &mut self.day {
            Some(d) if d.key == key => {
                d.tmin_c = d.tmin_c.min(t_air_c);
                d.t_sum += t_air_c;
                d.vpd_sum += vpd_kpa;
                d.beta_sum += beta;
                d.n += 1;
            }
            _ => {
                if let Some(d) = self.day.take() {
                    let n = d.n as f64;
                    let i = self.index(d.tmin_c, d.vpd_sum / n, d.beta_sum / n, d.photoperiod_h);
                    self.window.push_back(i);
                    while self.window.len() > GSI_WINDOW_DAYS {
                        self.window.pop_front();
                    }
                    self.add_forcing_day(d.key, d.t_sum / n);
                }
                self.day = Some(DaySoFar {
                    key,
                    tmin_c: t_air_c,
                    t_sum: t_air_c,
                    vpd_sum: vpd_kpa,
                    beta_sum: beta,
                    n: 1,
                    photoperiod_h,
                });
            }
        }
        if self.budburst() {
            self.settings.lai_for(self.gsi())
        } else {
            self.settings.lai_min_m2_m2
        }
    }
}

/// The state of the cold rule: the air temperatures of the last 24 h and the soil temperature.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ColdState {
    recent: VecDeque<f64>,
    t_soil_c: Option<f64>,
    /// The minimum of `recent` as the left fold `f64::min` from +∞ gives it, bit for bit.
    tmin: Option<f64>,
}

/// What the cold rule decided for one step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColdStep {
    /// Factor on photosynthetic capacity (0–1); 0 stops photosynthesis.
    pub factor: f64,
    /// Minimum air temperature of the last 24 h, this step included (°C).
    pub tmin_24h_c: f64,
    /// Soil temperature (°C): running mean of air temperature.
    pub t_soil_c: f64,
}

impl ColdState {
    /// Takes one step of `step_hours` hours at air temperature `t_air_c` (°C) and returns the
    /// cold factor f_cold = iTmin(min of the last 24 h), 0 when the soil is frozen.
    pub fn step(&mut self, t_air_c: f64, step_hours: f64) -> ColdStep {
        let per_day = (24.0 / step_hours).round().max(1.0) as usize;
        // The window's minimum is carried from step to step rather than folded anew: the fold
        // over the window after dropping values strictly above its minimum ends on the same
        // bits (the result follows from the values equal to the minimum alone, met from an
        // accumulator strictly above it either way), and appending a value is one more step of
        // the fold. Dropping the minimum itself, a NaN or a tie refolds.
        let mut carried = self.tmin;
        self.recent.push_back(t_air_c);
        while self.recent.len() > per_day {
            let old = self.recent.pop_front().expect("longer than per_day >= 1");
            if carried.is_some_and(|m| old.partial_cmp(&m) != Some(std::cmp::Ordering::Greater)) {
                carried = None;
            }
        }
        let t_soil_c = match self.t_soil_c {
            None => t_air_c,
            Some(t) => running_mean_step(t, t_air_c, step_hours / 24.0, SOIL_TEMPERATURE_LAG_DAYS),
        };
        self.t_soil_c = Some(t_soil_c);
        let tmin_24h_c = match carried {
            Some(m) => f64::min(m, t_air_c),
            None => self.recent.iter().copied().fold(f64::INFINITY, f64::min),
        };
        self.tmin = Some(tmin_24h_c);
        let factor = if t_soil_c <= FROZEN_SOIL_C {
            0.0
        } else {
            index_tmin(tmin_24h_c)
        };
        ColdStep {
            factor,
            tmin_24h_c,
            t_soil_c,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The carried 24-h minimum is the minimum of the last day's values recomputed from them, bit
    /// for bit, through ties of +0 and −0, NaN and a step length that grows (the window shrinks) (common practice:
    /// compare a shortcut with the definition it replaces).
    #[test]
    fn carried_minimum_is_the_windows_minimum() {
        let mut c = ColdState::default();
        let mut all = Vec::new();
        let mut x: u64 = 12345;
        for i in 0..3000 {
            // A small linear congruential sequence (Knuth's MMIX constants) of temperatures on
            // a coarse grid, so that ties are frequent.
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let t = match (x >> 33) % 23 {
                0 => 0.0,
                1 => -0.0,
                2 => f64::NAN,
                k => (k as f64 - 12.0) * 0.5,
            };
            let hours = if i < 1500 { 0.5 } else { 1.0 };
            let per_day = (24.0 / hours) as usize;
            all.push(t);
            let got = c.step(t, hours).tmin_24h_c;
            let window = &all[all.len().saturating_sub(per_day)..];
            let want = window.iter().copied().fold(f64::INFINITY, f64::min);
            assert_eq!(got.to_bits(), want.to_bits(), "step {i}");
        }
    }

    #[test]
    fn window_fills_from_the_first_step_and_moves_daily() {
        let s = PhenologySettings::new(PhenologyKind::Gsi, 0.0, 4.0).unwrap();
        let mut p = Phenology::new(s);
        // A cold first step: leafless (iTmin = 0).
        assert_eq!(p.step((2025, 1), -5.0, 0.2, 1.0, 12.0), 0.0);
        // Warm days after it: each completed warm day adds 1/21 of the range.
        for day in 2..=3 {
            p.step((2025, day), 20.0, 0.5, 1.0, 14.0);
        }
        let lai = p.step((2025, 4), 20.0, 0.5, 1.0, 14.0);
        // Days 1 (cold, index 0), 2 and 3 (warm, index 1) completed: 2/21 of lai_max.
        assert!((lai - 4.0 * 2.0 / 21.0).abs() < 1e-12, "{lai}");
    }

    #[test]
    fn frozen_soil_stops_and_the_ramp_scales() {
        let mut c = ColdState::default();
        assert_eq!(c.step(-1.0, 1.0).factor, 0.0); // soil at −1 °C: frozen
        let mut c = ColdState::default();
        let s = c.step(1.5, 1.0); // soil 1.5 °C, minimum 1.5 °C: half way up −2…5 °C
        assert!((s.factor - 0.5).abs() < 1e-12);
    }
}
