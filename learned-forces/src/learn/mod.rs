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
mod outcome;
mod predict;
pub mod rank;
mod refine;
pub mod search;
mod seeds;
mod select;
mod sensitivities;
pub mod timing;
pub use outcome::*;
pub use seeds::SeedRun;

use crate::arc::Arc;
use crate::expr::{Context, Node};
use crate::fit::model::{ExtraTerms, FitModel, Parameter};
use crate::fit::{fit, FitError, FitObserver, FitOptions, FitResult};
use crate::next_arc::Unit;
use crate::terms::Terms;
use linearized::{Problem, Solution};
use propagator::{Epoch, ForceModel};
use search::{SearchObserver, SearchOptions};

use equivalent::sign_invisible;
pub use equivalent::{canonical_key, EQUIVALENT_DCHI2};
pub use predict::{prediction_rms, trajectory};
pub use select::{predicts_as_well, HELD_OUT_DCHI2};

/// Search seeds run by default: enough to see a disagreement, within the time an
/// analyst waits for one arc (the venting scenario's learn stays under 20 s on 2 cores).
pub const DEFAULT_SEEDS: usize = 3;

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
    /// How many search seeds (`search.seed`, `search.seed + 1`, …) are run; the chosen
    /// model is the one most of them agree on.
    pub seeds: usize,
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
            seeds: DEFAULT_SEEDS,
        }
    }
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
    let nothing =
        |base, front, held_out_rms_base, notes, search_stats, seed_runs, timing| Learned {
            base,
            chosen: None,
            front,
            held_out_rms_base,
            notes,
            search_stats,
            seed_runs,
            timing,
        };
    if !base.verdict.anomaly {
        notes.push("the base fit's verdict is no_anomaly: the known forces explain the arc; nothing was learned".into());
        return Ok(nothing(base, vec![], None, notes, None, vec![], None));
    }
    // 2. Hold-out: train on the early part, keep the tail for selection.
    let split = holdout::HoldOut::split(arc, options.holdout_fraction)?;
    let base_train = l.train_fit(&split, &base, fit_observer)?;
    if !base_train.verdict.anomaly {
        notes.push(format!(
            "the known forces explain the first {:.0} % of the arc (the training part, to {:.1} h): the anomaly is in the held-out tail, where nothing can be learned and tested at once; learn on an arc that goes on past it, or test `thrust_from`/`impulsive` hypotheses with `arcwise rank`",
            (1.0 - options.holdout_fraction) * 100.0,
            split.cut_s / 3600.0
        ));
    }
    let held_out_base = l.predict_rms(&base_train, &[], &split.held)?;
    // 3. Linearized sensitivities of the training fit.
    let problem = l.problem(&split.train, &base_train)?;
    // 4–6. Search over formulas in the linearized problem, refinement of the most
    // promising with the force in the dynamics, selection of the simplest that predicts
    // the tail as well as the best: once per seed, then the seeds' agreement.
    let seeded =
        l.search_every_seed(&problem, &split, &base_train, fit_observer, search_observer)?;
    let front = front_entries(&seeded);
    let stats = Some(SearchStats::of(&seeded.searches));
    if let Some(note) = disagreement(&seeded.runs) {
        notes.push(note);
    }
    let best = select::best_held_out(&seeded.refined);
    let runs = seeded.runs;
    let timing = Some((seeded.timing, problem.base_cost()));
    let declined = match &seeded.chosen {
        None => Some("no candidate survived refinement with significant terms".to_string()),
        Some(c) if c.held_out_rms >= held_out_base => Some(format!(
            "the best model predicts the held-out tail no better than the known forces ({} vs {}): nothing learned",
            Unit::of(arc).text(c.held_out_rms),
            Unit::of(arc).text(held_out_base)
        )),
        Some(_) => None,
    };
    let (Some(chosen), None) = (seeded.chosen, declined.clone()) else {
        notes.extend(declined);
        let held = Some(held_out_base);
        return Ok(nothing(base, front, held, notes, stats, runs, timing));
    };
    // 7. Equivalent forms: among forms the arc cannot tell apart, the canonical one, so
    // that the formula does not flip with the noise.
    let (sol, train_fit, rms) = l.canonical_equivalent(
        &problem,
        (&split.train, &base_train, &split.held),
        (chosen.solution, chosen.fit, chosen.held_out_rms),
        best,
        &mut notes,
        fit_observer,
    )?;
    // 8. Final fit on the whole arc. A model the whole arc cannot determine (a constant
    // with no effect there) is reported as such, not as a failed learn.
    let text = sol.terms.text();
    let chosen = match l.final_fit(
        &base,
        &problem,
        sol,
        &train_fit,
        rms,
        &mut notes,
        fit_observer,
    ) {
        Ok(c) => c,
        Err(LearnError::Fit(e)) => {
            notes.push(format!(
                "the chosen model `{text}` could not be fitted on the whole arc ({e}): nothing learned"
            ));
            let held = Some(held_out_base);
            return Ok(nothing(base, front, held, notes, stats, runs, timing));
        }
        Err(e) => return Err(e),
    };
    Ok(Learned {
        base,
        chosen: Some(chosen),
        front,
        held_out_rms_base: Some(held_out_base),
        notes,
        search_stats: stats,
        seed_runs: runs,
        timing,
    })
}

