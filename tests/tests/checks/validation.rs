//! Validation of site runs against published relationships: C3 discrimination across a rainfall
//! gradient, C4 discrimination across climates, δ13C of ecosystem respiration of a temperate
//! forest, annual GPP of vegetation types against biome compilations, and no photosynthesis in
//! frozen months. Each check names its source beside it.
//!
//! The weather is synthetic: [`Climate::hourly_weather`] turns a few climate parameters into a
//! year of hourly weather, deterministically (a seeded generator written here), and every case
//! runs through `isodisc run` in-process, as a user's site would. The relationships are
//! compilations of many sites, so a check asks that the model falls within their stated spread at a
//! matching climate, not that it reproduces one site.
//!
//! `cargo test -p isodisc-checks validation_table -- --ignored --nocapture` prints the table of
//! predicted against published values that README.md and docs/validation.md show.

use std::collections::BTreeMap;
use std::f64::consts::PI;
use std::fmt::Write as _;
use std::fs;
use std::path::Path;

use crate::common::run;

/// Solar constant, W m⁻² (Kopp & Lean 2011).
const SOLAR_CONSTANT_W_M2: f64 = 1361.0;
/// Clear-sky transmissivity per air mass (common practice for a clear, dry atmosphere; from
/// memory, a round value).
const CLEAR_SKY_TRANSMISSIVITY: f64 = 0.75;

/// A small deterministic generator (SplitMix64, Steele, Lea & Flood 2014), so the weather is the
/// same on every machine and needs no crate.
pub(crate) struct SplitMix(pub(crate) u64);

impl SplitMix {
    pub(crate) fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    pub(crate) fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Standard normal (Box–Muller).
    pub(crate) fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * PI * u2).cos()
    }
}

/// FAO-56 saturation vapour pressure, kPa, at `t_c` °C (Allen et al. 1998, eq. 11).
fn es_kpa(t_c: f64) -> f64 {
    0.6108 * (17.27 * t_c / (t_c + 237.3)).exp()
}

/// A climate described by a few parameters, from which [`Climate::hourly_weather`] makes a year.
#[derive(Debug, Clone)]
pub(crate) struct Climate {
    /// Latitude, degrees north (negative south); the site sits at longitude 0, UTC+0.
    pub latitude_deg: f64,
    /// Annual mean air temperature, °C.
    pub t_mean_c: f64,
    /// Half the difference between the warmest and the coldest day's mean temperature, °C.
    pub t_amplitude_c: f64,
    /// Mean daily temperature range (max − min) on dry days, °C.
    pub diurnal_range_c: f64,
    /// Annual precipitation, mm (the year's rain sums to it exactly).
    pub precip_mm: f64,
    /// Fraction of days with rain, (0, 1].
    pub wet_day_fraction: f64,
    /// Seasonality of rain: the wet-day probability is scaled by 1 + s·(warmth of the season),
    /// s in [−1, 1] (positive: summer rain, negative: winter rain).
    pub rain_seasonality: f64,
    /// Daily minimum temperature minus the dew point on dry days, °C (aridity of the air).
    pub dew_point_depression_c: f64,
    /// Mean cloud fraction on dry days, [0, 1] (wet days are overcast).
    pub cloudiness: f64,
    /// Seed of the day-to-day weather.
    pub seed: u64,
}

