//! The learner: from an arc the known forces cannot explain, a short formula for the
//! missing force, with honest uncertainties, chosen by how well it predicts.

// Numeric kernels index several arrays in step.
#![allow(clippy::needless_range_loop)]

mod base;
mod equivalent;
mod final_fit;
mod holdout;
pub mod hypotheses;
pub mod linearized;
mod predict;
pub mod rank;
mod refine;
pub mod search;
mod select;

use crate::arc::Arc;
use crate::expr::{Context, Node};
use crate::fit::model::{ExtraTerms, FitModel, Parameter};
use crate::fit::{fit, FitError, FitObserver, FitOptions, FitResult};
use crate::terms::Terms;
use linearized::{ObsRow, Problem, Solution};
use nalgebra::Matrix6;
use propagator::propagation::{output_grid, Options, Request, Silent};
use propagator::variational::propagate_with_partials;
use propagator::{Epoch, ForceModel};
use search::{search, SearchObserver, SearchOptions};

use equivalent::sign_invisible;
pub use equivalent::{canonical_key, EQUIVALENT_DCHI2};
pub use predict::{prediction_rms, trajectory};
pub use select::{predicts_as_well, HELD_OUT_DCHI2};

/// Options of the learner.
#[derive(Clone, Debug)]
pub struct LearnOptions {
    /// Every fit's options.
    pub fit: FitOptions,
    /// Classical parameters estimated in every fit (the base fit's, kept in every later
    /// one).
    pub estimate: Vec<Parameter>,
    /// The search.
    pub search: SearchOptions,
    /// Fraction of the arc (by time, at the end) held out for selection.
    pub holdout_fraction: f64,
    /// How many front candidates are refined with the force in the dynamics.
    pub refine_top: usize,
    /// The simplest model within this fraction of the best held-out RMS (and within
    /// [`HELD_OUT_DCHI2`] of its held-out χ²) is chosen.
    pub selection_tolerance: f64,
    /// Grid spacing of the linearized problem, s.
    pub grid_step_s: f64,
}

impl Default for LearnOptions {
    fn default() -> Self {
        Self {
            fit: FitOptions::default(),
            estimate: Vec::new(),
            search: SearchOptions::default(),
            holdout_fraction: 0.25,
            refine_top: 5,
            selection_tolerance: 0.15,
            grid_step_s: 20.0,
        }
    }
}

/// One entry of the reported front.
#[derive(Clone, Debug, PartialEq)]
pub struct FrontEntry {
    /// Complexity (nodes plus coefficients).
    pub complexity: usize,
    /// The model as text: `c0 * (g0) + c1 * (g1)` with the constants substituted.
    pub formula: String,
    /// Weighted cost left on the training arc, linearized.
    pub cost: f64,
    /// Held-out position RMS after refinement, km (refined candidates only).
    pub held_out_rms_km: Option<f64>,
}

/// The chosen model, fitted on the whole arc.
#[derive(Clone, Debug)]
pub struct Chosen {
    /// The terms, with their σ (unused constants are NaN).
    pub terms: Terms,
    /// The fit of the whole arc with the learned force in the dynamics.
    pub fit: FitResult,
    /// Held-out RMS of this model (trained on the early part), km.
    pub held_out_rms_km: f64,
    /// Fraction of each term's signature absorbed by the initial-state directions.
    pub absorbed: Vec<f64>,
}

/// Everything the learner found.
#[derive(Clone, Debug)]
pub struct Learned {
    /// Base fit of the whole arc with the known forces.
    pub base: FitResult,
    /// The chosen model; `None` when nothing is anomalous or nothing helps.
    pub chosen: Option<Chosen>,
    /// The front, simplest first.
    pub front: Vec<FrontEntry>,
    /// Held-out RMS of the base model, km.
    pub held_out_rms_base_km: Option<f64>,
    /// Sentences for the report.
    pub notes: Vec<String>,
    /// Candidate evaluations, generations, seconds of the search.
    pub search_stats: Option<SearchStats>,
}

/// How the search went: its size, its time and why it stopped.
#[derive(Clone, Copy, Debug)]
pub struct SearchStats {
    /// Candidate evaluations.
    pub evaluations: usize,
    /// Generations run.
    pub generations: usize,
    /// Wall time, s.
    pub seconds: f64,
    /// Why the search stopped.
    pub termination: crate::termination::Termination,
}

/// What learning concluded about the arc.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// The known forces explain the arc: nothing was learned.
    NoAnomaly,
    /// The arc is anomalous and the learned model passes the same anomaly test.
    Explained,
    /// A model was learned but the arc still fails the anomaly test with it.
    NotExplained,
    /// The arc is anomalous and no candidate earned its place.
    NothingFound,
}

