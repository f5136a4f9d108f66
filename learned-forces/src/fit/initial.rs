//! The fit's starting state when the user gives none (initial orbit determination).
//!
//! - A state arc: the first observed velocity, or a polynomial through the first
//!   positions (at most 15, within 600 s).
//! - A radar arc: the first pass with range, azimuth and elevation at one epoch gives
//!   positions (site + range along the line of sight, light time neglected: ~25 m in
//!   LEO, far inside what the fit corrects); smoothed by the same polynomial, three of
//!   them give the velocity by Herrick–Gibbs; the state is carried to the arc's start on
//!   a Kepler orbit.
//! - Angles only: Gauss's method (`gauss.rs`) on the first, middle and last right
//!   ascension/declination pair of one site's first pass, the root that best predicts
//!   the sights of the next hours kept, carried to the start the same way.

use super::gauss::{self, Sight};
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
            Some(points) => radar_state(&points, mu)?,
            None => match angles_only(arc, t, mu) {
                Some(found) => found,
                None => return Err(FitError::Unfit(
                    "no starting orbit from these measurements: the initial orbit needs one pass with range, azimuth and elevation at the same epochs (3 or more), or one with right ascension and declination spanning a minute or more; give --initial STATE.yaml".into(),
                )),
            },
        };
        return kepler_shift(&x_k, -t_k, mu);
    }
    if let Observed::State(s) = &arc.observations[0].observed {
        if let Some(v) = s.v_km_s {
            return Ok(StateVector::new(
                s.r_km[0], s.r_km[1], s.r_km[2], v[0], v[1], v[2],
            ));
        }
    }
    // The first positions within 600 s (at most 15, at least 3).
    let k = t
        .iter()
        .take(15)
        .take_while(|&&ti| ti <= 600.0)
        .count()
        .max(3);
    let points: Vec<(f64, Vector3<f64>)> = arc
        .observations
        .iter()
        .zip(t)
        .take(k)
        .filter_map(|(o, &ti)| o.as_state().map(|s| (ti, s.r_km)))
        .collect();
    if points.len() < 3 {
        return Err(FitError::Unfit(
            "a position-only arc needs at least 3 observations to start the fit".into(),
        ));
    }
    let (r, v) = polynomial_at(&points, points[0].0)?;
    Ok(StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2]))
}

/// The value and first derivative at `at` (s) of the least-squares polynomial (degree
/// ≤ 3) through `points` (s, km).
fn polynomial_at(
    points: &[(f64, Vector3<f64>)],
    at: f64,
) -> Result<(Vector3<f64>, Vector3<f64>), FitError> {
    let k = points.len();
    if k < 3 {
        return Err(FitError::Unfit(
            "at least 3 positions are needed to start the fit".into(),
        ));
    }
    let deg = (k - 1).min(3);
    let mut a = DMatrix::zeros(k, deg + 1);
    for (i, (ti, _)) in points.iter().enumerate() {
        for d in 0..=deg {
            a[(i, d)] = (ti - at).powi(d as i32);
        }
    }
    let svd = a.svd(true, true);
    let (mut r, mut v) = (Vector3::zeros(), Vector3::zeros());
    for c in 0..3 {
        let b = DVector::from_iterator(k, points.iter().map(|(_, p)| p[c]));
        let coef = svd
            .solve(&b, 1e-14)
            .map_err(|e| FitError::Unfit(e.to_string()))?;
        (r[c], v[c]) = (coef[0], coef[1]);
    }
    Ok((r, v))
}

/// A state (s from the start, state) from a pass of radar positions: the positions
/// smoothed by a least-squares polynomial (the radar's cross-range noise is hundreds of
/// metres), taken at the first, middle and last epoch, and Herrick–Gibbs's velocity at
/// the middle one.
fn radar_state(points: &[(f64, Vector3<f64>)], mu: f64) -> Result<(f64, StateVector), FitError> {
    let smooth = |t: f64| polynomial_at(points, t).map(|(r, _)| r);
    let (t1, t3) = (points[0].0, points[points.len() - 1].0);
    let t2 = 0.5 * (t1 + t3);
    let (r1, r2, r3) = (smooth(t1)?, smooth(t2)?, smooth(t3)?);
    let v = herrick_gibbs([(t1, r1), (t2, r2), (t3, r3)], mu);
    Ok((t2, StateVector::new(r2[0], r2[1], r2[2], v[0], v[1], v[2])))
}

