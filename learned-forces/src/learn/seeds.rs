//! Stages 4–6 once per search seed, and the seeds' agreement.
//!
//! Genetic search is chaotic: a different seed (or a rounding-level change upstream)
//! can end on a different form, and an analyst must know when that happens. Each seed's
//! search is refined and selected on its own; the chosen model is the one most seeds
//! agree on, and among tied groups the one predicting the held-out tail best. Two
//! choices agree when the arc cannot tell them apart: their best linearized predictions
//! of the training arc differ by less than [`AGREE_DCHI2`] (so `exp(t / k0)` with k0 < 0
//! agrees with `exp(-t / k0)`, and `vrel` with `T` where the arc cannot separate them).
//! Searches share the timing scan and every solved candidate; refinements are shared by
//! identical front members.

use super::holdout::HoldOut;
use super::linearized::{Problem, Solution};
use super::refine::Refined;
use super::search::{search_seeds_with, SearchObserver, SearchResult};
use super::timing::Timing;
use super::{select, FitObserver, FitResult, LearnError, Learner};
use nalgebra::DVector;
use std::collections::HashMap;

/// What one seed's search chose.
#[derive(Clone, Debug, PartialEq)]
pub struct SeedRun {
    /// The search seed.
    pub seed: u64,
    /// The model its search, refinement and selection chose (`None`: none survived).
    pub formula: Option<String>,
    /// Its held-out position RMS, km.
    pub held_out_rms: Option<f64>,
    /// Whether it is equivalent to the model finally chosen.
    pub agrees: bool,
}

/// The stages 4–6 over every seed.
pub(super) struct Seeded {
    /// Each seed's search.
    pub(super) searches: Vec<SearchResult>,
    /// Every refined candidate of every seed (distinct).
    pub(super) refined: Vec<Refined>,
    /// The chosen candidate: the most seeds' choice, best held-out among ties.
    pub(super) chosen: Option<Refined>,
    /// Each seed's choice.
    pub(super) runs: Vec<SeedRun>,
    /// The timing scan the searches started from.
    pub(super) timing: Timing,
}

/// Weighted squared distance between two choices' predictions below which they agree:
/// about a 4σ difference in one direction of the data.
pub const AGREE_DCHI2: f64 = 16.0;

/// A model's best linearized prediction of the training arc (weighted, with the initial
/// state's directions projected out): its columns at its constants, fitted to the
/// residual.
fn prediction(problem: &Problem, solution: &Solution) -> Option<DVector<f64>> {
    let cols: Vec<DVector<f64>> = solution
        .terms
        .nodes
        .iter()
        .map(|n| problem.column(n, &solution.terms.constants))
        .collect::<Option<_>>()?;
    let (c, _, _) = problem.fit_columns(&cols)?;
    Some(
        cols.iter()
            .zip(&c)
            .fold(DVector::zeros(problem.rows()), |acc, (col, ci)| {
                acc + col * *ci
            }),
    )
}

impl Learner<'_> {
    /// Searches with seeds `seed, seed + 1, …` (`options.seeds` of them), refines and
    /// selects each, and picks the model the most seeds agree on.
    pub(super) fn search_every_seed(
        &self,
        problem: &Problem,
        split: &HoldOut,
        base_train: &FitResult,
        fit_observer: &mut dyn FitObserver,
        search_observer: &dyn SearchObserver,
    ) -> Result<Seeded, LearnError> {
        let sopts = super::search::SearchOptions {
            span_s: split.cut_s,
            ..self.options.search.clone()
        };
        let seeds: Vec<u64> = (0..self.options.seeds.max(1) as u64)
            .map(|i| sopts.seed.wrapping_add(i))
            .collect();
        let timing = super::timing::scan(problem, sopts.span_s);
        let searches = search_seeds_with(problem, &sopts, &seeds, &timing, search_observer);
        let mut cache: HashMap<String, Option<Refined>> = HashMap::new();
        let mut choices: Vec<Option<Refined>> = Vec::new();
        for found in &searches {
            let refined = self.refine_front_shared(
                &found.front,
                problem,
                split,
                base_train,
                &mut cache,
                fit_observer,
            )?;
            let best = select::best_held_out(&refined);
            choices.push(select::simplest_as_good(
                &refined,
                best,
                &split.held,
                self.options,
            ));
        }
        let predictions: Vec<Option<DVector<f64>>> = choices
            .iter()
            .map(|c| c.as_ref().and_then(|c| prediction(problem, &c.solution)))
            .collect();
        let group = groups(&predictions);
        let held: Vec<Option<f64>> = choices
            .iter()
            .map(|c| c.as_ref().map(|c| c.held_out_rms))
            .collect();
        let chosen_group = most_agreed(&held, &group);
        let chosen = chosen_group
            .and_then(|g| best_in(&held, &group, g))
            .and_then(|i| choices[i].clone());
        let runs = seeds
            .iter()
            .zip(&choices)
            .zip(&group)
            .map(|((&seed, c), g)| SeedRun {
                seed,
                formula: c.as_ref().map(|c| c.solution.terms.text()),
                held_out_rms: c.as_ref().map(|c| c.held_out_rms),
                agrees: g.is_some() && *g == chosen_group,
            })
            .collect();
        let mut refined: Vec<Refined> = cache.into_values().flatten().collect();
        refined.sort_by(|a, b| {
            a.complexity
                .cmp(&b.complexity)
                .then(a.held_out_rms.total_cmp(&b.held_out_rms))
        });
        Ok(Seeded {
            searches,
            refined,
            chosen,
            runs,
            timing,
        })
    }
}

