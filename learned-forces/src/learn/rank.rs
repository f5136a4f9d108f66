//! Maneuver hypotheses, fitted and ranked (`arcwise rank`).
//!
//! Each hypothesis adds columns to the linearized problem around the base fit: an
//! impulsive Δv (three RTN columns at a trial epoch, the epoch scanned over the window
//! and refined by a parabola through the cost), a finite burn (constant RTN acceleration
//! over a trial start and duration, a 2-D scan), a continuous along-track thrust (one
//! column), or nothing. Linear parameters are solved exactly; the hypotheses are ranked
//! by BIC = χ² + k ln m, with the evidence ratio exp(−ΔBIC/2) against "no maneuver".

use super::linearized::Problem;
use nalgebra::DVector;

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
}

/// A fitted parameter.
#[derive(Clone, Debug, PartialEq)]
pub struct Param {
    /// Name with unit (`epoch_s`, `dv_t_km_s`, …).
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
    /// BIC.
    pub bic: f64,
    /// log10 of the evidence ratio against "no maneuver".
    pub log10_evidence_vs_none: f64,
    /// Fitted parameters ± σ.
    pub params: Vec<Param>,
}

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

fn impulsive(problem: &Problem, from: f64, to: f64) -> Option<(f64, Vec<Param>, usize)> {
    let (a, b) = grid_range(problem, from, to);
    let mut costs = Vec::with_capacity(b - a);
    for m in a..b {
        let cols: Vec<DVector<f64>> = (0..3)
            .map(|ax| problem.impulse_column(m, rtn(problem, m, ax)))
            .collect();
        costs.push(
            problem
                .fit_columns(&cols)
                .map(|r| r.2)
                .unwrap_or(f64::INFINITY),
        );
    }
    let (ib, &cb) = costs.iter().enumerate().min_by(|x, y| x.1.total_cmp(y.1))?;
    let m = a + ib;
    let cols: Vec<DVector<f64>> = (0..3)
        .map(|ax| problem.impulse_column(m, rtn(problem, m, ax)))
        .collect();
    let (c, s, cost) = problem.fit_columns(&cols)?;
    // Epoch: a parabola through the costs around the grid minimum; σ where Δχ² = 1.
    let t = &problem.grid_t;
    let (mut epoch, mut sig_t) = (t[m], t.get(m + 1).map(|x| x - t[m]).unwrap_or(1.0));
    if ib > 0 && ib + 1 < costs.len() {
        let (y0, y1, y2) = (costs[ib - 1], cb, costs[ib + 1]);
        let h = t[m + 1] - t[m];
        let curv = (y0 - 2.0 * y1 + y2) / (h * h);
        if curv > 0.0 {
            epoch = t[m] + 0.5 * h * (y0 - y2) / (y0 - 2.0 * y1 + y2);
            sig_t = (2.0 / curv).sqrt();
        }
    }
    let mut params = vec![Param {
        name: "epoch_s".into(),
        value: epoch,
        sigma: sig_t,
    }];
    for (ax, n) in ["dv_r_km_s", "dv_t_km_s", "dv_n_km_s"].iter().enumerate() {
        params.push(Param {
            name: (*n).into(),
            value: c[ax],
            sigma: s[ax],
        });
    }
    let _ = cost;
    Some((cost, params, 4))
}

fn finite(problem: &Problem, from: f64, to: f64, max_dur: f64) -> Option<(f64, Vec<Param>, usize)> {
    let (a, b) = grid_range(problem, from, to);
    let t = &problem.grid_t;
    let step = ((b - a) / 60).max(1);
    let mut best: Option<(f64, usize, usize)> = None;
    for s0 in (a..b).step_by(step) {
        for e0 in (s0 + step..b.min(t.len())).step_by(step) {
            if t[e0] - t[s0] > max_dur {
                break;
            }
            let cols: Option<Vec<DVector<f64>>> = (0..3)
                .map(|ax| {
                    problem.column_of(|k| {
                        if k >= s0 && k < e0 {
                            rtn(problem, k, ax)
                        } else {
                            [0.0; 3]
                        }
                    })
                })
                .collect();
            if let Some((_, _, cost)) = cols.and_then(|c| problem.fit_columns(&c)) {
                if best.is_none_or(|b| cost < b.0) {
                    best = Some((cost, s0, e0));
                }
            }
        }
    }
    let (_, s0, e0) = best?;
    let cols: Vec<DVector<f64>> = (0..3)
        .map(|ax| {
            problem.column_of(|k| {
                if k >= s0 && k < e0 {
                    rtn(problem, k, ax)
                } else {
                    [0.0; 3]
                }
            })
        })
        .collect::<Option<_>>()?;
    let (c, s, cost) = problem.fit_columns(&cols)?;
    let res = t[(a + step).min(t.len() - 1)] - t[a];
    let mut params = vec![
        Param {
            name: "start_s".into(),
            value: t[s0],
            sigma: res,
        },
        Param {
            name: "duration_s".into(),
            value: t[e0] - t[s0],
            sigma: res,
        },
    ];
    for (ax, n) in ["accel_r_km_s2", "accel_t_km_s2", "accel_n_km_s2"]
        .iter()
        .enumerate()
    {
        params.push(Param {
            name: (*n).into(),
            value: c[ax],
            sigma: s[ax],
        });
    }
    Some((cost, params, 5))
}

/// Fits every hypothesis and ranks them, best (lowest BIC) first.
pub fn rank(problem: &Problem, hypotheses: &[Hypothesis]) -> Vec<Ranked> {
    let m = problem.rows() as f64;
    let base = problem.base_cost();
    let mut out: Vec<Ranked> = hypotheses
        .iter()
        .filter_map(|h| {
            let (name, fitted) = match h {
                Hypothesis::NoManeuver => ("no_maneuver", Some((base, vec![], 0))),
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
                Hypothesis::ContinuousAlongTrack => (
                    "continuous_along_track",
                    problem
                        .column_of(|k| rtn(problem, k, 1))
                        .and_then(|c| problem.fit_columns(&[c]))
                        .map(|(c, s, cost)| {
                            (
                                cost,
                                vec![Param {
                                    name: "accel_t_km_s2".into(),
                                    value: c[0],
                                    sigma: s[0],
                                }],
                                1,
                            )
                        }),
                ),
            };
            let (cost, params, k) = fitted?;
            Some(Ranked {
                hypothesis: h.clone(),
                name: name.into(),
                k,
                cost,
                bic: cost + k as f64 * m.ln(),
                log10_evidence_vs_none: 0.0,
                params,
            })
        })
        .collect();
    let bic0 = base;
    for r in &mut out {
        r.log10_evidence_vs_none = -(r.bic - bic0) / 2.0 / std::f64::consts::LN_10;
    }
    out.sort_by(|a, b| a.bic.total_cmp(&b.bic));
    out
}
