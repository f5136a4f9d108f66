//! Classical (Keplerian) orbital elements ↔ Cartesian state, for input convenience.
//!
//! Angles are radians here; files carry degrees and convert at the boundary.
//! Only closed (elliptic, e < 1) orbits are supported.

use crate::state::{from_parts, position, velocity, StateVector};
use nalgebra::Vector3;
use std::f64::consts::TAU;

/// Classical elements of a closed orbit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Elements {
    /// Semi-major axis, km.
    pub sma_km: f64,
    /// Eccentricity, dimensionless, 0 ≤ e < 1.
    pub ecc: f64,
    /// Inclination, rad.
    pub inc_rad: f64,
    /// Right ascension of the ascending node, rad.
    pub raan_rad: f64,
    /// Argument of perigee, rad.
    pub argp_rad: f64,
    /// True anomaly, rad.
    pub true_anomaly_rad: f64,
}

/// Why a state or element set cannot be converted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ElementsError {
    /// e ≥ 1, or negative.
    #[error("eccentricity {0} is not that of a closed orbit (0 ≤ e < 1 required; give a hyperbolic state as r_km and v_km_s)")]
    NotElliptic(f64),
    /// a ≤ 0 or non-finite.
    #[error("semi-major axis {0} km is not positive and finite")]
    BadSemiMajorAxis(f64),
    /// Any non-finite angle.
    #[error("element `{0}` is not finite")]
    NotFinite(&'static str),
    /// Rectilinear or zero state.
    #[error("the state is degenerate (zero radius or zero angular momentum)")]
    Degenerate,
}

impl Elements {
    /// Cartesian state (km, km/s) for gravitational parameter `mu` (km³/s²).
    pub fn to_state(&self, mu: f64) -> Result<StateVector, ElementsError> {
        for (name, v) in [
            ("inc", self.inc_rad),
            ("raan", self.raan_rad),
            ("argp", self.argp_rad),
            ("true_anomaly", self.true_anomaly_rad),
        ] {
            if !v.is_finite() {
                return Err(ElementsError::NotFinite(name));
            }
        }
        if !(self.sma_km.is_finite() && self.sma_km > 0.0) {
            return Err(ElementsError::BadSemiMajorAxis(self.sma_km));
        }
        if !(self.ecc.is_finite() && (0.0..1.0).contains(&self.ecc)) {
            return Err(ElementsError::NotElliptic(self.ecc));
        }
        let p = self.sma_km * (1.0 - self.ecc * self.ecc);
        let (snu, cnu) = self.true_anomaly_rad.sin_cos();
        let rmag = p / (1.0 + self.ecc * cnu);
        let r_pqw = Vector3::new(rmag * cnu, rmag * snu, 0.0);
        let k = (mu / p).sqrt();
        let v_pqw = Vector3::new(-k * snu, k * (self.ecc + cnu), 0.0);
        let rot = nalgebra::Rotation3::from_axis_angle(&Vector3::z_axis(), self.raan_rad)
            * nalgebra::Rotation3::from_axis_angle(&Vector3::x_axis(), self.inc_rad)
            * nalgebra::Rotation3::from_axis_angle(&Vector3::z_axis(), self.argp_rad);
        Ok(from_parts(&(rot * r_pqw), &(rot * v_pqw)))
    }

    /// Elements of a closed orbit from a Cartesian state (km, km/s).
    ///
    /// For circular or equatorial orbits the undefined angles are set by convention:
    /// RAAN = 0 when equatorial, argument of perigee = 0 when circular (the anomaly is
    /// then counted from the node, or from the x axis).
    pub fn from_state(x: &StateVector, mu: f64) -> Result<Elements, ElementsError> {
        let r = position(x);
        let v = velocity(x);
        let rn = r.norm();
        let h = r.cross(&v);
        let hn = h.norm();
        if rn <= 0.0 || hn <= 0.0 || !rn.is_finite() || !hn.is_finite() {
            return Err(ElementsError::Degenerate);
        }
        let e_vec = v.cross(&h) / mu - r / rn;
        let ecc = e_vec.norm();
        let energy = v.norm_squared() / 2.0 - mu / rn;
        if ecc >= 1.0 || energy >= 0.0 {
            return Err(ElementsError::NotElliptic(ecc));
        }
        let sma = -mu / (2.0 * energy);
        let inc = (h[2] / hn).clamp(-1.0, 1.0).acos();
        let node = Vector3::z().cross(&h);
        let nn = node.norm();
        let tiny = 1e-11;
        let equatorial = nn <= tiny * hn;
        let circular = ecc <= tiny;
        let angle = |a: &Vector3<f64>, b: &Vector3<f64>| {
            (a.dot(b) / (a.norm() * b.norm())).clamp(-1.0, 1.0).acos()
        };
        let raan = if equatorial {
            0.0
        } else {
            let o = node[1].atan2(node[0]);
            o.rem_euclid(TAU)
        };
        let node_dir = if equatorial { Vector3::x() } else { node };
        let argp = if circular {
            0.0
        } else {
            let mut w = angle(&node_dir, &e_vec);
            // Sense measured about h.
            if node_dir.cross(&e_vec).dot(&h) < 0.0 {
                w = TAU - w;
            }
            w
        };
        let from = if circular { node_dir } else { e_vec };
        let mut nu = angle(&from, &r);
        if from.cross(&r).dot(&h) < 0.0 {
            nu = TAU - nu;
        }
        Ok(Elements {
            sma_km: sma,
            ecc,
            inc_rad: inc,
            raan_rad: raan,
            argp_rad: argp,
            true_anomaly_rad: nu,
        })
    }

