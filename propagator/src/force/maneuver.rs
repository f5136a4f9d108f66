//! Maneuvers: impulsive Δv (applied by the propagator exactly at its epoch) and finite
//! burns (a constant RTN acceleration between two epochs, whose edges the integrator
//! stops at).

use super::{Force, ForceError, Segment};
use crate::frames::eci_to_rtn;
use crate::state::StateVector;
use nalgebra::Vector3;

/// The frame a maneuver's vector is given in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ManeuverFrame {
    /// Radial, transverse, normal of the state at the maneuver (before it).
    Rtn,
    /// ECI components.
    Eci,
}

/// An instantaneous velocity change.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Impulse {
    /// When, seconds on the model's time axis.
    pub t_s: f64,
    /// Δv, km/s, in `frame`.
    pub dv_km_s: Vector3<f64>,
    /// The frame of `dv_km_s`.
    pub frame: ManeuverFrame,
}

impl Impulse {
    /// Δv in ECI for a burn from state `x` (km, km/s); `None` if RTN is undefined there.
    pub fn dv_eci(&self, x: &StateVector) -> Option<Vector3<f64>> {
        match self.frame {
            ManeuverFrame::Eci => Some(self.dv_km_s),
            ManeuverFrame::Rtn => {
                let r = Vector3::new(x[0], x[1], x[2]);
                let v = Vector3::new(x[3], x[4], x[5]);
                eci_to_rtn(&r, &v).map(|m| m.transpose() * self.dv_km_s)
            }
        }
    }

    /// The state just after the burn, from the state just before.
    pub fn apply(&self, before: &StateVector) -> Option<StateVector> {
        let dv = self.dv_eci(before)?;
        let mut after = *before;
        after[3] += dv[0];
        after[4] += dv[1];
        after[5] += dv[2];
        Some(after)
    }

    /// The state just before the burn, from the state just after (backward
    /// propagation); the RTN frame is that of the state before, found by iteration.
    pub fn unapply(&self, after: &StateVector) -> Option<StateVector> {
        let mut before = *after;
        for _ in 0..6 {
            let dv = self.dv_eci(&before)?;
            before = *after;
            before[3] -= dv[0];
            before[4] -= dv[1];
            before[5] -= dv[2];
        }
        Some(before)
    }
}

/// A constant acceleration in RTN from `start_s` to `end_s` (seconds on the time axis).
#[derive(Clone, Debug)]
pub struct FiniteBurn {
    /// Start, s.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
    /// Acceleration in RTN, km/s².
    pub accel_rtn_km_s2: Vector3<f64>,
}

impl FiniteBurn {
    fn thrust(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let v = Vector3::new(x[3], x[4], x[5]);
        let m = eci_to_rtn(&r, &v).ok_or_else(|| ForceError {
            force: "finite_burn".into(),
            t_s,
            reason: "RTN frame undefined (rectilinear state)".into(),
        })?;
        Ok(m.transpose() * self.accel_rtn_km_s2)
    }
}

impl Force for FiniteBurn {
    fn name(&self) -> &str {
        "finite_burn"
    }

    /// On for `start ≤ t < end` (used when no integration segment is known).
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        if t_s >= self.start_s && t_s < self.end_s {
            self.thrust(t_s, x)
        } else {
            Ok(Vector3::zeros())
        }
    }

    /// Inside an integration segment the burn is on or off for the whole segment
    /// (segments are split at both edges), so a stage evaluated at an edge sees the
    /// side of the segment it belongs to.
    fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        let mid = segment.mid_s();
        if mid >= self.start_s && mid < self.end_s {
            self.thrust(t_s, x)
        } else {
            Ok(Vector3::zeros())
        }
    }

    fn discontinuities_s(&self) -> Vec<f64> {
        vec![self.start_s, self.end_s]
    }
}
