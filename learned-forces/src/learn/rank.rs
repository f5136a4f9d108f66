//! Maneuver hypotheses, fitted and ranked (`arcwise rank`).
//!
//! Each hypothesis adds columns to the linearized problem around the base fit: an
//! impulsive Δv (three RTN columns at a trial epoch, the epoch scanned over the window
//! and refined by a parabola through the cost), a finite burn (constant RTN acceleration
//! over a trial start and duration, a 2-D scan), a constant thrust from an unknown
//! epoch to the arc's end, a continuous along-track thrust (one column), or nothing.
//! The scan only seeds the timing: the epoch, start and duration are then fitted jointly
//! with the accelerations or Δv (Gauss–Newton on the linearized problem, the timing
//! entering through continuous columns), and every σ comes from that joint fit. The
//! hypotheses are ranked by BIC = χ² + k ln m with the evidence ratio exp(−ΔBIC/2)
//! against "no maneuver", described on the Kass & Raftery (1995) scale; a χ² test of
//! the best says whether any of them explains the arc at all.

use super::linearized::Problem;
use crate::fit::stats::chi2_sf;
use nalgebra::{DMatrix, DVector};

/// A hypothesis to test.
#[derive(Clone, Debug, PartialEq)]
pub enum Hypothesis {
    /// Nothing happened.
    NoManeuver,
    /// An impulsive Δv at an unknown epoch in `[from_s, to_s]`.
    Impulsive {
        /// Window start, s from the arc's start.
        from_s: f64,
        /// Window end, s.
        to_s: f64,
    },
    /// A constant RTN acceleration from an unknown start in the window, for an unknown
    /// duration up to `max_duration_s`.
    FiniteBurn {
        /// Window start, s.
        from_s: f64,
        /// Window end, s.
        to_s: f64,
        /// Longest burn considered, s.
        max_duration_s: f64,
    },
    /// A constant along-track acceleration over the whole arc.
    ContinuousAlongTrack,
    /// A constant RTN acceleration from an unknown epoch in `[from_s, to_s]` to the
    /// arc's end (a thruster switched on and left on).
    ThrustFromEpoch {
        /// Window start, s.
        from_s: f64,
        /// Window end, s.
        to_s: f64,
    },
}

/// A fitted parameter.
#[derive(Clone, Debug, PartialEq)]
pub struct Param {
    /// Name with unit (`epoch_s` — seconds from the arc's start —, `dv_t_km_s`, …).
    pub name: String,
    /// Value.
    pub value: f64,
    /// 1σ.
    pub sigma: f64,
}

/// A fitted hypothesis.
#[derive(Clone, Debug, PartialEq)]
pub struct Ranked {
    /// The hypothesis.
    pub hypothesis: Hypothesis,
    /// Short name.
    pub name: String,
    /// Number of fitted parameters (timing included).
    pub k: usize,
    /// χ² left.
    pub cost: f64,
    /// Degrees of freedom left: observations − 6 (initial state) − `k`.
    pub dof: usize,
    /// P(χ² ≥ `cost`) on `dof` degrees of freedom: small means the hypothesis does not
    /// explain the arc.
    pub p_value: f64,
    /// BIC.
    pub bic: f64,
    /// log10 of the evidence ratio against "no maneuver".
    pub log10_evidence_vs_none: f64,
    /// Fitted parameters ± σ.
    pub params: Vec<Param>,
    /// The timing scan that seeded the fit: (trial epoch or start, s; least χ² there).
    /// Empty for hypotheses without timing.
    pub scan: Vec<(f64, f64)>,
}

/// A fitted hypothesis before ranking: χ², parameters, their count, the timing scan.
type Fitted = (f64, Vec<Param>, usize, Vec<(f64, f64)>);

fn rtn(problem: &Problem, k: usize, axis: usize) -> [f64; 3] {
    let p = &problem.terminals[k];
    match axis {
        0 => p.rh,
        1 => p.th,
        _ => p.nh,
    }
}

fn grid_range(problem: &Problem, from: f64, to: f64) -> (usize, usize) {
    let g = &problem.grid_t;
    let a = g.partition_point(|t| *t < from).min(g.len() - 1);
    let b = g.partition_point(|t| *t <= to).clamp(a + 1, g.len());
    (a, b)
}

