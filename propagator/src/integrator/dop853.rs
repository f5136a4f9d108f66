//! Dormand–Prince 8(5,3) with Hairer's step control and 7th-order dense output.

use super::tableau::{DP8_A as A, DP8_B as B, DP8_BHH as BHH, DP8_C as C, DP8_D as D, DP8_E as E};
use super::{initial_step, scale, IntegrationError, OdeSystem, Settings, Stats};

/// Adaptive Dormand–Prince 8(5,3) (DOP853). Stage storage follows Hairer's code:
/// `k[0..12]` are stages 1–12 of the step, `k[12]` the derivative at the new point,
/// `k[13..16]` the three extra stages of the dense output.
pub struct Dop853 {
    settings: Settings,
    n: usize,
    n_err: usize,
    t: f64,
    t_prev: f64,
    h: f64,
    dir: f64,
    y: Vec<f64>,
    k: Vec<Vec<f64>>,
    y1: Vec<f64>,
    ynew: Vec<f64>,
    rcont: [Vec<f64>; 8],
    last_rejected: bool,
    stats: Stats,
}

const SAFETY: f64 = 0.9;
const FAC_MIN: f64 = 0.333;
const FAC_MAX: f64 = 6.0;

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
            dir: 1.0,
            y: z(),
            k: (0..16).map(|_| z()).collect(),
            y1: z(),
            ynew: z(),
            rcont: [z(), z(), z(), z(), z(), z(), z(), z()],
            last_rejected: false,
            stats: Stats::default(),
        }
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
        self.h = match self.settings.initial_step_s {
            Some(h) => h.abs().min(self.settings.max_step_s),
            None => {
                self.stats.evaluations += 1;
                initial_step(
                    sys,
                    t0,
                    y0,
                    &self.k[0],
                    self.dir,
                    8,
                    &self.settings,
                    self.n_err,
                )?
            }
        };
        for r in &mut self.rcont {
            r.fill(0.0);
        }
        self.rcont[0].copy_from_slice(y0);
        self.last_rejected = false;
        Ok(())
    }

    /// Evaluates stage `s` at `t + C[s] h` from `y + h Σ_j A[s][j] k[j]` over `js`.
    #[inline]
    fn stage<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        s: usize,
        js: &[usize],
        h: f64,
    ) -> Result<(), IntegrationError> {
        for i in 0..self.n {
            let mut acc = 0.0;
            for &j in js {
                acc += A[s][j] * self.k[j][i];
            }
            self.y1[i] = self.y[i] + h * acc;
        }
        let mut out = std::mem::take(&mut self.k[s]);
        let r = sys.rhs(self.t + C[s] * h, &self.y1, &mut out);
        self.k[s] = out;
        r.map_err(IntegrationError::from)
    }

    pub(crate) fn step<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t_stop: f64,
    ) -> Result<f64, IntegrationError> {
        const ALL: [usize; 12] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11];
        let n = self.n;
        loop {
            let mut h = self.dir * self.h;
            let mut last = false;
            if (self.t + 1.01 * h - t_stop) * self.dir > 0.0 {
                h = t_stop - self.t;
                last = true;
            }
            if h.abs() < self.settings.min_step_s && !last {
                return Err(IntegrationError::StepTooSmall {
                    t_s: self.t,
                    min_step_s: self.settings.min_step_s,
                });
            }
            for s in 1..12 {
                // Zero coefficients are skipped by the sparsity of A (a[s][1..4] = 0).
                self.stage(sys, s, &ALL[..s], h)?;
            }
            self.stats.evaluations += 11;
            // 8th-order solution and the two error estimates.
            let (mut err, mut err2) = (0.0, 0.0);
            for i in 0..n {
                let mut bsum = 0.0;
                for j in 0..12 {
                    bsum += B[j] * self.k[j][i];
                }
                self.ynew[i] = self.y[i] + h * bsum;
                if i < self.n_err {
                    let sk = scale(
                        self.settings.atol,
                        self.settings.rtol,
                        self.y[i],
                        self.ynew[i],
                    );
                    let e3 = bsum
                        - BHH[0] * self.k[0][i]
                        - BHH[1] * self.k[8][i]
                        - BHH[2] * self.k[11][i];
                    err2 += (e3 / sk).powi(2);
                    let mut e5 = 0.0;
                    for j in 0..12 {
                        e5 += E[j] * self.k[j][i];
                    }
                    err += (e5 / sk).powi(2);
                }
            }
            let mut deno = err + 0.01 * err2;
            if deno <= 0.0 {
                deno = 1.0;
            }
            let err = h.abs() * err * (1.0 / (deno * self.n_err as f64)).sqrt();
            if !err.is_finite() {
                self.h *= 0.25;
                self.stats.rejected += 1;
                self.last_rejected = true;
                continue;
            }
            let fac11 = err.powf(1.0 / 8.0);
            let fac = (fac11 / SAFETY).clamp(1.0 / FAC_MAX, 1.0 / FAC_MIN);
            let mut h_new = h.abs() / fac;
            if err <= 1.0 {
                if self.last_rejected {
                    h_new = h_new.min(h.abs());
                }
                self.last_rejected = false;
                // Derivative at the new point (the next step's first stage).
                let mut f12 = std::mem::take(&mut self.k[12]);
                sys.rhs(self.t + h, &self.ynew, &mut f12)?;
                self.k[12] = f12;
                self.stats.evaluations += 1;
                self.dense_output(sys, h)?;
                self.t_prev = self.t;
                self.t = if last { t_stop } else { self.t + h };
                self.y.copy_from_slice(&self.ynew);
                let f = std::mem::take(&mut self.k[12]);
                self.k[0].copy_from_slice(&f);
                self.k[12] = f;
                self.h = h_new.min(self.settings.max_step_s);
                self.stats.accepted += 1;
                if self.stats.accepted > self.settings.max_steps {
                    return Err(IntegrationError::TooManySteps {
                        t_s: self.t,
                        steps: self.stats.accepted,
                    });
                }
                return Ok(self.t);
            }
            self.h = h.abs() / (1.0 / FAC_MIN).min(fac11 / SAFETY);
            self.last_rejected = true;
            self.stats.rejected += 1;
            if self.h < self.settings.min_step_s {
                return Err(IntegrationError::StepTooSmall {
                    t_s: self.t,
                    min_step_s: self.settings.min_step_s,
                });
            }
        }
    }

    /// The 7th-order continuous extension over `[t, t + h]` (three more stages).
    fn dense_output<S: OdeSystem>(&mut self, sys: &mut S, h: f64) -> Result<(), IntegrationError> {
        let n = self.n;
        for i in 0..n {
            let ydiff = self.ynew[i] - self.y[i];
            let bspl = h * self.k[0][i] - ydiff;
            self.rcont[0][i] = self.y[i];
            self.rcont[1][i] = ydiff;
            self.rcont[2][i] = bspl;
            self.rcont[3][i] = ydiff - h * self.k[12][i] - bspl;
            for r in 0..4 {
                let mut acc = 0.0;
                for j in 0..12 {
                    acc += D[r][j] * self.k[j][i];
                }
                self.rcont[4 + r][i] = acc;
            }
        }
        // Stages 14, 15, 16 (indices 13–15) use k[0..13], k[12] being f at t + h.
        const J14: [usize; 13] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12];
        const J15: [usize; 14] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13];
        const J16: [usize; 15] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14];
        self.stage(sys, 13, &J14, h)?;
        self.stage(sys, 14, &J15, h)?;
        self.stage(sys, 15, &J16, h)?;
        self.stats.evaluations += 3;
        for i in 0..n {
            for r in 0..4 {
                let mut acc = self.rcont[4 + r][i];
                for j in 12..16 {
                    acc += D[r][j] * self.k[j][i];
                }
                self.rcont[4 + r][i] = h * acc;
            }
        }
        Ok(())
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
            out[i] = r[0][i]
                + s * (r[1][i]
                    + s1 * (r[2][i]
                        + s * (r[3][i]
                            + s1 * (r[4][i] + s * (r[5][i] + s1 * (r[6][i] + s * r[7][i]))))));
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
