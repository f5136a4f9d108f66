//! The learned model: a set of terms Σ c_i g_i(t, x; k) — the formulas, their
//! coefficients and the nonlinear constants k0, k1, …, with their 1σ. One type serves the
//! search's solutions, refinement, the fit's learned force, the chosen model, the learned
//! file and the report.

use crate::expr::Node;
use std::collections::BTreeSet;

/// A set of learned terms.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Terms {
    /// The formulas (vector-valued, ECI), in order.
    pub nodes: Vec<Node>,
    /// Their coefficients, km/s² per unit of the formula.
    pub coefficients: Vec<f64>,
    /// Their 1σ (empty until estimated).
    pub sigmas: Vec<f64>,
    /// Values of k0, k1, … (an unused one is a placeholder).
    pub constants: Vec<f64>,
    /// Their 1σ (empty until estimated).
    pub constant_sigmas: Vec<f64>,
}

impl Terms {
    /// Terms with coefficients and constants, not yet estimated (no σ).
    pub fn new(nodes: Vec<Node>, coefficients: Vec<f64>, constants: Vec<f64>) -> Terms {
        Terms {
            nodes,
            coefficients,
            sigmas: vec![],
            constants,
            constant_sigmas: vec![],
        }
    }

    /// The number of terms.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// Whether there is no term.
    pub fn is_empty(&self) -> bool {
        self.nodes.is_empty()
    }

    /// The constants the formulas read (`k<i>` indices), in order.
    pub fn used_constants(&self) -> BTreeSet<usize> {
        used_constants(&self.nodes)
    }

    /// Drops term `i` with its coefficient (and σ, if estimated).
    pub fn remove(&mut self, i: usize) {
        self.nodes.remove(i);
        self.coefficients.remove(i);
        if i < self.sigmas.len() {
            self.sigmas.remove(i);
        }
    }

    /// The model as text with numbers: `2.1e-9 * (exp(-t / k0) * T)` and `k0 = …`.
    pub fn text(&self) -> String {
        let terms: Vec<String> = self
            .nodes
            .iter()
            .zip(&self.coefficients)
            .map(|(n, ci)| format!("{ci:.4e} * ({n})"))
            .collect();
        let consts: Vec<String> = self
            .used_constants()
            .iter()
            .map(|i| {
                let k = self.constants.get(*i).copied().unwrap_or(f64::NAN);
                format!("k{i} = {k:.6e}")
            })
            .collect();
        if consts.is_empty() {
            terms.join(" + ")
        } else {
            format!("{}; {}", terms.join(" + "), consts.join(", "))
        }
    }
}

/// The constants `nodes` read (`k<i>` indices), in order.
pub fn used_constants(nodes: &[Node]) -> BTreeSet<usize> {
    fn walk(n: &Node, out: &mut BTreeSet<usize>) {
        if let Node::Param(i) = n {
            out.insert(*i);
        }
        for c in n.children() {
            walk(c, out);
        }
    }
    let mut out = BTreeSet::new();
    for n in nodes {
        walk(n, &mut out);
    }
    out
}