/// Spacing of the tabulated grid, s.
fn grid_step(problem: &Problem) -> f64 {
    let g = &problem.grid_t;
    if g.len() < 2 {
        return 1.0;
    }
    (g[g.len() - 1] - g[0]) / (g.len() - 1) as f64
}

/// The three RTN columns of an impulse at a continuous epoch: linear in time between
/// the grid points around it, so the epoch can be fitted.
fn impulse_columns(problem: &Problem, epoch: f64) -> Option<Vec<DVector<f64>>> {
    let g = &problem.grid_t;
    let n = g.len();
    if n < 2 || !epoch.is_finite() {
        return None;
    }
    let m = g.partition_point(|t| *t <= epoch).clamp(1, n - 1) - 1;
    let f = ((epoch - g[m]) / (g[m + 1] - g[m])).clamp(0.0, 1.0);
    Some(
        (0..3)
            .map(|ax| {
                let a = problem.impulse_column(m, rtn(problem, m, ax));
                let b = problem.impulse_column(m + 1, rtn(problem, m + 1, ax));
                a * (1.0 - f) + b * f
            })
            .collect(),
    )
}

/// The three RTN columns of a constant acceleration from `start` to `end` (s): each
/// grid cell weighted by its overlap with the interval, so the timing is continuous.
fn burn_columns(problem: &Problem, start: f64, end: f64) -> Option<Vec<DVector<f64>>> {
    let h = grid_step(problem);
    let g = &problem.grid_t;
    let w = |k: usize| {
        let (lo, hi) = (g[k] - 0.5 * h, g[k] + 0.5 * h);
        ((end.min(hi) - start.max(lo)) / h).clamp(0.0, 1.0)
    };
    (0..3)
        .map(|ax| {
            problem.column_of(|k| {
                let d = rtn(problem, k, ax);
                let wk = w(k);
                [d[0] * wk, d[1] * wk, d[2] * wk]
            })
        })
        .collect()
}

/// A joint fit: linear coefficients (the columns' weights) and nonlinear timing
/// parameters together, by Gauss–Newton from `timing` (the scan's best); derivatives of
/// the prediction with respect to the timing by central differences of step `steps`.
/// Returns (timing, coefficients, covariance of [coefficients, timing], χ²).
struct Joint {
    timing: Vec<f64>,
    coefficients: Vec<f64>,
    covariance: DMatrix<f64>,
    cost: f64,
}

fn joint_fit(
    problem: &Problem,
    mut timing: Vec<f64>,
    steps: &[f64],
    bounds: &[(f64, f64)],
    columns: impl Fn(&[f64]) -> Option<Vec<DVector<f64>>>,
) -> Option<Joint> {
    let predict = |cols: &[DVector<f64>], c: &[f64]| {
        cols.iter()
            .zip(c)
            .fold(DVector::zeros(problem.rows()), |acc, (col, ci)| {
                acc + col * *ci
            })
    };
    let mut last = None;
    for _ in 0..12 {
        let cols = columns(&timing)?;
        let (c, _, cost) = problem.fit_columns(&cols)?;
        let mut jac: Vec<DVector<f64>> = cols.clone();
        for (j, step) in steps.iter().enumerate() {
            let mut up = timing.clone();
            let mut down = timing.clone();
            up[j] += step;
            down[j] -= step;
            let d = (predict(&columns(&up)?, &c) - predict(&columns(&down)?, &c)) / (2.0 * step);
            jac.push(d);
        }
        let jm = DMatrix::from_columns(&jac);
        let normal = jm.transpose() * &jm;
        let covariance = normal.clone().try_inverse()?;
        let residual = &problem.z - predict(&cols, &c);
        let delta = &covariance * (jm.transpose() * residual);
        let nc = c.len();
        let mut moved = 0.0f64;
        for j in 0..timing.len() {
            // Half steps at most a grid cell at a time: the columns are piecewise linear.
            let d = delta[nc + j].clamp(-4.0 * steps[j], 4.0 * steps[j]);
            let t = (timing[j] + d).clamp(bounds[j].0, bounds[j].1);
            moved = moved.max((t - timing[j]).abs() / steps[j]);
            timing[j] = t;
        }
        let done = moved < 1e-3;
        last = Some(Joint {
            timing: timing.clone(),
            coefficients: c,
            covariance,
            cost,
        });
        if done {
            break;
        }
    }
    // The answer at the final timing (the loop may have stopped after a move).
    let cols = columns(&timing)?;
    let (c, _, cost) = problem.fit_columns(&cols)?;
    let mut j = last?;
    if cost <= j.cost {
        j.coefficients = c;
        j.cost = cost;
    }
    Some(j)
}

