//! The cost of one tracking measurement and its partials: topocentric az/el/range (ITRF),
//! RA/Dec (GCRF, the Earth's rotation given), a two-way range with light time (the object
//! on a closed-form circular orbit, the site turning with the Earth), the whole
//! measurement model the fit calls; and of a whole 1-day radar fit.

use criterion::{criterion_group, criterion_main, Criterion};
use learned_forces::fit::{fit, FitOptions, QuietFit};
use learned_forces::scenario::ScenarioSpec;
use nalgebra::Vector3;
use propagator::earth::EarthOrientation;
use propagator::tracking::light_time::{two_way, Tag};
use propagator::tracking::measurement::{model, Kind};
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
    // What the fit calls per measurement: the model with light time and its partials.
    let x = propagator::StateVector::new(5200.0, -400.0, 4400.0, -3.0, 6.0, 2.5);
    let mu = 398_600.441_8;
    for kind in [Kind::Range, Kind::Azimuth, Kind::RightAscension] {
        g.bench_function(format!("{} model with partials", kind.info().word), |b| {
            b.iter(|| model(kind, Tag::Receive, &site, black_box(&x), mu, &rotation))
        });
    }
    g.finish();
}

/// A whole fit of a simulated 1-day radar campaign (3 sites, range and az/el every 10 s
/// while visible: 1686 measurements), from the initial orbit it determines itself.
fn radar_fit(c: &mut Criterion) {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let path = root.join("examples/scenarios/radar_quiet.yaml");
    let sites_path = root.join("examples/sites/radar_campaign.yaml");
    let sites = propagator::tracking::sites_file::parse(
        &std::fs::read_to_string(&sites_path).unwrap(),
        &sites_path,
    )
    .unwrap();
    let tracking = std::sync::Arc::new(learned_forces::arc::Tracking {
        sites,
        earth: EarthOrientation::shipped().unwrap(),
    });
    let spec = ScenarioSpec::load(&path).unwrap();
    let sim = spec.simulate_with(&path, Some(&tracking)).unwrap();
    let known = spec.models(&path).unwrap().known;
    let mut g = c.benchmark_group("tracking fit");
    g.sample_size(10);
    g.bench_function("1-day radar campaign", |b| {
        b.iter(|| {
            let model = known.build(&path, sim.train.start()).unwrap().model;
            fit(
                &sim.train,
                model.into(),
                &FitOptions::default(),
                &mut QuietFit,
            )
            .unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, bench, radar_fit);
criterion_main!(benches);
