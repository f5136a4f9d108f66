//! Stage 6: selection — among the refined candidates, the simplest whose prediction of
//! the held-out tail is as good as the best's.

use super::refine::Refined;
use super::LearnOptions;
use crate::arc::Arc;

/// The best held-out RMS among `refined`, km (infinite when there is none).
pub(super) fn best_held_out(refined: &[Refined]) -> f64 {
    refined
        .iter()
        .map(|r| r.held_out_rms)
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
        .filter(|r| predicts_as_well(r.held_out_rms, best, held, options.selection_tolerance))
        .min_by_key(|r| {
            r.solution
                .terms
                .nodes
                .iter()
                .map(|n| n.complexity() + 1)
                .sum::<usize>()
        })
        .cloned()
}

/// Held-out χ² a simpler model may lose against the best one (or 1 % of the best's
/// χ², when model error dominates): about 4σ of the χ² difference of two predictions
/// that differ by a few σ-units in all.
pub const HELD_OUT_DCHI2: f64 = 16.0;

/// Whether a held-out RMS `rms` (km, 3-D) predicts `held` as well as the best, `best`:
/// within the relative `tolerance`, and not worse in χ² by more than [`HELD_OUT_DCHI2`].
/// The relative test alone let a model 14 % worse at the noise floor (χ² + 1900 on 2160
/// points) pass as "as good".
pub fn predicts_as_well(rms: f64, best: f64, held: &Arc, tolerance: f64) -> bool {
    let n = held.observations.len().max(1) as f64;
    let s2 = held
        .observations
        .iter()
        // A tracking arc's RMS is already in σ units.
        .map(|o| o.as_state().map_or(1.0, |s| s.sigma_km * s.sigma_km))
        .sum::<f64>()
        / n;
    let chi2 = |x: f64| n * x * x / s2.max(1e-300);
    rms <= best * (1.0 + tolerance)
        && chi2(rms) - chi2(best) <= HELD_OUT_DCHI2.max(0.01 * chi2(best))
}