impl Climate {
    /// A year (2025, 8760 hours, timestamps marking the start of each hour, local time = UTC)
    /// as CSV with columns `time,t,vpd,sw,p,wind` (°C, kPa, W m⁻², mm, m s⁻¹), repeated for
    /// `years` calendar years from 2025 (the same weather every year).
    ///
    /// Day-mean temperature: annual mean + amplitude·season + AR(1) noise (σ 2 °C, ρ 0.7); the
    /// day's cycle is a cosine peaking at 15:00. Rain: a day is wet with the seasonal
    /// probability; amounts are exponential, rescaled so the year sums to `precip_mm`, falling
    /// over four afternoon hours. Dew point: the day's minimum minus the depression (a third of
    /// it on wet days); VPD = es(T) − es(min(Td, T)) (FAO-56). Shortwave: extraterrestrial
    /// radiation from solar geometry (declination after Cooper 1969) times a clear-sky
    /// transmissivity per air mass and (1 − 0.7·cloud) (common practice, from memory).
    pub fn hourly_weather(&self, years: i32) -> String {
        let mut rng = SplitMix(self.seed);
        let days = 365;
        let hemisphere = if self.latitude_deg < 0.0 { -1.0 } else { 1.0 };
        // Warmth of the season in [−1, 1]: coldest mid-January in the north, mid-July south.
        let season = |d: f64| -hemisphere * (2.0 * PI * (d - 15.0) / 365.0).cos();
        let mut anomaly = 0.0;
        let mut day_t = Vec::with_capacity(days);
        let mut rain = Vec::with_capacity(days);
        for d in 0..days {
            let s = season(d as f64);
            anomaly = 0.7 * anomaly + (1.0f64 - 0.49).sqrt() * 2.0 * rng.normal();
            day_t.push(self.t_mean_c + self.t_amplitude_c * s + anomaly);
            let p_wet = (self.wet_day_fraction * (1.0 + self.rain_seasonality * s)).clamp(0.0, 1.0);
            let wet = rng.uniform() < p_wet;
            let amount = -(1.0 - rng.uniform()).ln();
            rain.push(if wet { amount } else { 0.0 });
        }
        let total: f64 = rain.iter().sum();
        let scale = if total > 0.0 {
            self.precip_mm / total
        } else {
            0.0
        };
        let cloud_noise: Vec<f64> = (0..days).map(|_| rng.uniform()).collect();
        let lat = self.latitude_deg.to_radians();
        let mut out = String::from("time,t,vpd,sw,p,wind\n");
        for year in 2025..2025 + years {
            for d in 0..days {
                let wet = rain[d] > 0.0;
                let range = if wet {
                    0.5 * self.diurnal_range_c
                } else {
                    self.diurnal_range_c
                };
                let t_min = day_t[d] - 0.5 * range;
                let depression = if wet {
                    self.dew_point_depression_c / 3.0
                } else {
                    self.dew_point_depression_c
                };
                let t_dew = t_min - depression;
                let cloud = if wet {
                    0.85
                } else {
                    (self.cloudiness * 2.0 * cloud_noise[d]).min(1.0)
                };
                let doy = (d + 1) as f64;
                let decl = 23.45f64.to_radians() * (2.0 * PI * (284.0 + doy) / 365.0).sin();
                let (month, day) = month_day(d);
                for h in 0..24 {
                    let hour = h as f64;
                    let t = day_t[d] + 0.5 * range * (2.0 * PI * (hour - 15.0) / 24.0).cos();
                    let vpd = (es_kpa(t) - es_kpa(t_dew.min(t))).max(0.0);
                    // Mean of the hour's sun: the zenith at its middle.
                    let omega = (15.0 * (hour + 0.5 - 12.0)).to_radians();
                    let cos_z = lat.sin() * decl.sin() + lat.cos() * decl.cos() * omega.cos();
                    let sw = if cos_z > 0.01 {
                        SOLAR_CONSTANT_W_M2
                            * cos_z
                            * CLEAR_SKY_TRANSMISSIVITY.powf(1.0 / cos_z)
                            * (1.0 - 0.7 * cloud)
                    } else {
                        0.0
                    };
                    let p = if wet && (13..17).contains(&h) {
                        rain[d] * scale / 4.0
                    } else {
                        0.0
                    };
                    let wind = 2.0 + (2.0 * PI * (hour - 14.0) / 24.0).cos();
                    writeln!(
                        out,
                        "{year}-{month:02}-{day:02}T{h:02}:00,{t:.3},{vpd:.4},{sw:.2},{p:.4},{wind:.2}"
                    )
                    .expect("writing to a String");
                }
            }
        }
        out
    }
}

/// Month and day of month of day index `d` (0-based) of a 365-day year.
fn month_day(d: usize) -> (usize, usize) {
    const LEN: [usize; 12] = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let mut left = d;
    for (m, len) in LEN.iter().enumerate() {
        if left < *len {
            return (m + 1, left + 1);
        }
        left -= len;
    }
    unreachable!("day index {d} beyond a 365-day year")
}

/// The `[soil]` block of a validation site: a loam of 1.5 m (field capacity 0.30, wilting point
/// 0.12 m³ m⁻³; common textbook values for a loam, from memory), starting full.
const SOIL_BLOCK: &str = "[soil]\nfield_capacity = 0.30\nwilting_point = 0.12\nroot_depth_m = 1.5\n\
                          initial_water = 1.0\n";

