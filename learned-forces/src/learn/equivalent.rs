//! Stage 7: equivalent forms — among forms of a term the arc cannot tell apart, the one
//! reported is the canonical one, so that the formula does not flip with the noise; and
//! constants whose sign the formulas cannot see.

use super::linearized::{Problem, Solution};
use super::{predicts_as_well, FitObserver, FitResult, LearnError, Learner};
use crate::arc::Arc;
use crate::expr::{Context, Node};

impl Learner<'_> {
    /// Tries every one- and two-step direction swap of every chosen term
    /// (`Node::direction_variants`) in
    /// the linearized problem; a swap that changes χ² by less than
    /// [`EQUIVALENT_DCHI2`] is an equivalent form, noted for the report. The earliest in
    /// the canonical order ([`canonical_key`]) replaces the term when, refined in the
    /// dynamics, it keeps every term significant and the held-out error within the
    /// selection tolerance; otherwise the search's form stays.
    #[allow(clippy::type_complexity)]
    pub(super) fn canonical_equivalent(
        &self,
        problem: &Problem,
        (train, base_train, held): (&Arc, &FitResult, &Arc),
        (sol, train_fit, rms): (Solution, FitResult, f64),
        best_rms: f64,
        notes: &mut Vec<String>,
        fit_observer: &mut dyn FitObserver,
    ) -> Result<(Solution, FitResult, f64), LearnError> {
        let cost_of = |nodes: &[Node]| -> Option<(Vec<f64>, f64)> {
            let cols: Option<Vec<_>> = nodes
                .iter()
                .map(|n| problem.column(n, &sol.terms.constants))
                .collect();
            problem.fit_columns(&cols?).map(|(c, _, cost)| (c, cost))
        };
        let Some((_, cost0)) = cost_of(&sol.terms.nodes) else {
            return Ok((sol, train_fit, rms));
        };
        let mut nodes = sol.terms.nodes.clone();
        for i in 0..nodes.len() {
            let mut pick: Option<Node> = None;
            let mut alike = Vec::new();
            // One and two swaps: `sin(u) * T` ↔ `cos(u) * R` takes two.
            let mut variants = sol.terms.nodes[i].direction_variants();
            for v in variants.clone() {
                for w in v.direction_variants() {
                    if w != sol.terms.nodes[i] && !variants.contains(&w) {
                        variants.push(w);
                    }
                }
            }
            for v in variants {
                if nodes.contains(&v) {
                    continue;
                }
                let mut trial = nodes.clone();
                trial[i] = v.clone();
                let Some((_, cost)) = cost_of(&trial) else {
                    continue;
                };
                if cost - cost0 < EQUIVALENT_DCHI2 {
                    alike.push((
                        canonical_key(&v),
                        format!("`{v}` (Δχ² {:+.2})", cost - cost0),
                    ));
                    let earliest = pick.as_ref().unwrap_or(&nodes[i]);
                    if canonical_key(&v) < canonical_key(earliest) {
                        pick = Some(v);
                    }
                }
            }
            if !alike.is_empty() {
                // The canonical ones first: the form reported is among those listed.
                alike.sort();
                let more = alike.len().saturating_sub(4);
                let mut alike: Vec<String> = alike.into_iter().take(4).map(|a| a.1).collect();
                if more > 0 {
                    alike.push(format!("{more} more"));
                }
                notes.push(format!(
                    "`{}` fits this arc as well as {}: the data cannot tell these forms apart",
                    sol.terms.nodes[i],
                    alike.join(", ")
                ));
            }
            if let Some(v) = pick {
                nodes[i] = v;
            }
        }
        if nodes == sol.terms.nodes {
            return Ok((sol, train_fit, rms));
        }
        let Some((c0, cost)) = cost_of(&nodes) else {
            return Ok((sol, train_fit, rms));
        };
        let refined = self.refine(
            train,
            base_train.x0,
            &base_train.values,
            &nodes,
            &c0,
            &sol.terms.constants,
            fit_observer,
        );
        if let Ok(r) = refined {
            let terms = r.term_coefficients(nodes.len());
            let significant = terms
                .iter()
                .all(|e| e.value.abs() >= self.options.search.threshold * e.sigma);
            // A form that cannot be predicted with is no alternative: keep the search's.
            let new_rms = self.predict_rms(&r, &nodes, held).unwrap_or(f64::INFINITY);
            if significant
                && predicts_as_well(new_rms, best_rms, held, self.options.selection_tolerance)
            {
                notes.push(format!(
                    "reported in the canonical form (R, T, N, vrel, v, r in that order; cos before sin): {}",
                    nodes
                        .iter()
                        .map(|n| n.to_string())
                        .collect::<Vec<_>>()
                        .join(" + ")
                ));
                let coefficients = terms.iter().map(|e| e.value).collect();
                let sigmas = terms.iter().map(|e| e.sigma).collect();
                let sol = Solution {
                    terms: crate::terms::Terms {
                        nodes,
                        coefficients,
                        sigmas,
                        ..sol.terms
                    },
                    cost,
                    ..sol
                };
                return Ok((sol, r, new_rms));
            }
        }
        Ok((sol, train_fit, rms))
    }
}

