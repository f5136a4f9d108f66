//! Explicit Runge–Kutta integrators with continuous output.
//!
//! Three methods: fixed-step RK4 (cubic Hermite dense output), adaptive
//! Dormand–Prince 5(4) (Hairer's DOPRI5, 4th-order dense output) and adaptive
//! Dormand–Prince 8(5,3) (Hairer's DOP853, 7th-order dense output). Each is a
//! [`Stepper`]: it advances one accepted step at a time and can interpolate anywhere
//! inside that step, so an ephemeris at arbitrary epochs, events (an altitude floor)
//! and exact stops (maneuver epochs) all come from one integration whose step control
//! is never restarted except at a real discontinuity.
//!
//! Why our own steppers: `ode_solvers` 0.6.2 offers continuous output for DOPRI5 only
//! and no step-by-step interface; its coefficient tables are reused (see [`tableau`])
//! and its `Dop853` serves as an independent check in the tests.

// Numerical kernels index several arrays in step; index loops read like the formulas.
#![allow(clippy::needless_range_loop)]

mod control;
mod dop853;
mod dopri5;
mod rk4;
pub mod tableau;

pub use dop853::Dop853;
pub use dopri5::Dopri5;
pub use rk4::Rk4;

use crate::force::ForceError;

/// A first-order system y′ = f(t, y) of fixed dimension.
pub trait OdeSystem {
    /// Number of components of y.
    fn dim(&self) -> usize;
    /// Writes f(t, y) into `dy`; an error stops the integration.
    fn rhs(&mut self, t: f64, y: &[f64], dy: &mut [f64]) -> Result<(), ForceError>;
}

/// Which integration method.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    /// Classical 4th-order Runge–Kutta with a fixed step.
    Rk4,
    /// Dormand–Prince 5(4), adaptive.
    Dp54,
    /// Dormand–Prince 8(5,3), adaptive.
    Dp853,
}

impl Method {
    /// Parses the command-line names `rk4`, `dp54`, `dp853`.
    pub fn parse(s: &str) -> Option<Method> {
        match s {
            "rk4" => Some(Method::Rk4),
            "dp54" => Some(Method::Dp54),
            "dp853" => Some(Method::Dp853),
            _ => None,
        }
    }

    /// The command-line name.
    pub fn name(&self) -> &'static str {
        match self {
            Method::Rk4 => "rk4",
            Method::Dp54 => "dp54",
            Method::Dp853 => "dp853",
        }
    }
}

/// Tolerances and step limits.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Settings {
    /// The method.
    pub method: Method,
    /// Relative tolerance (adaptive methods), dimensionless.
    pub rtol: f64,
    /// Absolute tolerance (adaptive methods), in the units of y (km and km/s).
    pub atol: f64,
    /// Fixed step for RK4, s.
    pub fixed_step_s: f64,
    /// Largest step an adaptive method may take, s.
    pub max_step_s: f64,
    /// Smallest step before the integration gives up, s.
    pub min_step_s: f64,
    /// First step, s; `None` chooses it automatically (Hairer's rule).
    pub initial_step_s: Option<f64>,
    /// Most steps before giving up.
    pub max_steps: u64,
    /// Only the first `error_dims` components enter the error norm (`None` = all);
    /// variational equations are usually left out of the step control.
    pub error_dims: Option<usize>,
}

impl Default for Settings {
    fn default() -> Self {
        Self {
            method: Method::Dp853,
            rtol: 1e-11,
            atol: 1e-11,
            fixed_step_s: 10.0,
            max_step_s: 3_600.0,
            min_step_s: 1e-6,
            initial_step_s: None,
            max_steps: 10_000_000,
            error_dims: None,
        }
    }
}

impl Settings {
    /// Checks that tolerances and limits are positive and finite; names the option.
    pub fn validate(&self) -> Result<(), String> {
        let checks = [
            ("rtol", self.rtol, self.rtol > 0.0 && self.rtol < 1.0),
            ("atol", self.atol, self.atol > 0.0),
            ("step", self.fixed_step_s, self.fixed_step_s > 0.0),
            ("max-step", self.max_step_s, self.max_step_s > 0.0),
            ("min-step", self.min_step_s, self.min_step_s > 0.0),
        ];
        for (name, v, ok) in checks {
            if !(v.is_finite() && ok) {
                return Err(format!(
                    "integrator option {name} = {v} must be positive and finite (rtol below 1)"
                ));
            }
        }
        if self.rtol < 1e-15 {
            return Err(format!(
                "rtol = {} is below what double precision can deliver (use ≥ 1e-15)",
                self.rtol
            ));
        }
        if self.min_step_s > self.max_step_s {
            return Err("min-step is larger than max-step".into());
        }
        Ok(())
    }
}

/// Work counters of one integration.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Stats {
    /// Evaluations of the right-hand side.
    pub evaluations: u64,
    /// Accepted steps.
    pub accepted: u64,
    /// Rejected steps.
    pub rejected: u64,
}

/// Why an integration stopped early.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum IntegrationError {
    /// A force failed.
    #[error(transparent)]
    Force(#[from] ForceError),
    /// The step fell below the minimum without meeting the tolerance.
    #[error("cannot meet the tolerance at t = {t_s} s: the step fell below {min_step_s} s (tolerance too tight, or the dynamics are singular there)")]
    StepTooSmall {
        /// Where, seconds from the start of the axis.
        t_s: f64,
        /// The limit.
        min_step_s: f64,
    },
    /// Too many steps.
    #[error(
        "gave up at t = {t_s} s after {steps} steps (raise the step limit or loosen the tolerance)"
    )]
    TooManySteps {
        /// Where.
        t_s: f64,
        /// How many.
        steps: u64,
    },
    /// The state became NaN or infinite.
    #[error("the state became non-finite at t = {t_s} s")]
    NonFinite {
        /// Where.
        t_s: f64,
    },
}

