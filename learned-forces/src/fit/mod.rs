//! Orbit determination from an arc: weighted batch least squares (Gauss–Newton with
//! Levenberg–Marquardt damping) of the initial state and chosen classical parameters,
//! partials from the variational equations, robust outlier editing, formal covariance,
//! and the anomaly verdict (χ² and residual structure).

// Dense linear algebra over (row, column) indices reads like the formulas.
#![allow(clippy::needless_range_loop)]

pub mod model;
pub mod stats;

use crate::arc::Arc;
use crate::termination::Termination;
use model::{FitModel, Parameter};
use nalgebra::{DMatrix, DVector, Vector3};
use propagator::frames::eci_to_rtn;
use propagator::integrator::{Method, Settings};
use propagator::propagation::{Options, Request, Silent};
use propagator::variational::{propagate_with_partials, VariationalSample};
use propagator::{Epoch, StateVector};

/// Receives progress of a fit (for a progress display; the numerics ignore it).
pub trait FitObserver {
    /// After each accepted iteration: stage (1-based of `stages`), iteration, weighted RMS.
    fn on_iteration(
        &mut self,
        _stage: usize,
        _stages: usize,
        _iteration: usize,
        _weighted_rms: f64,
    ) {
    }
}

/// An observer that ignores everything.
pub struct QuietFit;
impl FitObserver for QuietFit {}

/// Options of a fit.
#[derive(Clone, Debug)]
pub struct FitOptions {
    /// Integrator settings for the propagations.
    pub settings: Settings,
    /// Most Gauss–Newton iterations per stage.
    pub max_iterations: usize,
    /// Observations whose normalized residual exceeds this many (robust) σ are edited.
    pub edit_sigma: f64,
    /// Size α of the anomaly test (false-alarm probability when nothing is there).
    pub alpha: f64,
    /// Lags of the Ljung–Box test.
    pub ljung_box_lags: usize,
    /// A residual component's structure (Ljung–Box) counts towards the verdict only when
    /// its RMS is at least this many stated σ: structure far below the stated noise is
    /// no force the arc can show at that noise (a smooth operator ephemeris fitted to
    /// 0.1 mm at σ = 10 m is always "correlated").
    pub structure_floor_sigma: f64,
    /// Initial state at the first observation; estimated from the data when `None`.
    pub initial_state: Option<StateVector>,
    /// Altitude floor for the propagations, km.
    pub altitude_floor_km: f64,
}

impl Default for FitOptions {
    fn default() -> Self {
        Self {
            settings: Settings {
                method: Method::Dp853,
                rtol: 1e-12,
                atol: 1e-12,
                ..Settings::default()
            },
            max_iterations: 30,
            edit_sigma: 5.0,
            alpha: 1e-3,
            ljung_box_lags: 20,
            structure_floor_sigma: 0.5,
            initial_state: None,
            altitude_floor_km: 80.0,
        }
    }
}

/// Why a fit could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// The arc or the request cannot support a fit.
    #[error("{0}")]
    Unfit(String),
    /// A propagation failed.
    #[error("propagation failed during the fit: {0}")]
    Propagation(String),
}

/// One observation's residual (observed − computed).
#[derive(Clone, Debug, PartialEq)]
pub struct Residual {
    /// Epoch.
    pub epoch: Epoch,
    /// Seconds from the first observation.
    pub t_s: f64,
    /// Position residual in RTN of the fitted state, km.
    pub rtn_km: Vector3<f64>,
    /// Velocity residual in ECI, km/s, when velocity was observed.
    pub velocity_km_s: Option<Vector3<f64>>,
    /// σ of the position, km.
    pub sigma_km: f64,
    /// Used in the fit (false: edited out).
    pub used: bool,
    /// Why it was edited.
    pub edit_reason: Option<String>,
}

/// A fitted parameter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Estimate {
    /// Which.
    pub parameter: Parameter,
    /// Value.
    pub value: f64,
    /// Formal 1σ.
    pub sigma: f64,
}

/// The Ljung–Box test on one residual component.
#[derive(Clone, Debug, PartialEq)]
pub struct StructureTest {
    /// `R`, `T` or `N`.
    pub component: &'static str,
    /// Q statistic.
    pub q: f64,
    /// Lags (the χ² degrees of freedom of Q).
    pub lags: usize,
    /// p-value.
    pub p_value: f64,
    /// RMS of the component's normalized residuals (residual / σ).
    pub rms_sigma: f64,
    /// Whether the test counted towards the verdict (`rms_sigma` at or above
    /// [`FitOptions::structure_floor_sigma`]).
    pub counted: bool,
}

