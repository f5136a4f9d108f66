//! Orbit determination from an arc: weighted batch least squares (Gauss–Newton with
//! Levenberg–Marquardt damping) of the initial state and chosen classical parameters,
//! partials from the variational equations, robust outlier editing, formal covariance,
//! and the anomaly verdict (χ² and residual structure).

// Dense linear algebra over (row, column) indices reads like the formulas.
#![allow(clippy::needless_range_loop)]

mod anomaly;
mod edit;
mod gauss;
mod initial;
mod lsq;
pub mod model;
mod result;
mod rows;
pub mod stats;

use anomaly::verdict;
use edit::edit;
use lsq::{covariance, Reduced};
pub use result::*;

use crate::arc::{Arc, Observed};
use crate::termination::Termination;
use model::{FitModel, Parameter};
use nalgebra::{DMatrix, DVector, Vector3};
use propagator::frames::eci_to_rtn;
use propagator::integrator::{Method, Settings};
use propagator::propagation::{Options, Request, Silent};
use propagator::variational::{propagate_with_partials, VariationalSample};
use propagator::{Epoch, StateVector};
pub(crate) use rows::Observing;

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
    observing: Observing<'a>,
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
        let n_rows: usize = (0..=last)
            .filter(|&i| used[i])
            .map(|i| self.observing.count(i))
            .sum();
        let mut jac = DMatrix::zeros(n_rows, n_est);
        let mut z = DVector::zeros(n_rows);
        let mut row = 0;
        let mut rows = Vec::with_capacity(6);
        for (i, s) in samples.iter().enumerate() {
            if !used[i] {
                continue;
            }
            rows.clear();
            self.observing
                .rows(i, &s.state, &mut rows)
                .map_err(|e| self.measurement_error(i, e))?;
            for r in &rows {
                z[row] = r.z;
                for j in 0..6 {
                    jac[(row, j)] = (0..6).map(|k| r.h[k] * s.phi[(k, j)]).sum::<f64>() / r.sigma;
                }
                for p in 6..n_est {
                    jac[(row, p)] = (0..6)
                        .map(|k| r.h[k] * s.sensitivity[(k, p - 6)])
                        .sum::<f64>()
                        / r.sigma;
                }
                row += 1;
            }
        }
        let cost = z.norm_squared();
        if !cost.is_finite() {
            return Err(FitError::Propagation("non-finite residuals".into()));
        }
        // A NaN partial would stall the step's decomposition; the model is not
        // differentiable at this iterate (an overflowing learned term, say).
        if jac.iter().any(|v: &f64| !v.is_finite()) {
            return Err(FitError::Propagation(
                "non-finite partials of the residuals (the model is not differentiable here)"
                    .into(),
            ));
        }
        Ok(Linearized {
            cost,
            jac,
            z,
            samples,
        })
    }

    /// A measurement that cannot be modelled, with its line.
    fn measurement_error(&self, i: usize, e: String) -> FitError {
        let o = &self.arc.observations[i];
        FitError::Propagation(format!("observation at {} (line {}): {e}", o.epoch, o.line))
    }
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
    let observing = Observing::new(arc);
    let n_meas: usize = (0..n_obs).map(|i| observing.count(i)).sum();
    if n_meas <= n_est {
        return Err(FitError::Unfit(format!(
            "the arc has {n_obs} observations ({n_meas} measurements), too few to estimate {n_est} quantities"
        )));
    }
    let problem = Problem {
        arc,
        t: t.clone(),
        options,
        observing,
    };
    let mut fm = model;
    let mut x0 = match options.initial_state {
        Some(x) => x,
        None => initial::initial_guess(arc, &t, rows::MU_KM3_S2)?,
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
        &stage_ends,
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
    let (residuals, rms_km) = residuals(&problem, &lin.samples, &used, &reasons)?;
    let dof = lin.z.len().saturating_sub(n_est);
    let mut verdict = verdict(
        &lin.z,
        dof,
        &structure_series(&problem, &residuals),
        options,
    );
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
        rms_sigma: (lin.cost / lin.z.len().max(1) as f64).sqrt(),
        edited: used.iter().filter(|u| !**u).count(),
        iterations,
        termination,
        verdict,
        jacobian: lin.jac.clone(),
        weighted_residual: lin.z.clone(),
        values: fm.values.clone(),
        radius_range_km: lin
            .samples
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(lo, hi), s| {
                let r = propagator::state::position(&s.state).norm();
                (lo.min(r), hi.max(r))
            }),
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

