//! The unit of each nonlinear constant, read off the formula: an argument of `exp`,
//! `sin`, `cos` or `step` is a pure number, so in `exp(-t / k0)` k0 is a time (s), in
//! `exp(-h / k0)` a length (km), in `sin(2 * pi * t / k0 + k1)` k0 is s and k1 a phase
//! (rad); a constant added to a quantity has its unit (`t - k0`: s).

use super::{Node, Op1, Op2, Terminal};

/// A unit as powers of (km, s, kg).
type Dim = [i32; 3];

const NONE: Dim = [0, 0, 0];

fn terminal_dim(t: Terminal) -> Dim {
    use Terminal::*;
    match t {
        Time => [0, 1, 0],
        Altitude | Pos => [1, 0, 0],
        Vel | VelRel => [1, -1, 0],
        // kg/m³ is kg·km⁻³ up to a factor, which a unit's name does not carry.
        Density => [-3, 0, 1],
        ArgLat | Lit | UnitR | UnitT | UnitN | Sun => NONE,
    }
}

fn sub(a: Dim, b: Dim) -> Dim {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn add(a: Dim, b: Dim) -> Dim {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

/// The unit of `n` when it has no constant of unknown unit in it.
fn dim(n: &Node) -> Option<Dim> {
    match n {
        Node::Term(t) => Some(terminal_dim(*t)),
        Node::Const(_) => Some(NONE),
        Node::Param(_) => None,
        Node::Unary(op, a) => match op {
            Op1::Neg => dim(a),
            Op1::Pow(k) => dim(a).map(|d| d.map(|x| x * k)),
            Op1::Sqrt => {
                dim(a).and_then(|d| d.iter().all(|x| x % 2 == 0).then(|| d.map(|x| x / 2)))
            }
            Op1::Norm => dim(a),
            Op1::Sin | Op1::Cos | Op1::Exp | Op1::Step => Some(NONE),
        },
        Node::Binary(op, a, b) => match op {
            Op2::Add | Op2::Sub => dim(a).or_else(|| dim(b)),
            Op2::Mul | Op2::Dot | Op2::Cross => Some(add(dim(a)?, dim(b)?)),
            Op2::Div => Some(sub(dim(a)?, dim(b)?)),
        },
    }
}

/// Walks `n`, which must have unit `want` when given, recording each constant's unit.
fn walk(n: &Node, want: Option<Dim>, phase: bool, out: &mut Vec<Option<(Dim, bool)>>) {
    let mut record = |i: usize, d: Dim, is_phase: bool| {
        if out.len() <= i {
            out.resize(i + 1, None);
        }
        out[i].get_or_insert((d, is_phase));
    };
    match n {
        Node::Param(i) => {
            if let Some(d) = want {
                record(*i, d, phase);
            }
        }
        Node::Term(_) | Node::Const(_) => {}
        Node::Unary(op, a) => match op {
            Op1::Sin | Op1::Cos => walk(a, Some(NONE), true, out),
            Op1::Exp | Op1::Step => walk(a, Some(NONE), false, out),
            Op1::Neg | Op1::Norm => walk(a, want, phase, out),
            Op1::Pow(k) => {
                let inner =
                    want.and_then(|d| d.iter().all(|x| x % k == 0).then(|| d.map(|x| x / k)));
                walk(a, inner, false, out)
            }
            Op1::Sqrt => walk(a, want.map(|d| d.map(|x| 2 * x)), false, out),
        },
        Node::Binary(op, a, b) => match op {
            // Both sides of a sum have each other's unit. A known side wins over the
            // unit asked from outside, which bare numbers make unreliable: in
            // `step((t - k0) / 60)` the 60 is 60 s, so k0 is a time.
            Op2::Add | Op2::Sub => {
                let w = dim(a).or_else(|| dim(b)).or(want);
                walk(a, w, phase, out);
                walk(b, w, phase, out);
            }
            Op2::Mul => {
                walk(a, want.zip(dim(b)).map(|(w, d)| sub(w, d)), false, out);
                walk(b, want.zip(dim(a)).map(|(w, d)| sub(w, d)), false, out);
            }
            Op2::Div => {
                walk(a, want.zip(dim(b)).map(|(w, d)| add(w, d)), false, out);
                walk(b, want.zip(dim(a)).map(|(w, d)| sub(d, w)), false, out);
            }
            Op2::Dot | Op2::Cross => {
                walk(a, None, false, out);
                walk(b, None, false, out);
            }
        },
    }
}

/// The name of a unit: `s`, `km`, `km/s`, `kg/m³`, `1/s`, `rad` for a phase, `1` for a
/// pure number, or powers spelled out.
fn name(d: Dim, phase: bool) -> String {
    match (d, phase) {
        (NONE, true) => "rad".into(),
        (NONE, false) => "1".into(),
        ([0, 1, 0], _) => "s".into(),
        ([0, -1, 0], _) => "1/s".into(),
        ([1, 0, 0], _) => "km".into(),
        ([-1, 0, 0], _) => "1/km".into(),
        ([1, -1, 0], _) => "km/s".into(),
        ([-3, 0, 1], _) => "kg/m³".into(),
        _ => {
            let parts: Vec<String> = ["km", "s", "kg"]
                .iter()
                .zip(d)
                .filter(|(_, p)| *p != 0)
                .map(|(u, p)| {
                    if p == 1 {
                        u.to_string()
                    } else {
                        format!("{u}^{p}")
                    }
                })
                .collect();
            parts.join(" ")
        }
    }
}

/// The unit of each constant `k0`, `k1`, … the formulas use (index = constant), `None`
/// where the formulas do not pin it down.
pub fn constant_units(nodes: &[Node]) -> Vec<Option<String>> {
    let mut out = Vec::new();
    for n in nodes {
        walk(n, None, false, &mut out);
    }
    out.resize(
        nodes
            .iter()
            .map(Node::n_params)
            .max()
            .unwrap_or(0)
            .max(out.len()),
        None,
    );
    out.into_iter()
        .map(|u| u.map(|(d, phase)| name(d, phase)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;

    fn units(text: &str) -> Vec<Option<String>> {
        constant_units(&[parse(text).unwrap()])
    }

    #[test]
    fn each_constant_gets_the_unit_its_place_in_the_formula_gives_it() {
        let s = |x: &str| Some(x.to_string());
        assert_eq!(units("exp(-t / k0) * T"), vec![s("s")]);
        assert_eq!(
            units("exp(-((t - k0) / k1)^2) * rho * vrel"),
            vec![s("s"), s("s")]
        );
        assert_eq!(
            units("sin(2 * pi * t / k0 + k1) * R"),
            vec![s("s"), s("rad")]
        );
        assert_eq!(units("step((t - k0) / 60) * T"), vec![s("s")]);
        assert_eq!(units("exp(-h / k0) * vrel"), vec![s("km")]);
        assert_eq!(units("exp(k0 * t) * T"), vec![s("1/s")]);
        assert_eq!(units("exp(-norm(v) / k0) * T"), vec![s("km/s")]);
        // A constant the formula does not pin down has no unit rather than a wrong one.
        assert_eq!(units("k0 * T"), vec![None]);
        assert_eq!(units("exp(dot(r, v) * k0) * T"), vec![s("km^-2 s")]);
    }
}