/// The anomaly verdict and the numbers behind it.
#[derive(Clone, Debug, PartialEq)]
pub struct Verdict {
    /// True when the residuals are not consistent with noise.
    pub anomaly: bool,
    /// Weighted sum of squared residuals.
    pub chi2: f64,
    /// Degrees of freedom (observations − estimated quantities).
    pub dof: usize,
    /// P(χ² ≥ observed) under the noise model.
    pub p_value: f64,
    /// Residual structure per RTN component.
    pub structure: Vec<StructureTest>,
    /// Test size; each of the four tests is run at α/4 (Bonferroni).
    pub alpha: f64,
    /// Sentences saying which tests failed.
    pub reasons: Vec<String>,
}

/// The outcome of a fit.
#[derive(Clone, Debug)]
pub struct FitResult {
    /// Epoch of the first observation (the fit's `t_s = 0`).
    pub epoch0: Epoch,
    /// Fitted state at the first observation.
    pub x0: StateVector,
    /// Formal 1σ of the six state components (km, km/s).
    pub x0_sigma: [f64; 6],
    /// Epoch of the last observation.
    pub epoch_last: Epoch,
    /// Fitted state at the last observation.
    pub x_last: StateVector,
    /// Fitted parameters.
    pub estimates: Vec<Estimate>,
    /// Formal covariance of (x0, parameters).
    pub covariance: DMatrix<f64>,
    /// Residuals of every observation.
    pub residuals: Vec<Residual>,
    /// RMS of the 3-D position residuals of the used observations, km.
    pub rms_km: f64,
    /// Observations edited out.
    pub edited: usize,
    /// Gauss–Newton iterations in all.
    pub iterations: usize,
    /// Why the last stage's iterations stopped.
    pub termination: Termination,
    /// The verdict.
    pub verdict: Verdict,
    /// Weighted Jacobian of the used measurements at the solution (rows as the stacked
    /// residual; columns x0 then parameters).
    pub jacobian: DMatrix<f64>,
    /// Weighted residual (observed − computed)/σ of the used measurements.
    pub weighted_residual: DVector<f64>,
    /// Final values of the estimated parameters (same order as `estimates`).
    pub values: Vec<f64>,
}

impl FitResult {
    /// The estimate of `parameter`, if it was estimated.
    pub fn estimate(&self, parameter: Parameter) -> Option<&Estimate> {
        self.estimates.iter().find(|e| e.parameter == parameter)
    }

    /// The estimates of the extra terms' coefficients, term `i` at index `i` (`n` terms;
    /// a term without an estimate has a NaN value and σ).
    pub fn term_coefficients(&self, n: usize) -> Vec<Estimate> {
        (0..n)
            .map(|i| {
                let p = Parameter::TermCoefficient(i);
                self.estimate(p).copied().unwrap_or(Estimate {
                    parameter: p,
                    value: f64::NAN,
                    sigma: f64::NAN,
                })
            })
            .collect()
    }
}

struct Linearized {
    cost: f64,
    jac: DMatrix<f64>,
    z: DVector<f64>,
    samples: Vec<VariationalSample>,
}

struct Problem<'a> {
    arc: &'a Arc,
    t: Vec<f64>,
    options: &'a FitOptions,
}

