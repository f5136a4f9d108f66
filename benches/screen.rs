//! Screening throughput: one primary against 200 secondaries, J2, 7 days, 30 s sampling
//! (propagation of every secondary included). The 10,000-object run is
//! `cargo run --release --example screening_catalogue -- 10000` (README).

use criterion::{criterion_group, criterion_main, Criterion};
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::propagation::{output_grid, propagate, Options, Request, Silent};
use propagator::screening::{approaches, Track};
use propagator::{ForceModel, StateVector};
use rayon::prelude::*;

const MU: f64 = 398_600.441_8;

fn model() -> ForceModel {
    ForceModel::new()
        .with(TwoBody { mu_km3_s2: MU })
        .with(Zonal::egm96(MU, 6378.1363, 2).unwrap())
}

fn orbit(k: usize) -> StateVector {
    let f = k as f64;
    let a = 6778.0 + (f * 37.0) % 600.0;
    let (i, w) = (0.1 + (f * 0.7) % 2.9, (f * 1.3) % std::f64::consts::TAU);
    let v = (MU / a).sqrt();
    StateVector::new(
        a * w.cos(),
        a * w.sin() * i.cos(),
        a * w.sin() * i.sin(),
        -v * w.sin(),
        v * w.cos() * i.cos(),
        v * w.cos() * i.sin(),
    )
}

fn track(x0: StateVector, grid: &[f64]) -> Track {
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: *grid.last().unwrap(),
        output_times_s: grid,
        stop_times_s: &[],
    };
    let p = propagate(&model(), &req, &Options::default(), &mut Silent).unwrap();
    Track {
        times: grid.to_vec(),
        states: p.samples.into_iter().map(|s| s.1).collect(),
    }
}

fn bench(c: &mut Criterion) {
    let grid = output_grid(0.0, 7.0 * 86400.0, 30.0);
    let primary = track(orbit(0), &grid);
    let mut g = c.benchmark_group("screening");
    g.sample_size(10);
    g.bench_function("1 primary vs 200 secondaries, J2, 7 days", |b| {
        b.iter(|| {
            (1..=200)
                .into_par_iter()
                .map(|k| approaches(&primary, &track(orbit(k), &grid), 5.0).len())
                .sum::<usize>()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
