//! The truth's extra forces of a scenario: a formula, a decaying push, extra drag (a
//! bump or a factor), a once-per-revolution term.

use super::*;

/// A truth term written as a formula.
pub struct FormulaForce {
    pub(super) program: crate::expr::compiled::Program,
    pub(super) needs: crate::expr::compiled::Needs,
    pub(super) context: crate::expr::Context,
}

impl Force for FormulaForce {
    fn name(&self) -> &str {
        "truth_formula"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let p = crate::expr::Terminals::with_needs(
            t_s,
            [x[0], x[1], x[2]],
            [x[3], x[4], x[5]],
            &self.context,
            &self.needs,
        );
        let a = self.program.eval(&p);
        propagator::force::finite_or_error(self.name(), t_s, Vector3::new(a[0], a[1], a[2]))
    }

    fn switching(&self, t_s: f64, x: &StateVector, out: &mut Vec<f64>) {
        if self.needs.lit {
            self.context.shadow_switching(t_s, x, out);
        }
    }
}

/// An RTN acceleration in ECI at state `x`.
fn rtn_to_eci(
    x: &StateVector,
    a: Vector3<f64>,
    t_s: f64,
    name: &str,
) -> Result<Vector3<f64>, ForceError> {
    let r = Vector3::new(x[0], x[1], x[2]);
    let v = Vector3::new(x[3], x[4], x[5]);
    eci_to_rtn(&r, &v)
        .map(|m| m.transpose() * a)
        .ok_or_else(|| ForceError {
            force: name.into(),
            t_s,
            reason: "RTN undefined".into(),
        })
}

/// Decaying RTN push (truth only).
pub struct DecayingPush {
    /// Start, s on the axis.
    pub start_s: f64,
    /// RTN acceleration at the start, km/s².
    pub accel_rtn_km_s2: Vector3<f64>,
    /// e-folding time, s.
    pub time_constant_s: f64,
}

impl DecayingPush {
    /// The push at `t_s` if it is on (`on` decides: by time, or by integration segment).
    fn push(&self, t_s: f64, x: &StateVector, on: bool) -> Result<Vector3<f64>, ForceError> {
        if !on {
            return Ok(Vector3::zeros());
        }
        let k = (-(t_s - self.start_s) / self.time_constant_s).exp();
        rtn_to_eci(x, self.accel_rtn_km_s2 * k, t_s, self.name())
    }
}

impl Force for DecayingPush {
    fn name(&self) -> &str {
        "truth_decaying_push"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        self.push(t_s, x, t_s >= self.start_s)
    }
    fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        seg: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        self.push(t_s, x, seg.mid_s() >= self.start_s)
    }
    fn discontinuities_s(&self) -> Vec<f64> {
        vec![self.start_s]
    }
}

/// Extra drag (factor(t) − 1)·drag (truth only).
pub struct ExtraDrag {
    /// The modelled drag.
    pub drag: Drag,
    /// Peak time, s (ignored when `width_s` is infinite).
    pub peak_s: f64,
    /// Gaussian width, s (infinite: a constant factor).
    pub width_s: f64,
    /// Multiplier at the peak.
    pub peak_factor: f64,
}

impl Force for ExtraDrag {
    fn name(&self) -> &str {
        "truth_extra_drag"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let shape = if self.width_s.is_finite() {
            (-((t_s - self.peak_s) / self.width_s).powi(2)).exp()
        } else {
            1.0
        };
        Ok(self.drag.acceleration(t_s, x)? * ((self.peak_factor - 1.0) * shape))
    }
}

/// Once-per-revolution RTN acceleration (truth only).
pub struct OncePerRev {
    /// Amplitudes, km/s².
    pub amplitude_rtn_km_s2: Vector3<f64>,
    /// Phase, rad.
    pub phase_rad: f64,
}

impl Force for OncePerRev {
    fn name(&self) -> &str {
        "truth_once_per_rev"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let u = crate::fit::model::argument_of_latitude(x);
        rtn_to_eci(
            x,
            self.amplitude_rtn_km_s2 * (u + self.phase_rad).cos(),
            t_s,
            self.name(),
        )
    }
}