impl Problem<'_> {
    fn propagate(
        &self,
        fm: &FitModel,
        x0: &StateVector,
        last: usize,
    ) -> Result<Vec<VariationalSample>, FitError> {
        let options = Options {
            settings: self.options.settings,
            altitude_floor_km: self.options.altitude_floor_km,
            ..Options::default()
        };
        let times = &self.t[..=last];
        let req = Request {
            x0: *x0,
            t0_s: 0.0,
            t_end_s: times[times.len() - 1].max(1e-9),
            output_times_s: times,
            stop_times_s: &[],
        };
        propagate_with_partials(fm, &req, &options, &mut Silent)
            .map_err(|e| FitError::Propagation(e.with_utc(&self.arc.start())))
    }

    /// Residuals and Jacobian over observations `0..=last` that are `used`.
    fn linearize(
        &self,
        fm: &FitModel,
        x0: &StateVector,
        last: usize,
        used: &[bool],
        n_est: usize,
    ) -> Result<Linearized, FitError> {
        let samples = self.propagate(fm, x0, last)?;
        let rows: usize = (0..=last)
            .filter(|&i| used[i])
            .map(|i| {
                if self.arc.observations[i].v_km_s.is_some() {
                    6
                } else {
                    3
                }
            })
            .sum();
        let mut jac = DMatrix::zeros(rows, n_est);
        let mut z = DVector::zeros(rows);
        let mut row = 0;
        for (i, s) in samples.iter().enumerate() {
            if !used[i] {
                continue;
            }
            let o = &self.arc.observations[i];
            let comps = if o.v_km_s.is_some() { 6 } else { 3 };
            for c in 0..comps {
                let (obs, sig) = if c < 3 {
                    (o.r_km[c], o.sigma_km)
                } else {
                    (o.v_km_s.unwrap_or_default()[c - 3], o.sigma_km_s)
                };
                z[row] = (obs - s.state[c]) / sig;
                for j in 0..6 {
                    jac[(row, j)] = s.phi[(c, j)] / sig;
                }
                for k in 6..n_est {
                    jac[(row, k)] = s.sensitivity[(c, k - 6)] / sig;
                }
                row += 1;
            }
        }
        let cost = z.norm_squared();
        if !cost.is_finite() {
            return Err(FitError::Propagation("non-finite residuals".into()));
        }
        Ok(Linearized {
            cost,
            jac,
            z,
            samples,
        })
    }
}

/// The column-scaled `jac` reduced to its triangular factor: `jac·diag(1/scale) = Q R`,
/// so that ‖J y − z‖² = ‖R y − Qᵀz‖² + a constant. The decompositions below then work on
/// n × n instead of m × n (thousands of rows): an SVD of the tall matrix spent most of a
/// learn's time rotating its m-row U.
struct Reduced {
    /// Column norms of `jac` (the scaling).
    scale: Vec<f64>,
    /// R, n × n.
    r: DMatrix<f64>,
    /// The first n entries of Qᵀz.
    qtz: DVector<f64>,
}

impl Reduced {
    fn new(jac: &DMatrix<f64>, z: &DVector<f64>) -> Reduced {
        let n = jac.ncols();
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm().max(1e-300)).collect();
        let mut a = jac.clone();
        for j in 0..n {
            a.column_mut(j).scale_mut(1.0 / scale[j]);
        }
        let qr = a.qr();
        let mut qtz = z.clone();
        qr.q_tr_mul(&mut qtz);
        let r = qr.r();
        let mut square = DMatrix::zeros(n, n);
        let k = r.nrows().min(n);
        square.rows_mut(0, k).copy_from(&r.rows(0, k));
        Reduced {
            scale,
            r: square,
            qtz: DVector::from_iterator(n, (0..n).map(|i| if i < k { qtz[i] } else { 0.0 })),
        }
    }
}

/// Solves the damped normal equations by SVD of the column-scaled, augmented system
/// [R; √λ I] y = [Qᵀz; 0].
fn damped_step(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64) -> Option<DVector<f64>> {
    let n = jac.ncols();
    let red = Reduced::new(jac, z);
    let mut a = DMatrix::zeros(2 * n, n);
    a.rows_mut(0, n).copy_from(&red.r);
    for j in 0..n {
        a[(n + j, j)] = lambda.sqrt();
    }
    let mut b = DVector::zeros(2 * n);
    b.rows_mut(0, n).copy_from(&red.qtz);
    let svd = a.svd(true, true);
    let y = svd.solve(&b, 1e-14).ok()?;
    Some(DVector::from_iterator(
        n,
        (0..n).map(|j| y[j] / red.scale[j]),
    ))
}

/// Rank and covariance (JᵀJ)⁻¹ of a weighted Jacobian, by SVD of the column-scaled J's
/// triangular factor (the same singular values and right vectors).
fn covariance(jac: &DMatrix<f64>) -> (usize, DMatrix<f64>) {
    let n = jac.ncols();
    let red = Reduced::new(jac, &DVector::zeros(jac.nrows()));
    let scale = red.scale;
    let svd = red.r.svd(false, true);
    let smax = svd.singular_values.max();
    let rank = svd
        .singular_values
        .iter()
        .filter(|&&s| s > 1e-10 * smax)
        .count();
    let Some(v_t) = svd.v_t else {
        return (0, DMatrix::zeros(n, n));
    };
    let mut cov = DMatrix::zeros(n, n);
    for (k, &s) in svd.singular_values.iter().enumerate() {
        if s > 1e-10 * smax {
            let v = v_t.row(k).transpose();
            cov += (&v * v.transpose()) / (s * s);
        }
    }
    for i in 0..n {
        for j in 0..n {
            cov[(i, j)] /= scale[i] * scale[j];
        }
    }
    (rank, cov)
}

