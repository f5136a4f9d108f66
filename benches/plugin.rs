//! Per-call overhead of a native plugin force against the same force compiled in, on a
//! full 1-day propagation (target: plugin at most 1.2× the compiled-in time).

use criterion::{criterion_group, criterion_main, Criterion};
use drag_sail_plugin::DragSail;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::integrator::Method;
use propagator::plugin::loader::PluginForce;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{Epoch, Force, ForceModel, StateVector};
use std::hint::black_box;

fn so_path() -> std::path::PathBuf {
    let exe = std::env::current_exe().unwrap();
    exe.parent().unwrap().join(format!(
        "{}drag_sail_plugin{}",
        std::env::consts::DLL_PREFIX,
        std::env::consts::DLL_SUFFIX
    ))
}

fn models() -> (ForceModel, ForceModel, PluginForce) {
    let base = || {
        ForceModel::new()
            .with(TwoBody {
                mu_km3_s2: 398_600.441_8,
            })
            .with(Zonal::egm96(398_600.441_8, 6378.1363, 2).unwrap())
    };
    let reference = Epoch::parse_utc(drag_sail_plugin::REFERENCE_EPOCH_UTC).unwrap();
    let plugin =
        || PluginForce::load(&so_path(), &reference, None).expect("plugin built beside the bench");
    let mut with_plugin = base();
    with_plugin.push(Box::new(plugin()));
    (base().with(DragSail::default()), with_plugin, plugin())
}

fn bench(c: &mut Criterion) {
    let (direct, via_plugin, single) = models();
    let a: f64 = 6378.1363 + 480.0;
    let v = (398_600.441_8 / a).sqrt();
    let x0 = StateVector::new(a, 0.0, 0.0, 0.0, v * 0.6, v * 0.8);
    let options = Options::with_method(Method::Dp853, 1e-10, 1e-10);
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: 86400.0,
        output_times_s: &[86400.0],
        stop_times_s: &[],
    };
    let mut g = c.benchmark_group("1-day propagation, two_body+J2+drag sail");
    g.sample_size(30);
    g.bench_function("compiled in", |b| {
        b.iter(|| propagate(&direct, &req, &options, &mut Silent).unwrap())
    });
    g.bench_function("native plugin", |b| {
        b.iter(|| propagate(&via_plugin, &req, &options, &mut Silent).unwrap())
    });
    g.finish();
    let sail = DragSail::default();
    c.bench_function("drag sail acceleration, compiled in", |b| {
        b.iter(|| {
            sail.acceleration(black_box(30_000.0), black_box(&x0))
                .unwrap()
        })
    });
    c.bench_function("drag sail acceleration, plugin call", |b| {
        b.iter(|| {
            single
                .acceleration(black_box(30_000.0), black_box(&x0))
                .unwrap()
        })
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
