//! Whole `isodisc` commands on generated inputs, reading and writing files: `leaf --input` on
//! 100,000 rows of varied conditions with g0 > 0, and `keeling` on 100,000 samples in 1,000
//! groups. Targets (release, 2 cores), scaled from the million-row figures of README.md's "Speed"
//! table: leaf --input ≤ 40 ms, keeling ≤ 20 ms per 100,000 rows.

use std::fmt::Write as _;
use std::path::Path;

use clap::Parser;
use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_runner::cli::Cli;

const ROWS: usize = 100_000;

/// A small linear congruential generator: the same inputs on every run.
struct Lcg(u64);

impl Lcg {
    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        lo + (hi - lo) * ((self.0 >> 11) as f64 / (1u64 << 53) as f64)
    }
}

fn write_leaf_rows(path: &Path) {
    let mut rng = Lcg(11);
    let mut s = String::from("t_leaf,ppfd,vpd,ca\n");
    for _ in 0..ROWS {
        let _ = writeln!(
            s,
            "{:.2},{:.1},{:.3},{:.1}",
            rng.uniform(5.0, 38.0),
            rng.uniform(0.0, 2200.0),
            rng.uniform(0.2, 4.0),
            rng.uniform(200.0, 1000.0)
        );
    }
    std::fs::write(path, s).unwrap();
}

fn write_samples(path: &Path) {
    let mut rng = Lcg(12);
    let mut s = String::from("group,time,co2,d13c\n");
    for i in 0..ROWS {
        let (g, k) = (i / 100, i % 100);
        let co2 = 410.0 + rng.uniform(0.0, 120.0);
        let frac = (co2 - 410.0) / co2;
        let d13c = (1.0 - frac) * -8.5 + frac * -26.0 + rng.uniform(-0.1, 0.1);
        let day = 1 + g % 28;
        let month = 1 + (g / 28) % 12;
        let year = 2000 + g / 336;
        let _ = writeln!(
            s,
            "n{g},{year}-{month:02}-{day:02}T{:02}:{:02},{co2:.2},{d13c:.3}",
            k / 12,
            (k % 12) * 5
        );
    }
    std::fs::write(path, s).unwrap();
}

fn run(args: &[&str]) {
    isodisc_runner::run(Cli::parse_from(args)).unwrap();
}

fn commands(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let leaf_in = dir.path().join("leaf_rows.csv");
    let samples = dir.path().join("samples.csv");
    write_leaf_rows(&leaf_in);
    write_samples(&samples);
    let leaf_out = dir.path().join("leaf_out.csv");
    let fits = dir.path().join("fits.csv");
    let (leaf_in, leaf_out) = (leaf_in.to_str().unwrap(), leaf_out.to_str().unwrap());
    let (samples, fits) = (samples.to_str().unwrap(), fits.to_str().unwrap());
    let mut g = c.benchmark_group("io");
    g.sample_size(10);
    g.bench_function("leaf --input 100k rows, g0 = 0.02", |b| {
        b.iter(|| {
            run(&[
                "isodisc", "leaf", "--input", leaf_in, "--set", "g0=0.02", "--format", "csv",
                "--output", leaf_out,
            ])
        })
    });
    g.bench_function("keeling 100k samples, 1000 groups", |b| {
        b.iter(|| {
            run(&[
                "isodisc", "keeling", samples, "--by", "group", "--out", fits,
            ])
        })
    });
    g.finish();
}

criterion_group!(benches, commands);
criterion_main!(benches);