/// Each choice's group: choices whose predictions agree ([`AGREE_DCHI2`]) share the
/// group of the first of them; `None` for a seed that chose nothing (or whose choice has
/// no finite prediction).
fn groups(predictions: &[Option<DVector<f64>>]) -> Vec<Option<usize>> {
    let mut leaders: Vec<usize> = Vec::new();
    let mut out = Vec::with_capacity(predictions.len());
    for (i, p) in predictions.iter().enumerate() {
        let Some(p) = p else {
            out.push(None);
            continue;
        };
        let found = leaders.iter().position(|&l| {
            predictions[l]
                .as_ref()
                .is_some_and(|q| (p - q).norm_squared() < AGREE_DCHI2)
        });
        out.push(Some(found.unwrap_or_else(|| {
            leaders.push(i);
            leaders.len() - 1
        })));
    }
    out
}

/// The index of group `g`'s member with the best held-out RMS (`held`, km).
fn best_in(held: &[Option<f64>], group: &[Option<usize>], g: usize) -> Option<usize> {
    (0..held.len())
        .filter(|&i| group[i] == Some(g))
        .filter_map(|i| held[i].map(|h| (i, h)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(i, _)| i)
}

/// The group most choices fall in; among groups of one size, the one whose best member
/// predicts the held-out tail best (`held`: each choice's held-out RMS, km).
fn most_agreed(held: &[Option<f64>], group: &[Option<usize>]) -> Option<usize> {
    let n_groups = group.iter().flatten().max().map_or(0, |m| m + 1);
    let size = |g: usize| group.iter().filter(|h| **h == Some(g)).count();
    let rms = |g: usize| {
        best_in(held, group, g)
            .and_then(|i| held[i])
            .unwrap_or(f64::INFINITY)
    };
    // More seeds first; then fewer metres (b against a).
    (0..n_groups).max_by(|&a, &b| size(a).cmp(&size(b)).then(rms(b).total_cmp(&rms(a))))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(x: &[f64]) -> Option<DVector<f64>> {
        Some(DVector::from_column_slice(x))
    }

    #[test]
    fn choices_agree_when_their_predictions_are_within_the_threshold() {
        // Seeds 1 and 3 predict alike (χ² apart 9 < 16), seed 2 differently (χ² 400),
        // seed 4 chose nothing.
        let p = [v(&[0.0, 10.0]), v(&[20.0, 10.0]), v(&[3.0, 10.0]), None];
        let g = groups(&p);
        assert_eq!(g, vec![Some(0), Some(1), Some(0), None]);
        let held = [Some(0.0090), Some(0.0050), Some(0.0085), None];
        // Two seeds beat one even when the one predicts the tail better; the group's
        // best member is the one returned.
        let chosen = most_agreed(&held, &g);
        assert_eq!(chosen, Some(0));
        assert_eq!(best_in(&held, &g, 0), Some(2));
    }

    #[test]
    fn a_tie_goes_to_the_better_held_out_prediction_and_nothing_chosen_is_no_group() {
        let p = [v(&[0.0]), v(&[100.0])];
        let g = groups(&p);
        assert_eq!(g, vec![Some(0), Some(1)]);
        assert_eq!(most_agreed(&[Some(0.009), Some(0.008)], &g), Some(1));
        assert_eq!(most_agreed(&[Some(0.007), Some(0.008)], &g), Some(0));
        assert_eq!(most_agreed(&[None, None], &[None, None]), None);
    }
}