/// A starting state from the data: the first observed velocity, or a polynomial fit
/// of the first positions (at most 15, within 600 s).
fn initial_guess(arc: &Arc, t: &[f64]) -> Result<StateVector, FitError> {
    let o0 = &arc.observations[0];
    if let Some(v) = o0.v_km_s {
        return Ok(StateVector::new(
            o0.r_km[0], o0.r_km[1], o0.r_km[2], v[0], v[1], v[2],
        ));
    }
    let k = t
        .iter()
        .take(15)
        .take_while(|&&ti| ti <= 600.0)
        .count()
        .max(3.min(t.len()));
    if k < 3 {
        return Err(FitError::Unfit(
            "a position-only arc needs at least 3 observations to start the fit".into(),
        ));
    }
    let deg = (k - 1).min(3);
    let mut a = DMatrix::zeros(k, deg + 1);
    for i in 0..k {
        for d in 0..=deg {
            a[(i, d)] = t[i].powi(d as i32);
        }
    }
    let svd = a.svd(true, true);
    let mut x = StateVector::zeros();
    for c in 0..3 {
        let b = DVector::from_iterator(k, (0..k).map(|i| arc.observations[i].r_km[c]));
        let coef = svd
            .solve(&b, 1e-14)
            .map_err(|e| FitError::Unfit(e.to_string()))?;
        x[c] = coef[0];
        x[c + 3] = if deg >= 1 { coef[1] } else { 0.0 };
    }
    Ok(x)
}

/// Fits `arc` with `model` — the known forces (whose time axis must start at the arc's
/// first epoch) and the parametrized forces whose parameters are estimated with the
/// state, from `model.values`.
pub fn fit(
    arc: &Arc,
    model: FitModel,
    options: &FitOptions,
    observer: &mut dyn FitObserver,
) -> Result<FitResult, FitError> {
    let n_obs = arc.observations.len();
    let epoch0 = arc.start();
    let t: Vec<f64> = arc
        .observations
        .iter()
        .map(|o| o.epoch.seconds_since(&epoch0))
        .collect();
    let parameters = model.parameters();
    let n_params = parameters.len();
    let n_est = 6 + n_params;
    let n_meas: usize = arc
        .observations
        .iter()
        .map(|o| if o.v_km_s.is_some() { 6 } else { 3 })
        .sum();
    if n_meas <= n_est {
        return Err(FitError::Unfit(format!(
            "the arc has {n_obs} observations ({n_meas} measurements), too few to estimate {n_est} quantities"
        )));
    }
    let problem = Problem {
        arc,
        t: t.clone(),
        options,
    };
    let mut fm = model;
    let start_values = fm.values.clone();
    let mut x0 = match options.initial_state {
        Some(x) => x,
        None => initial_guess(arc, &t)?,
    };
    let stage_ends = stage_ends(&t, options.initial_state.is_none());
    let mut editing = Editing {
        used: vec![true; n_obs],
        reasons: vec![None; n_obs],
    };
    let (lin, iterations, termination) = run_stages(
        &problem,
        &mut fm,
        &mut x0,
        (&stage_ends, &start_values),
        &mut editing,
        observer,
    )?;
    let Editing { used, reasons } = editing;
    let (rank, cov) = covariance(&lin.jac);
    if rank < n_est {
        return Err(FitError::Unfit(format!(
            "the arc does not determine the orbit: rank {rank} of {n_est} (arc too short, too few observations, or a parameter with no effect)"
        )));
    }
    let (residuals, rms_km) = residuals(arc, &t, &lin.samples, &used, &reasons);
    let dof = lin.z.len().saturating_sub(n_est);
    let mut verdict = verdict(&lin.z, dof, &residuals, options);
    if !termination.converged() {
        // Say it first: every number after it describes the last iterate, not a
        // least-squares solution.
        verdict.reasons.insert(
            0,
            format!(
                "the fit did not converge in {iterations} iterations: the known forces are far from this arc (a maneuver, another object, or a unit error?); the statistics below are those of the last iterate and the formal σ mean little (`arcwise rank` tests maneuver hypotheses)"
            ),
        );
        verdict.anomaly = true;
    }
    let estimates = parameters
        .iter()
        .enumerate()
        .map(|(k, p)| Estimate {
            parameter: *p,
            value: fm.values[k],
            sigma: cov[(6 + k, 6 + k)].sqrt(),
        })
        .collect();
    let mut x0_sigma = [0.0; 6];
    for (i, s) in x0_sigma.iter_mut().enumerate() {
        *s = cov[(i, i)].sqrt();
    }
    let last = lin.samples.last().map(|s| s.state).unwrap_or(x0);
    Ok(FitResult {
        epoch0,
        x0,
        x0_sigma,
        epoch_last: arc.end(),
        x_last: last,
        estimates,
        covariance: cov,
        residuals,
        rms_km,
        edited: used.iter().filter(|u| !**u).count(),
        iterations,
        termination,
        verdict,
        jacobian: lin.jac.clone(),
        weighted_residual: lin.z.clone(),
        values: fm.values.clone(),
    })
}