/// Whether flipping the sign of constant `j` leaves every formula unchanged (to 1e-12)
/// at a few epochs across `span_s` and the given states.
pub(super) fn sign_invisible(
    nodes: &[Node],
    constants: &[f64],
    j: usize,
    states: &[propagator::StateVector],
    span_s: f64,
    context: &Context,
) -> bool {
    let value = -constants[j];
    invisible(nodes, constants, (j, value), states, span_s, context, 1e-12)
}

/// Whether k`j` may be `value` instead without changing any formula (to `tolerance` of
/// the largest component) at five times across the span and at each of `states`.
pub(super) fn invisible(
    nodes: &[Node],
    constants: &[f64],
    (j, value): (usize, f64),
    states: &[propagator::StateVector],
    span_s: f64,
    context: &Context,
    tolerance: f64,
) -> bool {
    let mut changed = constants.to_vec();
    changed[j] = value;
    [0.0, 0.31, 0.5, 0.77, 1.0].iter().all(|f| {
        states.iter().all(|x| {
            let p = crate::expr::Terminals::of_state(f * span_s, x, context);
            nodes.iter().all(|n| {
                let (a, b) = (
                    n.eval(&p, constants).vector(),
                    n.eval(&p, &changed).vector(),
                );
                let scale = a.iter().map(|v| v.abs()).fold(0.0, f64::max);
                (0..3).all(|i| (a[i] - b[i]).abs() <= tolerance * scale)
            })
        })
    })
}

/// Below this change of χ², two forms of a term (same number of coefficients) are
/// equivalent on the arc: with equal parameter counts Δχ² is ΔAIC, and ΔAIC ≤ 2 is the
/// usual "both substantially supported" line (Burnham & Anderson, Model Selection and
/// Multimodel Inference, 2002; from memory).
pub const EQUIVALENT_DCHI2: f64 = 2.0;

/// Orders equivalent forms: the simplest first, then by the vector terminals in order of appearance (`R`,
/// `T`, `N`, `vrel`, `v`, `r`), then by the trig functions (`cos` before `sin`), then by
/// text. So a radial form wins over an along-track one whatever its phase. A
/// convention, so that the reported form does not depend on the noise; the report lists
/// the others.
pub fn canonical_key(n: &Node) -> String {
    let text = n.to_string();
    let mut directions = String::new();
    let mut trig = String::new();
    for word in text.split(|c: char| !(c.is_ascii_alphanumeric() || c == '_')) {
        match word {
            "R" => directions.push('1'),
            "T" => directions.push('2'),
            "N" => directions.push('3'),
            "vrel" => directions.push('4'),
            "v" => directions.push('5'),
            "r" => directions.push('6'),
            "cos" => trig.push('1'),
            "sin" => trig.push('2'),
            _ => {}
        }
    }
    format!("{:06}|{directions}|{trig}|{text}", n.complexity())
}
