//! Criterion benchmarks of the propagator: force-model evaluation rate and a 1-day
//! LEO propagation with each integrator. Numbers go in the README.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use propagator::atmosphere::Exponential;
use propagator::force::drag::Drag;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::integrator::{Method, Settings};
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{CentralBody, ForceModel, StateVector};
use std::hint::black_box;
use std::sync::Arc;

fn leo_model() -> ForceModel {
    let body = CentralBody::EARTH_EGM96;
    ForceModel::new()
        .with(TwoBody {
            mu_km3_s2: body.mu_km3_s2,
        })
        .with(Zonal::egm96(body.mu_km3_s2, body.radius_km, 2).unwrap())
        .with(Drag {
            cd: 2.2,
            area_m2: 0.1,
            mass_kg: 10.0,
            scale: 1.0,
            atmosphere: Arc::new(Exponential {
                rho0_kg_m3: 3.725e-12,
                h0_km: 400.0,
                scale_height_km: 58.515,
            }),
            body,
            altitude: Default::default(),
        })
}

fn leo_state() -> StateVector {
    let a: f64 = 6378.1363 + 400.0;
    let v = (398_600.441_8 / a).sqrt();
    let i = 51.6f64.to_radians();
    StateVector::new(a, 0.0, 0.0, 0.0, v * i.cos(), v * i.sin())
}

fn force_evaluation(c: &mut Criterion) {
    let model = leo_model();
    let x = leo_state();
    c.bench_function("force model two_body+J2+drag, one evaluation", |b| {
        b.iter(|| model.acceleration(black_box(10.0), black_box(&x)).unwrap())
    });
}

fn one_day(c: &mut Criterion) {
    let model = leo_model();
    let mut g = c.benchmark_group("1-day LEO propagation (two_body+J2+drag)");
    g.sample_size(20);
    for (method, label) in [
        (Method::Rk4, "rk4 10 s"),
        (Method::Dp54, "dp54 rtol 1e-10"),
        (Method::Dp853, "dp853 rtol 1e-10"),
    ] {
        let options = Options {
            settings: Settings {
                method,
                rtol: 1e-10,
                atol: 1e-10,
                fixed_step_s: 10.0,
                ..Settings::default()
            },
            ..Options::default()
        };
        g.bench_function(BenchmarkId::from_parameter(label), |b| {
            b.iter(|| {
                let req = Request {
                    x0: leo_state(),
                    t0_s: 0.0,
                    t_end_s: 86400.0,
                    output_times_s: &[86400.0],
                    stop_times_s: &[],
                };
                propagate(&model, &req, &options, &mut Silent).unwrap()
            })
        });
    }
    g.finish();
}

criterion_group!(benches, force_evaluation, one_day);
criterion_main!(benches);