/// The last observation of each stage: the first sixteenth and quarter of the arc when
/// the fit starts from the data (so a rough start converges), then the whole arc.
fn stage_ends(t: &[f64], from_data: bool) -> Vec<usize> {
    let n_obs = t.len();
    let span = t[n_obs - 1];
    let mut ends: Vec<usize> = Vec::new();
    if from_data {
        for frac in [1.0 / 16.0, 0.25] {
            let last = t.iter().rposition(|&ti| ti <= frac * span).unwrap_or(0);
            if last + 1 >= 8 && last + 1 < n_obs && ends.last() != Some(&last) {
                ends.push(last);
            }
        }
    }
    ends.push(n_obs - 1);
    ends
}

/// Which observations the fit uses, and why each edited one was edited.
struct Editing {
    used: Vec<bool>,
    reasons: Vec<Option<String>>,
}

/// The stages of the fit: the state alone over the early stages, then the state and the
/// parameters (from `start_values`) over the whole arc, with robust editing; returns the
/// final linearization, the iterations and why the last stage stopped.
fn run_stages(
    problem: &Problem,
    fm: &mut FitModel,
    x0: &mut StateVector,
    (stage_ends, start_values): (&[usize], &[f64]),
    editing: &mut Editing,
    observer: &mut dyn FitObserver,
) -> Result<(Linearized, usize, Termination), FitError> {
    let n_params = start_values.len();
    let stages = stage_ends.len();
    let mut iterations = 0;
    let mut termination = Termination::IterationLimit;
    let mut lin = None;
    for (si, &last) in stage_ends.iter().enumerate() {
        let final_stage = si + 1 == stages;
        let n_here = if final_stage { 6 + n_params } else { 6 };
        // The parameters join in the last stage only, from their start.
        fm.set_estimating(final_stage);
        if final_stage {
            fm.values = start_values.to_vec();
        }
        let mut edit_passes = 0;
        loop {
            let (l, it, conv) = solve_stage(
                problem,
                fm,
                x0,
                last,
                &editing.used,
                n_here,
                si + 1,
                stages,
                observer,
            )?;
            iterations += it;
            termination = conv;
            if !final_stage {
                break;
            }
            // Robust editing on the final stage; the last pass only solves, so the
            // solution always matches the final set of used observations.
            if edit_passes >= 8 {
                lin = Some(l);
                break;
            }
            let new_edits = edit(
                problem,
                &l,
                &mut editing.used,
                &mut editing.reasons,
                problem.options.edit_sigma,
            );
            lin = Some(l);
            edit_passes += 1;
            if new_edits == 0 {
                break;
            }
        }
    }
    let lin = lin.ok_or_else(|| FitError::Unfit("internal: the final stage did not run".into()))?;
    Ok((lin, iterations, termination))
}

