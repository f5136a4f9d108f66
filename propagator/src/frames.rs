//! Frames: ECI ↔ RTN (radial, transverse, normal).
//!
//! RTN: R = r/|r|, N = (r×v)/|r×v|, T = N×R. For a circular orbit T is the velocity
//! direction ("along-track"); N is the orbit normal ("cross-track").

use nalgebra::{Matrix3, Vector3};

/// The rotation whose rows are R, T and N in ECI, so `m * v_eci = v_rtn`.
/// Returns `None` for a degenerate state (zero radius or rectilinear motion).
pub fn eci_to_rtn(r: &Vector3<f64>, v: &Vector3<f64>) -> Option<Matrix3<f64>> {
    let rn = r.norm();
    let h = r.cross(v);
    let hn = h.norm();
    if rn <= 0.0 || hn <= 1e-12 * rn * v.norm().max(1e-300) || !hn.is_finite() {
        return None;
    }
    let rh = r / rn;
    let nh = h / hn;
    let th = nh.cross(&rh);
    Some(Matrix3::from_rows(&[
        rh.transpose(),
        th.transpose(),
        nh.transpose(),
    ]))
}

/// Converts a vector from RTN components to ECI at the state (r km, v km/s).
pub fn rtn_to_eci_vector(
    r: &Vector3<f64>,
    v: &Vector3<f64>,
    rtn: &Vector3<f64>,
) -> Option<Vector3<f64>> {
    eci_to_rtn(r, v).map(|m| m.transpose() * rtn)
}

/// Converts a vector from ECI components to RTN at the state (r km, v km/s).
pub fn eci_to_rtn_vector(
    r: &Vector3<f64>,
    v: &Vector3<f64>,
    eci: &Vector3<f64>,
) -> Option<Vector3<f64>> {
    eci_to_rtn(r, v).map(|m| m * eci)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn circular_orbit_axes() {
        let r = Vector3::new(7000.0, 0.0, 0.0);
        let v = Vector3::new(0.0, 7.5, 0.0);
        let m = eci_to_rtn(&r, &v).unwrap();
        assert_relative_eq!(
            m * Vector3::new(1.0, 0.0, 0.0),
            Vector3::x(),
            epsilon = 1e-15
        );
        assert_relative_eq!(
            m * Vector3::new(0.0, 1.0, 0.0),
            Vector3::y(),
            epsilon = 1e-15
        );
        assert_relative_eq!(
            m * Vector3::new(0.0, 0.0, 1.0),
            Vector3::z(),
            epsilon = 1e-15
        );
    }

    #[test]
    fn round_trip_is_orthonormal() {
        let r = Vector3::new(1131.34, -2282.343, 6672.423);
        let v = Vector3::new(-5.64305, 4.30333, 2.42879);
        let m = eci_to_rtn(&r, &v).unwrap();
        assert_relative_eq!(m * m.transpose(), Matrix3::identity(), epsilon = 1e-14);
        assert_relative_eq!(m.determinant(), 1.0, epsilon = 1e-14);
        let a = Vector3::new(1e-9, -2e-9, 3e-9);
        let back = rtn_to_eci_vector(&r, &v, &eci_to_rtn_vector(&r, &v, &a).unwrap()).unwrap();
        assert_relative_eq!(back, a, epsilon = 1e-22);
        // The velocity has no normal component and a positive transverse one.
        let vr = m * v;
        assert!(vr[2].abs() < 1e-12 && vr[1] > 0.0);
    }

    #[test]
    fn degenerate_state_is_refused() {
        let r = Vector3::new(7000.0, 0.0, 0.0);
        assert!(eci_to_rtn(&r, &Vector3::new(1.0, 0.0, 0.0)).is_none());
        assert!(eci_to_rtn(&Vector3::zeros(), &Vector3::new(0.0, 1.0, 0.0)).is_none());
    }
}
