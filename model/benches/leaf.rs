//! Coupled leaf solves over varied conditions (light, temperature, VPD, CO2, soil water) with
//! g0 > 0, a finite boundary layer and, for C3, a finite mesophyll conductance: the root search
//! as site runs meet it, not one condition where the first guess is already the root.
//! Target (issue: leaf physics): ≤ 1 µs per C3 or C4 solve on one core.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use isodisc_model::leaf::{C3Params, C4Params, LeafConditions, LeafOptions, solve_c3, solve_c4};
use std::hint::black_box;

/// 4 × 4 × 3 × 3 × 2 = 288 conditions.
fn conditions() -> Vec<LeafConditions> {
    let mut out = Vec::new();
    for ppfd in [60.0, 300.0, 900.0, 1800.0] {
        for t in [6.0, 18.0, 27.0, 36.0] {
            for vpd in [0.3, 1.2, 3.0] {
                for ca in [300.0, 425.0, 700.0] {
                    for beta in [1.0, 0.4] {
                        out.push(LeafConditions {
                            t_leaf_c: t,
                            ppfd_umol_m2_s: ppfd,
                            vpd_kpa: vpd,
                            ca_umol_mol: ca,
                            soil_beta: beta,
                            t_growth_c: t - 3.0,
                            ..LeafConditions::default()
                        });
                    }
                }
            }
        }
    }
    out
}

fn leaf(c: &mut Criterion) {
    let opts = LeafOptions::default();
    let conds = conditions();
    let p3 = C3Params::with_overrides([("gb", 1.2), ("g0", 0.01)]).unwrap();
    let p4 = C4Params::with_overrides([("gb", 1.2), ("g0", 0.02)]).unwrap();
    let mut g = c.benchmark_group("leaf_solves");
    g.throughput(Throughput::Elements(conds.len() as u64));
    g.bench_function("c3_comprehensive_gm_gb_g0", |b| {
        b.iter(|| {
            conds
                .iter()
                .map(|x| solve_c3(black_box(&p3), &opts, x).unwrap().a_net)
                .sum::<f64>()
        })
    });
    g.bench_function("c4_gb_g0", |b| {
        b.iter(|| {
            conds
                .iter()
                .map(|x| solve_c4(black_box(&p4), &opts, x).unwrap().a_net)
                .sum::<f64>()
        })
    });
    g.finish();
}

criterion_group!(benches, leaf);
criterion_main!(benches);
