//! Strongly typed expression trees for candidate force terms, and arcwise's formula text.
//!
//! A term is a vector-valued expression of the satellite's state and time, in ECI,
//! km/s² per unit coefficient. The formula text (our own) reads like the physics:
//! `exp(-t/k0) * T` (an along-track push decaying with a time constant k0 seconds),
//! `cos(u) * R` (a once-per-revolution radial term), `rho * norm(vrel) * vrel`.
//!
//! Terminals (units): `t` s since the learned file's epoch; `r` km, `v` km/s, `vrel` km/s
//! (relative to the co-rotating atmosphere); `R`, `T`, `N` the RTN unit vectors; `h`
//! altitude km; `rho` density kg/m³ (the handbook piecewise-exponential table, a fixed
//! shape whose scale the coefficient absorbs); `u` argument of latitude rad; `sun` the
//! geocentric Sun unit vector; `lit` the fraction of the Sun's disc visible (conical
//! shadow); numbers; and nonlinear constants `k0`…`k9` (fitted, reported separately).
//! Operators: `+ - * /`, `^n` (small integer powers), `sin cos exp sqrt norm dot cross`,
//! and `step(x)` = 1 / (1 + e^(−x)), a smooth switch-on (tables in [`ops`]).

pub mod compiled;
mod context;
pub mod num;
pub mod ops;
pub mod parse;
pub mod random;
pub mod units;

pub use context::{Altitude, Context, Density, Environment, HostDensity, Terminals, HANDBOOK_ENV};
pub use ops::{Op1, Op2, Spelling, Terminal};
pub use parse::{parse, ParseError};

use num::{Num, V3};
use std::fmt;

/// Scalar or vector.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ty {
    /// A number.
    Scalar,
    /// A 3-vector.
    Vector,
}

/// A formula tree: terminals, numbers, constants and operators (see [`ops`] for the
/// vocabulary's tables).
#[derive(Clone, Debug, PartialEq)]
pub enum Node {
    /// A quantity of the state, time or environment.
    Term(Terminal),
    /// A number.
    Const(f64),
    /// `k<i>`: a nonlinear constant.
    Param(usize),
    /// An operator over one subtree.
    Unary(Op1, Box<Node>),
    /// An operator over two subtrees.
    Binary(Op2, Box<Node>, Box<Node>),
}

/// A node seen by its arity (see [`Node::shape`]).
#[derive(Clone, Copy, Debug)]
pub enum Shape<'a> {
    /// A terminal or a constant.
    Leaf,
    /// An operator over one subtree.
    Unary(&'a Node),
    /// An operator over two subtrees.
    Binary(&'a Node, &'a Node),
}

/// The vector terminals a direction swap exchanges, in the canonical order.
pub const SWAPPABLE: [Node; 6] = [
    Node::Term(Terminal::UnitR),
    Node::Term(Terminal::UnitT),
    Node::Term(Terminal::UnitN),
    Node::Term(Terminal::VelRel),
    Node::Term(Terminal::Vel),
    Node::Term(Terminal::Pos),
];

/// A type error, as a sentence.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct TypeError(pub String);

impl Node {
    /// `op a`.
    pub fn unary(op: Op1, a: Node) -> Node {
        Node::Unary(op, Box::new(a))
    }

    /// `a op c`.
    pub fn binary(op: Op2, a: Node, c: Node) -> Node {
        Node::Binary(op, Box::new(a), Box::new(c))
    }

    /// The type, or why the tree is ill-typed.
    pub fn ty(&self) -> Result<Ty, TypeError> {
        let err = |m: &str| TypeError(format!("{m} in `{self}`"));
        match self {
            Node::Term(t) => Ok(t.ty()),
            Node::Const(_) | Node::Param(_) => Ok(Ty::Scalar),
            Node::Unary(op, a) => op.ty(a.ty()?).map_err(err),
            Node::Binary(op, a, c) => op.ty(a.ty()?, c.ty()?).map_err(err),
        }
    }

