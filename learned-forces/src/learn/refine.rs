//! Stage 5: refinement — the most promising members of the search's front fitted with
//! their force in the dynamics, the least significant term pruned until every term is
//! significant, and each survivor's prediction of the held-out tail.

use super::holdout::HoldOut;
use super::linearized::{Problem, Solution};
use super::{FitObserver, FitResult, LearnError, Learner};
use std::collections::HashMap;

/// A front member after refinement.
#[derive(Clone)]
pub(super) struct Refined {
    /// The front member's complexity.
    pub(super) complexity: usize,
    /// The front member's text (its key in the report's front).
    pub(super) member: String,
    /// Its terms after pruning.
    pub(super) solution: Solution,
    /// The training arc fitted with them.
    pub(super) fit: FitResult,
    /// Their prediction of the held-out tail, km.
    pub(super) held_out_rms: f64,
}

impl Learner<'_> {
    /// Refines the members of `front` worth refining ([`worth_refining`]), in front
    /// order; members that lose every term, or whose fit fails, drop out. A member
    /// already in `cache` (met in another seed's front) is not refined again.
    pub(super) fn refine_front_shared(
        &self,
        front: &[Solution],
        problem: &Problem,
        split: &HoldOut,
        base_train: &FitResult,
        cache: &mut HashMap<String, Option<Refined>>,
        observer: &mut dyn FitObserver,
    ) -> Result<Vec<Refined>, LearnError> {
        let mut refined = Vec::new();
        for idx in worth_refining(front, problem.rows(), self.options.refine_top) {
            // Seeds meet the same member with rounding-level differences.
            let key = front[idx].terms.text();
            if let Some(done) = cache.get(&key) {
                refined.extend(done.clone());
                continue;
            }
            let r = match self.prune(&front[idx], split, base_train, observer) {
                None => None,
                Some((solution, fit)) => Some(Refined {
                    complexity: front[idx].complexity,
                    member: front[idx].terms.text(),
                    held_out_rms: self.predict_rms(&fit, &solution.terms.nodes, &split.held)?,
                    solution,
                    fit,
                }),
            };
            refined.extend(r.clone());
            cache.insert(key, r);
        }
        Ok(refined)
    }

    /// Fits `member` in the dynamics and removes its least significant term until all
    /// pass the search's threshold; `None` when none is left significant or a fit fails.
    fn prune(
        &self,
        member: &Solution,
        split: &HoldOut,
        base_train: &FitResult,
        observer: &mut dyn FitObserver,
    ) -> Option<(Solution, FitResult)> {
        let threshold = self.options.search.threshold;
        let mut sol = member.clone();
        for _ in 0..sol.terms.nodes.len() {
            let r = self
                .refine(
                    &split.train,
                    base_train.x0,
                    &base_train.values,
                    &sol.terms.nodes,
                    &sol.terms.coefficients,
                    &sol.terms.constants,
                    observer,
                )
                .ok()?;
            let signif: Vec<f64> = r
                .term_coefficients(sol.terms.nodes.len())
                .iter()
                .map(|e| e.value.abs() / e.sigma.max(1e-300))
                .collect();
            let (worst, wv) = signif
                .iter()
                .copied()
                .enumerate()
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .unwrap_or((0, f64::INFINITY));
            if wv >= threshold {
                return Some((sol, r));
            }
            if sol.terms.nodes.len() == 1 {
                return None;
            }
            sol.terms.remove(worst);
        }
        None
    }
}

/// The front members worth refining, in front order: the `top` best by BIC
/// (χ² + k ln m, k coefficients and constants, m rows) within [`BIC_MARGIN`] of the best,
/// and the best by χ² alone when it beats the best by BIC by more than that margin in χ²
/// (linearization error can hide the right model's BIC). By χ² alone the most complex members always win, and a
/// simpler one only a fraction of a χ² unit worse was never refined; past the margin a
/// member's extra constants buy nothing (they were the most expensive refinements of the
/// venting scenario, each pruned back to the simple member).
fn worth_refining(front: &[Solution], rows: usize, top: usize) -> Vec<usize> {
    let ln_m = (rows.max(2) as f64).ln();
    let bic = |s: &Solution| {
        s.cost + (s.terms.coefficients.len() + s.terms.constants.len()) as f64 * ln_m
    };
    let mut order: Vec<usize> = (0..front.len()).collect();
    order.sort_by(|&a, &b| bic(&front[a]).total_cmp(&bic(&front[b])));
    if let Some(&first) = order.first() {
        let limit = bic(&front[first]) + BIC_MARGIN;
        order.retain(|&i| bic(&front[i]) <= limit);
    }
    order.truncate(top);
    let best_fit = (0..front.len()).min_by(|&a, &b| front[a].cost.total_cmp(&front[b].cost));
    if let (Some(best_fit), Some(&first)) = (best_fit, order.first()) {
        // Only when its χ² gain is worth a look: a few χ² units bought with several
        // constants is the noise.
        if !order.contains(&best_fit) && front[first].cost - front[best_fit].cost > BIC_MARGIN {
            order.push(best_fit);
        }
    }
    order.sort();
    order
}

/// BIC above the front's best past which a member is not refined: 10 is "very strong"
/// evidence against it on the Kass & Raftery (1995) scale.
const BIC_MARGIN: f64 = 10.0;
