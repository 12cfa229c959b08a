//! One year of hourly steps of a two-pathway site (canopy, bucket) like the demo's, without and
//! with the four carbon/13C pools.
//! Targets: ≤ 20 ms of model time per site-year on one core (issue: site runs); ≤ 40 ms with the
//! pools (issue: respiration lag).

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_model::canopy::assimilation::CanopySettings;
use isodisc_model::canopy::radiation::TwoLeafCanopy;
use isodisc_model::canopy::solar::Location;
use isodisc_model::leaf::{LeafModel, LeafOptions, Pathway};
use isodisc_model::pools::{Forcing, PoolModel, PoolsConfig};
use isodisc_model::site::{SiteDrivers, SiteModel, SiteSettings, SoilWater, Vegetation};
use isodisc_model::water::bucket::{Bucket, BucketParams, InitialWater};
use isodisc_model::water::evaporation::PriestleyTaylor;
use std::hint::black_box;

fn settings() -> SiteSettings {
    let veg = |pathway, cover, lai| Vegetation {
        leaf: LeafModel::default_for(pathway),
        options: LeafOptions::default(),
        canopy: CanopySettings::new(TwoLeafCanopy::default(), 0.3, 0.85).unwrap(),
        cover,
        lai_m2_m2: lai,
        leaf_width_m: 0.05,
        phenology: None,
    };
    let params = BucketParams::new(0.28, 0.09, 1.2, 0.5).unwrap();
    SiteSettings {
        location: Location::new(-15.4, 28.3, 2.0).unwrap(),
        vegetation: vec![veg(Pathway::C3, 0.4, 2.2), veg(Pathway::C4, 0.5, 1.6)],
        soil: SoilWater::Bucket(
            Bucket::new(params, InitialWater::FractionOfCapacity(0.9)).unwrap(),
        ),
        priestley_taylor: PriestleyTaylor::default(),
        soil_radiation_extinction: 0.5,
    }
}

/// A synthetic year: seasonal and diurnal cycles, rain every fifth day.
fn year() -> Vec<SiteDrivers> {
    (0..8760)
        .map(|h| {
            let doy = h / 24 + 1;
            let hour = (h % 24) as f64;
            let season = (2.0 * std::f64::consts::PI * doy as f64 / 365.0).cos();
            let day = (std::f64::consts::PI * (hour - 6.0) / 12.0).sin().max(0.0);
            let sw = 900.0 * day * (0.8 + 0.1 * season);
            SiteDrivers {
                year: 2025,
                day_of_year: doy as u32,
                hour_start: hour,
                hour_end: hour + 1.0,
                t_air_c: 21.0 + 4.0 * season + 6.0 * day,
                vpd_kpa: 0.6 + 1.5 * day + 0.8 * (1.0 - season),
                sw_w_m2: sw,
                ppfd_umol_m2_s: 2.1 * sw,
                co2_umol_mol: 425.0,
                d13c_co2_permil: -8.6,
                o2_mmol_mol: 210.0,
                pressure_kpa: 89.0,
                precip_mm: if doy % 5 == 0 && hour == 15.0 {
                    12.0 * (1.0 + season)
                } else {
                    0.0
                },
                swc_m3_m3: None,
                lai_m2_m2: None,
                wind_m_s: None,
                t_growth_c: 21.0 + 4.0 * season,
                d13c_leaf_substrate_permil: None,
            }
        })
        .collect()
}

fn site_year(c: &mut Criterion) {
    let drivers = year();
    let s = settings();
    c.bench_function("site_year_hourly_two_pathways", |b| {
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
    c.bench_function("site_year_hourly_two_pathways_with_pools", |b| {
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
            let mut reco = 0.0;
            for d in &drivers {
                let step = m.step(black_box(d)).unwrap();
                let f = Forcing {
                    assimilation_gc_m2_day: step.gpp_umol_m2_s * 86_400.0 * 12.011e-6,
                    d13c_assimilate_permil: if step.d13c_assimilate_permil.is_finite() {
                        step.d13c_assimilate_permil
                    } else {
                        -20.0
                    },
                    t_soil_c: d.t_air_c,
                    moisture: step.beta,
                };
                reco += pools
                    .step(&mut state, &f, 1.0 / 24.0)
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
