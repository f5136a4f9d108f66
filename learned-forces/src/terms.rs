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

    /// Drops term `i` with its coefficient (and σ, if estimated); the constants left
    /// are renumbered `k0`, `k1`, … (see [`compact_constants`]).
    pub fn remove(&mut self, i: usize) {
        self.nodes.remove(i);
        self.coefficients.remove(i);
        if i < self.sigmas.len() {
            self.sigmas.remove(i);
        }
        let used: Vec<usize> = used_constants(&self.nodes).into_iter().collect();
        let pick = |v: &[f64]| -> Vec<f64> {
            used.iter()
                .map(|&j| v.get(j).copied().unwrap_or(f64::NAN))
                .collect()
        };
        let sigmas = pick(&self.constant_sigmas);
        (self.nodes, self.constants) = compact_constants(&self.nodes, &self.constants);
        if !self.constant_sigmas.is_empty() {
            self.constant_sigmas = sigmas;
        }
    }

    /// The model as text with numbers: `2.1e-9 * (exp(-t / k0) * T)` and `k0 = …`.
    pub fn text(&self) -> String {
        // `a + -b` reads `a - b`.
        let mut sum = String::new();
        for (i, (n, ci)) in self.nodes.iter().zip(&self.coefficients).enumerate() {
            let sign = match (i, *ci < 0.0) {
                (0, _) => "",
                (_, true) => " - ",
                (_, false) => " + ",
            };
            let c = if i > 0 { ci.abs() } else { *ci };
            sum.push_str(&format!("{sign}{c:.4e} * ({n})"));
        }
        let units = crate::expr::units::constant_units(&self.nodes);
        let consts: Vec<String> = self
            .used_constants()
            .iter()
            .map(|i| {
                let k = self.constants.get(*i).copied().unwrap_or(f64::NAN);
                match units.get(*i).cloned().flatten() {
                    Some(u) if u != "1" => format!("k{i} = {k:.6e} {u}"),
                    _ => format!("k{i} = {k:.6e}"),
                }
            })
            .collect();
        if consts.is_empty() {
            sum
        } else {
            format!("{sum}; {}", consts.join(", "))
        }
    }
}

/// `nodes` with their constants renumbered `k0`, `k1`, … in order of first index, and
/// the values `k` to match: a model never reports (or fits) a constant it does not use.
pub fn compact_constants(nodes: &[Node], k: &[f64]) -> (Vec<Node>, Vec<f64>) {
    let used: Vec<usize> = used_constants(nodes).into_iter().collect();
    let new_index = |i: usize| used.iter().position(|&u| u == i).unwrap_or(i);
    let renamed = nodes.iter().map(|n| n.rename_params(&new_index)).collect();
    let values = used
        .iter()
        .map(|&i| k.get(i).copied().unwrap_or(1.0))
        .collect();
    (renamed, values)
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;

    #[test]
    fn constants_are_renumbered_densely_and_follow_their_terms() {
        let nodes = [
            parse("exp(-t / k3) * T").unwrap(),
            parse("sin(2 * pi * t / k5 + k6) * R").unwrap(),
        ];
        let k = [0.0, 0.0, 0.0, 21600.0, 0.0, 11880.0, 0.7];
        let (renamed, values) = compact_constants(&nodes, &k);
        assert_eq!(renamed[0].to_string(), "exp(-t / k0) * T");
        assert_eq!(renamed[1].to_string(), "sin(2 * pi * t / k1 + k2) * R");
        assert_eq!(values, vec![21600.0, 11880.0, 0.7]);
        // Dropping the first term leaves the periodic one as k0, k1 with its σ.
        let mut terms = Terms {
            nodes: renamed,
            coefficients: vec![2e-9, 1e-10],
            sigmas: vec![1e-12, 1e-12],
            constants: values,
            constant_sigmas: vec![30.0, 5.0, 0.01],
        };
        terms.remove(0);
        assert_eq!(terms.nodes[0].to_string(), "sin(2 * pi * t / k0 + k1) * R");
        assert_eq!(terms.constants, vec![11880.0, 0.7]);
        assert_eq!(terms.constant_sigmas, vec![5.0, 0.01]);
        assert_eq!(terms.coefficients, vec![1e-10]);
    }
}
