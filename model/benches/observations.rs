//! Keeling fits at scale. Target: 1,000,000 samples in 10,000 groups of 100, each group fitted by
//! OLS and by geometric-mean regression (validation, flags and t intervals included), in well
//! under 1 s on one core.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_model::observations::{KeelingData, KeelingMethod, KeelingSettings};

const GROUPS: usize = 10_000;
const PER_GROUP: usize = 100;

/// A −26‰ source mixed into 400 µmol mol⁻¹ at −8.5‰, with a cheap deterministic wobble on δ.
fn samples() -> (Vec<f64>, Vec<f64>) {
    (0..GROUPS * PER_GROUP)
        .map(|i| {
            let added = 5.0 + (i % PER_GROUP) as f64 * 2.0 + (i / PER_GROUP % 7) as f64;
            let c = 400.0 + added;
            let wobble = 0.05 * ((i * 7919 % 101) as f64 / 50.0 - 1.0);
            (c, (400.0 * -8.5 + added * -26.0) / c + wobble)
        })
        .unzip()
}

fn keeling(c: &mut Criterion) {
    let (co2, d13c) = samples();
    let settings = KeelingSettings::default();
    c.bench_function("keeling_ols_gmr_1e6_samples_1e4_groups", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for (gc, gd) in co2.chunks(PER_GROUP).zip(d13c.chunks(PER_GROUP)) {
                let data = KeelingData::new(gc, gd).expect("valid samples");
                for method in [KeelingMethod::Ols, KeelingMethod::GeometricMean] {
                    sum += data.fit(method, &settings).expect("fit").source_d13c_permil;
                }
            }
            black_box(sum)
        })
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10);
    targets = keeling
}
criterion_main!(benches);
