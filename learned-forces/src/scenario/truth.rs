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

/// What a truth term is built against: the known model, the scenario file, its epoch.
pub(super) struct TruthPlace<'a> {
    pub(super) known: &'a ForcesFile,
    pub(super) path: &'a Path,
    pub(super) epoch: Epoch,
    pub(super) axis: TimeAxis,
}

impl TruthPlace<'_> {
    /// The extra force a truth term adds (`None` for the terms that change the known
    /// model's own forces instead: maneuvers, SRP, atmosphere, thermosphere).
    pub(super) fn extra_force(&self, term: &TruthTerm) -> Result<Option<Box<dyn Force>>, String> {
        let at = |s: &str, key: &str| -> Result<f64, String> {
            Epoch::parse_utc(s)
                .map(|e| self.axis.seconds(&e))
                .map_err(|e| format!("truth.{key}: {e}"))
        };
        let positive = |v: f64, key: &str| {
            if v.is_finite() && v > 0.0 {
                Ok(v)
            } else {
                Err(format!("truth.{key} = {v}: must be positive"))
            }
        };
        let push =
            |start_s: f64, accel: &[f64; 3], time_constant_s: f64| -> Option<Box<dyn Force>> {
                Some(Box::new(DecayingPush {
                    start_s,
                    accel_rtn_km_s2: Vector3::from(*accel),
                    time_constant_s,
                }))
            };
        Ok(match term {
            TruthTerm::DecayingPush {
                start_utc,
                accel_rtn_km_s2,
                time_constant_s,
            } => {
                let tau = positive(*time_constant_s, "decaying_push.time_constant_s")?;
                push(
                    at(start_utc, "decaying_push.start_utc")?,
                    accel_rtn_km_s2,
                    tau,
                )
            }
            TruthTerm::ThrustFrom {
                start_utc,
                accel_rtn_km_s2,
            } => push(
                at(start_utc, "thrust_from.start_utc")?,
                accel_rtn_km_s2,
                f64::INFINITY,
            ),
            TruthTerm::DensityBump {
                peak_utc,
                width_s,
                peak_factor,
            } => {
                let shape = DragShape::Bump {
                    peak_s: at(peak_utc, "density_bump.peak_utc")?,
                    width_s: positive(*width_s, "density_bump.width_s")?,
                };
                Some(self.extra_drag("density_bump", shape, *peak_factor)?)
            }
            TruthTerm::DragFactor { factor } => {
                Some(self.extra_drag("drag_factor", DragShape::Constant, *factor)?)
            }
            TruthTerm::DragPeriodic {
                amplitude,
                period_s,
                phase_deg,
            } => {
                let shape = DragShape::Periodic {
                    period_s: positive(*period_s, "drag_periodic.period_s")?,
                    phase_rad: phase_deg.to_radians(),
                };
                Some(self.extra_drag("drag_periodic", shape, 1.0 + amplitude)?)
            }
            TruthTerm::DragStep { at_utc, factor } => {
                let shape = DragShape::StepAt {
                    at_s: at(at_utc, "drag_step.at_utc")?,
                };
                Some(self.extra_drag("drag_step", shape, *factor)?)
            }
            TruthTerm::OncePerRev {
                amplitude_rtn_km_s2,
                phase_deg,
            } => Some(Box::new(OncePerRev {
                amplitude_rtn_km_s2: Vector3::from(*amplitude_rtn_km_s2),
                phase_rad: phase_deg.to_radians(),
            })),
            TruthTerm::Formula { text } => Some(self.formula(text)?),
            TruthTerm::Maneuver(_)
            | TruthTerm::Thermosphere(_)
            | TruthTerm::Srp(_)
            | TruthTerm::Atmosphere(_) => None,
        })
    }

    /// (factor − 1)·shape(t) times the known model's drag.
    fn extra_drag(
        &self,
        term: &str,
        shape: DragShape,
        factor: f64,
    ) -> Result<Box<dyn Force>, String> {
        if !factor.is_finite() {
            return Err(format!("truth.{term}: the factor {factor} is not finite"));
        }
        let drag = self
            .known
            .drag
            .as_ref()
            .ok_or_else(|| format!("truth.{term} needs drag in forces"))?
            .build(
                &self.known.central_body,
                self.path,
                &self.epoch,
                self.known.earth_orientation.as_ref(),
            )?;
        Ok(Box::new(ExtraDrag {
            drag,
            shape,
            factor,
        }))
    }

    /// A truth force written as a formula (numbers only, no k-constants).
    fn formula(&self, text: &str) -> Result<Box<dyn Force>, String> {
        let node = crate::expr::parse(text).map_err(|e| format!("truth.formula: {e}"))?;
        if node.n_params() > 0 {
            return Err("truth.formula: write numbers, not k-constants, in a truth formula".into());
        }
        let program = crate::expr::compiled::Program::compile(&[node], &[1.0], &[]);
        Ok(Box::new(FormulaForce {
            needs: program.needs(),
            program,
            context: crate::expr::Context::of_model(self.known, self.path, &self.epoch)
                .map_err(|e| format!("truth.formula: {e}"))?,
        }))
    }
}
