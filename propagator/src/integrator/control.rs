//! Step-size control shared by the Dormand–Prince steppers: Hairer's controller as in
//! his DOPRI5 (PI, β = 0.04) and DOP853 (β = 0) codes (Hairer, Nørsett & Wanner, *Solving
//! Ordinary Differential Equations I*, §II.4), written once; each stepper keeps only its
//! error estimate.

use super::{IntegrationError, Settings, Stats};

/// Safety factor on the optimal step.
const SAFETY: f64 = 0.9;

/// Step-size control of one stepper.
#[derive(Clone, Copy, Debug)]
pub(crate) struct StepControl {
    /// err^exponent is the basic change factor: 1/(q + 1) less the PI part (0.75 β).
    exponent: f64,
    /// Weight of the previous step's error (PI control); 0 for pure I control.
    beta: f64,
    /// Smallest ratio h_new / h.
    fac_min: f64,
    /// Largest ratio h_new / h.
    fac_max: f64,
    /// The last accepted step's error (floored at 1e-4).
    fac_old: f64,
    /// After a rejection the next accepted step may not grow.
    last_rejected: bool,
}

/// What the controller says of a trial step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Judgement {
    /// Keep it: the time it reaches and the next step's size, s.
    Accept { t_new: f64, h_next: f64 },
    /// Redo it with this size, s.
    Reject { h_retry: f64 },
}

/// A trial step: from `t`, of signed size `h`, ending the interval at `t_stop` when
/// `last`.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Trial {
    pub(crate) t: f64,
    pub(crate) h: f64,
    pub(crate) last: bool,
    pub(crate) t_stop: f64,
    /// The step size planned before the cut to `t_stop` (magnitude, s).
    planned: f64,
}

impl StepControl {
    /// DOPRI5's: order 5, β = 0.04, the step changes by a factor within [0.2, 10].
    pub(crate) const fn dopri5() -> Self {
        Self::new(0.2 - 0.04 * 0.75, 0.04, 0.2, 10.0)
    }

    /// DOP853's: order 8, β = 0, the step changes by a factor within [0.333, 6].
    pub(crate) const fn dop853() -> Self {
        Self::new(1.0 / 8.0, 0.0, 0.333, 6.0)
    }

    const fn new(exponent: f64, beta: f64, fac_min: f64, fac_max: f64) -> Self {
        Self {
            exponent,
            beta,
            fac_min,
            fac_max,
            fac_old: 1e-4,
            last_rejected: false,
        }
    }

    /// Forgets the history (a new start).
    pub(crate) fn restart(&mut self) {
        self.fac_old = 1e-4;
        self.last_rejected = false;
    }

    /// The trial step of magnitude `h` from `t` in direction `dir`, cut to end exactly
    /// at `t_stop` when within 1 % of it.
    pub(crate) fn trial(
        &self,
        t: f64,
        h: f64,
        dir: f64,
        t_stop: f64,
        settings: &Settings,
    ) -> Result<Trial, IntegrationError> {
        let planned = h;
        let h = dir * h;
        if (t + 1.01 * h - t_stop) * dir > 0.0 {
            return Ok(Trial {
                t,
                h: t_stop - t,
                last: true,
                t_stop,
                planned,
            });
        }
        if h.abs() < settings.min_step_s {
            return Err(IntegrationError::StepTooSmall {
                t_s: t,
                min_step_s: settings.min_step_s,
            });
        }
        Ok(Trial {
            t,
            h,
            last: false,
            t_stop,
            planned,
        })
    }

    /// Accepts or rejects `trial`, whose scaled error norm is `err` (a non-finite error
    /// is a blown-up step: retried at a quarter of the planned size); a retry below the
    /// smallest step is an error.
    pub(crate) fn judge(
        &mut self,
        err: f64,
        trial: &Trial,
        settings: &Settings,
        stats: &mut Stats,
    ) -> Result<Judgement, IntegrationError> {
        let h = trial.h.abs();
        if !err.is_finite() {
            self.last_rejected = true;
            stats.rejected += 1;
            return Ok(Judgement::Reject {
                h_retry: trial.planned * 0.25,
            });
        }
        let fac11 = err.powf(self.exponent);
        let t_new = if trial.last {
            trial.t_stop
        } else {
            trial.t + trial.h
        };
        if err <= 1.0 {
            let fac = (fac11 / self.fac_old.powf(self.beta) / SAFETY)
                .clamp(1.0 / self.fac_max, 1.0 / self.fac_min);
            let mut h_next = h / fac;
            self.fac_old = err.max(1e-4);
            if self.last_rejected {
                h_next = h_next.min(h);
            }
            self.last_rejected = false;
            stats.accepted += 1;
            if stats.accepted > settings.max_steps {
                return Err(IntegrationError::TooManySteps {
                    t_s: t_new,
                    steps: stats.accepted,
                });
            }
            return Ok(Judgement::Accept {
                t_new,
                h_next: h_next.min(settings.max_step_s),
            });
        }
        self.last_rejected = true;
        stats.rejected += 1;
        let h_retry = h / (1.0 / self.fac_min).min(fac11 / SAFETY);
        if h_retry < settings.min_step_s {
            return Err(IntegrationError::StepTooSmall {
                t_s: trial.t,
                min_step_s: settings.min_step_s,
            });
        }
        Ok(Judgement::Reject { h_retry })
    }
}