/// A site file around `vegetation` (the `[vegetation.*]` blocks, verbatim), for `climate`, at
/// 100 m, CO2 420 µmol mol⁻¹ and δ13C −8.5‰ (about the atmosphere of the early 2020s; from
/// memory), with a `[pools]` block `pools` (may be empty).
pub(crate) fn site_text(climate: &Climate, vegetation: &str, pools: &str) -> String {
    format!(
        "[site]\nname = \"validation\"\nlatitude = {lat}\nlongitude = 0.0\nelevation_m = 100\n\
         utc_offset_h = 0\n\n{vegetation}\n{SOIL_BLOCK}\n[atmosphere]\nco2 = 420.0\n\
         d13c_co2 = -8.5\n\n[forcing]\npath = \"weather.csv\"\nstep_minutes = 60\n\n\
         [forcing.columns]\nt_air = \"t\"\nvpd = \"vpd\"\nsw = \"sw\"\nprecip = \"p\"\n\
         wind = \"wind\"\n\n{pools}\n",
        lat = climate.latitude_deg,
    )
}

/// Rows of a period table (`annual.csv`, `monthly.csv`, ...) as maps from column to number.
pub(crate) fn read_periods(path: &Path) -> Vec<BTreeMap<String, f64>> {
    let mut r = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            header
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.clone(), v.parse().unwrap_or(f64::NAN)))
                .collect()
        })
        .collect()
}

/// The outputs of one validation run.
pub(crate) struct RunOutput {
    /// `annual.csv`.
    pub annual: Vec<BTreeMap<String, f64>>,
    /// `monthly.csv`.
    pub monthly: Vec<BTreeMap<String, f64>>,
    /// The run's folder (kept while the value lives).
    pub _dir: tempfile::TempDir,
}

/// Runs `isodisc run` on a site of `climate` with `vegetation` blocks and `pools` for `years`
/// repeated years of weather, and reads the period tables back.
pub(crate) fn run_site(climate: &Climate, vegetation: &str, pools: &str, years: i32) -> RunOutput {
    let dir = tempfile::tempdir().unwrap();
    let site = dir.path().join("site.toml");
    fs::write(&site, site_text(climate, vegetation, pools)).unwrap();
    fs::write(
        dir.path().join("weather.csv"),
        climate.hourly_weather(years),
    )
    .unwrap();
    let out = dir.path().join("out");
    run(&[
        "run",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ])
    .unwrap_or_else(|e| panic!("validation run failed: {e}"));
    RunOutput {
        annual: read_periods(&out.join("annual.csv")),
        monthly: read_periods(&out.join("monthly.csv")),
        _dir: dir,
    }
}

/// A boreal climate: mean −1 °C, January about −16 °C, July about +14 °C, 500 mm (invented
/// parameters in the range of the boreal zone, from memory).
pub(crate) fn boreal_climate() -> Climate {
    Climate {
        latitude_deg: 62.0,
        t_mean_c: -1.0,
        t_amplitude_c: 15.0,
        diurnal_range_c: 8.0,
        precip_mm: 500.0,
        wet_day_fraction: 0.45,
        rain_seasonality: 0.3,
        dew_point_depression_c: 2.0,
        cloudiness: 0.5,
        seed: 62,
    }
}

/// Evergreen needleleaf trees with explicit parameters: Vcmax25 ≈ 40 and Jmax25 ≈ 75 µmol m⁻² s⁻¹
/// (needleleaf means of Kattge et al. 2009, from memory), g1 = 2.3 kPa^0.5 (Lin et al. 2015,
/// gymnosperm trees, from memory), LAI 3.
const NEEDLELEAF_C3: &str = "[vegetation.c3]\ncover = 1.0\nlai = 3.0\nclumping = 0.7\n\
                             params = { vcmax25 = 40.0, jmax25 = 75.0, g1 = 2.3 }\n";

/// Share of annual GPP fixed in months whose mean air temperature is below 0 °C.
fn frozen_month_gpp_share(out: &RunOutput) -> f64 {
    let annual: f64 = out.monthly.iter().map(|m| m["gpp"]).sum();
    let frozen: f64 = out
        .monthly
        .iter()
        .filter(|m| m["t_air"] < 0.0)
        .map(|m| m["gpp"])
        .sum();
    frozen / annual
}

#[test]
#[ignore = "no cold or dormancy rule yet: months below 0 °C fix 18% of the boreal site's GPP"]
fn a_cold_site_fixes_almost_nothing_in_frozen_months() {
    // Boreal conifers photosynthesise little or nothing while the air and soil are frozen:
    // winter dormancy and frozen soil shut gas exchange down (e.g. Suni et al. 2003, Glob. Change
    // Biol.; from memory). Criterion of the issue: months with a mean air temperature below 0 °C
    // carry less than 2% of the annual GPP.
    let out = run_site(&boreal_climate(), NEEDLELEAF_C3, "", 1);
    let share = frozen_month_gpp_share(&out);
    assert!(
        share < 0.02,
        "months below 0 °C fix {:.1}% of the annual GPP",
        100.0 * share
    );
}