/// The stages of the fit: the state alone over the early stages (the parameters held at
/// rest, their values untouched), then the state and the parameters, from `fm.values`,
/// over the whole arc, with robust editing; returns the final linearization, the
/// iterations and why the last stage stopped.
fn run_stages(
    problem: &Problem,
    fm: &mut FitModel,
    x0: &mut StateVector,
    stage_ends: &[usize],
    editing: &mut Editing,
    observer: &mut dyn FitObserver,
) -> Result<(Linearized, usize, Termination), FitError> {
    let n_params = fm.values.len();
    let stages = stage_ends.len();
    let mut iterations = 0;
    let mut termination = Termination::IterationLimit;
    let mut lin = None;
    for (si, &last) in stage_ends.iter().enumerate() {
        let final_stage = si + 1 == stages;
        let n_here = if final_stage { 6 + n_params } else { 6 };
        // The parameters join in the last stage only.
        fm.set_estimating(final_stage);
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
/// and, for a state arc, the position RMS of the used ones, km.
fn residuals(
    problem: &Problem,
    samples: &[VariationalSample],
    used: &[bool],
    reasons: &[Option<String>],
) -> Result<(Vec<Residual>, Option<f64>), FitError> {
    let mut residuals = Vec::with_capacity(samples.len());
    let (mut sum_sq, mut n_used) = (0.0, 0usize);
    let mut rows = Vec::new();
    for (i, s) in samples.iter().enumerate() {
        let o = &problem.arc.observations[i];
        let r = Vector3::new(s.state[0], s.state[1], s.state[2]);
        let v = Vector3::new(s.state[3], s.state[4], s.state[5]);
        let value = match &o.observed {
            Observed::State(so) => {
                let d = so.r_km - r;
                if used[i] {
                    sum_sq += d.norm_squared();
                    n_used += 1;
                }
                ResidualValue::State {
                    rtn_km: eci_to_rtn(&r, &v).map(|m| m * d).unwrap_or(d),
                    velocity_km_s: so.v_km_s.map(|ov| ov - v),
                    sigma_km: so.sigma_km,
                }
            }
            Observed::Tracking(m) => {
                rows.clear();
                problem
                    .observing
                    .rows(i, &s.state, &mut rows)
                    .map_err(|e| problem.measurement_error(i, e))?;
                let (z, sigma) = rows.first().map_or((0.0, m.sigma), |r| (r.z, r.sigma));
                ResidualValue::Tracking {
                    site: m.site,
                    kind: m.kind,
                    residual: z * sigma,
                    sigma,
                }
            }
        };
        residuals.push(Residual {
            epoch: o.epoch,
            t_s: problem.t[i],
            value,
            used: used[i],
            edit_reason: reasons[i].clone(),
        });
    }
    let rms = (problem.arc.tracking.is_none()).then(|| (sum_sq / n_used.max(1) as f64).sqrt());
    Ok((residuals, rms))
}

/// The series the structure tests run on: the RTN components of a state arc's
/// normalized position residuals, or each tracking channel (site and kind) of a
/// measurement arc, used observations only, in time order.
fn structure_series(problem: &Problem, residuals: &[Residual]) -> Vec<(String, Vec<f64>)> {
    if problem.arc.tracking.is_none() {
        return ["R", "T", "N"]
            .iter()
            .enumerate()
            .map(|(c, name)| {
                let series = residuals
                    .iter()
                    .filter(|r| r.used)
                    .filter_map(|r| match &r.value {
                        ResidualValue::State {
                            rtn_km, sigma_km, ..
                        } => Some(rtn_km[c] / sigma_km),
                        ResidualValue::Tracking { .. } => None,
                    })
                    .collect();
                (name.to_string(), series)
            })
            .collect();
    }
    let mut series: Vec<Vec<f64>> = vec![Vec::new(); problem.observing.channels()];
    for r in residuals.iter().filter(|r| r.used) {
        if let ResidualValue::Tracking {
            site,
            kind,
            residual,
            sigma,
        } = &r.value
        {
            series[rows::channel(*site, *kind)].push(residual / sigma);
        }
    }
    series
        .into_iter()
        .enumerate()
        .filter(|(_, s)| !s.is_empty())
        .map(|(c, s)| (problem.observing.channel_name(c), s))
        .collect()
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
    // One factorization per linearization serves every damping tried and the covariance.
    let mut reduced = Reduced::new(&lin.jac, Some(&lin.z));
    let mut lambda = 1e-6;
    let mut stop: Option<Termination> = None;
    let mut it = 0;
    while it < problem.options.max_iterations {
        it += 1;
        let mut accepted = false;
        for _ in 0..12 {
            let Some(delta) = reduced.step(lambda) else {
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
                    let next = Reduced::new(&l.jac, Some(&l.z));
                    let (_, cov) = next.covariance();
                    let step_sigma = (0..n_est)
                        .map(|j| (delta[j] / cov[(j, j)].sqrt().max(1e-300)).abs())
                        .fold(0.0, f64::max);
                    *x0 = x_try;
                    lin = l;
                    reduced = next;
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
