//! Cartesian states: position km and velocity km/s in ECI.

use nalgebra::{Vector3, Vector6};

/// A Cartesian state `[x, y, z, vx, vy, vz]`, km and km/s, ECI (J2000 mean equator and
/// equinox, treated as GCRF).
pub type StateVector = Vector6<f64>;

/// Position part of a state, km.
pub fn position(x: &StateVector) -> Vector3<f64> {
    Vector3::new(x[0], x[1], x[2])
}

/// Velocity part of a state, km/s.
pub fn velocity(x: &StateVector) -> Vector3<f64> {
    Vector3::new(x[3], x[4], x[5])
}

/// A state from position (km) and velocity (km/s).
pub fn from_parts(r: &Vector3<f64>, v: &Vector3<f64>) -> StateVector {
    StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2])
}
