//! A decay-free 1-day LEO propagation with EGM2008 70×70 + Sun + Moon, built from a
//! `forces.yaml` as a user writes it, against scipy DOP853 driving the independent
//! reference model (tools/reference/real_earth_trajectory.py: scipy Legendre field,
//! pyerfa GCRF→ITRF at every call with the same IERS data, the same Sun and Moon series).

use propagator::config::ForcesFile;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{Epoch, StateVector};
use std::path::Path;

#[derive(serde::Deserialize)]
struct Reference {
    source: String,
    epoch_utc: String,
    x0: [f64; 6],
    t_s: Vec<f64>,
    states: Vec<[f64; 6]>,
}

fn reference() -> Reference {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/real_earth_trajectory.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

/// Largest position difference (m) over the reference's hourly states, for `forces`.
fn worst_difference_m(forces: &str, reference: &Reference) -> f64 {
    let path = Path::new("forces.yaml");
    let epoch = Epoch::parse_utc(&reference.epoch_utc).unwrap();
    let loaded = ForcesFile::parse(forces, path)
        .unwrap()
        .build(path, epoch)
        .unwrap();
    let req = Request {
        x0: StateVector::from(reference.x0),
        t0_s: 0.0,
        t_end_s: *reference.t_s.last().unwrap(),
        output_times_s: &reference.t_s,
        stop_times_s: &[],
    };
    let out = propagate(&loaded.model, &req, &Options::default(), &mut Silent).unwrap();
    assert_eq!(out.samples.len(), reference.t_s.len());
    out.samples
        .iter()
        .zip(&reference.states)
        .map(|((_, x), want)| {
            let d = x.fixed_rows::<3>(0) - StateVector::from(*want).fixed_rows::<3>(0);
            d.norm() * 1e3
        })
        .fold(0.0, f64::max)
}

#[test]
fn one_day_leo_with_70x70_sun_and_moon_matches_scipy_to_1_m() {
    let r = reference();
    let worst = worst_difference_m(
        "gravity: { field: egm2008, degree: 70, order: 70 }\nthird_body: [sun, moon]\n",
        &r,
    );
    eprintln!("1-day LEO 70x70 + Sun + Moon vs {}: worst {worst:.3} m", r.source);
    assert!(worst <= 1.0, "{worst} m");
}

#[test]
fn the_comparison_fails_when_the_model_differs() {
    // The gate must be able to fail: the same day without the Moon, or with the field cut
    // to 20×20, is far more than 1 m from the reference.
    let r = reference();
    for forces in [
        "gravity: { field: egm2008, degree: 70, order: 70 }\nthird_body: [sun]\n",
        "gravity: { field: egm2008, degree: 20, order: 20 }\nthird_body: [sun, moon]\n",
    ] {
        let worst = worst_difference_m(forces, &r);
        assert!(worst > 5.0, "{forces}: {worst} m");
    }
}
