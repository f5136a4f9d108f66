//! Gauss's method of angles-only initial orbit determination: from three lines of sight
//! (GCRF unit vectors from known site positions) at three epochs, the object's position
//! at the middle epoch from the roots of the eighth-degree range polynomial, then the
//! three positions and the middle velocity through the truncated f and g series
//! (the classical method as in astrodynamics textbooks; from memory).
//!
//! Valid for short spacing (a fraction of the orbit between the first and last sight);
//! the batch fit refines what it gives. Several positive roots are all returned: the
//! caller keeps the one that predicts the other sights best.

use nalgebra::Vector3;
use propagator::StateVector;

/// One sight: seconds (any origin), the site's GCRF position (km) and the unit line of
/// sight (GCRF).
#[derive(Clone, Copy, Debug)]
pub struct Sight {
    /// When, s.
    pub t_s: f64,
    /// The site, GCRF km.
    pub site_km: Vector3<f64>,
    /// The unit vector from the site to the object.
    pub unit: Vector3<f64>,
}

/// Candidate states (GCRF, at the middle sight's epoch) from three sights, one per
/// physical root of the range polynomial; empty when the geometry is degenerate.
pub fn gauss(s: [Sight; 3], mu: f64) -> Vec<StateVector> {
    let (t1, t3) = (s[0].t_s - s[1].t_s, s[2].t_s - s[1].t_s);
    let t = t3 - t1;
    let (l1, l2, l3) = (s[0].unit, s[1].unit, s[2].unit);
    let (p1, p2, p3) = (l2.cross(&l3), l1.cross(&l3), l1.cross(&l2));
    let d0 = l1.dot(&p1);
    if !(d0.abs() > 1e-14 && t1 < 0.0 && t3 > 0.0) {
        return vec![];
    }
    let d = |i: usize, p: &Vector3<f64>| s[i].site_km.dot(p);
    let (d11, d12, d13) = (d(0, &p1), d(0, &p2), d(0, &p3));
    let (d21, d22, d23) = (d(1, &p1), d(1, &p2), d(1, &p3));
    let (d31, d32, d33) = (d(2, &p1), d(2, &p2), d(2, &p3));
    let a = (-d12 * t3 / t + d22 + d32 * t1 / t) / d0;
    let b = (d12 * (t3 * t3 - t * t) * t3 / t + d32 * (t * t - t1 * t1) * t1 / t) / (6.0 * d0);
    let e = s[1].site_km.dot(&l2);
    let r_site2 = s[1].site_km.norm_squared();
    let (ca, cb, cc) = (
        -(a * a + 2.0 * a * e + r_site2),
        -2.0 * mu * b * (a + e),
        -mu * mu * b * b,
    );
    let poly = |r: f64| r.powi(8) + ca * r.powi(6) + cb * r.powi(3) + cc;
    let mut out = Vec::new();
    for r2 in positive_roots(poly, 6_000.0, 500_000.0) {
        let r23 = r2.powi(3);
        let rho1 = ((6.0 * (d31 * t1 / t3 + d21 * t / t3) * r23
            + mu * d31 * (t * t - t1 * t1) * t1 / t3)
            / (6.0 * r23 + mu * (t * t - t3 * t3))
            - d11)
            / d0;
        let rho2 = a + mu * b / r23;
        let rho3 = ((6.0 * (d13 * t3 / t1 - d23 * t / t1) * r23
            + mu * d13 * (t * t - t3 * t3) * t3 / t1)
            / (6.0 * r23 + mu * (t * t - t1 * t1))
            - d33)
            / d0;
        if !(rho1 > 0.0 && rho2 > 0.0 && rho3 > 0.0) {
            continue;
        }
        let r1 = s[0].site_km + l1 * rho1;
        let r2v = s[1].site_km + l2 * rho2;
        let r3 = s[2].site_km + l3 * rho3;
        let f1 = 1.0 - mu * t1 * t1 / (2.0 * r23);
        let f3 = 1.0 - mu * t3 * t3 / (2.0 * r23);
        let g1 = t1 - mu * t1.powi(3) / (6.0 * r23);
        let g3 = t3 - mu * t3.powi(3) / (6.0 * r23);
        let v2 = (-f3 * r1 + f1 * r3) / (f1 * g3 - f3 * g1);
        let x = StateVector::new(r2v[0], r2v[1], r2v[2], v2[0], v2[1], v2[2]);
        if x.iter().all(|c| c.is_finite()) {
            out.push(x);
        }
    }
    out
}

/// The roots of `f` in `[lo, hi]` (km), found by a logarithmic scan for sign changes and
/// bisection.
fn positive_roots(f: impl Fn(f64) -> f64, lo: f64, hi: f64) -> Vec<f64> {
    const STEPS: usize = 4000;
    let ratio = (hi / lo).powf(1.0 / STEPS as f64);
    let mut roots = Vec::new();
    let (mut a, mut fa) = (lo, f(lo));
    for _ in 0..STEPS {
        let b = a * ratio;
        let fb = f(b);
        if fa.signum() != fb.signum() && fa.is_finite() && fb.is_finite() {
            let (mut x0, mut x1, mut f0) = (a, b, fa);
            for _ in 0..100 {
                let m = 0.5 * (x0 + x1);
                let fm = f(m);
                if fm.signum() == f0.signum() {
                    (x0, f0) = (m, fm);
                } else {
                    x1 = m;
                }
            }
            roots.push(0.5 * (x0 + x1));
        }
        (a, fa) = (b, fb);
    }
    roots
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn three_sights_of_a_kepler_orbit_give_it_back() {
        // Sights of a 1500-km near-circular orbit from a site turning with the Earth,
        // 2 minutes apart: Gauss's truncated f and g series leave about 7 km and 21 m/s
        // here (measured), well inside what the batch fit converges from.
        let mu = 398_600.441_8;
        let el = propagator::elements::Elements {
            sma_km: 7878.0,
            ecc: 0.01,
            inc_rad: 1.0,
            raan_rad: 0.5,
            argp_rad: 0.3,
            true_anomaly_rad: 0.2,
        };
        let x0 = el.to_state(mu).unwrap();
        let at = |dt: f64| super::super::initial::kepler_shift(&x0, dt, mu).unwrap();
        let site = Vector3::new(4000.0, 3000.0, 3800.0).normalize() * 6378.0;
        let sights = [-120.0, 0.0, 120.0].map(|dt| {
            let x = at(dt);
            // The site turns with the Earth.
            let a = 7.292e-5 * dt;
            let s = Vector3::new(
                site[0] * a.cos() - site[1] * a.sin(),
                site[0] * a.sin() + site[1] * a.cos(),
                site[2],
            );
            Sight {
                t_s: dt,
                site_km: s,
                unit: (Vector3::new(x[0], x[1], x[2]) - s).normalize(),
            }
        });
        let found = gauss(sights, mu);
        let best = found
            .iter()
            .map(|x| {
                (
                    (x - x0).fixed_rows::<3>(0).norm(),
                    (x - x0).fixed_rows::<3>(3).norm(),
                )
            })
            .fold((f64::INFINITY, f64::INFINITY), |a, b| {
                if b.0 < a.0 {
                    b
                } else {
                    a
                }
            });
        assert!(
            best.0 < 15.0 && best.1 < 0.05,
            "{best:?} from {} roots",
            found.len()
        );
    }
}
