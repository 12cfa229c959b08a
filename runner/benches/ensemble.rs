//! One member of the demo ensemble (`forcing-demo/site.toml` with `forcing-demo/ensemble.toml`):
//! the site and pools over the demo year with the light shared between members computed
//! beforehand, as `isodisc ensemble` runs each member. Target (issue: ensemble speed): 1,000
//! members in ≤ 3 s on 2 threads, i.e. ≤ 6 ms per member on one core.

use std::path::Path;

use criterion::{Criterion, criterion_group, criterion_main};
use isodisc_runner::ensemble::sample::Design;
use isodisc_runner::ensemble::spec::EnsembleSpec;
use isodisc_runner::ensemble::{member_site, shares_light};
use isodisc_runner::simulate::{NoSink, simulate_lit, step_lights};
use isodisc_runner::site::Site;

fn member(c: &mut Criterion) {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo");
    let site = Site::load(&demo.join("site.toml")).unwrap();
    let spec = EnsembleSpec::load(&demo.join("ensemble.toml")).unwrap();
    let mut reader = site.weather(None, None).unwrap();
    let steps: Vec<_> = reader.by_ref().collect::<Result<_, _>>().unwrap();
    let step_minutes = reader.report().step_minutes;
    assert!(shares_light(&spec));
    let lights = step_lights(&site, &steps, step_minutes);
    let design = Design::new(&spec, 1000, 7);
    let member = member_site(&site, &spec, &design.draw(&spec, 0)).unwrap();
    c.bench_function("ensemble_member_demo_year", |b| {
        b.iter(|| {
            let steps = steps.iter().cloned().map(Ok);
            simulate_lit(&member, steps, step_minutes, &mut NoSink, &lights).unwrap()
        })
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = member
}
criterion_main!(benches);
