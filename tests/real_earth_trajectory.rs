//! A decay-free 1-day LEO propagation with EGM2008 70×70 + Sun + Moon, built from a
//! `forces.yaml` as a user writes it, against scipy DOP853 driving the independent
//! reference model (tools/reference/real_earth_trajectory.py: scipy Legendre field,
//! pyerfa GCRF→ITRF at every call with the same IERS data, the same Sun and Moon series),
//! with and without the solid Earth tides (IERS Conventions 2010 §6.2.1 step 1, written
//! there with numpy's complex arithmetic).

use nalgebra::Vector3;
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
    states_solid_tides: Vec<[f64; 6]>,
}

fn reference() -> Reference {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/real_earth_trajectory.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

/// Hourly positions (km) over the reference's day with `forces`, at the integrator's
/// default tolerance or at `tolerance` (rtol = atol).
fn positions(forces: &str, reference: &Reference, tolerance: Option<f64>) -> Vec<Vector3<f64>> {
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
    let mut options = Options::default();
    if let Some(tol) = tolerance {
        (options.settings.rtol, options.settings.atol) = (tol, tol);
    }
    let out = propagate(&loaded.model, &req, &options, &mut Silent).unwrap();
    assert_eq!(out.samples.len(), reference.t_s.len());
    out.samples
        .iter()
        .map(|(_, x)| Vector3::new(x[0], x[1], x[2]))
        .collect()
}

/// The reference's positions (km) in `states`.
fn reference_positions(states: &[[f64; 6]]) -> Vec<Vector3<f64>> {
    states
        .iter()
        .map(|x| Vector3::new(x[0], x[1], x[2]))
        .collect()
}

/// Largest distance (m) between two position series.
fn worst_m(a: &[Vector3<f64>], b: &[Vector3<f64>]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(p, q)| (p - q).norm() * 1e3)
        .fold(0.0, f64::max)
}

/// Largest position difference (m) over the reference's hourly states, for `forces`.
fn worst_difference_m(forces: &str, reference: &Reference, tolerance: Option<f64>) -> f64 {
    worst_m(
        &positions(forces, reference, tolerance),
        &reference_positions(&reference.states),
    )
}

#[test]
fn one_day_leo_with_70x70_sun_and_moon_matches_scipy_to_1_m() {
    // At the default tolerance (rtol 1e-11) the integration itself leaves a few tenths of
    // a metre a day; at 1e-13 what is left is the models' difference.
    let r = reference();
    let forces = "gravity: { field: egm2008, degree: 70, order: 70 }\nthird_body: [sun, moon]\n";
    let default = worst_difference_m(forces, &r, None);
    let tight = worst_difference_m(forces, &r, Some(1e-13));
    eprintln!(
        "1-day LEO 70x70 + Sun + Moon vs {}: worst {default:.3} m (default tolerance), {tight:.3} m (1e-13)",
        r.source
    );
    assert!(default <= 1.0, "{default} m");
    assert!(tight <= 0.1, "{tight} m");
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
        let worst = worst_difference_m(forces, &r, None);
        assert!(worst > 5.0, "{forces}: {worst} m");
    }
}

#[test]
fn solid_tides_move_the_orbit_as_the_independent_reference_does() {
    // The tides' own effect (with minus without) in arcwise against the reference's: the
    // integration and field errors common to both runs cancel, leaving the tides.
    let r = reference();
    let base = "gravity: { field: egm2008, degree: 70, order: 70 }\nthird_body: [sun, moon]\n";
    let tided = base.replace("order: 70 }", "order: 70, solid_tides: true }");
    let tol = Some(1e-13);
    let (ours, ours_tided) = (positions(base, &r, tol), positions(&tided, &r, tol));
    let (theirs, theirs_tided) = (
        reference_positions(&r.states),
        reference_positions(&r.states_solid_tides),
    );
    let effect: Vec<_> = ours_tided.iter().zip(&ours).map(|(a, b)| a - b).collect();
    let want: Vec<_> = theirs_tided
        .iter()
        .zip(&theirs)
        .map(|(a, b)| a - b)
        .collect();
    let size = worst_m(&want, &vec![Vector3::zeros(); want.len()]);
    let mismatch = worst_m(&effect, &want);
    eprintln!(
        "solid tides over 1 day: effect {size:.3} m (reference), arcwise differs by {mismatch:.4} m; with tides vs reference {:.3} m",
        worst_m(&ours_tided, &theirs_tided)
    );
    assert!(
        size > 0.1,
        "the tides should move a LEO by more than 10 cm a day: {size} m"
    );
    assert!(mismatch <= 0.01 * size, "{mismatch} m of {size} m");
    assert!(worst_m(&ours_tided, &theirs_tided) <= 0.1);
}