/// Herrick–Gibbs: the velocity at the middle of three closely spaced positions
/// (s, GCRF km), a Taylor series with the central body's gravity (from memory, as in
/// astrodynamics textbooks).
pub(super) fn herrick_gibbs(p: [(f64, Vector3<f64>); 3], mu: f64) -> Vector3<f64> {
    let (t21, t32, t31) = (p[1].0 - p[0].0, p[2].0 - p[1].0, p[2].0 - p[0].0);
    let g = |r: &Vector3<f64>| mu / (12.0 * r.norm().powi(3));
    -t32 * (1.0 / (t21 * t31) + g(&p[0].1)) * p[0].1
        + (t32 - t21) * (1.0 / (t21 * t32) + g(&p[1].1)) * p[1].1
        + t21 * (1.0 / (t32 * t31) + g(&p[2].1)) * p[2].1
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

/// The lines of sight of every right ascension/declination pair (same site and epoch):
/// (observation index of the pair's first, site index, sight).
fn sights(arc: &Arc, t: &[f64]) -> Vec<(usize, Sight)> {
    let Some(tracking) = arc.tracking.as_ref() else {
        return vec![];
    };
    let obs = &arc.observations;
    let mut out = Vec::new();
    for (i, o) in obs.iter().enumerate() {
        let Some(ra) = o.as_tracked().filter(|m| m.kind == Kind::RightAscension) else {
            continue;
        };
        let dec = obs[i..]
            .iter()
            .take_while(|p| p.epoch == o.epoch)
            .find_map(|p| {
                p.as_tracked()
                    .filter(|m| m.kind == Kind::Declination && m.site == ra.site)
            });
        let Some(dec) = dec else { continue };
        let (a, d) = (ra.value - ra.bias, dec.value - dec.bias);
        let rot = tracking.earth.at(o.epoch.tt_seconds_since_j2000());
        let site = rot.gcrf_to_itrf().transpose() * tracking.sites[ra.site].site.itrf_km;
        let unit = Vector3::new(d.cos() * a.cos(), d.cos() * a.sin(), d.sin());
        out.push((
            ra.site,
            Sight {
                t_s: t[i],
                site_km: site,
                unit,
            },
        ));
    }
    out
}

/// A starting state (s from the start, state) from right ascension and declination only:
/// Gauss's method on the first, middle and last sight of each of the first passes (each
/// site's, spanning a minute or more); among every pass's roots the one that best
/// predicts (on a Kepler orbit) every sight within 6 hours. One pass alone can mislead:
/// a short or low one gives a poor velocity, whose Kepler orbit then misses the rest.
fn angles_only(arc: &Arc, t: &[f64], mu: f64) -> Option<(f64, StateVector)> {
    const PASSES_PER_SITE: usize = 4;
    let all = sights(arc, t);
    let n_sites = arc.tracking.as_ref()?.sites.len();
    let mut best: Option<(f64, f64, StateVector)> = None;
    for site in 0..n_sites {
        let mine: Vec<Sight> = all
            .iter()
            .filter(|(s, _)| *s == site)
            .map(|(_, s)| *s)
            .collect();
        for pass in passes(&mine).into_iter().take(PASSES_PER_SITE) {
            let trio = [pass[0], pass[pass.len() / 2], pass[pass.len() - 1]];
            for x in gauss::gauss(trio, mu) {
                let score = sight_misfit(&all, trio[1].t_s, &x, mu);
                if best.as_ref().is_none_or(|b| score < b.0) {
                    best = Some((score, trio[1].t_s, x));
                }
            }
        }
    }
    best.map(|(_, t2, x)| (t2, x))
}

/// The runs of sights without a gap over 600 s that span at least 60 s, in time order.
fn passes(sights: &[Sight]) -> Vec<&[Sight]> {
    let mut out = Vec::new();
    let mut start = 0;
    for i in 1..=sights.len() {
        if i == sights.len() || sights[i].t_s - sights[i - 1].t_s > 600.0 {
            let pass = &sights[start..i];
            if pass.len() >= 3 && pass[pass.len() - 1].t_s - pass[0].t_s >= 60.0 {
                out.push(pass);
            }
            start = i;
        }
    }
    out
}

/// RMS angle (rad) between the sights within 6 hours of `t_x` and where the Kepler orbit
/// of `x` (at `t_x`) puts the object.
fn sight_misfit(all: &[(usize, Sight)], t_x: f64, x: &StateVector, mu: f64) -> f64 {
    let (mut ss, mut n) = (0.0, 0usize);
    for (_, s) in all
        .iter()
        .filter(|(_, s)| (s.t_s - t_x).abs() <= 6.0 * 3600.0)
    {
        let Ok(y) = kepler_shift(x, s.t_s - t_x, mu) else {
            return f64::INFINITY;
        };
        let seen = (Vector3::new(y[0], y[1], y[2]) - s.site_km).normalize();
        ss += seen.angle(&s.unit).powi(2);
        n += 1;
    }
    (ss / n.max(1) as f64).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn herrick_gibbs_recovers_a_kepler_velocity_from_positions_a_minute_apart() {
        // Exact positions of a 550-km orbit 60 s apart (about 4° of arc): the series'
        // truncation leaves 2.8 mm/s (measured), far inside what the batch fit corrects.
        let mu = 398_600.441_8;
        let el = Elements {
            sma_km: 6928.0,
            ecc: 0.001,
            inc_rad: 1.7,
            raan_rad: 1.0,
            argp_rad: 0.5,
            true_anomaly_rad: 0.3,
        };
        let x = el.to_state(mu).unwrap();
        let at = |dt: f64| {
            let y = kepler_shift(&x, dt, mu).unwrap();
            Vector3::new(y[0], y[1], y[2])
        };
        let v = herrick_gibbs([(-60.0, at(-60.0)), (0.0, at(0.0)), (60.0, at(60.0))], mu);
        let err = (v - Vector3::new(x[3], x[4], x[5])).norm();
        assert!(err < 1e-5, "{err} km/s");
    }
}
