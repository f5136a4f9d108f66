//! Predictions of a fitted model with learned terms: the held-out error that selection
//! and refinement judge by, and the states for plots.

use super::LearnError;
use crate::arc::Arc;
use crate::expr::{Context, Node};
use crate::fit::model::{ExtraTerms, FitModel, Parameter};
use crate::fit::{FitOptions, FitResult, Observing};
use nalgebra::Vector3;
use propagator::propagation::{Options, Request, Silent};
use propagator::variational::propagate_with_partials;
use propagator::ForceModel;

/// RMS of `target`'s observations as predicted from a fit — the 3-D position error, km,
/// for a state arc; the normalized residual (σ units) for a tracking arc — the fit's
/// state at its first observation, its parameters, and `nodes` as extra terms
/// (coefficients and constants from the fit's estimates), propagated under `model`.
pub fn prediction_rms(
    model: ForceModel,
    fitted: &FitResult,
    nodes: &[Node],
    context: Context,
    target: &Arc,
    fit_options: &FitOptions,
) -> Result<f64, LearnError> {
    let times: Vec<f64> = target
        .observations
        .iter()
        .map(|o| o.epoch.seconds_since(&fitted.epoch0))
        .collect();
    let states = trajectory(model, fitted, nodes, context, &times, fit_options)?;
    let observing = Observing::new(target);
    let mut ss = 0.0;
    let mut rows = Vec::new();
    for (i, (x, o)) in states.iter().zip(&target.observations).enumerate() {
        match o.as_state() {
            Some(s) => ss += (s.r_km - Vector3::new(x[0], x[1], x[2])).norm_squared(),
            None => {
                rows.clear();
                observing.rows(i, x, &mut rows).map_err(LearnError::Unfit)?;
                ss += rows.iter().map(|r| r.z * r.z).sum::<f64>();
            }
        }
    }
    Ok((ss / states.len().max(1) as f64).sqrt())
}

/// States of a fitted model (as [`prediction_rms`]) at `times` (s from its first epoch).
pub fn trajectory(
    model: ForceModel,
    fitted: &FitResult,
    nodes: &[Node],
    context: Context,
    times: &[f64],
    fit_options: &FitOptions,
) -> Result<Vec<propagator::StateVector>, LearnError> {
    let parameters: Vec<Parameter> = fitted.estimates.iter().map(|e| e.parameter).collect();
    // The terms' coefficients and constants are the fit's (parameters override the
    // placeholders stored here).
    let terms = (!nodes.is_empty()).then(|| {
        let n_k = parameters
            .iter()
            .filter_map(|p| match p {
                Parameter::TermConstant(j) => Some(j + 1),
                _ => None,
            })
            .max()
            .unwrap_or(0);
        ExtraTerms {
            terms: crate::terms::Terms::new(nodes.to_vec(), vec![0.0; nodes.len()], vec![1.0; n_k]),
            context,
        }
    });
    let mut fm = FitModel::new(model, &parameters, terms).map_err(LearnError::Unfit)?;
    fm.values = fitted.values.clone();
    if times.is_empty() {
        return Ok(vec![]);
    }
    let options = Options {
        settings: fit_options.settings,
        altitude_floor_km: fit_options.altitude_floor_km,
        ..Options::default()
    };
    let req = Request {
        x0: fitted.x0,
        t0_s: 0.0,
        t_end_s: times[times.len() - 1],
        output_times_s: times,
        stop_times_s: &[],
    };
    let samples = propagate_with_partials(&fm, &req, &options, &mut Silent)
        .map_err(|e| LearnError::Unfit(e.to_string()))?;
    Ok(samples.iter().map(|s| s.state).collect())
}
