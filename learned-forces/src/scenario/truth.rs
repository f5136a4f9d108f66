//! The truth's extra forces of a scenario: a formula, a decaying push or a thrust from
//! an epoch, extra drag (a bump, a factor, a periodic swing, a step), a once-per-revolution
//! term.

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
    /// e-folding time, s (infinite: a constant thrust from the start).
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

/// How an [`ExtraDrag`]'s multiplier changes in time.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DragShape {
    /// Always on.
    Constant,
    /// exp(−((t − peak)/width)²) (a storm).
    Bump {
        /// Peak, s on the axis.
        peak_s: f64,
        /// Gaussian width, s.
        width_s: f64,
    },
    /// sin(2π t/period + phase) (a tumbling body's area).
    Periodic {
        /// Period, s.
        period_s: f64,
        /// Phase at t = 0, rad.
        phase_rad: f64,
    },
    /// 0 before `at_s`, 1 from it (a panel deploying).
    StepAt {
        /// The epoch, s on the axis.
        at_s: f64,
    },
}

/// Extra drag (factor − 1)·shape(t)·drag (truth only): the drag multiplied by
/// 1 + (factor − 1)·shape(t).
pub struct ExtraDrag {
    /// The modelled drag.
    pub drag: Drag,
    /// The time dependence.
    pub shape: DragShape,
    /// Multiplier where the shape is 1.
    pub factor: f64,
}

impl ExtraDrag {
    fn extra(&self, t_s: f64, x: &StateVector, shape: f64) -> Result<Vector3<f64>, ForceError> {
        if shape == 0.0 {
            return Ok(Vector3::zeros());
        }
        Ok(self.drag.acceleration(t_s, x)? * ((self.factor - 1.0) * shape))
    }

    fn shape_at(&self, t_s: f64, after_step: bool) -> f64 {
        match self.shape {
            DragShape::Constant => 1.0,
            DragShape::Bump { peak_s, width_s } => (-((t_s - peak_s) / width_s).powi(2)).exp(),
            DragShape::Periodic {
                period_s,
                phase_rad,
            } => (std::f64::consts::TAU * t_s / period_s + phase_rad).sin(),
            DragShape::StepAt { .. } => f64::from(u8::from(after_step)),
        }
    }
}

impl Force for ExtraDrag {
    fn name(&self) -> &str {
        "truth_extra_drag"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let after = matches!(self.shape, DragShape::StepAt { at_s } if t_s >= at_s);
        self.extra(t_s, x, self.shape_at(t_s, after))
    }
    fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        seg: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        let after = matches!(self.shape, DragShape::StepAt { at_s } if seg.mid_s() >= at_s);
        self.extra(t_s, x, self.shape_at(t_s, after))
    }
    fn discontinuities_s(&self) -> Vec<f64> {
        match self.shape {
            DragShape::StepAt { at_s } => vec![at_s],
            _ => vec![],
        }
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
