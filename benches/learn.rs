//! Linearized candidate evaluations on the venting arc: a candidate without constants
//! (columns cached after the first call, so this is the least-squares solve and the
//! significance test), one with a time constant and one periodic with a period and a
//! phase (variable projection included), and the timing scan that seeds the periodic
//! and switch-on blocks (once per learn).

use criterion::{criterion_group, criterion_main, Criterion};
use learned_forces::expr::{parse, Context};
use learned_forces::fit::QuietFit;
use learned_forces::learn::linearized::Problem;
use learned_forces::learn::{linearize, LearnOptions};
use learned_forces::scenario::ScenarioSpec;
use propagator::solar_system::CenturyClock;
use propagator::Epoch;
use std::hint::black_box;
use std::path::Path;

fn problem() -> Problem {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/venting.yaml");
    let spec = ScenarioSpec::load(&path).unwrap();
    let sim = spec.simulate(&path).unwrap();
    let models = spec.models(&path).unwrap();
    let make = |epoch: Epoch| {
        models
            .known
            .build(Path::new("forces"), epoch)
            .map(|l| l.model)
            .map_err(|e| e.to_string())
    };
    let ctx = Context {
        radius_km: 6378.1363,
        rotation_rad_s: 7.292115e-5,
        clock: CenturyClock::new(&sim.train.start()),
        environment: learned_forces::expr::HANDBOOK_ENV,
        host: None,
    };
    // The base fit and the problem around it, as `learn` and `rank` build them.
    let (_, problem) = linearize(
        &sim.train,
        &make,
        ctx,
        &LearnOptions::default(),
        &mut QuietFit,
    )
    .unwrap();
    problem
}

fn bench(c: &mut Criterion) {
    let p = problem();
    let plain = vec![parse("T").unwrap(), parse("cos(u) * R").unwrap()];
    let decay = vec![parse("exp(-t / k0) * T").unwrap()];
    p.solve(&plain, &[], 5.0);
    let mut g = c.benchmark_group("linearized candidate evaluation (venting arc, 1441 obs)");
    g.bench_function("two terms, no constants (cached columns)", |b| {
        b.iter(|| p.solve(black_box(&plain), &[], 5.0))
    });
    g.sample_size(20);
    g.bench_function("exp(-t/k0) * T with variable projection", |b| {
        b.iter(|| p.solve(black_box(&decay), &[20000.0], 5.0))
    });
    let periodic = vec![parse(&learned_forces::learn::timing::periodic("T")).unwrap()];
    g.bench_function("sin(2 pi t/k0 + k1) * T with variable projection", |b| {
        b.iter(|| p.solve(black_box(&periodic), &[11880.0, 0.7], 5.0))
    });
    g.sample_size(10);
    // Once per learn: the periodogram and onset scan of every block.
    g.bench_function("timing scan of every block (periods and onsets)", |b| {
        b.iter(|| learned_forces::learn::timing::scan(black_box(&p), 64800.0))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