    /// The node's place in a tree: a leaf, or an operator over one or two subtrees; the
    /// tree walks below all go through here.
    pub fn shape(&self) -> Shape<'_> {
        match self {
            Node::Term(_) | Node::Const(_) | Node::Param(_) => Shape::Leaf,
            Node::Unary(_, a) => Shape::Unary(a),
            Node::Binary(_, a, c) => Shape::Binary(a, c),
        }
    }

    /// Number of nodes (the complexity measure).
    pub fn complexity(&self) -> usize {
        1 + self
            .children()
            .iter()
            .map(|c| c.complexity())
            .sum::<usize>()
    }

    /// The largest `k<i>` index used, plus one (the number of constants needed).
    pub fn n_params(&self) -> usize {
        match self {
            Node::Param(i) => i + 1,
            _ => self
                .children()
                .iter()
                .map(|c| c.n_params())
                .max()
                .unwrap_or(0),
        }
    }

    /// The same tree with every `k<i>` renamed `k<i + offset>` (a tree joining a model
    /// whose constants already use `k0`…`k<offset − 1>`).
    pub fn shift_params(&self, offset: usize) -> Node {
        self.rename_params(&|i| i + offset)
    }

    /// The same tree with every `k<i>` renamed `k<f(i)>`.
    pub fn rename_params(&self, f: &dyn Fn(usize) -> usize) -> Node {
        match self {
            Node::Param(i) => Node::Param(f(*i)),
            Node::Term(_) | Node::Const(_) => self.clone(),
            Node::Unary(op, a) => Node::Unary(*op, Box::new(a.rename_params(f))),
            Node::Binary(op, a, c) => Node::Binary(
                *op,
                Box::new(a.rename_params(f)),
                Box::new(c.rename_params(f)),
            ),
        }
    }

    /// Children, for the search's tree operators.
    pub fn children(&self) -> Vec<&Node> {
        match self.shape() {
            Shape::Leaf => vec![],
            Shape::Unary(a) => vec![a],
            Shape::Binary(a, c) => vec![a, c],
        }
    }

    /// The trees one direction swap away: one vector terminal (`R`, `T`, `N`, `vrel`, `v`,
    /// `r`) replaced by another, one vector quotient (`vrel / norm(vrel)`) replaced by `R`,
    /// `T` or `N`, or one `sin` turned into `cos` or back. On near-circular orbits some of
    /// these are indistinguishable over an arc (a once-per-revolution radial term and the
    /// along-track one in quadrature change the orbit alike; `vrel` is nearly along `T`),
    /// so the learner tries them.
    ///
    /// Each variant is simplified: a swap can make a factor trivial (`norm(vrel)` →
    /// `norm(R)`, which is 1), and the report must show the simpler form it amounts to.
    pub fn direction_variants(&self) -> Vec<Node> {
        let mut out = Vec::new();
        for k in 0..self.size() {
            for pick in 0..SWAPPABLE.len() - 1 {
                let mut t = self.clone();
                let mut seen = 0;
                if t.swap_direction_at(k, pick, &mut seen) {
                    let t = t.simplify();
                    if !out.contains(&t) && t != *self && t.ty() == Ok(Ty::Vector) {
                        out.push(t);
                    }
                }
            }
        }
        out
    }

    /// Swaps the `k`-th node (pre-order) if it is a vector terminal or sin/cos; `pick`
    /// chooses among the other terminals. True when something was swapped.
    fn swap_direction_at(&mut self, k: usize, pick: usize, seen: &mut usize) -> bool {
        if *seen == k {
            *seen += 1;
            match self {
                Node::Unary(op @ (Op1::Sin | Op1::Cos), _) if pick == 0 => {
                    *op = op.sibling().unwrap_or(*op);
                }
                _ => {
                    let Some(i) = SWAPPABLE.iter().position(|n| n == self) else {
                        // A vector over a scalar (e.g. `vrel / norm(vrel)`) may be a
                        // unit direction in disguise: offer R, T and N in its place.
                        if pick < 3
                            && matches!(self, Node::Binary(Op2::Div, ..))
                            && matches!(self.ty(), Ok(Ty::Vector))
                        {
                            *self = SWAPPABLE[pick].clone();
                            return true;
                        }
                        return false;
                    };
                    let others: Vec<&Node> = SWAPPABLE.iter().filter(|n| *n != self).collect();
                    debug_assert_eq!(others.len(), SWAPPABLE.len() - 1, "{i}");
                    *self = others[pick].clone();
                }
            }
            return true;
        }
        *seen += 1;
        self.children_mut()
            .into_iter()
            .any(|c| c.swap_direction_at(k, pick, seen))
    }

    /// The number of nodes.
    pub fn size(&self) -> usize {
        1 + self.children().iter().map(|c| c.size()).sum::<usize>()
    }

    /// Mutable children (as in [`Node::shape`]).
    pub fn children_mut(&mut self) -> Vec<&mut Node> {
        match self {
            Node::Term(_) | Node::Const(_) | Node::Param(_) => vec![],
            Node::Unary(_, a) => vec![a],
            Node::Binary(_, a, c) => vec![a, c],
        }
    }

    /// The number, if this is one.
    pub fn as_const(&self) -> Option<f64> {
        if let Node::Const(c) = self {
            Some(*c)
        } else {
            None
        }
    }

    /// Simplified copy: each operator's rules ([`Op1::simplified`], [`Op2::simplified`])
    /// applied bottom-up.
    pub fn simplify(&self) -> Node {
        match self {
            Node::Term(_) | Node::Const(_) | Node::Param(_) => self.clone(),
            Node::Unary(op, a) => op.simplified(a.simplify()),
            Node::Binary(op, a, c) => op.simplified(a.simplify(), c.simplify()),
        }
    }

    /// `b` when this node is `-b`, a negative number `-|b|` or `-|c| * x` (then `b` = `|c| * x`).
    pub(crate) fn negated(&self) -> Option<Node> {
        match self {
            Node::Unary(Op1::Neg, b) => Some((**b).clone()),
            Node::Const(c) if *c < 0.0 => Some(Node::Const(-c)),
            Node::Binary(Op2::Mul, a, x) if matches!(**a, Node::Const(c) if c < 0.0) => a
                .negated()
                .map(|a| Node::binary(Op2::Mul, a, (**x).clone())),
            _ => None,
        }
    }

    /// Evaluates at one point (`params` are the values of `k0`, `k1`, …).
    pub fn eval<N: Num>(&self, p: &Terminals<N>, params: &[f64]) -> Value<N> {
        match self {
            Node::Term(t) => t.value(p),
            Node::Const(c) => Value::S(N::cst(*c)),
            Node::Param(i) => Value::S(N::cst(params.get(*i).copied().unwrap_or(0.0))),
            Node::Unary(op, a) => op.apply(&a.eval(p, params)),
            Node::Binary(op, a, c) => op.apply(&a.eval(p, params), &c.eval(p, params)),
        }
    }
}

