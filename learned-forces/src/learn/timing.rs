//! Stage 4a: timing seeds — the search's periodic and switch-on building blocks start
//! from a scan of the linearized residual, not from luck.
//!
//! A constant inside a period or an onset epoch has a cost surface full of local minima
//! (every period that fits a whole number of cycles; every epoch the noise favours), so
//! variable projection only refines what a scan has found:
//!
//! - periods: a periodogram — for each physically shaped block g and each trial period P
//!   on a log-spaced grid, the least-squares fit of sin(2π t/P)·g and cos(2π t/P)·g; the
//!   best P seeds `sin(2 * pi * t / k0 + k1) * g` with its phase from the two amplitudes;
//! - onsets: for each block and each trial epoch on a regular grid, the fit of
//!   `step((t - k0) / w) * g` (w = [`ONSET_WIDTH_S`]); the best epoch seeds it.
//!
//! The scan runs once per learn (every seed of the search shares it) and in parallel,
//! each trial independent, so its result does not depend on the thread count.

use super::linearized::Problem;
use super::search::Individual;
use crate::expr::parse;
use rayon::prelude::*;

/// The blocks a timing modulates: thrust along R, T, N; drag-like (the drag's own
/// shape, so a change of the drag's size is found as that); SRP-like (the Sun direction
/// gated by the shadow).
pub const BLOCKS: [&str; 5] = ["T", "R", "N", "rho * norm(vrel) * vrel", "lit * sun"];

/// Rise time of the learned switch-on, s: a smooth step `step((t - k0) / w)` rises from
/// 12 % to 88 % in 4w. Short against what tracking resolves (minutes), long enough
/// against the linearized grid (20 s) that the epoch moves the columns smoothly.
pub const ONSET_WIDTH_S: f64 = 60.0;

/// Shortest trial period, s: below it a modulation averages out within a revolution
/// and the tracking sampling (a minute) starts to alias it.
const MIN_PERIOD_S: f64 = 1200.0;

/// Ratio of neighbouring trial periods: the periodogram's peak is about P/span wide in
/// relative terms, several times this step for periods the arc holds more than once.
const PERIOD_RATIO: f64 = 1.04;

/// Spacing of trial onset epochs, s.
const ONSET_STEP_S: f64 = 600.0;

/// The periodic form a period seed starts (k0 the period, s; k1 the phase, rad).
pub fn periodic(block: &str) -> String {
    format!("sin(2 * pi * t / k0 + k1) * ({block})")
}

/// The switch-on form an onset seed starts (k0 the epoch, s from the arc's start).
pub fn onset(block: &str) -> String {
    format!("step((t - k0) / {ONSET_WIDTH_S}) * ({block})")
}

/// The trial periods for a training span `span_s`, s.
fn trial_periods(span_s: f64) -> Vec<f64> {
    let mut out = Vec::new();
    let mut p = MIN_PERIOD_S;
    while p <= span_s {
        out.push(p);
        p *= PERIOD_RATIO;
    }
    out
}

/// The trial onsets for a training span `span_s`, s: the epochs with at least a tenth of
/// the arc on either side (an onset nearer an end is a constant or nothing).
fn trial_onsets(span_s: f64) -> Vec<f64> {
    let (lo, hi) = (0.1 * span_s, 0.9 * span_s);
    let n = ((hi - lo) / ONSET_STEP_S).floor().max(0.0) as usize;
    (0..=n).map(|i| lo + i as f64 * ONSET_STEP_S).collect()
}

/// The best period and phase of a block: (least χ², period s, phase rad).
fn best_period(problem: &Problem, block: &str, periods: &[f64]) -> Option<(f64, f64, f64)> {
    let sin = parse(&format!("sin(2 * pi * t / k0) * ({block})")).ok()?;
    let cos = parse(&format!("cos(2 * pi * t / k0) * ({block})")).ok()?;
    let fits: Vec<Option<(f64, f64, f64)>> = periods
        .par_iter()
        .map(|&p| {
            let cols = [problem.column(&sin, &[p])?, problem.column(&cos, &[p])?];
            let (c, _, cost) = problem.fit_columns(&cols)?;
            // a sin x + b cos x = A sin(x + φ), φ = atan2(b, a).
            Some((cost, p, c[1].atan2(c[0])))
        })
        .collect();
    fits.into_iter()
        .flatten()
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// The best onset epoch of a block: (least χ², epoch s).
fn best_onset(problem: &Problem, block: &str, onsets: &[f64]) -> Option<(f64, f64)> {
    let node = parse(&onset(block)).ok()?;
    let fits: Vec<Option<(f64, f64)>> = onsets
        .par_iter()
        .map(|&e| {
            let col = problem.column(&node, &[e])?;
            let (_, _, cost) = problem.fit_columns(&[col])?;
            Some((cost, e))
        })
        .collect();
    fits.into_iter()
        .flatten()
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// The seeded building blocks for a training span of `span_s` seconds: one periodic and
/// one switch-on form per block, each with its scanned constants. Blocks whose columns
/// are not finite along the arc (no density model, say) are left out.
pub fn seeded(problem: &Problem, span_s: f64) -> Vec<Individual> {
    let periods = trial_periods(span_s);
    let onsets = trial_onsets(span_s);
    let mut out = Vec::new();
    for block in BLOCKS {
        if let Some((_, p, phase)) = best_period(problem, block, &periods) {
            if let Ok(node) = parse(&periodic(block)) {
                out.push(Individual {
                    trees: vec![node],
                    k: vec![p, phase],
                });
            }
        }
        if let Some((_, epoch)) = best_onset(problem, block, &onsets) {
            if let Ok(node) = parse(&onset(block)) {
                out.push(Individual {
                    trees: vec![node],
                    k: vec![epoch],
                });
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn trial_grids_cover_the_arc_and_nothing_outside_it() {
        let p = trial_periods(86400.0);
        assert_eq!(p[0], MIN_PERIOD_S);
        assert!(*p.last().unwrap() <= 86400.0 && *p.last().unwrap() * PERIOD_RATIO > 86400.0);
        let e = trial_onsets(86400.0);
        assert!(e[0] >= 8640.0 && *e.last().unwrap() <= 0.9 * 86400.0);
        assert!(e
            .windows(2)
            .all(|w| (w[1] - w[0] - ONSET_STEP_S).abs() < 1e-9));
        // A span too short for any trial gives none, not a panic.
        assert!(trial_periods(600.0).is_empty());
        assert_eq!(trial_onsets(0.0).len(), 1);
    }

    #[test]
    fn every_seeded_form_parses_with_the_constants_it_is_given() {
        for b in BLOCKS {
            assert_eq!(parse(&periodic(b)).unwrap().n_params(), 2, "{b}");
            assert_eq!(parse(&onset(b)).unwrap().n_params(), 1, "{b}");
        }
    }
}
