//! The fit's starting state when the user gives none (initial orbit determination).
//!
//! - A state arc: the first observed velocity, or a polynomial through the first
//!   positions (at most 15, within 600 s).
//! - A radar arc: the first pass with range, azimuth and elevation at one epoch gives
//!   positions (site + range along the line of sight, light time neglected: ~25 m in
//!   LEO, far inside what the fit corrects); the same polynomial through them gives a
//!   state, carried to the arc's start on a Kepler orbit.
//! - Angles only: Gauss's method on three right ascension/declination pairs of one site
//!   (`gauss.rs`), carried to the start the same way.

use super::FitError;
use crate::arc::{Arc, Observed};
use nalgebra::{DMatrix, DVector, Vector3};
use propagator::elements::Elements;
use propagator::tracking::measurement::Kind;
use propagator::StateVector;

/// A starting state at the arc's first epoch (`t[i]`: seconds of observation `i`).
pub(super) fn initial_guess(arc: &Arc, t: &[f64], mu: f64) -> Result<StateVector, FitError> {
    if arc.tracking.is_some() {
        let (t_k, x_k) = match radar_positions(arc, t) {
            Some(points) => (points[0].0, polynomial_state(&points)?),
            None => {
                return Err(FitError::Unfit(
                    "no starting orbit from these measurements: the initial orbit needs one pass with range, azimuth and elevation at the same epochs (3 or more); give --initial STATE.yaml".into(),
                ))
            }
        };
        return kepler_shift(&x_k, -t_k, mu);
    }
    let o0 = &arc.observations[0];
    if let Observed::State(s) = &o0.observed {
        if let Some(v) = s.v_km_s {
            return Ok(StateVector::new(
                s.r_km[0], s.r_km[1], s.r_km[2], v[0], v[1], v[2],
            ));
        }
    }
    let points: Vec<(f64, Vector3<f64>)> = arc
        .observations
        .iter()
        .zip(t)
        .filter_map(|(o, &ti)| o.as_state().map(|s| (ti, s.r_km)))
        .take(15)
        .take_while(|(ti, _)| *ti <= 600.0)
        .collect();
    if points.len() < 3 {
        if arc.observations.len() < 3 {
            return Err(FitError::Unfit(
                "a position-only arc needs at least 3 observations to start the fit".into(),
            ));
        }
        let first: Vec<_> = arc
            .observations
            .iter()
            .zip(t)
            .take(3)
            .filter_map(|(o, &ti)| o.as_state().map(|s| (ti, s.r_km)))
            .collect();
        return polynomial_state(&first);
    }
    polynomial_state(&points)
}

/// The state at the first of `points` from a polynomial (degree ≤ 3) through them.
fn polynomial_state(points: &[(f64, Vector3<f64>)]) -> Result<StateVector, FitError> {
    let k = points.len();
    if k < 3 {
        return Err(FitError::Unfit(
            "at least 3 positions are needed to start the fit".into(),
        ));
    }
    let t0 = points[0].0;
    let deg = (k - 1).min(3);
    let mut a = DMatrix::zeros(k, deg + 1);
    for (i, (ti, _)) in points.iter().enumerate() {
        for d in 0..=deg {
            a[(i, d)] = (ti - t0).powi(d as i32);
        }
    }
    let svd = a.svd(true, true);
    let mut x = StateVector::zeros();
    for c in 0..3 {
        let b = DVector::from_iterator(k, points.iter().map(|(_, r)| r[c]));
        let coef = svd
            .solve(&b, 1e-14)
            .map_err(|e| FitError::Unfit(e.to_string()))?;
        x[c] = coef[0];
        x[c + 3] = coef[1];
    }
    Ok(x)
}

/// Positions (s from the start, GCRF km) of the first pass that has range, azimuth and
/// elevation from one site at one epoch at least 3 times within 600 s.
fn radar_positions(arc: &Arc, t: &[f64]) -> Option<Vec<(f64, Vector3<f64>)>> {
    let tracking = arc.tracking.as_ref()?;
    let mut points: Vec<(f64, Vector3<f64>)> = Vec::new();
    let n = arc.observations.len();
    let mut i = 0;
    while i < n {
        // The measurements of one epoch.
        let mut j = i;
        while j < n && arc.observations[j].epoch == arc.observations[i].epoch {
            j += 1;
        }
        for site in 0..tracking.sites.len() {
            let get = |kind: Kind| {
                arc.observations[i..j].iter().find_map(|o| {
                    o.as_tracked()
                        .filter(|m| m.site == site && m.kind == kind)
                        .map(|m| m.value - m.bias)
                })
            };
            let (Some(range), Some(az), Some(el)) =
                (get(Kind::Range), get(Kind::Azimuth), get(Kind::Elevation))
            else {
                continue;
            };
            let s = &tracking.sites[site].site;
            let rot = tracking
                .earth
                .at(arc.observations[i].epoch.tt_seconds_since_j2000());
            let enu = Vector3::new(el.cos() * az.sin(), el.cos() * az.cos(), el.sin()) * range;
            let r_itrf = s.itrf_km + s.enu_to_itrf() * enu;
            let r = rot.gcrf_to_itrf().transpose() * r_itrf;
            if points.last().is_some_and(|(tp, _)| t[i] - tp > 600.0) {
                points.clear();
            }
            points.push((t[i], r));
            if points.len() >= 15 {
                return Some(points);
            }
            break;
        }
        i = j;
    }
    (points.len() >= 3).then_some(points)
}

/// `x` carried `dt` seconds along its Kepler orbit.
pub(super) fn kepler_shift(x: &StateVector, dt: f64, mu: f64) -> Result<StateVector, FitError> {
    let bad = |e: propagator::elements::ElementsError| {
        FitError::Unfit(format!(
            "the starting orbit from the measurements is not usable: {e}"
        ))
    };
    let mut el = Elements::from_state(x, mu).map_err(bad)?;
    let e = el.ecc;
    // True → eccentric → mean anomaly, advance, and back (Newton on Kepler's equation).
    let nu = el.true_anomaly_rad;
    let ecc_anom = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (nu / 2.0).tan()).atan();
    let m0 = ecc_anom - e * ecc_anom.sin();
    let n = (mu / el.sma_km.powi(3)).sqrt();
    let m = m0 + n * dt;
    let mut big_e = m;
    for _ in 0..50 {
        let step = (big_e - e * big_e.sin() - m) / (1.0 - e * big_e.cos());
        big_e -= step;
        if step.abs() < 1e-15 {
            break;
        }
    }
    el.true_anomaly_rad = 2.0 * (((1.0 + e) / (1.0 - e)).sqrt() * (big_e / 2.0).tan()).atan();
    el.to_state(mu).map_err(bad)
}
