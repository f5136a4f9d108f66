//! Frames: ECI ↔ RTN (radial, transverse, normal), and the named frames files use
//! (GCRF, EME2000, ITRF) with their rotation to GCRF, arcwise's inertial frame.
//!
//! RTN: R = r/|r|, N = (r×v)/|r×v|, T = N×R. For a circular orbit T is the velocity
//! direction ("along-track"); N is the orbit normal ("cross-track").

use crate::state::StateVector;
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

/// A reference frame a file may name (CCSDS registry names).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Frame {
    /// GCRF, arcwise's inertial frame (ICRF axes, the same to the mas here).
    #[default]
    Gcrf,
    /// EME2000: J2000 mean equator and equinox, the frame bias (~23 mas) from GCRF.
    Eme2000,
    /// ITRF (any realization: ITRF, ITRF2000, ITRF2014, ITRF-93 …), Earth-fixed.
    Itrf,
}

impl Frame {
    /// The frame a name denotes (`GCRF`/`ICRF`, `EME2000`, `ITRF…`), if arcwise reads it.
    pub fn from_keyword(v: &str) -> Option<Frame> {
        match v {
            "GCRF" | "ICRF" => Some(Frame::Gcrf),
            "EME2000" => Some(Frame::Eme2000),
            _ if v.starts_with("ITRF") => Some(Frame::Itrf),
            _ => None,
        }
    }

    /// The name arcwise writes (OEM `REF_FRAME`): `GCRF`, `EME2000` or `ITRF` (the
    /// realization is the Earth-orientation data's).
    pub fn keyword(&self) -> &'static str {
        match self {
            Frame::Gcrf => "GCRF",
            Frame::Eme2000 => "EME2000",
            Frame::Itrf => "ITRF",
        }
    }
}

/// Rotates positions and states between one named frame and GCRF (ITRF with the shipped
/// IERS Earth-orientation data).
pub struct ToGcrf {
    frame: Frame,
    bias: Matrix3<f64>,
    earth: Option<crate::earth::EarthOrientation>,
}

impl ToGcrf {
    /// The rotation from `frame`, ITRF through the shipped Earth-orientation table.
    pub fn new(frame: Frame) -> Result<Self, String> {
        Self::with_earth(frame, None)
    }

    /// The rotation from `frame`, ITRF through `earth` (the shipped table if `None`).
    pub fn with_earth(
        frame: Frame,
        earth: Option<&crate::earth::EarthOrientation>,
    ) -> Result<Self, String> {
        let earth = match (frame, earth) {
            (Frame::Itrf, Some(e)) => Some(e.clone()),
            (Frame::Itrf, None) => Some(crate::earth::EarthOrientation::shipped()?),
            _ => None,
        };
        Ok(Self {
            frame,
            bias: crate::earth::orientation::eme2000_to_gcrf(),
            earth,
        })
    }

    /// A position (km) at `epoch`, and its velocity (km/s) if given, in GCRF.
    pub fn apply(
        &self,
        epoch: &crate::Epoch,
        r: Vector3<f64>,
        v: Option<Vector3<f64>>,
    ) -> (Vector3<f64>, Option<Vector3<f64>>) {
        match (self.frame, &self.earth) {
            (Frame::Gcrf, _) | (Frame::Itrf, None) => (r, v),
            (Frame::Eme2000, _) => (self.bias * r, v.map(|v| self.bias * v)),
            (Frame::Itrf, Some(e)) => {
                let rot = e.at(epoch.tt_seconds_since_j2000());
                match v {
                    Some(v) => {
                        let (r, v) = rot.state_to_gcrf(&r, &v);
                        (r, Some(v))
                    }
                    None => (rot.gcrf_to_itrf().transpose() * r, None),
                }
            }
        }
    }

    /// The inverse: a GCRF state (km, km/s) at `epoch` in this frame.
    pub fn state_from_gcrf(&self, epoch: &crate::Epoch, x: &StateVector) -> StateVector {
        let (r, v) = (
            Vector3::new(x[0], x[1], x[2]),
            Vector3::new(x[3], x[4], x[5]),
        );
        let (r, v) = match (self.frame, &self.earth) {
            (Frame::Gcrf, _) | (Frame::Itrf, None) => (r, v),
            (Frame::Eme2000, _) => (self.bias.transpose() * r, self.bias.transpose() * v),
            (Frame::Itrf, Some(e)) => e.at(epoch.tt_seconds_since_j2000()).state_to_itrf(&r, &v),
        };
        StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2])
    }
}
