//! Coupled leaf solves. Target (issue: leaf physics): ≤ 1 µs per C3 or C4 solve on one core.

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_model::leaf::{C3Params, C4Params, LeafConditions, LeafOptions, solve_c3, solve_c4};
use std::hint::black_box;

fn leaf(c: &mut Criterion) {
    let opts = LeafOptions::default();
    let cond = LeafConditions::default();
    let p3 = C3Params::default();
    let p4 = C4Params::default();
    let p3_gm = C3Params::with_overrides([("gm", 0.3), ("gb", 2.0), ("g0", 0.01)]).unwrap();
    c.bench_function("c3_solve_comprehensive", |b| {
        b.iter(|| solve_c3(black_box(&p3), &opts, black_box(&cond)).unwrap())
    });
    c.bench_function("c3_solve_with_gm_and_gb", |b| {
        b.iter(|| solve_c3(black_box(&p3_gm), &opts, black_box(&cond)).unwrap())
    });
    c.bench_function("c4_solve", |b| {
        b.iter(|| solve_c4(black_box(&p4), &opts, black_box(&cond)).unwrap())
    });
}

criterion_group!(benches, leaf);
criterion_main!(benches);
