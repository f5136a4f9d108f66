//! Stage 6: selection — among the refined candidates, the simplest whose prediction of
//! the held-out tail is as good as the best's.

use super::refine::Refined;
use super::{predicts_as_well, LearnOptions};
use crate::arc::Arc;

/// The best held-out RMS among `refined`, km (infinite when there is none).
pub(super) fn best_held_out(refined: &[Refined]) -> f64 {
    refined
        .iter()
        .map(|r| r.held_out_rms_km)
        .fold(f64::INFINITY, f64::min)
}

/// The simplest candidate (fewest nodes, each term counting one more) that predicts
/// `held` as well as `best` ([`predicts_as_well`]); the first of equals.
pub(super) fn simplest_as_good(
    refined: &[Refined],
    best: f64,
    held: &Arc,
    options: &LearnOptions,
) -> Option<Refined> {
    refined
        .iter()
        .filter(|r| predicts_as_well(r.held_out_rms_km, best, held, options.selection_tolerance))
        .min_by_key(|r| {
            r.solution
                .nodes
                .iter()
                .map(|n| n.complexity() + 1)
                .sum::<usize>()
        })
        .cloned()
}