/// The seeds' fronts merged as the report lists them (the best at each complexity
/// that beats every simpler one), with the held-out errors of the refined members.
fn front_entries(seeded: &seeds::Seeded) -> Vec<FrontEntry> {
    let mut archive: std::collections::BTreeMap<usize, Solution> = Default::default();
    for s in seeded.searches.iter().flat_map(|f| &f.front) {
        if archive.get(&s.complexity).is_none_or(|b| s.cost < b.cost) {
            archive.insert(s.complexity, s.clone());
        }
    }
    search::pareto(&archive)
        .iter()
        .map(|s| {
            let formula = s.terms.text();
            let held_out_rms = seeded
                .refined
                .iter()
                .find(|r| r.member == formula)
                .map(|r| r.held_out_rms);
            FrontEntry {
                complexity: s.complexity,
                formula,
                cost: s.cost,
                held_out_rms,
            }
        })
        .collect()
}

/// A note when the seeds did not all choose the same model.
fn disagreement(runs: &[SeedRun]) -> Option<String> {
    let agreeing = runs.iter().filter(|r| r.agrees).count();
    // All agree, or none chose anything (said by the outcome): nothing to add.
    if agreeing == runs.len() || runs.iter().all(|r| r.formula.is_none()) {
        return None;
    }
    let others: Vec<String> = runs
        .iter()
        .filter(|r| !r.agrees)
        .map(|r| {
            format!(
                "seed {}: {}",
                r.seed,
                r.formula.as_deref().unwrap_or("nothing")
            )
        })
        .collect();
    Some(format!(
        "the search seeds DISAGREE: {agreeing} of {} chose the reported model; {}. Treat the form as uncertain",
        runs.len(),
        others.join("; ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;
    use propagator::solar_system::CenturyClock;

    #[test]
    fn a_disagreement_of_the_seeds_is_said_and_an_agreement_is_not() {
        let run = |seed, formula: Option<&str>, agrees| SeedRun {
            seed,
            formula: formula.map(str::to_string),
            held_out_rms: None,
            agrees,
        };
        let all = [run(1, Some("a"), true), run(2, Some("a"), true)];
        assert_eq!(disagreement(&all), None);
        let split = [
            run(1, Some("a"), true),
            run(2, Some("b"), false),
            run(3, None, false),
        ];
        let note = disagreement(&split).unwrap();
        assert!(note.contains("DISAGREE: 1 of 3"), "{note}");
        assert!(
            note.contains("seed 2: b") && note.contains("seed 3: nothing"),
            "{note}"
        );
    }

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