/// The value of an expression at a point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Value<N> {
    /// Scalar.
    S(N),
    /// Vector.
    V(V3<N>),
}

impl<N: Num> Value<N> {
    /// The vector, or zero for a scalar (a term must be a vector; checked at parse).
    pub fn vector(self) -> V3<N> {
        match self {
            Value::V(v) => v,
            Value::S(_) => [N::cst(f64::NAN); 3],
        }
    }
}

/// Binding strength for printing.
fn prec(n: &Node) -> u8 {
    match n {
        Node::Binary(op, ..) => match op.spelling() {
            Spelling::Infix(_, strength) => strength,
            Spelling::Call(_) => 5,
        },
        Node::Unary(op, _) => op.precedence(),
        Node::Const(c) if *c < 0.0 => 3,
        Node::Const(c) if *c == std::f64::consts::TAU => 2,
        Node::Term(_) | Node::Const(_) | Node::Param(_) => 5,
    }
}

fn fmt_num(c: f64) -> String {
    // Shortest round-trip text; exponent form for very small or large magnitudes.
    let plain = format!("{c}");
    let exp = format!("{c:e}");
    if exp.len() < plain.len() {
        exp
    } else {
        plain
    }
}

impl fmt::Display for Node {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let wrap = |n: &Node, min: u8, f: &mut fmt::Formatter<'_>| -> fmt::Result {
            if prec(n) < min {
                write!(f, "({n})")
            } else {
                write!(f, "{n}")
            }
        };
        match self {
            Node::Term(t) => f.write_str(t.name()),
            Node::Const(c) if *c == std::f64::consts::PI => f.write_str("pi"),
            Node::Const(c) if *c == std::f64::consts::TAU => f.write_str("2 * pi"),
            Node::Const(c) => f.write_str(&fmt_num(*c)),
            Node::Param(i) => write!(f, "k{i}"),
            // `a + -b` reads `a - b`.
            Node::Binary(Op2::Add, a, c) if c.negated().is_some() => {
                wrap(a, 1, f)?;
                f.write_str(" - ")?;
                match c.negated() {
                    Some(b) => wrap(&b, 2, f),
                    None => wrap(c, 2, f),
                }
            }
            Node::Binary(op, a, c) => match op.spelling() {
                // Left-associative: the right operand binds one step tighter.
                Spelling::Infix(symbol, strength) => {
                    wrap(a, strength, f)?;
                    write!(f, " {symbol} ")?;
                    wrap(c, strength + 1, f)
                }
                Spelling::Call(name) => write!(f, "{name}({a}, {c})"),
            },
            Node::Unary(op, a) => match (op, op.call_name()) {
                (_, Some(name)) => write!(f, "{name}({a})"),
                (Op1::Pow(n), None) => {
                    wrap(a, 5, f)?;
                    if *n < 0 {
                        write!(f, "^({n})")
                    } else {
                        write!(f, "^{n}")
                    }
                }
                (_, None) => {
                    f.write_str("-")?;
                    wrap(a, 4, f)
                }
            },
        }
    }
}

#[cfg(test)]
mod tests;