/// Residuals of every observation (edited ones too) from the final solution's samples,
/// and the position RMS of the used ones, km.
fn residuals(
    arc: &Arc,
    t: &[f64],
    samples: &[VariationalSample],
    used: &[bool],
    reasons: &[Option<String>],
) -> (Vec<Residual>, f64) {
    let mut residuals = Vec::with_capacity(samples.len());
    let (mut sum_sq, mut n_used) = (0.0, 0usize);
    for (i, s) in samples.iter().enumerate() {
        let o = &arc.observations[i];
        let r = Vector3::new(s.state[0], s.state[1], s.state[2]);
        let v = Vector3::new(s.state[3], s.state[4], s.state[5]);
        let d = o.r_km - r;
        let rtn = eci_to_rtn(&r, &v).map(|m| m * d).unwrap_or(d);
        if used[i] {
            sum_sq += d.norm_squared();
            n_used += 1;
        }
        residuals.push(Residual {
            epoch: o.epoch,
            t_s: t[i],
            rtn_km: rtn,
            velocity_km_s: o.v_km_s.map(|ov| ov - v),
            sigma_km: o.sigma_km,
            used: used[i],
            edit_reason: reasons[i].clone(),
        });
    }
    (residuals, (sum_sq / n_used.max(1) as f64).sqrt())
}

#[allow(clippy::too_many_arguments)]
fn solve_stage(
    problem: &Problem,
    fm: &mut FitModel,
    x0: &mut StateVector,
    last: usize,
    used: &[bool],
    n_est: usize,
    stage: usize,
    stages: usize,
    observer: &mut dyn FitObserver,
) -> Result<(Linearized, usize, Termination), FitError> {
    let mut lin = problem.linearize(fm, x0, last, used, n_est)?;
    let mut lambda = 1e-6;
    let mut stop: Option<Termination> = None;
    let mut it = 0;
    while it < problem.options.max_iterations {
        it += 1;
        let mut accepted = false;
        for _ in 0..12 {
            let Some(delta) = damped_step(&lin.jac, &lin.z, lambda) else {
                lambda *= 10.0;
                continue;
            };
            let mut x_try = *x0;
            for j in 0..6 {
                x_try[j] += delta[j];
            }
            let saved = fm.values.clone();
            for k in 6..n_est {
                fm.values[k - 6] += delta[k];
            }
            match problem.linearize(fm, &x_try, last, used, n_est) {
                Ok(l) if l.cost <= lin.cost => {
                    let improvement = (lin.cost - l.cost) / lin.cost.max(1e-300);
                    // Converged when the step is tiny against the formal uncertainty.
                    let (_, cov) = covariance(&l.jac);
                    let step_sigma = (0..n_est)
                        .map(|j| (delta[j] / cov[(j, j)].sqrt().max(1e-300)).abs())
                        .fold(0.0, f64::max);
                    *x0 = x_try;
                    lin = l;
                    lambda = (lambda / 10.0).max(1e-12);
                    accepted = true;
                    let rms = (lin.cost / lin.z.len().max(1) as f64).sqrt();
                    observer.on_iteration(stage, stages, it, rms);
                    if step_sigma < 1e-4 {
                        stop = Some(Termination::StepBelowSigma);
                    } else if improvement < 1e-12 {
                        stop = Some(Termination::NoImprovement);
                    }
                    break;
                }
                _ => {
                    fm.values = saved;
                    lambda *= 10.0;
                }
            }
        }
        if !accepted {
            // No downhill step at any damping: at the minimum to numerical precision.
            stop = Some(if lin.cost.is_finite() {
                Termination::NoDownhillStep
            } else {
                Termination::NotFinite
            });
            break;
        }
        if stop.is_some() {
            break;
        }
    }
    Ok((lin, it, stop.unwrap_or(Termination::IterationLimit)))
}

