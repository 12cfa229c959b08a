//! Pool benchmarks. Targets (docs/science.md): one year of hourly steps of the four-pool
//! network ≤ 10 ms for the pools alone (the whole year, leaf work included, ≤ 40 ms); a
//! spin-up through a 320-year history ≤ 50 ms per site.
//!
//! Measured December 2026 on the shared 2-core build machine (load ≈ 4, so wall times are
//! inflated): exact 7.8 ms per year, Dopri5 (rtol 1e-10) 96 ms per year, spin-up 75 µs.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_model::pools::{
    AtmosphereHistory, AtmosphereRow, Forcing, MeanDrivers, Method, PoolModel, PoolNetwork,
    PoolSettings,
};

/// Hour `i` of a synthetic year with diurnal and seasonal cycles (soil temperature changes every
/// hour, so the exact method recomputes its exponential every step: the worst case).
fn hour(i: usize) -> Forcing {
    let day = i as f64 / 24.0;
    let h = (i % 24) as f64;
    let tau = std::f64::consts::TAU;
    Forcing {
        assimilation_gc_m2_day: (20.0 * (tau * (h - 6.0) / 24.0).sin()).max(0.0),
        d13c_assimilate_permil: -27.0 + (tau * day / 365.0).sin(),
        t_soil_c: 10.0 + 8.0 * (tau * (day - 100.0) / 365.0).sin() + 2.0 * (tau * h / 24.0).sin(),
        moisture: 0.7,
    }
}

fn year(c: &mut Criterion, name: &str, method: Method) {
    let forcings: Vec<Forcing> = (0..8760).map(hour).collect();
    let settings = PoolSettings::new(method, Default::default(), 0.0111802).unwrap();
    let mut model = PoolModel::new(PoolNetwork::default_four_pool(), settings);
    let start = model.steady_state(&forcings[12]).unwrap();
    c.bench_function(name, |b| {
        b.iter(|| {
            let mut state = start.clone();
            let mut reco = 0.0;
            for f in &forcings {
                reco += model
                    .step(&mut state, f, 1.0 / 24.0)
                    .unwrap()
                    .reco()
                    .c_g_m2();
            }
            black_box(reco)
        })
    });
}

fn pools_year(c: &mut Criterion) {
    year(c, "pools_year_hourly_exact", Method::Exact);
    year(c, "pools_year_hourly_dopri5", Method::dopri5());
}

fn spin_up(c: &mut Criterion) {
    // Invented history for timing only: −6.4‰ falling 0.02‰ per year from 1700.
    let rows = (0..=320)
        .map(|i| AtmosphereRow {
            year: 1700.0 + i as f64,
            co2_umol_mol: 280.0 + 0.4 * i as f64,
            d13c_permil: -6.4 - 0.02 * i as f64,
        })
        .collect();
    let history = AtmosphereHistory::new(rows).unwrap();
    let drivers = MeanDrivers {
        assimilation_gc_m2_day: 4.0,
        t_soil_c: 9.0,
        moisture: 0.7,
        turnover_factor: None,
    };
    c.bench_function("pools_spin_up_320_years", |b| {
        b.iter(|| {
            let mut model =
                PoolModel::new(PoolNetwork::default_four_pool(), PoolSettings::default());
            black_box(
                model
                    .spin_up_with_history(&history, 18.0, &drivers, 2020.0)
                    .unwrap(),
            )
        })
    });
}

criterion_group!(benches, pools_year, spin_up);
criterion_main!(benches);
