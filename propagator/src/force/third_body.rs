//! Third-body point-mass gravity of the Sun or the Moon, with the indirect term.
//!
//! a = μ_b [ (s − r)/|s − r|³ − s/|s|³ ] is the difference of two nearly equal vectors
//! when |r| ≪ |s|; we use Battin's form (Battin, *An Introduction to the Mathematics and
//! Methods of Astrodynamics*, 1999, §8.4; also Montenbruck & Gill §3.2), which has no
//! cancellation: with d = r − s and q = r·(r − 2s)/|s|²,
//! a = −μ_b/|d|³ · [ r + F(q) s ],  F(q) = q (3 + 3q + q²) / (1 + (1 + q)^{3/2}).

use super::{Force, ForceError};
use crate::solar_system::{Body, CenturyClock};
use crate::state::StateVector;
use nalgebra::Vector3;

/// Gravity of a third body on the satellite, relative to the Earth's centre.
#[derive(Clone, Debug)]
pub struct ThirdBody {
    /// Sun or Moon.
    pub body: Body,
    /// Converts the model's `t_s` to the series' time argument.
    pub clock: CenturyClock,
    name: String,
}

impl ThirdBody {
    /// The third body `body` on a time axis whose `t_s = 0` is `clock`'s reference.
    pub fn new(body: Body, clock: CenturyClock) -> Self {
        Self {
            body,
            clock,
            name: format!("third_body_{}", body.name()),
        }
    }
}

/// Battin's cancellation-free third-body acceleration, km/s², for satellite `r` and
/// body `s` (both geocentric, km) and GM `mu` (km³/s²).
pub fn battin_acceleration(r: &Vector3<f64>, s: &Vector3<f64>, mu: f64) -> Vector3<f64> {
    let d = r - s;
    let q = r.dot(&(r - 2.0 * s)) / s.norm_squared();
    let f = q * (3.0 + 3.0 * q + q * q) / (1.0 + (1.0 + q).powf(1.5));
    let dn = d.norm();
    -(r + s * f) * (mu / (dn * dn * dn))
}

impl Force for ThirdBody {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, _t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let s = self.body.position_km(self.clock.centuries(_t_s));
        let r = Vector3::new(x[0], x[1], x[2]);
        Ok(battin_acceleration(&r, &s, self.body.mu_km3_s2()))
    }

    fn depends_on_velocity(&self) -> bool {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solar_system::{MU_MOON_KM3_S2, MU_SUN_KM3_S2};

    fn naive(r: &Vector3<f64>, s: &Vector3<f64>, mu: f64) -> Vector3<f64> {
        let d = s - r;
        mu * (d / d.norm().powi(3) - s / s.norm().powi(3))
    }

    /// Tidal expansion to octupole order: relative error (r/s)³ (common practice).
    fn tidal(r: &Vector3<f64>, s: &Vector3<f64>, mu: f64) -> Vector3<f64> {
        let sn = s.norm();
        let u = s / sn;
        let c = r.dot(&u);
        let r2 = r.norm_squared();
        let quad = (u * (3.0 * c) - r) * (mu / sn.powi(3));
        let oct = (u * (7.5 * c * c - 1.5 * r2) - r * (3.0 * c)) * (mu / sn.powi(4));
        quad + oct
    }

    #[test]
    fn battin_matches_the_direct_form_and_the_tidal_series() {
        let s_sun = Vector3::new(1.2e8, -7.0e7, -3.0e7);
        let s_moon = Vector3::new(3.0e5, 2.2e5, 1.0e5);
        for r in [
            Vector3::new(6778.0, 0.0, 0.0),
            Vector3::new(-30_000.0, 29_000.0, 1_000.0),
            Vector3::new(10.0, -12.0, 42_164.0),
        ] {
            for (s, mu) in [(s_sun, MU_SUN_KM3_S2), (s_moon, MU_MOON_KM3_S2)] {
                let b = battin_acceleration(&r, &s, mu);
                let n = naive(&r, &s, mu);
                assert!((b - n).norm() < 1e-9 * b.norm(), "direct form: {b} vs {n}");
                let t = tidal(&r, &s, mu);
                let ratio: f64 = r.norm() / s.norm();
                assert!(
                    (b - t).norm() < 5.0 * ratio.powi(2) * b.norm(),
                    "tidal: {b} vs {t}"
                );
            }
        }
    }

    #[test]
    fn no_digits_lost_far_from_the_body() {
        // A satellite at 1 km from the Earth's centre, the Sun at 1 AU: the direct form
        // cancels ~8 digits; Battin's agrees with the tidal series to its (r/s)² error.
        let s = Vector3::new(1.495_978_707e8, 0.0, 0.0);
        let r = Vector3::new(0.7, 0.7, 0.1);
        let b = battin_acceleration(&r, &s, MU_SUN_KM3_S2);
        let t = tidal(&r, &s, MU_SUN_KM3_S2);
        assert!((b - t).norm() < 1e-12 * t.norm(), "{b} vs {t}");
    }
}