/// Edits observations beyond `k` robust σ; returns how many were newly edited.
///
/// An outlier is judged against its neighbours: each normalized residual component minus
/// a straight line fitted to the 10 used observations around it (itself left out), so
/// that a smooth systematic signal (an unmodelled force) is not mistaken for outliers
/// and edited away.
fn edit(
    problem: &Problem,
    lin: &Linearized,
    used: &mut [bool],
    reasons: &mut [Option<String>],
    k: f64,
) -> usize {
    let n = used.len();
    let z: Vec<[f64; 3]> = lin
        .samples
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let o = &problem.arc.observations[i];
            let d = o.r_km - Vector3::new(s.state[0], s.state[1], s.state[2]);
            [d[0] / o.sigma_km, d[1] / o.sigma_km, d[2] / o.sigma_km]
        })
        .collect();
    let idx: Vec<usize> = (0..n).filter(|&i| used[i]).collect();
    let mut dev = vec![0.0f64; n];
    let mut all = Vec::with_capacity(3 * idx.len());
    const HALF: usize = 5;
    for (p, &i) in idx.iter().enumerate() {
        let lo = p.saturating_sub(HALF);
        let hi = (p + HALF + 1).min(idx.len());
        let others: Vec<usize> = idx[lo..hi].iter().copied().filter(|&j| j != i).collect();
        let mut worst: f64 = 0.0;
        for c in 0..3 {
            let d = (z[i][c] - line_at(&others, &problem.t, |j| z[j][c], problem.t[i])).abs();
            worst = worst.max(d);
            all.push(d);
        }
        dev[i] = worst;
    }
    all.sort_by(|a, b| a.total_cmp(b));
    // |x − line through 10 neighbours| of white noise has a median of about 0.71σ.
    let median = all.get(all.len() / 2).copied().unwrap_or(0.0);
    let scale = (median / 0.71).max(1.0);
    let threshold = k * scale;
    let mut new = 0;
    let max_edits = n / 5;
    let mut edited = used.iter().filter(|u| !**u).count();
    for (p, &i) in idx.iter().enumerate() {
        // Only the worst of a neighbourhood goes per pass: an outlier also pulls the
        // lines of its neighbours, which must not be edited with it.
        let lo = p.saturating_sub(HALF);
        let hi = (p + HALF + 1).min(idx.len());
        let local_max = idx[lo..hi]
            .iter()
            .all(|&j| j == i || dev[j] < dev[i] || (dev[j] == dev[i] && j > i));
        if local_max && dev[i] > threshold && edited < max_edits {
            used[i] = false;
            reasons[i] = Some(format!(
                "residual {:.1}σ from its neighbours, above the {:.1}σ editing threshold",
                dev[i], threshold
            ));
            new += 1;
            edited += 1;
        }
    }
    new
}

/// The least-squares line through `(t[j], y(j))` for `j` in `js`, evaluated at `at`.
fn line_at(js: &[usize], t: &[f64], y: impl Fn(usize) -> f64, at: f64) -> f64 {
    let n = js.len() as f64;
    if js.is_empty() {
        return 0.0;
    }
    let tm = js.iter().map(|&j| t[j]).sum::<f64>() / n;
    let ym = js.iter().map(|&j| y(j)).sum::<f64>() / n;
    let stt: f64 = js.iter().map(|&j| (t[j] - tm).powi(2)).sum();
    if stt <= 0.0 {
        return ym;
    }
    let sty: f64 = js.iter().map(|&j| (t[j] - tm) * (y(j) - ym)).sum();
    ym + sty / stt * (at - tm)
}

