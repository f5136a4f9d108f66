//! A 1-day, 1441-observation fit (J4 + drag, drag scale estimated) of the quiet
//! scenario, from a cold start (state from the data).

use criterion::{criterion_group, criterion_main, Criterion};
use learned_forces::fit::model::{FitModel, Parameter};
use learned_forces::fit::{fit, FitOptions, QuietFit};
use learned_forces::scenario::ScenarioSpec;
use std::path::Path;

fn bench(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/quiet.yaml");
    let spec = ScenarioSpec::load(&path).unwrap();
    let sim = spec.simulate(&path).unwrap();
    let models = spec.models(&path).unwrap();
    let options = FitOptions::default();
    let mut g = c.benchmark_group("orbit fit");
    g.sample_size(10);
    g.bench_function("1 day, 1441 observations, J4 + drag, drag_scale", |b| {
        b.iter(|| {
            let model = models
                .known
                .build(Path::new("forces"), sim.train.start())
                .unwrap()
                .model;
            let model = FitModel::new(model, &[Parameter::DragScale], None).unwrap();
            fit(&sim.train, model, &options, &mut QuietFit).unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
