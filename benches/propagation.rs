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
            b.iter(|| leo_day(&model, &options))
        });
    }
    g.finish();
}

/// The real Earth: the field alone (in ITRF), the GCRF→ITRF rotation, the field force as
/// the propagator calls it, and a 1-day LEO propagation with 70×70 + Sun + Moon.
fn real_earth(c: &mut Criterion) {
    use propagator::earth::{EarthOrientation, GravityField, Harmonics};
    use propagator::force::field::FieldGravity;
    use propagator::force::third_body::ThirdBody;
    use propagator::solar_system::{Body, CenturyClock};
    let epoch = propagator::Epoch::parse_utc("2021-04-28T18:00:00Z").unwrap();
    let tt0 = epoch.tt_seconds_since_j2000();
    let earth = EarthOrientation::shipped().unwrap();
    let field = GravityField::egm2008().unwrap();
    let r = nalgebra::Vector3::new(4100.0, -3900.0, 3800.0);
    for n in [20, 70] {
        let h = Harmonics::new(field.clone(), n, n).unwrap();
        c.bench_function(
            &format!("gravity field {n}x{n}, one evaluation in ITRF"),
            |b| b.iter(|| h.acceleration(black_box(&r))),
        );
    }
    let h = Harmonics::new(field.clone(), 70, 70).unwrap();
    c.bench_function(
        "gravity field 70x70, acceleration and analytic gradient in ITRF",
        |b| b.iter(|| h.acceleration_and_gradient(black_box(&r))),
    );
    c.bench_function(
        "GCRF to ITRF rotation (EOP + interpolated X, Y, s), one call",
        |b| b.iter(|| earth.at(black_box(tt0 + 10.0)).gcrf_to_itrf()),
    );
    let force = FieldGravity::new(
        Harmonics::new(field.clone(), 70, 70).unwrap(),
        earth.clone(),
        tt0,
    );
    let x = leo_state();
    c.bench_function(
        "gravity field 70x70 force in GCRF (rotation included), one call",
        |b| {
            b.iter(|| {
                propagator::Force::acceleration(&force, black_box(10.0), black_box(&x)).unwrap()
            })
        },
    );
    let clock = CenturyClock::new(&epoch);
    let model = ForceModel::new()
        .with(TwoBody {
            mu_km3_s2: field.gm_km3_s2,
        })
        .with(FieldGravity::new(
            Harmonics::new(field.clone(), 70, 70).unwrap(),
            earth,
            tt0,
        ))
        .with(ThirdBody::new(Body::Sun, clock))
        .with(ThirdBody::new(Body::Moon, clock));
    let mut g = c.benchmark_group("1-day LEO propagation, 70x70 + Sun + Moon");
    g.sample_size(10);
    g.bench_function("dp853 default tolerance", |b| {
        b.iter(|| one_day_default_tolerance(&model))
    });
    g.finish();
}

fn thermosphere(c: &mut Criterion) {
    use propagator::atmosphere::nrlmsise00::{nrlmsise00, Geomagnetic, MsisInput};
    let at = |altitude_km: f64, geomagnetic| MsisInput {
        day_of_year: 172.0,
        ut_s: 29000.0,
        altitude_km,
        latitude_deg: 60.0,
        longitude_deg: -70.0,
        local_solar_time_h: 16.0,
        f107: 150.0,
        f107a: 150.0,
        geomagnetic,
    };
    let storm = Geomagnetic::History([40.0, 80.0, 60.0, 30.0, 20.0, 15.0, 10.0]);
    // 400 km: above the 300 km where the lower-thermosphere terms drop out;
    // 200 km: with them; 400 km storm-time: the 3-hourly history's sums.
    thermosphere_day(c);
    for (label, input) in [
        (
            "NRLMSISE-00 density, one evaluation, 400 km daily Ap",
            at(400.0, Geomagnetic::Daily(15.0)),
        ),
        (
            "NRLMSISE-00 density, one evaluation, 200 km daily Ap",
            at(200.0, Geomagnetic::Daily(15.0)),
        ),
        (
            "NRLMSISE-00 density, one evaluation, 400 km storm-time Ap",
            at(400.0, storm),
        ),
    ] {
        c.bench_function(label, |b| {
            b.iter(|| nrlmsise00(black_box(&input)).mass_density_kg_m3)
        });
    }
}

/// A 1-day 400 km propagation with NRLMSISE-00 drag (constant space weather) and a
/// 20×20 field.
fn thermosphere_day(c: &mut Criterion) {
    use propagator::atmosphere::nrlmsise00::Geomagnetic;
    use propagator::atmosphere::space_weather::{Drivers, SpaceWeather};
    use propagator::atmosphere::thermosphere::Thermosphere;
    use propagator::earth::{EarthOrientation, GravityField, Harmonics};
    use propagator::force::field::FieldGravity;
    let epoch = propagator::Epoch::parse_utc("2026-03-11T00:00:00Z").unwrap();
    let earth = EarthOrientation::shipped().unwrap();
    let field = GravityField::egm2008().unwrap();
    let weather = SpaceWeather::Constant(Drivers {
        f107: 150.0,
        f107a: 150.0,
        geomagnetic: Geomagnetic::Daily(12.0),
    });
    let body = CentralBody::EARTH_EGM96;
    let model = ForceModel::new()
        .with(TwoBody {
            mu_km3_s2: field.gm_km3_s2,
        })
        .with(FieldGravity::new(
            Harmonics::new(field.clone(), 20, 20).unwrap(),
            earth.clone(),
            epoch.tt_seconds_since_j2000(),
        ))
        .with(Drag {
            cd: 2.2,
            area_m2: 0.1,
            mass_kg: 4.0,
            scale: 1.0,
            atmosphere: Arc::new(Thermosphere::new(weather, earth, epoch)),
            body,
            altitude: propagator::atmosphere::AltitudeModel::Geodetic,
        });
    let mut g = c.benchmark_group("1-day 400 km propagation, 20x20 + NRLMSISE-00 drag");
    g.sample_size(10);
    g.bench_function("dp853 default tolerance", |b| {
        b.iter(|| one_day_default_tolerance(&model))
    });
    g.finish();
}

/// One day from [`leo_state`] at the default tolerance.
fn one_day_default_tolerance(model: &ForceModel) -> propagator::propagation::Propagated {
    leo_day(model, &Options::default())
}

/// One day from [`leo_state`] with `options`.
fn leo_day(model: &ForceModel, options: &Options) -> propagator::propagation::Propagated {
    let req = Request {
        x0: leo_state(),
        t0_s: 0.0,
        t_end_s: 86400.0,
        output_times_s: &[86400.0],
        stop_times_s: &[],
    };
    propagate(model, &req, options, &mut Silent).unwrap()
}

criterion_group!(benches, force_evaluation, one_day, real_earth, thermosphere);
criterion_main!(benches);