    /// Orbital period, s.
    pub fn period_s(&self, mu: f64) -> f64 {
        TAU * (self.sma_km.powi(3) / mu).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const MU: f64 = 398_600.441_8;

    #[test]
    fn vallado_rv2coe_example() {
        // Vallado, Fundamentals of Astrodynamics and Applications, Example 2-5
        // (RV2COE), from memory: a = 36127.343 km, e = 0.832853, i = 87.870°,
        // Ω = 227.898°, ω = 53.38°, ν = 92.335°.
        let x = StateVector::new(6524.834, 6862.875, 6448.296, 4.901327, 5.533756, -1.976341);
        let el = Elements::from_state(&x, MU).unwrap();
        assert_relative_eq!(el.sma_km, 36_127.343, max_relative = 1e-5);
        assert_relative_eq!(el.ecc, 0.832853, epsilon = 1e-5);
        assert_relative_eq!(el.inc_rad.to_degrees(), 87.870, epsilon = 1e-3);
        assert_relative_eq!(el.raan_rad.to_degrees(), 227.898, epsilon = 2e-3);
        assert_relative_eq!(el.argp_rad.to_degrees(), 53.38, epsilon = 1e-2);
        assert_relative_eq!(el.true_anomaly_rad.to_degrees(), 92.335, epsilon = 1e-2);
        let back = el.to_state(MU).unwrap();
        assert_relative_eq!(back, x, max_relative = 1e-11);
    }

    #[test]
    fn round_trip_over_many_orbits() {
        for k in 0..50 {
            let f = k as f64;
            let el = Elements {
                sma_km: 6800.0 + 500.0 * f,
                ecc: 0.01 + 0.015 * f,
                inc_rad: (5.0 + 3.3 * f).to_radians(),
                raan_rad: (7.0 * f).to_radians(),
                argp_rad: (11.0 * f + 3.0).to_radians(),
                true_anomaly_rad: (13.0 * f + 1.0).to_radians(),
            };
            let x = el.to_state(MU).unwrap();
            let b = Elements::from_state(&x, MU).unwrap();
            assert_relative_eq!(b.sma_km, el.sma_km, max_relative = 1e-11);
            assert_relative_eq!(b.ecc, el.ecc, epsilon = 1e-11);
            assert_relative_eq!(b.inc_rad, el.inc_rad, epsilon = 1e-11);
            assert_relative_eq!(b.raan_rad, el.raan_rad.rem_euclid(TAU), epsilon = 1e-10);
            assert_relative_eq!(b.argp_rad, el.argp_rad.rem_euclid(TAU), epsilon = 1e-9);
            assert_relative_eq!(
                b.true_anomaly_rad,
                el.true_anomaly_rad.rem_euclid(TAU),
                epsilon = 1e-9
            );
        }
    }

    #[test]
    fn open_orbits_are_refused() {
        let x = StateVector::new(7000.0, 0.0, 0.0, 0.0, 11.0, 0.0);
        assert!(matches!(
            Elements::from_state(&x, MU),
            Err(ElementsError::NotElliptic(_))
        ));
        let el = Elements {
            sma_km: 7000.0,
            ecc: 1.2,
            inc_rad: 0.0,
            raan_rad: 0.0,
            argp_rad: 0.0,
            true_anomaly_rad: 0.0,
        };
        assert!(el.to_state(MU).is_err());
    }
}
