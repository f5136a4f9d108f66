//! Dormand–Prince 5(4) with Hairer's step control and 4th-order dense output.

use super::control::{Judgement, StepControl};
use super::tableau::{DP5_A as A, DP5_C as C, DP5_D as D, DP5_E as E};
use super::{initial_step, scale, IntegrationError, OdeSystem, Settings, Stats};

/// Adaptive Dormand–Prince 5(4) (DOPRI5), PI step control with β = 0.04.
pub struct Dopri5 {
    settings: Settings,
    n: usize,
    n_err: usize,
    t: f64,
    t_prev: f64,
    h: f64,
    /// Set by [`Self::keep_next_step`]: the next start keeps `h`.
    keep_step: bool,
    dir: f64,
    y: Vec<f64>,
    k: [Vec<f64>; 7],
    y1: Vec<f64>,
    rcont: [Vec<f64>; 5],
    control: StepControl,
    stats: Stats,
}

impl Dopri5 {
    /// A stepper for a system of dimension `n`.
    pub fn new(settings: Settings, n: usize) -> Self {
        let z = || vec![0.0; n];
        Self {
            settings,
            n,
            n_err: settings.error_dims.unwrap_or(n).min(n),
            t: 0.0,
            t_prev: 0.0,
            h: 0.0,
            keep_step: false,
            dir: 1.0,
            y: z(),
            k: [z(), z(), z(), z(), z(), z(), z()],
            y1: z(),
            rcont: [z(), z(), z(), z(), z()],
            control: StepControl::dopri5(),
            stats: Stats::default(),
        }
    }

    /// The next [`Self::start`] begins with the step size proposed now instead of the
    /// starting heuristic (a restart on a smooth trajectory, at a switching root).
    pub(crate) fn keep_next_step(&mut self) {
        self.keep_step = true;
    }

    pub(crate) fn start<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t0: f64,
        y0: &[f64],
        toward: f64,
    ) -> Result<(), IntegrationError> {
        self.t = t0;
        self.t_prev = t0;
        self.dir = if toward >= t0 { 1.0 } else { -1.0 };
        self.y.copy_from_slice(y0);
        sys.rhs(t0, y0, &mut self.k[0])?;
        self.stats.evaluations += 1;
        let proposed = (self.h > 0.0 && self.keep_step).then_some(self.h);
        self.keep_step = false;
        self.h = match proposed.or(self.settings.initial_step_s) {
            Some(h) => h.abs().min(self.settings.max_step_s),
            None => {
                self.stats.evaluations += 1;
                initial_step(
                    sys,
                    t0,
                    y0,
                    &self.k[0],
                    self.dir,
                    5,
                    &self.settings,
                    self.n_err,
                )?
            }
        };
        for r in &mut self.rcont {
            r.fill(0.0);
        }
        self.rcont[0].copy_from_slice(y0);
        self.control.restart();
        Ok(())
    }

    pub(crate) fn step<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t_stop: f64,
    ) -> Result<f64, IntegrationError> {
        let n = self.n;
        loop {
            let trial = self
                .control
                .trial(self.t, self.h, self.dir, t_stop, &self.settings)?;
            let h = trial.h;
            // Stages 2..7 (k[1]..k[6]); k[6] at the 5th-order solution (FSAL).
            for s in 1..7 {
                for i in 0..n {
                    let mut acc = 0.0;
                    for j in 0..s {
                        acc += A[s][j] * self.k[j][i];
                    }
                    self.y1[i] = self.y[i] + h * acc;
                }
                let (done, rest) = self.k.split_at_mut(s);
                let _ = done;
                sys.rhs(self.t + C[s] * h, &self.y1, &mut rest[0])?;
            }
            self.stats.evaluations += 6;
            // y1 now holds the 5th-order solution (row 6 of A is the b weights).
            let mut err = 0.0;
            for i in 0..self.n_err {
                let mut e = 0.0;
                for j in 0..7 {
                    e += E[j] * self.k[j][i];
                }
                let sk = scale(
                    self.settings.atol,
                    self.settings.rtol,
                    self.y[i],
                    self.y1[i],
                );
                err += (h * e / sk).powi(2);
            }
            let err = (err / self.n_err as f64).sqrt();
            let (t_new, h_next) =
                match self
                    .control
                    .judge(err, &trial, &self.settings, &mut self.stats)?
                {
                    Judgement::Reject { h_retry } => {
                        self.h = h_retry;
                        continue;
                    }
                    Judgement::Accept { t_new, h_next } => (t_new, h_next),
                };
            // Dense output for [t, t + h].
            for i in 0..n {
                let ydiff = self.y1[i] - self.y[i];
                let bspl = h * self.k[0][i] - ydiff;
                self.rcont[0][i] = self.y[i];
                self.rcont[1][i] = ydiff;
                self.rcont[2][i] = bspl;
                self.rcont[3][i] = ydiff - h * self.k[6][i] - bspl;
                let mut d = 0.0;
                for j in 0..7 {
                    d += D[j] * self.k[j][i];
                }
                self.rcont[4][i] = h * d;
            }
            self.t_prev = self.t;
            self.t = t_new;
            self.y.copy_from_slice(&self.y1);
            let (first, rest) = self.k.split_at_mut(6);
            first[0].copy_from_slice(&rest[0]);
            self.h = h_next;
            return Ok(self.t);
        }
    }

    pub(crate) fn interpolate(&self, t: f64, out: &mut [f64]) {
        let h = self.t - self.t_prev;
        if h == 0.0 {
            out.copy_from_slice(&self.y);
            return;
        }
        let s = (t - self.t_prev) / h;
        let s1 = 1.0 - s;
        let r = &self.rcont;
        for i in 0..self.n {
            out[i] = r[0][i] + s * (r[1][i] + s1 * (r[2][i] + s * (r[3][i] + s1 * r[4][i])));
        }
    }

    pub(crate) fn t(&self) -> f64 {
        self.t
    }
    pub(crate) fn t_prev(&self) -> f64 {
        self.t_prev
    }
    pub(crate) fn y(&self) -> &[f64] {
        &self.y
    }
    pub(crate) fn stats(&self) -> Stats {
        self.stats
    }
}
