//! Classical fixed-step RK4 with cubic Hermite dense output.

use super::{IntegrationError, OdeSystem, Settings, Stats};

/// Fixed-step 4th-order Runge–Kutta. The last step before a stop is shortened to land
/// on it. Dense output: cubic Hermite on (y, f) at both ends of the step (3rd order).
pub struct Rk4 {
    settings: Settings,
    n: usize,
    t: f64,
    t_prev: f64,
    dir: f64,
    y: Vec<f64>,
    f: Vec<f64>,
    y_prev: Vec<f64>,
    f_prev: Vec<f64>,
    k: [Vec<f64>; 3],
    tmp: Vec<f64>,
    stats: Stats,
}

impl Rk4 {
    /// A stepper for a system of dimension `n`.
    pub fn new(settings: Settings, n: usize) -> Self {
        Self {
            settings,
            n,
            t: 0.0,
            t_prev: 0.0,
            dir: 1.0,
            y: vec![0.0; n],
            f: vec![0.0; n],
            y_prev: vec![0.0; n],
            f_prev: vec![0.0; n],
            k: [vec![0.0; n], vec![0.0; n], vec![0.0; n]],
            tmp: vec![0.0; n],
            stats: Stats::default(),
        }
    }

    /// Fixed steps: nothing to keep.
    pub(crate) fn keep_next_step(&mut self) {}

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
        self.y_prev.copy_from_slice(y0);
        sys.rhs(t0, &self.y, &mut self.f)?;
        self.f_prev.copy_from_slice(&self.f);
        self.stats.evaluations += 1;
        Ok(())
    }

    pub(crate) fn step<S: OdeSystem>(
        &mut self,
        sys: &mut S,
        t_stop: f64,
    ) -> Result<f64, IntegrationError> {
        let n = self.n;
        let mut h = self.dir * self.settings.fixed_step_s;
        // Land exactly on the stop; avoid a sliver step just before it.
        if (self.t + 1.0001 * h - t_stop) * self.dir > 0.0 {
            h = t_stop - self.t;
        }
        let t = self.t;
        let [k2, k3, k4] = &mut self.k;
        for i in 0..n {
            self.tmp[i] = self.y[i] + 0.5 * h * self.f[i];
        }
        sys.rhs(t + 0.5 * h, &self.tmp, k2)?;
        for i in 0..n {
            self.tmp[i] = self.y[i] + 0.5 * h * k2[i];
        }
        sys.rhs(t + 0.5 * h, &self.tmp, k3)?;
        for i in 0..n {
            self.tmp[i] = self.y[i] + h * k3[i];
        }
        sys.rhs(t + h, &self.tmp, k4)?;
        self.y_prev.copy_from_slice(&self.y);
        self.f_prev.copy_from_slice(&self.f);
        for i in 0..n {
            self.y[i] += h / 6.0 * (self.f[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
        if !self.y.iter().all(|v| v.is_finite()) {
            return Err(IntegrationError::NonFinite { t_s: t + h });
        }
        self.t_prev = t;
        self.t = if h == t_stop - t { t_stop } else { t + h };
        sys.rhs(self.t, &self.y, &mut self.f)?;
        self.stats.evaluations += 4;
        self.stats.accepted += 1;
        if self.stats.accepted > self.settings.max_steps {
            return Err(IntegrationError::TooManySteps {
                t_s: self.t,
                steps: self.stats.accepted,
            });
        }
        Ok(self.t)
    }

    pub(crate) fn interpolate(&self, t: f64, out: &mut [f64]) {
        let h = self.t - self.t_prev;
        if h == 0.0 {
            out.copy_from_slice(&self.y);
            return;
        }
        let s = (t - self.t_prev) / h;
        let s2 = s * s;
        let s3 = s2 * s;
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = s3 - 2.0 * s2 + s;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = s3 - s2;
        for i in 0..self.n {
            out[i] = h00 * self.y_prev[i]
                + h10 * h * self.f_prev[i]
                + h01 * self.y[i]
                + h11 * h * self.f[i];
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