fn sigma(cov: &DMatrix<f64>, i: usize) -> f64 {
    cov[(i, i)].max(0.0).sqrt()
}

fn rtn_params(prefix: &str, unit: &str, j: &Joint) -> Vec<Param> {
    ["r", "t", "n"]
        .iter()
        .enumerate()
        .map(|(ax, a)| Param {
            name: format!("{prefix}_{a}_{unit}"),
            value: j.coefficients[ax],
            sigma: sigma(&j.covariance, ax),
        })
        .collect()
}

fn impulsive(problem: &Problem, from: f64, to: f64) -> Option<Fitted> {
    let (a, b) = grid_range(problem, from, to);
    let t = &problem.grid_t;
    // Seed: the grid epoch of least χ².
    let scan: Vec<(usize, f64)> = (a..b)
        .map(|m| {
            let cost = impulse_columns(problem, t[m])
                .and_then(|c| problem.fit_columns(&c))
                .map(|r| r.2)
                .unwrap_or(f64::INFINITY);
            (m, cost)
        })
        .collect();
    let (m, _) = scan.iter().copied().min_by(|x, y| x.1.total_cmp(&y.1))?;
    let h = grid_step(problem);
    let j = joint_fit(problem, vec![t[m]], &[0.25 * h], &[(t[a], t[b - 1])], |p| {
        impulse_columns(problem, p[0])
    })?;
    let mut params = vec![Param {
        name: "epoch_s".into(),
        value: j.timing[0],
        sigma: sigma(&j.covariance, 3),
    }];
    params.extend(rtn_params("dv", "km_s", &j));
    let scan = scan.iter().map(|(m, c)| (t[*m], *c)).collect();
    Some((j.cost, params, 4, scan))
}

fn finite(problem: &Problem, from: f64, to: f64, max_dur: f64) -> Option<Fitted> {
    let (a, b) = grid_range(problem, from, to);
    let t = &problem.grid_t;
    let step = ((b - a) / 60).max(1);
    let mut best: Option<(f64, usize, usize)> = None;
    let mut scan = Vec::new();
    for s0 in (a..b).step_by(step) {
        let mut at_start = f64::INFINITY;
        for e0 in (s0 + step..b.min(t.len())).step_by(step) {
            if t[e0] - t[s0] > max_dur {
                break;
            }
            if let Some((_, _, cost)) =
                burn_columns(problem, t[s0], t[e0]).and_then(|c| problem.fit_columns(&c))
            {
                at_start = at_start.min(cost);
                if best.is_none_or(|b| cost < b.0) {
                    best = Some((cost, s0, e0));
                }
            }
        }
        if at_start.is_finite() {
            scan.push((t[s0], at_start));
        }
    }
    let (_, s0, e0) = best?;
    let h = grid_step(problem);
    let window = (t[a], t[b - 1]);
    let j = joint_fit(
        problem,
        vec![t[s0], t[e0]],
        &[0.5 * h, 0.5 * h],
        &[window, window],
        |p| burn_columns(problem, p[0], p[1].max(p[0])),
    )?;
    let (start, end) = (j.timing[0], j.timing[1].max(j.timing[0]));
    let c = &j.covariance;
    // Duration = end − start: var = var(end) + var(start) − 2 cov(start, end).
    let dur_var = c[(4, 4)] + c[(3, 3)] - 2.0 * c[(3, 4)];
    let mut params = vec![
        Param {
            name: "start_s".into(),
            value: start,
            sigma: sigma(c, 3),
        },
        Param {
            name: "duration_s".into(),
            value: end - start,
            sigma: dur_var.max(0.0).sqrt(),
        },
    ];
    params.extend(rtn_params("accel", "km_s2", &j));
    Some((j.cost, params, 5, scan))
}

