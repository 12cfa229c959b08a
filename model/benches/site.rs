//! One year of hourly steps of the demo site (`forcing-demo/`: a C3 and a C4 canopy, wind, a
//! bucket), without and with the four carbon/13C pools. The weather is the demo's `weather.csv`
//! (read here with the standard library: the model reads no files), and the pools see what a run
//! gives them: soil temperature a weekly running mean of air temperature and moisture β, both held
//! for the day, so the exact method recomputes its exponential once a day as in `isodisc run`.
//! Targets: ≤ 20 ms of model time per site-year on one core (issue: site runs); ≤ 40 ms with the
//! pools (issue: respiration lag).

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_model::canopy::assimilation::CanopySettings;
use isodisc_model::canopy::radiation::TwoLeafCanopy;
use isodisc_model::canopy::solar::Location;
use isodisc_model::leaf::{LeafModel, LeafOptions, Pathway};
use isodisc_model::phenology::{SOIL_TEMPERATURE_LAG_DAYS, running_mean_step};
use isodisc_model::pools::{Forcing, PoolModel, PoolsConfig};
use isodisc_model::site::{SiteDrivers, SiteModel, SiteSettings, SoilWater, Vegetation};
use isodisc_model::temperature::GrowthTemperature;
use isodisc_model::water::bucket::{Bucket, BucketParams, InitialWater};
use isodisc_model::water::evaporation::PriestleyTaylor;
use isodisc_model::water::vapour::{pressure_from_elevation_kpa, vpd_from_rh_kpa};
use std::hint::black_box;

/// The demo site's settings (`forcing-demo/site.toml`).
fn settings() -> SiteSettings {
    let veg = |pathway, cover, lai, params: &[(&str, f64)]| {
        let mut leaf = LeafModel::default_for(pathway);
        for (name, value) in params {
            leaf.set(name, *value).unwrap();
        }
        Vegetation {
            leaf,
            options: LeafOptions::default(),
            canopy: CanopySettings::new(TwoLeafCanopy::default(), 0.3, 0.85).unwrap(),
            cover,
            lai_m2_m2: lai,
            leaf_width_m: 0.05,
            phenology: None,
        }
    };
    let params = BucketParams::new(0.28, 0.09, 1.2, 0.5).unwrap();
    SiteSettings {
        location: Location::new(-15.4, 28.3, 2.0).unwrap(),
        vegetation: vec![
            veg(
                Pathway::C3,
                0.4,
                1.8,
                &[("vcmax25", 45.0), ("jmax25", 80.0), ("g1", 4.1)],
            ),
            veg(
                Pathway::C4,
                0.5,
                1.3,
                &[("vmax25", 30.0), ("g1", 1.6), ("leakiness", 0.3)],
            ),
        ],
        soil: SoilWater::Bucket(
            Bucket::new(params, InitialWater::FractionOfCapacity(0.9)).unwrap(),
        ),
        priestley_taylor: PriestleyTaylor::default(),
        soil_radiation_extinction: 0.5,
    }
}

/// The demo's year of hourly weather (columns time, t_air_c, rh_percent, sw_w_m2, precip_mm,
/// wind_m_s; time YYYY-MM-DDTHH:MM), with the growth temperature as a run computes it. Its few
/// empty cells take the previous step's value here (a run fills them by interpolation).
fn year() -> Vec<SiteDrivers> {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../forcing-demo/weather.csv");
    let text = std::fs::read_to_string(path).unwrap();
    let pressure = pressure_from_elevation_kpa(1100.0);
    let mut growth = GrowthTemperature::new();
    let days_before =
        |month: u32| [0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334][month as usize - 1];
    let mut last = [0.0; 6];
    text.lines()
        .skip(1)
        .map(|line| {
            let f: Vec<&str> = line.split(',').collect();
            for (i, cell) in f.iter().enumerate().skip(1) {
                if !cell.is_empty() {
                    last[i] = cell.parse::<f64>().unwrap();
                }
            }
            let num = |i: usize| last[i];
            let (date, time) = f[0].split_once('T').unwrap();
            let month: u32 = date[5..7].parse().unwrap();
            let day: u32 = date[8..10].parse().unwrap();
            let hour: f64 = time[..2].parse().unwrap();
            let (year, doy) = (date[..4].parse().unwrap(), days_before(month) + day);
            let t = num(1);
            SiteDrivers {
                year,
                day_of_year: doy,
                hour_start: hour,
                hour_end: hour + 1.0,
                t_air_c: t,
                vpd_kpa: vpd_from_rh_kpa(t, num(2)),
                sw_w_m2: num(3),
                ppfd_umol_m2_s: 2.1 * num(3).max(0.0),
                co2_umol_mol: 425.0,
                d13c_co2_permil: -8.6,
                o2_mmol_mol: 210.0,
                pressure_kpa: pressure,
                precip_mm: num(4),
                swc_m3_m3: None,
                lai_m2_m2: None,
                wind_m_s: Some(num(5)),
                t_growth_c: growth.push((year, doy), t),
                d13c_leaf_substrate_permil: None,
            }
        })
        .collect()
}

fn site_year(c: &mut Criterion) {
    let drivers = year();
    let s = settings();
    c.bench_function("site_year_hourly_demo", |b| {
        b.iter(|| {
            let mut m = SiteModel::new(s.clone()).unwrap();
            let mut gpp = 0.0;
            for d in &drivers {
                gpp += m.step(black_box(d)).unwrap().gpp_umol_m2_s;
            }
            gpp
        })
    });
}

fn site_year_with_pools(c: &mut Criterion) {
    let drivers = year();
    let s = settings();
    let (network, pool_settings) = PoolsConfig::default().build().unwrap();
    let step_days = 1.0 / 24.0;
    c.bench_function("site_year_hourly_demo_with_pools", |b| {
        b.iter(|| {
            let mut m = SiteModel::new(s.clone()).unwrap();
            let mut pools = PoolModel::new(network.clone(), pool_settings);
            let mean = Forcing {
                assimilation_gc_m2_day: 6.0,
                d13c_assimilate_permil: -20.0,
                t_soil_c: 21.0,
                moisture: 1.0,
            };
            let mut state = pools.steady_state(&mean).unwrap();
            let (mut t_soil, mut held, mut d13c) = (21.0, None, -20.0);
            let mut reco = 0.0;
            for d in &drivers {
                let step = m.step(black_box(d)).unwrap();
                t_soil = running_mean_step(t_soil, d.t_air_c, step_days, SOIL_TEMPERATURE_LAG_DAYS);
                let (t_day, beta_day) = match held {
                    Some((day, t, b)) if day == d.day_of_year => (t, b),
                    _ => {
                        held = Some((d.day_of_year, t_soil, step.beta));
                        (t_soil, step.beta)
                    }
                };
                if step.d13c_assimilate_permil.is_finite() {
                    d13c = step.d13c_assimilate_permil;
                }
                let f = Forcing {
                    assimilation_gc_m2_day: step.gpp_umol_m2_s * 86_400.0 * 12.011e-6,
                    d13c_assimilate_permil: d13c,
                    t_soil_c: t_day,
                    moisture: beta_day,
                };
                reco += pools
                    .step(&mut state, &f, step_days)
                    .unwrap()
                    .reco()
                    .c_g_m2();
            }
            reco
        })
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = site_year, site_year_with_pools
}
criterion_main!(benches);
