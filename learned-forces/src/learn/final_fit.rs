//! Stage 8: the final fit — the chosen terms fitted on the whole arc from the training
//! fit's values, their coefficients, constants and σ read by name, checked finite, a
//! sign-blind constant reported positive, and how much of each term the initial state
//! absorbs.

use super::equivalent::invisible;
use super::linearized::{Problem, Solution};
use super::{sign_invisible, Chosen, FitObserver, FitResult, LearnError, Learner};
use crate::fit::model::Parameter;
use std::f64::consts::{PI, TAU};

impl Learner<'_> {
    /// The chosen model fitted on the whole arc (from `base`'s state and values and
    /// `train_fit`'s terms); notes for terms the initial state absorbs.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn final_fit(
        &self,
        base: &FitResult,
        problem: &Problem,
        sol: Solution,
        train_fit: &FitResult,
        held_out_rms: f64,
        notes: &mut Vec<String>,
        observer: &mut dyn FitObserver,
    ) -> Result<Chosen, LearnError> {
        let c0: Vec<f64> = train_fit
            .term_coefficients(sol.terms.nodes.len())
            .iter()
            .map(|e| e.value)
            .collect();
        let mut k0 = sol.terms.constants.clone();
        for e in &train_fit.estimates {
            if let Parameter::TermConstant(j) = e.parameter {
                if j < k0.len() {
                    k0[j] = e.value;
                }
            }
        }
        let full = self.refine(
            self.arc,
            base.x0,
            &base.values,
            &sol.terms.nodes,
            &c0,
            &k0,
            observer,
        )?;
        let mut coefficients = Vec::new();
        let mut sigmas = Vec::new();
        let mut constants = vec![f64::NAN; k0.len()];
        let mut constant_sigmas = vec![f64::NAN; k0.len()];
        for e in &full.estimates {
            match e.parameter {
                Parameter::TermCoefficient(_) => {
                    coefficients.push(e.value);
                    sigmas.push(e.sigma);
                }
                Parameter::TermConstant(j) if j < constants.len() => {
                    constants[j] = e.value;
                    constant_sigmas[j] = e.sigma;
                }
                _ => {}
            }
        }
        // A file with NaN in it would be refused by every reader: say so here instead.
        if !coefficients
            .iter()
            .chain(&sigmas)
            .chain(&constants)
            .chain(&constant_sigmas)
            .all(|x| x.is_finite())
        {
            return Err(LearnError::Unfit(format!(
                "the final fit of `{}` gave a non-finite coefficient, constant or σ (a singular covariance): nothing written",
                sol.terms.nodes
                    .iter()
                    .map(|n| n.to_string())
                    .collect::<Vec<_>>()
                    .join(" + ")
            )));
        }
        let span_s = self.arc.end().seconds_since(&self.arc.start());
        tidy_constants(
            &sol.terms.nodes,
            &mut constants,
            &[full.x0, full.x_last],
            span_s,
            &self.context,
        );
        let absorbed: Vec<f64> = sol
            .terms
            .nodes
            .iter()
            .map(|n| problem.absorbed_fraction(n, &k0))
            .collect();
        for (n, a) in sol.terms.nodes.iter().zip(&absorbed) {
            if *a > 0.999 {
                notes.push(format!(
                    "term `{n}`: {:.0}% of its signature on this arc is indistinguishable from a change of the initial state; its coefficient rests on the rest",
                    a * 100.0
                ));
            }
        }
        Ok(Chosen {
            terms: crate::terms::Terms {
                nodes: sol.terms.nodes,
                coefficients,
                sigmas,
                constants,
                constant_sigmas,
            },
            fit: full,
            held_out_rms,
            absorbed,
        })
    }
}

/// The constants as a reader expects them, where the formulas cannot tell the
/// difference (checked at `states` across `span_s`): a width inside a square positive,
/// a phase in (−π, π].
fn tidy_constants(
    nodes: &[crate::expr::Node],
    constants: &mut [f64],
    states: &[propagator::StateVector],
    span_s: f64,
    context: &crate::expr::Context,
) {
    for j in 0..constants.len() {
        if constants[j] < 0.0 && sign_invisible(nodes, constants, j, states, span_s, context) {
            constants[j] = -constants[j];
        }
    }
    let units = crate::expr::units::constant_units(nodes);
    for j in 0..constants.len() {
        let wrapped = constants[j] - TAU * ((constants[j] + PI) / TAU).floor();
        if units.get(j).cloned().flatten().as_deref() == Some("rad")
            && wrapped != constants[j]
            && invisible(
                nodes,
                constants,
                (j, wrapped),
                states,
                span_s,
                context,
                1e-9,
            )
        {
            constants[j] = wrapped;
        }
    }
}