fn thrust_from_epoch(problem: &Problem, from: f64, to: f64) -> Option<Fitted> {
    let (a, b) = grid_range(problem, from, to);
    let t = &problem.grid_t;
    let end = t[t.len() - 1] + grid_step(problem);
    let step = ((b - a) / 120).max(1);
    let scan: Vec<(usize, f64)> = (a..b)
        .step_by(step)
        .map(|s0| {
            let cost = burn_columns(problem, t[s0], end)
                .and_then(|c| problem.fit_columns(&c))
                .map(|r| r.2)
                .unwrap_or(f64::INFINITY);
            (s0, cost)
        })
        .collect();
    let (s0, _) = scan.iter().copied().min_by(|x, y| x.1.total_cmp(&y.1))?;
    let h = grid_step(problem);
    let j = joint_fit(problem, vec![t[s0]], &[0.5 * h], &[(t[a], t[b - 1])], |p| {
        burn_columns(problem, p[0], end)
    })?;
    let mut params = vec![Param {
        name: "start_s".into(),
        value: j.timing[0],
        sigma: sigma(&j.covariance, 3),
    }];
    params.extend(rtn_params("accel", "km_s2", &j));
    let scan = scan.iter().map(|(m, c)| (t[*m], *c)).collect();
    Some((j.cost, params, 4, scan))
}

fn along_track(problem: &Problem) -> Option<Fitted> {
    let col = problem.column_of(|k| rtn(problem, k, 1))?;
    let (c, s, cost) = problem.fit_columns(&[col])?;
    Some((
        cost,
        vec![Param {
            name: "accel_t_km_s2".into(),
            value: c[0],
            sigma: s[0],
        }],
        1,
        vec![],
    ))
}

/// Fits every hypothesis and ranks them, best (lowest BIC) first.
pub fn rank(problem: &Problem, hypotheses: &[Hypothesis]) -> Vec<Ranked> {
    let m = problem.rows();
    let base = problem.base_cost();
    let mut out: Vec<Ranked> = hypotheses
        .iter()
        .filter_map(|h| {
            let (name, fitted) = match h {
                Hypothesis::NoManeuver => ("no_maneuver", Some((base, vec![], 0, vec![]))),
                Hypothesis::Impulsive { from_s, to_s } => {
                    ("impulsive", impulsive(problem, *from_s, *to_s))
                }
                Hypothesis::FiniteBurn {
                    from_s,
                    to_s,
                    max_duration_s,
                } => (
                    "finite_burn",
                    finite(problem, *from_s, *to_s, *max_duration_s),
                ),
                Hypothesis::ThrustFromEpoch { from_s, to_s } => (
                    "thrust_from_epoch",
                    thrust_from_epoch(problem, *from_s, *to_s),
                ),
                Hypothesis::ContinuousAlongTrack => {
                    ("continuous_along_track", along_track(problem))
                }
            };
            let (cost, params, k, scan) = fitted?;
            let dof = m.saturating_sub(6 + k).max(1);
            Some(Ranked {
                hypothesis: h.clone(),
                name: name.into(),
                k,
                cost,
                dof,
                p_value: chi2_sf(cost, dof as f64),
                bic: cost + k as f64 * (m as f64).ln(),
                log10_evidence_vs_none: 0.0,
                params,
                scan,
            })
        })
        .collect();
    for r in &mut out {
        r.log10_evidence_vs_none = -(r.bic - base) / 2.0 / std::f64::consts::LN_10;
    }
    out.sort_by(|a, b| a.bic.total_cmp(&b.bic));
    out
}

/// Whether the best-ranked hypothesis explains the arc: its χ² is consistent with the
/// noise at size `alpha`. When it is not, none of the hypotheses does, whatever their
/// order says.
pub fn best_explains(ranked: &[Ranked], alpha: f64) -> bool {
    ranked.first().is_some_and(|r| r.p_value >= alpha)
}

/// The evidence of a BIC difference against "no maneuver" on the Kass & Raftery (1995)
/// scale of 2·ln(Bayes factor) ≈ −ΔBIC: below 2 "not worth a mention", 2–6 "positive",
/// 6–10 "strong", above 10 "very strong"; "against" when the hypothesis does worse.
pub fn evidence_words(delta_bic_vs_none: f64) -> &'static str {
    let x = -delta_bic_vs_none;
    match x {
        x if x < 0.0 => "against",
        x if x < 2.0 => "not worth a mention",
        x if x < 6.0 => "positive",
        x if x < 10.0 => "strong",
        _ => "very strong",
    }
}
