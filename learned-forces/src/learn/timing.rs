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

/// What a scan of one block found: its χ² at every trial (period or epoch, s) and the
/// best trial.
#[derive(Clone, Debug, PartialEq)]
pub struct Scan {
    /// The block scanned (formula text).
    pub block: String,
    /// (trial period or onset epoch s, least χ² with the block so timed), in trial
    /// order; trials whose columns were not finite are left out.
    pub curve: Vec<(f64, f64)>,
    /// The phase at each trial period, rad (empty for an onset scan).
    pub phases: Vec<f64>,
}

impl Scan {
    /// The best trial: (period or epoch s, χ², phase rad or 0).
    pub fn best(&self) -> Option<(f64, f64, f64)> {
        self.curve
            .iter()
            .enumerate()
            .min_by(|a, b| a.1 .1.total_cmp(&b.1 .1))
            .map(|(i, &(x, c))| (x, c, self.phases.get(i).copied().unwrap_or(0.0)))
    }
}

/// The periodogram of a block: the fit of its sine and cosine at every trial period.
fn period_scan(problem: &Problem, block: &str, periods: &[f64]) -> Scan {
    let forms = (
        parse(&format!("sin(2 * pi * t / k0) * ({block})")),
        parse(&format!("cos(2 * pi * t / k0) * ({block})")),
    );
    let (Ok(sin), Ok(cos)) = forms else {
        return Scan {
            block: block.into(),
            curve: vec![],
            phases: vec![],
        };
    };
    let fits: Vec<Option<(f64, f64, f64)>> = periods
        .par_iter()
        .map(|&p| {
            let cols = [problem.column(&sin, &[p])?, problem.column(&cos, &[p])?];
            let (c, _, cost) = problem.fit_columns(&cols)?;
            // a sin x + b cos x = A sin(x + φ), φ = atan2(b, a).
            Some((p, cost, c[1].atan2(c[0])))
        })
        .collect();
    let kept: Vec<(f64, f64, f64)> = fits.into_iter().flatten().collect();
    Scan {
        block: block.into(),
        curve: kept.iter().map(|&(p, c, _)| (p, c)).collect(),
        phases: kept.iter().map(|&(_, _, f)| f).collect(),
    }
}

/// The onset scan of a block: the fit of its switch-on form at every trial epoch.
fn onset_scan(problem: &Problem, block: &str, onsets: &[f64]) -> Scan {
    let Ok(node) = parse(&onset(block)) else {
        return Scan {
            block: block.into(),
            curve: vec![],
            phases: vec![],
        };
    };
    let fits: Vec<Option<(f64, f64)>> = onsets
        .par_iter()
        .map(|&e| {
            let col = problem.column(&node, &[e])?;
            let (_, _, cost) = problem.fit_columns(&[col])?;
            Some((e, cost))
        })
        .collect();
    Scan {
        block: block.into(),
        curve: fits.into_iter().flatten().collect(),
        phases: vec![],
    }
}

/// Every block's periodogram and onset scan, and the building blocks they seed.
#[derive(Clone, Debug, Default)]
pub struct Timing {
    /// One per block.
    pub periods: Vec<Scan>,
    /// One per block.
    pub onsets: Vec<Scan>,
    /// The periodic and switch-on forms with their scanned constants.
    pub seeds: Vec<Individual>,
}

/// Scans every block for a training span of `span_s` seconds: one periodic and one
/// switch-on form per block, each seeded with its best trial. Blocks whose columns are
/// not finite along the arc (no density model, say) seed nothing.
pub fn scan(problem: &Problem, span_s: f64) -> Timing {
    let periods = trial_periods(span_s);
    let onsets = trial_onsets(span_s);
    let mut t = Timing::default();
    for block in BLOCKS {
        let p = period_scan(problem, block, &periods);
        if let (Some((period, _, phase)), Ok(node)) = (p.best(), parse(&periodic(block))) {
            t.seeds.push(Individual {
                trees: vec![node],
                k: vec![period, phase],
            });
        }
        let o = onset_scan(problem, block, &onsets);
        if let (Some((epoch, _, _)), Ok(node)) = (o.best(), parse(&onset(block))) {
            t.seeds.push(Individual {
                trees: vec![node],
                k: vec![epoch],
            });
        }
        t.periods.push(p);
        t.onsets.push(o);
    }
    t
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
    fn the_best_trial_is_the_least_chi2_with_its_phase() {
        let s = Scan {
            block: "T".into(),
            curve: vec![(1200.0, 50.0), (1300.0, 20.0), (1400.0, 30.0)],
            phases: vec![0.1, 0.2, 0.3],
        };
        assert_eq!(s.best(), Some((1300.0, 20.0, 0.2)));
        let empty = Scan {
            block: "T".into(),
            curve: vec![],
            phases: vec![],
        };
        assert_eq!(empty.best(), None);
    }

    #[test]
    fn every_seeded_form_parses_with_the_constants_it_is_given() {
        for b in BLOCKS {
            assert_eq!(parse(&periodic(b)).unwrap().n_params(), 2, "{b}");
            assert_eq!(parse(&onset(b)).unwrap().n_params(), 1, "{b}");
        }
    }
}