impl Outcome {
    /// The report's name of the outcome.
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::NoAnomaly => "no_anomaly",
            Outcome::Explained => "explained",
            Outcome::NotExplained => "not_explained",
            Outcome::NothingFound => "nothing_found",
        }
    }

    /// Whether the arc ends up explained (by the known forces or the learned model).
    pub fn is_explained(self) -> bool {
        matches!(self, Outcome::NoAnomaly | Outcome::Explained)
    }
}

impl Outcome {
    /// From the base fit's verdict and the learned model's (`None`: nothing learned).
    pub fn from_verdicts(base_anomaly: bool, learned_anomaly: Option<bool>) -> Outcome {
        match (base_anomaly, learned_anomaly) {
            (false, _) => Outcome::NoAnomaly,
            (true, Some(false)) => Outcome::Explained,
            (true, Some(true)) => Outcome::NotExplained,
            (true, None) => Outcome::NothingFound,
        }
    }
}

impl Learned {
    /// The outcome: the verdict of the model that was written, not of the base fit.
    pub fn outcome(&self) -> Outcome {
        Outcome::from_verdicts(
            self.base.verdict.anomaly,
            self.chosen.as_ref().map(|c| c.fit.verdict.anomaly),
        )
    }
}

/// Why learning could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LearnError {
    /// A fit failed.
    #[error(transparent)]
    Fit(#[from] FitError),
    /// The inputs cannot support learning.
    #[error("{0}")]
    Unfit(String),
}

struct Learner<'a> {
    arc: &'a Arc,
    make_model: &'a (dyn Fn(Epoch) -> Result<ForceModel, String> + Sync),
    options: &'a LearnOptions,
    context: Context,
}

impl Learner<'_> {
    fn model(&self) -> Result<ForceModel, LearnError> {
        (self.make_model)(self.arc.start()).map_err(LearnError::Unfit)
    }

    /// The known forces with `parameters` estimated on top (and learned `terms`).
    fn fit_model(
        &self,
        parameters: &[Parameter],
        terms: Option<ExtraTerms>,
    ) -> Result<FitModel, LearnError> {
        FitModel::new(self.model()?, parameters, terms).map_err(LearnError::Unfit)
    }

    /// Fits `arc` with extra terms (coefficients and used constants estimated).
    #[allow(clippy::too_many_arguments)]
    fn refine(
        &self,
        arc: &Arc,
        x0: propagator::StateVector,
        base_values: &[f64],
        nodes: &[Node],
        c0: &[f64],
        k0: &[f64],
        observer: &mut dyn FitObserver,
    ) -> Result<FitResult, LearnError> {
        let used = crate::terms::used_constants(nodes);
        let mut estimate = self.options.estimate.clone();
        estimate.extend((0..c0.len()).map(Parameter::TermCoefficient));
        estimate.extend(used.iter().map(|&j| Parameter::TermConstant(j)));
        let mut constants = k0.to_vec();
        constants.resize(
            used.iter()
                .max()
                .map(|m| m + 1)
                .unwrap_or(0)
                .max(constants.len()),
            1.0,
        );
        let terms = ExtraTerms {
            terms: Terms::new(nodes.to_vec(), c0.to_vec(), constants),
            context: self.context.clone(),
        };
        // The terms start at c0 and k0 (their stored values); the classical parameters
        // where the fit being refined left them.
        let mut model = self.fit_model(&estimate, Some(terms))?;
        if base_values.len() != self.options.estimate.len() {
            return Err(LearnError::Unfit(
                "internal: base values do not match the estimated parameters".into(),
            ));
        }
        model.values[..base_values.len()].copy_from_slice(base_values);
        let options = FitOptions {
            initial_state: Some(x0),
            ..self.options.fit.clone()
        };
        Ok(fit(arc, model, &options, observer)?)
    }

    /// Position RMS of the prediction of `arc` by a fitted model, km.
    fn predict_rms(
        &self,
        fitted: &FitResult,
        nodes: &[Node],
        held: &Arc,
    ) -> Result<f64, LearnError> {
        prediction_rms(
            self.model()?,
            fitted,
            nodes,
            self.context.clone(),
            held,
            &self.options.fit,
        )
    }
}

