//! The cost of one tracking measurement and its partials: topocentric az/el/range (ITRF),
//! RA/Dec (GCRF, the Earth's rotation given), a two-way range with light time (the object
//! on a closed-form circular orbit, the site turning with the Earth).

use criterion::{criterion_group, criterion_main, Criterion};
use nalgebra::Vector3;
use propagator::earth::EarthOrientation;
use propagator::tracking::light_time::{two_way, Tag};
use propagator::tracking::site::Site;
use std::hint::black_box;

fn bench(c: &mut Criterion) {
    let site = Site::geodetic("S", 40.43, -3.71, 0.655).unwrap();
    let rotation = EarthOrientation::shipped().unwrap().at(6.7e8);
    let r = Vector3::new(5200.0, -400.0, 4400.0);
    let mut g = c.benchmark_group("one tracking measurement");
    g.bench_function("az/el/range", |b| b.iter(|| site.look(black_box(&r))));
    g.bench_function("az/el/range partials", |b| {
        b.iter(|| site.look_partials(black_box(&r)))
    });
    g.bench_function("RA/Dec (rotation given)", |b| {
        b.iter(|| site.radec(black_box(&r), &rotation))
    });
    g.bench_function("RA/Dec partials", |b| {
        b.iter(|| site.radec_partials(black_box(&r), &rotation))
    });
    let fixed = site.itrf_km;
    let omega = 7.292115146706979e-5;
    let station = move |t: f64| {
        let (s, c) = (omega * t).sin_cos();
        Vector3::new(
            c * fixed[0] - s * fixed[1],
            s * fixed[0] + c * fixed[1],
            fixed[2],
        )
    };
    let n = (398600.4418f64 / 7078.0f64.powi(3)).sqrt();
    let object = move |t: f64| {
        let u = 0.5 + n * t;
        7078.0 * Vector3::new(u.cos(), u.sin() * 0.62, u.sin() * 0.78)
    };
    g.bench_function("two-way range with light time", |b| {
        b.iter(|| two_way(black_box(100.0), Tag::Receive, &station, &object))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
