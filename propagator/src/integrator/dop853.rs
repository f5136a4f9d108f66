//! Dormand–Prince 8(5,3) with Hairer's step control and 7th-order dense output.

use super::control::{Judgement, StepControl};
use super::tableau::{DP8_A as A, DP8_B as B, DP8_BHH as BHH, DP8_C as C, DP8_D as D, DP8_E as E};
use super::{initial_step, scale, IntegrationError, OdeSystem, Settings, Stats};

/// Adaptive Dormand–Prince 8(5,3) (DOP853). Stage storage follows Hairer's code:
/// stages 1–12 of the step, then the derivative at the new point, then the three extra
/// stages of the dense output, in one flat buffer (`k[j * n + i]`). The dense output
/// is built only when asked for ([`Dop853::prepare_dense`]), so steps that need no
/// interpolation cost 12 evaluations, not 15.
pub struct Dop853 {
    settings: Settings,
    n: usize,
    n_err: usize,
    t: f64,
    t_prev: f64,
    h: f64,
    /// Set by [`Self::keep_next_step`]: the next start keeps `h`.
    keep_step: bool,
    h_done: f64,
    dir: f64,
    y: Vec<f64>,
    y_prev: Vec<f64>,
    f_prev: Vec<f64>,
    k: Vec<f64>,
    y1: Vec<f64>,
    ynew: Vec<f64>,
    rcont: Vec<f64>,
    dense_ready: bool,
    pattern: Vec<Vec<usize>>,
    control: StepControl,
    stats: Stats,
}

/// Nonzero entries of each row of `A` (stages 2–12, then 14–16), computed once.
fn nonzero(row: usize) -> Vec<usize> {
    (0..16).filter(|&j| A[row][j] != 0.0).collect()
}