impl Learner<'_> {
    /// The linearized problem around a fit of `train`.
    fn problem(&self, train: &Arc, base: &FitResult) -> Result<Problem, LearnError> {
        let t_obs: Vec<f64> = train
            .observations
            .iter()
            .map(|o| o.epoch.seconds_since(&train.start()))
            .collect();
        let span = *t_obs.last().unwrap_or(&0.0);
        let mut grid = output_grid(0.0, span, self.options.grid_step_s);
        grid.extend(&t_obs);
        grid.sort_by(|a, b| a.total_cmp(b));
        grid.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
        let parameters: Vec<Parameter> = base.estimates.iter().map(|e| e.parameter).collect();
        let mut fm = self.fit_model(&parameters, None)?;
        fm.values = base.values.clone();
        let options = Options {
            settings: self.options.fit.settings,
            altitude_floor_km: self.options.fit.altitude_floor_km,
            ..Options::default()
        };
        let req = Request {
            x0: base.x0,
            t0_s: 0.0,
            t_end_s: span,
            output_times_s: &grid,
            stop_times_s: &[],
        };
        let samples = propagate_with_partials(&fm, &req, &options, &mut Silent)
            .map_err(|e| LearnError::Unfit(e.to_string()))?;
        let states: Vec<_> = samples.iter().map(|s| s.state).collect();
        let phis: Vec<Matrix6<f64>> = samples.iter().map(|s| s.phi).collect();
        let mut rows = Vec::new();
        let mut row = 0;
        for (i, o) in train.observations.iter().enumerate() {
            if !base.residuals[i].used {
                continue;
            }
            let gi = grid.partition_point(|g| *g < t_obs[i] - 1e-6);
            let comps = if o.v_km_s.is_some() { 6 } else { 3 };
            let mut sigma = [o.sigma_km; 6];
            for s in sigma.iter_mut().skip(3) {
                *s = o.sigma_km_s;
            }
            rows.push(ObsRow {
                grid_index: gi,
                phi: phis[gi],
                row,
                comps,
                sigma,
            });
            row += comps;
        }
        if row != base.weighted_residual.len() {
            return Err(LearnError::Unfit(
                "internal: residual rows do not match".into(),
            ));
        }
        Problem::new(
            grid,
            &states,
            &phis,
            rows,
            &base.jacobian,
            base.weighted_residual.clone(),
            self.context.clone(),
        )
        .ok_or_else(|| LearnError::Unfit("the transition matrix is singular along the arc".into()))
    }
}

/// The base fit of `arc` and the linearized problem around it (for maneuver hypotheses).
pub fn linearize(
    arc: &Arc,
    make_model: &(dyn Fn(Epoch) -> Result<ForceModel, String> + Sync),
    context: Context,
    options: &LearnOptions,
    fit_observer: &mut dyn FitObserver,
) -> Result<(FitResult, Problem), LearnError> {
    let l = Learner {
        arc,
        make_model,
        options,
        context,
    };
    let (base, short) = l.base_fit(fit_observer)?;
    if let Some(short) = short {
        return Err(short.refusal());
    }
    let problem = l.problem(arc, &base)?;
    Ok((base, problem))
}

