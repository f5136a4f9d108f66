//! Times a 1-day LEO propagation (two-body + J2 + exponential drag, DP853, rtol 1e-10)
//! and the same number of bare force-model evaluations, and prints JSON. Used by
//! `tools/bench/compare_scipy.py`; run with `cargo run --release --example propagation_timing`.

use propagator::atmosphere::Exponential;
use propagator::force::drag::Drag;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::integrator::Method;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{CentralBody, ForceModel, StateVector};
use std::hint::black_box;
use std::sync::Arc;
use std::time::Instant;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

fn main() {
    let body = CentralBody::EARTH_EGM96;
    let model = ForceModel::new()
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
                rho0_kg_m3: 2.418e-11,
                h0_km: 300.0,
                scale_height_km: 53.628,
            }),
            body,
            altitude: Default::default(),
        });
    // The same initial state as tools/bench/compare_scipy.py: circular 300 km, 51.6°.
    let a: f64 = body.radius_km + 300.0;
    let v = (body.mu_km3_s2 / a).sqrt();
    let i = 51.6f64.to_radians();
    let x0 = StateVector::new(a, 0.0, 0.0, 0.0, v * i.cos(), v * i.sin());
    let options = Options::with_method(Method::Dp853, 1e-10, 1e-10);
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: 86400.0,
        output_times_s: &[86400.0],
        stop_times_s: &[],
    };
    let mut prop = Vec::new();
    let mut evals = 0;
    let mut last = x0;
    for _ in 0..30 {
        let t = Instant::now();
        let p = propagate(&model, &req, &options, &mut Silent).unwrap();
        prop.push(t.elapsed().as_secs_f64());
        evals = p.stats.evaluations;
        last = p.samples[0].1;
    }
    // Bare force evaluations: the same count, on states along the orbit.
    let mut force = Vec::new();
    for _ in 0..30 {
        let t = Instant::now();
        let mut x = x0;
        for k in 0..evals {
            x[0] = a + (k % 7) as f64 * 1e-3;
            black_box(
                model
                    .acceleration(black_box(k as f64), black_box(&x))
                    .unwrap(),
            );
        }
        force.push(t.elapsed().as_secs_f64());
    }
    let tp = median(prop);
    let tf = median(force);
    println!(
        "{{\"propagation_s\": {tp}, \"force_evaluations\": {evals}, \"force_time_s\": {tf}, \"overhead_ratio\": {}, \"final_r_km\": [{}, {}, {}]}}",
        (tp - tf) / tf,
        last[0],
        last[1],
        last[2]
    );
}
