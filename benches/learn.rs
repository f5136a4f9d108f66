//! Linearized candidate evaluations on the venting arc: a candidate without constants
//! (columns cached after the first call, so this is the least-squares solve and the
//! significance test) and one with a time constant (variable projection included).

use criterion::{criterion_group, criterion_main, Criterion};
use learned_forces::expr::{parse, Context};
use learned_forces::fit::{fit, FitOptions, QuietFit};
use learned_forces::learn::linearized::{ObsRow, Problem};
use learned_forces::scenario::ScenarioSpec;
use nalgebra::Matrix6;
use propagator::propagation::{output_grid, Options, Request, Silent};
use propagator::solar_system::CenturyClock;
use propagator::variational::propagate_with_partials;
use std::hint::black_box;
use std::path::Path;

fn problem() -> Problem {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/venting.yaml");
    let spec = ScenarioSpec::load(&path).unwrap();
    let sim = spec.simulate(&path).unwrap();
    let models = spec.models(&path).unwrap();
    let model = || {
        models
            .known
            .build(Path::new("forces"), sim.train.start())
            .unwrap()
            .model
    };
    let base = fit(
        &sim.train,
        model().into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap();
    let t_obs: Vec<f64> = sim
        .train
        .observations
        .iter()
        .map(|o| o.epoch.seconds_since(&sim.train.start()))
        .collect();
    let mut grid = output_grid(0.0, *t_obs.last().unwrap(), 20.0);
    grid.extend(&t_obs);
    grid.sort_by(|a, b| a.total_cmp(b));
    grid.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
    let req = Request {
        x0: base.x0,
        t0_s: 0.0,
        t_end_s: *grid.last().unwrap(),
        output_times_s: &grid,
        stop_times_s: &[],
    };
    let m = model();
    let samples = propagate_with_partials(&m, &req, &Options::default(), &mut Silent).unwrap();
    let phis: Vec<Matrix6<f64>> = samples.iter().map(|s| s.phi).collect();
    let states: Vec<_> = samples.iter().map(|s| s.state).collect();
    let rows = t_obs
        .iter()
        .enumerate()
        .map(|(i, t)| {
            let gi = grid.partition_point(|g| *g < t - 1e-6);
            ObsRow {
                grid_index: gi,
                phi: phis[gi],
                row: 3 * i,
                comps: 3,
                sigma: [sim.train.observations[i].sigma_km; 6],
            }
        })
        .collect();
    let ctx = Context {
        radius_km: 6378.1363,
        rotation_rad_s: 7.292115e-5,
        clock: CenturyClock::new(&sim.train.start()),
        environment: learned_forces::expr::HANDBOOK_ENV,
        host: None,
    };
    Problem::new(
        grid,
        &states,
        &phis,
        rows,
        &base.jacobian,
        base.weighted_residual.clone(),
        ctx,
    )
    .unwrap()
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
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