fn verdict(z: &DVector<f64>, dof: usize, residuals: &[Residual], options: &FitOptions) -> Verdict {
    let chi2 = z.norm_squared();
    let p_value = stats::chi2_sf(chi2, dof.max(1) as f64);
    let per_test = options.alpha / 4.0;
    let mut reasons = Vec::new();
    if p_value < per_test {
        reasons.push(format!(
            "χ² = {chi2:.1} on {dof} degrees of freedom (p = {p_value:.2e}): the residuals are larger than the stated noise"
        ));
    }
    let mut structure = Vec::new();
    for (c, name) in ["R", "T", "N"].iter().enumerate() {
        let series: Vec<f64> = residuals
            .iter()
            .filter(|r| r.used)
            .map(|r| r.rtn_km[c] / r.sigma_km)
            .collect();
        let (q, p) = stats::ljung_box(&series, options.ljung_box_lags);
        let rms_sigma =
            (series.iter().map(|v| v * v).sum::<f64>() / series.len().max(1) as f64).sqrt();
        let counted = rms_sigma >= options.structure_floor_sigma;
        if p < per_test && counted {
            reasons.push(format!(
                "{name} residuals are correlated in time (Ljung–Box Q = {q:.1} on {} lags, p = {p:.2e}; RMS {rms_sigma:.2} σ)",
                options.ljung_box_lags
            ));
        }
        structure.push(StructureTest {
            component: name,
            q,
            lags: options.ljung_box_lags,
            p_value: p,
            rms_sigma,
            counted,
        });
    }
    Verdict {
        anomaly: !reasons.is_empty(),
        chi2,
        dof,
        p_value,
        structure,
        alpha: options.alpha,
        reasons,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A tall, badly scaled Jacobian (columns spanning 21 orders of magnitude; with
    /// `near`, two nearly dependent) and a residual, from a fixed generator.
    fn tall(near: bool) -> (DMatrix<f64>, DVector<f64>) {
        let (m, n) = (3000, 8);
        let mut seed = 0x9e37_79b9_7f4a_7c15u64;
        let mut next = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let mut j = DMatrix::from_fn(m, n, |_, _| next());
        for c in 0..n {
            j.column_mut(c).scale_mut(10f64.powi(c as i32 * 3 - 12));
        }
        if near {
            let c = j.column(2) * 1e3 + j.column(3) * 1e-6;
            j.set_column(3, &c);
        }
        let z = DVector::from_fn(m, |_, _| next());
        (j, z)
    }

    /// The step as the fit computed it before reducing to R: SVD of the scaled,
    /// augmented (m + n) × n system.
    fn tall_step(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64) -> DVector<f64> {
        let n = jac.ncols();
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm()).collect();
        let mut a = DMatrix::zeros(jac.nrows() + n, n);
        for j in 0..n {
            for i in 0..jac.nrows() {
                a[(i, j)] = jac[(i, j)] / scale[j];
            }
            a[(jac.nrows() + j, j)] = lambda.sqrt();
        }
        let mut b = DVector::zeros(jac.nrows() + n);
        b.rows_mut(0, jac.nrows()).copy_from(z);
        let y = a.svd(true, true).solve(&b, 1e-14).unwrap();
        DVector::from_iterator(n, (0..n).map(|j| y[j] / scale[j]))
    }

    /// The damped objective ‖J y − z‖² + λ ‖D y‖² (D the column norms).
    fn objective(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64, y: &DVector<f64>) -> f64 {
        let d: f64 = (0..y.len())
            .map(|j| (jac.column(j).norm() * y[j]).powi(2))
            .sum();
        (jac * y - z).norm_squared() + lambda * d
    }

    #[test]
    fn the_reduced_step_equals_the_tall_svd() {
        for lambda in [1e-12f64, 1e-6, 1e-2, 10.0] {
            // Well conditioned: the same step.
            let (jac, z) = tall(false);
            let (got, want) = (
                damped_step(&jac, &z, lambda).unwrap(),
                tall_step(&jac, &z, lambda),
            );
            for j in 0..jac.ncols() {
                assert!(
                    (got[j] - want[j]).abs() <= 1e-9 * want[j].abs(),
                    "λ {lambda}, y{j}: {} vs {}",
                    got[j],
                    want[j]
                );
            }
            // Nearly dependent columns: the step is only as determined as the problem
            // (κ·ε ~ 1e-7), but both minimise the damped objective equally well.
            let (jac, z) = tall(true);
            let (got, want) = (
                damped_step(&jac, &z, lambda).unwrap(),
                tall_step(&jac, &z, lambda),
            );
            let (fg, fw) = (
                objective(&jac, &z, lambda, &got),
                objective(&jac, &z, lambda, &want),
            );
            assert!((fg / fw - 1.0).abs() < 1e-12, "λ {lambda}: {fg} vs {fw}");
        }
    }

    #[test]
    fn the_reduced_covariance_is_the_inverse_normal_matrix() {
        let (jac, _) = tall(false);
        let n = jac.ncols();
        let (rank, cov) = covariance(&jac);
        assert_eq!(rank, n);
        // (JᵀJ)⁻¹ from the normal equations of the scaled J.
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm()).collect();
        let mut a = jac.clone();
        for j in 0..n {
            a.column_mut(j).scale_mut(1.0 / scale[j]);
        }
        let inv = (a.transpose() * &a).try_inverse().unwrap();
        for i in 0..n {
            let want = inv[(i, i)] / (scale[i] * scale[i]);
            assert!(
                (cov[(i, i)] / want - 1.0).abs() < 1e-10,
                "σ²{i}: {} vs {want}",
                cov[(i, i)]
            );
        }
        // Rank: a column that is another's multiple is not counted.
        let mut dependent = jac.clone();
        let c = jac.column(1) * 2.0;
        dependent.set_column(4, &c);
        assert_eq!(covariance(&dependent).0, n - 1);
    }
}