impl Dop853 {
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
            h_done: 0.0,
            dir: 1.0,
            y: z(),
            y_prev: z(),
            f_prev: z(),
            k: vec![0.0; 16 * n],
            y1: z(),
            ynew: z(),
            rcont: vec![0.0; 8 * n],
            dense_ready: true,
            pattern: (0..16).map(nonzero).collect(),
            control: StepControl::dop853(),
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
        let n = self.n;
        self.t = t0;
        self.t_prev = t0;
        self.h_done = 0.0;
        self.dir = if toward >= t0 { 1.0 } else { -1.0 };
        self.y.copy_from_slice(y0);
        self.y_prev.copy_from_slice(y0);
        sys.rhs(t0, y0, &mut self.k[..n])?;
        self.f_prev.copy_from_slice(&self.k[..n]);
        self.stats.evaluations += 1;
        let proposed = (self.h > 0.0 && self.keep_step).then_some(self.h);
        self.keep_step = false;
        self.h = match proposed.or(self.settings.initial_step_s) {
            Some(h) => h.abs().min(self.settings.max_step_s),
            None => {
                self.stats.evaluations += 1;
                let f0 = self.k[..n].to_vec();
                initial_step(sys, t0, y0, &f0, self.dir, 8, &self.settings, self.n_err)?
            }
        };
        self.rcont.fill(0.0);
        self.rcont[..n].copy_from_slice(y0);
        self.dense_ready = true;
        self.control.restart();
        Ok(())
    }

    /// Evaluates stage `s` at `t0 + C[s] h` from `y0 + h Σ_j A[s][j] k_j`.
    #[inline]
    fn stage<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        s: usize,
        t0: f64,
        from_prev: bool,
        h: f64,
    ) -> Result<(), IntegrationError> {
        let n = self.n;
        if from_prev {
            self.y1.copy_from_slice(&self.y_prev);
        } else {
            self.y1.copy_from_slice(&self.y);
        }
        for &j in &self.pattern[s] {
            let a = h * A[s][j];
            // In the dense stages the first stage is f at the step's start.
            let kj = if from_prev && j == 0 {
                &self.f_prev[..]
            } else {
                &self.k[j * n..(j + 1) * n]
            };
            for i in 0..n {
                self.y1[i] += a * kj[i];
            }
        }
        let (_, rest) = self.k.split_at_mut(s * n);
        sys.rhs(t0 + C[s] * h, &self.y1, &mut rest[..n])
            .map_err(IntegrationError::from)
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
            for s in 1..12 {
                self.stage(sys, s, self.t, false, h)?;
            }
            self.stats.evaluations += 11;
            // 8th-order solution and the two error estimates.
            let (mut err, mut err2) = (0.0, 0.0);
            let k = &self.k;
            for i in 0..n {
                let mut bsum = 0.0;
                let mut e5 = 0.0;
                for j in 0..12 {
                    let kji = k[j * n + i];
                    bsum += B[j] * kji;
                    e5 += E[j] * kji;
                }
                self.ynew[i] = self.y[i] + h * bsum;
                if i < self.n_err {
                    let sk = scale(
                        self.settings.atol,
                        self.settings.rtol,
                        self.y[i],
                        self.ynew[i],
                    );
                    let e3 = bsum - BHH[0] * k[i] - BHH[1] * k[8 * n + i] - BHH[2] * k[11 * n + i];
                    err2 += (e3 / sk).powi(2);
                    err += (e5 / sk).powi(2);
                }
            }
            let mut deno = err + 0.01 * err2;
            if deno <= 0.0 {
                deno = 1.0;
            }
            let err = h.abs() * err * (1.0 / (deno * self.n_err as f64)).sqrt();
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
            // Derivative at the new point (stage 13, and the next step's first).
            {
                let (_, rest) = self.k.split_at_mut(12 * n);
                sys.rhs(self.t + h, &self.ynew, &mut rest[..n])?;
            }
            self.stats.evaluations += 1;
            // Keep the step's start for a dense output built later, if asked.
            std::mem::swap(&mut self.y_prev, &mut self.y);
            self.f_prev.copy_from_slice(&self.k[..n]);
            self.y.copy_from_slice(&self.ynew);
            let (first, rest) = self.k.split_at_mut(12 * n);
            first[..n].copy_from_slice(&rest[..n]);
            self.t_prev = self.t;
            self.t = t_new;
            self.h_done = h;
            self.dense_ready = false;
            self.h = h_next;
            return Ok(self.t);
        }
    }

    /// Builds the 7th-order continuous extension of the last step (three more
    /// evaluations); needed before [`Dop853::interpolate`] inside the step.
    pub(crate) fn prepare_dense<S: OdeSystem>(
        &mut self,
        sys: &mut S,
    ) -> Result<(), IntegrationError> {
        if self.dense_ready {
            return Ok(());
        }
        let n = self.n;
        let h = self.h_done;
        let t0 = self.t_prev;
        // Stages 14–16 (rows 13–15 of A) on the step's start; k[12] is f at its end.
        for s in 13..16 {
            self.stage(sys, s, t0, true, h)?;
        }
        self.stats.evaluations += 3;
        let k = &self.k;
        for i in 0..n {
            let ydiff = self.y[i] - self.y_prev[i];
            let bspl = h * self.f_prev[i] - ydiff;
            self.rcont[i] = self.y_prev[i];
            self.rcont[n + i] = ydiff;
            self.rcont[2 * n + i] = bspl;
            self.rcont[3 * n + i] = ydiff - h * k[12 * n + i] - bspl;
            for r in 0..4 {
                let mut acc = D[r][0] * self.f_prev[i];
                for j in 1..16 {
                    acc += D[r][j] * k[j * n + i];
                }
                self.rcont[(4 + r) * n + i] = h * acc;
            }
        }
        self.dense_ready = true;
        Ok(())
    }

    pub(crate) fn interpolate(&self, t: f64, out: &mut [f64]) {
        let h = self.t - self.t_prev;
        if h == 0.0 {
            out.copy_from_slice(&self.y);
            return;
        }
        debug_assert!(
            self.dense_ready,
            "prepare_dense must run before interpolate"
        );
        let n = self.n;
        let s = (t - self.t_prev) / h;
        let s1 = 1.0 - s;
        let r = |m: usize, i: usize| self.rcont[m * n + i];
        for i in 0..n {
            out[i] = r(0, i)
                + s * (r(1, i)
                    + s1 * (r(2, i)
                        + s * (r(3, i)
                            + s1 * (r(4, i) + s * (r(5, i) + s1 * (r(6, i) + s * r(7, i)))))));
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