impl IntegrationError {
    /// Where it happened, s on the model's time axis.
    pub fn t_s(&self) -> f64 {
        match self {
            IntegrationError::Force(e) => e.t_s,
            IntegrationError::StepTooSmall { t_s, .. }
            | IntegrationError::TooManySteps { t_s, .. }
            | IntegrationError::NonFinite { t_s } => *t_s,
        }
    }
}

/// Any of the three steppers, dispatched by `match` (the hot loop stays generic).
pub enum AnyStepper {
    /// Fixed-step RK4.
    Rk4(Rk4),
    /// Dormand–Prince 5(4).
    Dp54(Dopri5),
    /// Dormand–Prince 8(5,3).
    Dp853(Dop853),
}

macro_rules! dispatch {
    ($self:ident, $s:ident => $e:expr) => {
        match $self {
            AnyStepper::Rk4($s) => $e,
            AnyStepper::Dp54($s) => $e,
            AnyStepper::Dp853($s) => $e,
        }
    };
}

impl AnyStepper {
    /// A stepper for `settings` and a system of dimension `dim`.
    pub fn new(settings: &Settings, dim: usize) -> Self {
        match settings.method {
            Method::Rk4 => AnyStepper::Rk4(Rk4::new(*settings, dim)),
            Method::Dp54 => AnyStepper::Dp54(Dopri5::new(*settings, dim)),
            Method::Dp853 => AnyStepper::Dp853(Dop853::new(*settings, dim)),
        }
    }

    /// Starts (or restarts after a discontinuity) at `(t0, y0)`, integrating in the
    /// direction of `toward` (forward if `toward > t0`).
    pub fn start<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t0: f64,
        y0: &[f64],
        toward: f64,
    ) -> Result<(), IntegrationError> {
        dispatch!(self, s => s.start(sys, t0, y0, toward))
    }

    /// Restarts at `(t0, y0)` as [`AnyStepper::start`] does, but with the step size the
    /// stepper proposes now: for a restart where the trajectory stays smooth (a switching
    /// root), so no work is spent growing the step again from the starting heuristic.
    pub fn resume<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t0: f64,
        y0: &[f64],
        toward: f64,
    ) -> Result<(), IntegrationError> {
        dispatch!(self, s => s.keep_next_step());
        self.start(sys, t0, y0, toward)
    }

    /// Takes one accepted step toward `t_stop`, never past it; returns the new time.
    pub fn step<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t_stop: f64,
    ) -> Result<f64, IntegrationError> {
        dispatch!(self, s => s.step(sys, t_stop))
    }

    /// Current time (end of the last step).
    pub fn t(&self) -> f64 {
        dispatch!(self, s => s.t())
    }

    /// Time at the start of the last step.
    pub fn t_prev(&self) -> f64 {
        dispatch!(self, s => s.t_prev())
    }

    /// Current state.
    pub fn y(&self) -> &[f64] {
        dispatch!(self, s => s.y())
    }

    /// Dense output at `t` inside the last step `[t_prev, t]` (built on first use:
    /// DOP853 spends three more evaluations on it, only for steps that need it).
    pub fn dense_at<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t: f64,
        out: &mut [f64],
    ) -> Result<(), IntegrationError> {
        if let AnyStepper::Dp853(s) = self {
            s.prepare_dense(sys)?;
        }
        dispatch!(self, s => s.interpolate(t, out));
        Ok(())
    }

    /// Work counters so far.
    pub fn stats(&self) -> Stats {
        dispatch!(self, s => s.stats())
    }
}

/// The error-norm scale shared by the adaptive steppers.
#[inline]
pub(crate) fn scale(atol: f64, rtol: f64, a: f64, b: f64) -> f64 {
    atol + rtol * a.abs().max(b.abs())
}

/// Hairer's starting-step heuristic (Solving ODEs I, §II.4), for an order-`order` method.
#[allow(clippy::too_many_arguments)]
pub(crate) fn initial_step<S: OdeSystem>(
    sys: &mut S,
    t0: f64,
    y0: &[f64],
    f0: &[f64],
    dir: f64,
    order: i32,
    settings: &Settings,
    n_err: usize,
) -> Result<f64, IntegrationError> {
    let n = y0.len();
    let (mut d0, mut d1) = (0.0, 0.0);
    for i in 0..n_err {
        let sk = settings.atol + settings.rtol * y0[i].abs();
        d0 += (y0[i] / sk).powi(2);
        d1 += (f0[i] / sk).powi(2);
    }
    let mut h = if d0 <= 1e-10 || d1 <= 1e-10 {
        1e-6
    } else {
        (d0 / d1).sqrt() * 0.01
    };
    h = h.min(settings.max_step_s);
    let mut y1 = vec![0.0; n];
    for i in 0..n {
        y1[i] = y0[i] + dir * h * f0[i];
    }
    let mut f1 = vec![0.0; n];
    sys.rhs(t0 + dir * h, &y1, &mut f1)?;
    let mut d2 = 0.0;
    for i in 0..n_err {
        let sk = settings.atol + settings.rtol * y0[i].abs();
        d2 += ((f1[i] - f0[i]) / sk).powi(2);
    }
    let d2 = d2.sqrt() / h;
    let der = d1.sqrt().max(d2);
    let h1 = if der <= 1e-15 {
        (h * 1e-3).max(1e-6)
    } else {
        (0.01 / der).powf(1.0 / order as f64)
    };
    Ok((100.0 * h).min(h1).min(settings.max_step_s))
}

#[cfg(test)]
mod tests;