/// Learns the missing force of `arc` under the known forces `make_model(epoch)` builds.
/// On an arc shorter than one revolution only a quiet verdict is given (with a note); an
/// anomalous one is refused.
pub fn learn(
    arc: &Arc,
    make_model: &(dyn Fn(Epoch) -> Result<ForceModel, String> + Sync),
    context: Context,
    options: &LearnOptions,
    fit_observer: &mut dyn FitObserver,
    search_observer: &dyn SearchObserver,
) -> Result<Learned, LearnError> {
    let l = Learner {
        arc,
        make_model,
        options,
        context,
    };
    // 1. Base fit: the known forces alone; a quiet arc ends here.
    let (base, short) = l.base_fit(fit_observer)?;
    let mut notes = Vec::new();
    if let Some(short) = short {
        if base.verdict.anomaly {
            return Err(short.refusal());
        }
        notes.push(format!(
            "{}: the known forces explain it, but a small force could hide in the orbit's own adjustment over so short an arc",
            short.span()
        ));
    }
    let nothing = |base, front, held_out_rms_base_km, notes, search_stats| Learned {
        base,
        chosen: None,
        front,
        held_out_rms_base_km,
        notes,
        search_stats,
    };
    if !base.verdict.anomaly {
        notes.push("the base fit's verdict is no_anomaly: the known forces explain the arc; nothing was learned".into());
        return Ok(nothing(base, vec![], None, notes, None));
    }
    // 2. Hold-out: train on the early part, keep the tail for selection.
    let split = holdout::HoldOut::split(arc, options.holdout_fraction)?;
    let base_train = l.train_fit(&split, &base, fit_observer)?;
    let held_out_base = l.predict_rms(&base_train, &[], &split.held)?;
    // 3. Linearized sensitivities of the training fit.
    let problem = l.problem(&split.train, &base_train)?;
    // 4. Search over formulas in the linearized problem.
    let sopts = SearchOptions {
        span_s: split.cut_s,
        ..options.search.clone()
    };
    let found = search(&problem, &sopts, search_observer);
    let mut front = front_entries(&found.front);
    let stats = Some(SearchStats {
        evaluations: found.evaluations,
        generations: found.generations,
        seconds: found.seconds,
        termination: found.termination,
    });
    // 5. Refinement of the most promising with the force in the dynamics.
    let refined = l.refine_front(&found.front, &problem, &split, &base_train, fit_observer)?;
    for r in &refined {
        if let Some(f) = front.iter_mut().find(|f| f.complexity == r.complexity) {
            f.held_out_rms_km = Some(r.held_out_rms_km);
        }
    }
    // 6. Selection: the simplest that predicts the tail as well as the best.
    let best = select::best_held_out(&refined);
    let Some(chosen) = select::simplest_as_good(&refined, best, &split.held, options) else {
        notes.push("no candidate survived refinement with significant terms".into());
        return Ok(nothing(base, front, Some(held_out_base), notes, stats));
    };
    if chosen.held_out_rms_km >= held_out_base {
        notes.push(format!(
            "the best model predicts the held-out tail no better than the known forces ({:.1} m vs {:.1} m): nothing learned",
            chosen.held_out_rms_km * 1e3,
            held_out_base * 1e3
        ));
        return Ok(nothing(base, front, Some(held_out_base), notes, stats));
    }
    // 7. Equivalent forms: among forms the arc cannot tell apart, the canonical one, so
    // that the formula does not flip with the noise.
    let (sol, train_fit, rms) = l.canonical_equivalent(
        &problem,
        (&split.train, &base_train, &split.held),
        (chosen.solution, chosen.fit, chosen.held_out_rms_km),
        best,
        &mut notes,
        fit_observer,
    )?;
    // 8. Final fit on the whole arc.
    let chosen = l.final_fit(
        &base,
        &problem,
        sol,
        &train_fit,
        rms,
        &mut notes,
        fit_observer,
    )?;
    Ok(Learned {
        base,
        chosen: Some(chosen),
        front,
        held_out_rms_base_km: Some(held_out_base),
        notes,
        search_stats: stats,
    })
}

/// The search's front as the report lists it (held-out errors filled in by refinement).
fn front_entries(front: &[Solution]) -> Vec<FrontEntry> {
    front
        .iter()
        .map(|s| FrontEntry {
            complexity: s.complexity,
            formula: s.terms.text(),
            cost: s.cost,
            held_out_rms_km: None,
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;
    use propagator::solar_system::CenturyClock;

    #[test]
    fn the_outcome_is_the_written_models_verdict_not_the_base_fits() {
        assert_eq!(Outcome::from_verdicts(false, None), Outcome::NoAnomaly);
        assert_eq!(
            Outcome::from_verdicts(true, Some(false)),
            Outcome::Explained
        );
        // A learned model that still fails the anomaly test must not read as success.
        let o = Outcome::from_verdicts(true, Some(true));
        assert_eq!(o, Outcome::NotExplained);
        assert!(!o.is_explained());
        assert!(!Outcome::from_verdicts(true, None).is_explained());
    }

    #[test]
    fn the_sign_of_a_width_inside_a_square_is_invisible_and_a_time_constant_is_not() {
        let context = Context {
            radius_km: 6378.1363,
            rotation_rad_s: 7.292115e-5,
            clock: CenturyClock { t0_centuries: 0.31 },
            environment: crate::expr::HANDBOOK_ENV,
            host: None,
        };
        let states = [propagator::StateVector::new(
            6878.0, 0.0, 0.0, 0.0, 4.8, 5.9,
        )];
        let bump = [parse("exp(-((t - k0) / k1)^2) * vrel").unwrap()];
        assert!(sign_invisible(
            &bump,
            &[40000.0, -900.0],
            1,
            &states,
            86400.0,
            &context
        ));
        assert!(!sign_invisible(
            &bump,
            &[40000.0, -900.0],
            0,
            &states,
            86400.0,
            &context
        ));
        let decay = [parse("exp(-t / k0) * T").unwrap()];
        assert!(!sign_invisible(
            &decay,
            &[-21600.0],
            0,
            &states,
            86400.0,
            &context
        ));
    }
}
