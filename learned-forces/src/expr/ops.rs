//! The formula language's vocabulary, one table each: the terminals ([`Terminal`]), the
//! operators over one operand ([`Op1`]) and over two ([`Op2`]).
//!
//! Everything about an entry is a method here: its text, its typing, its value, its
//! simplification, how it prints, its code in a generated plugin and how the search
//! mutates it. Every `match` lists every entry (no wildcard), so a new entry is refused
//! by the compiler until each method says what it does; the tree ([`Node`]), the parser,
//! the compiled evaluator and the code generator only dispatch to these tables.

use super::compiled::Needs;
use super::num::{add3, cross3, dot3, logistic, norm3, scale3, sub3, Num};
use super::{Node, Terminals, Ty, Value};

/// A quantity of the state, time or environment (units in the module above).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Terminal {
    /// `t`, s.
    Time,
    /// `h`, km.
    Altitude,
    /// `rho`, kg/m³.
    Density,
    /// `u`, rad.
    ArgLat,
    /// `lit`, 0–1.
    Lit,
    /// `r`, km.
    Pos,
    /// `v`, km/s.
    Vel,
    /// `vrel`, km/s.
    VelRel,
    /// `R`.
    UnitR,
    /// `T`.
    UnitT,
    /// `N`.
    UnitN,
    /// `sun`.
    Sun,
}

impl Terminal {
    /// Every terminal, in the order the parser's error message lists them.
    pub const ALL: [Terminal; 12] = [
        Terminal::Time,
        Terminal::Altitude,
        Terminal::Density,
        Terminal::ArgLat,
        Terminal::Lit,
        Terminal::Pos,
        Terminal::Vel,
        Terminal::VelRel,
        Terminal::UnitR,
        Terminal::UnitT,
        Terminal::UnitN,
        Terminal::Sun,
    ];

    /// Its name in formulas.
    pub fn name(self) -> &'static str {
        use Terminal::*;
        match self {
            Time => "t",
            Altitude => "h",
            Density => "rho",
            ArgLat => "u",
            Lit => "lit",
            Pos => "r",
            Vel => "v",
            VelRel => "vrel",
            UnitR => "R",
            UnitT => "T",
            UnitN => "N",
            Sun => "sun",
        }
    }

    /// The terminal a formula name stands for.
    pub fn from_name(name: &str) -> Option<Terminal> {
        Terminal::ALL.into_iter().find(|t| t.name() == name)
    }

    /// Scalar or vector.
    pub fn ty(self) -> Ty {
        use Terminal::*;
        match self {
            Time | Altitude | Density | ArgLat | Lit => Ty::Scalar,
            Pos | Vel | VelRel | UnitR | UnitT | UnitN | Sun => Ty::Vector,
        }
    }

    /// A unit vector by construction (its norm simplifies to 1).
    pub fn is_unit(self) -> bool {
        use Terminal::*;
        match self {
            UnitR | UnitT | UnitN | Sun => true,
            Time | Altitude | Density | ArgLat | Lit | Pos | Vel | VelRel => false,
        }
    }

    /// One of R, T, N: mutually orthogonal by construction.
    pub fn is_rtn(self) -> bool {
        use Terminal::*;
        match self {
            UnitR | UnitT | UnitN => true,
            Time | Altitude | Density | ArgLat | Lit | Pos | Vel | VelRel | Sun => false,
        }
    }

    /// Its value among the terminals `p`.
    #[inline(always)]
    pub fn value<N: Num>(self, p: &Terminals<N>) -> Value<N> {
        use Terminal::*;
        use Value::{S, V};
        match self {
            Time => S(N::cst(p.t)),
            Altitude => S(p.h),
            Density => S(p.rho),
            ArgLat => S(p.u),
            Lit => S(N::cst(p.lit)),
            Pos => V(p.r),
            Vel => V(p.v),
            VelRel => V(p.vrel),
            UnitR => V(p.rh),
            UnitT => V(p.th),
            UnitN => V(p.nh),
            Sun => V([N::cst(p.sun[0]), N::cst(p.sun[1]), N::cst(p.sun[2])]),
        }
    }

    /// Its expression in a generated plugin (the runtime's `P` is `p`).
    pub fn code(self) -> &'static str {
        use Terminal::*;
        match self {
            Time => "N::cst(p.t)",
            Altitude => "p.h",
            Density => "p.rho",
            ArgLat => "p.u",
            Lit => "N::cst(p.lit)",
            Pos => "p.r",
            Vel => "p.v",
            VelRel => "p.vrel",
            UnitR => "p.rh",
            UnitT => "p.th",
            UnitN => "p.nh",
            Sun => "[N::cst(p.sun[0]), N::cst(p.sun[1]), N::cst(p.sun[2])]",
        }
    }

    /// Marks in `n` what computing it takes beyond the position, velocity and time.
    pub fn needs(self, n: &mut Needs) {
        use Terminal::*;
        match self {
            UnitR | UnitT | UnitN => n.rtn = true,
            VelRel => n.vrel = true,
            Altitude => n.altitude = true,
            Density => {
                n.altitude = true;
                n.density = true;
            }
            ArgLat => {
                n.arglat = true;
                n.rtn = true;
            }
            Sun => n.sun = true,
            Lit => n.lit = true,
            Time | Pos | Vel => {}
        }
    }

    /// The terminals a point mutation may put in its place (empty: left alone).
    pub fn mutation_group(self) -> &'static [Terminal] {
        use Terminal::*;
        const DIRECTIONS: [Terminal; 4] = [UnitR, UnitT, UnitN, Sun];
        const SCALARS: [Terminal; 5] = [Time, ArgLat, Lit, Altitude, Density];
        match self {
            UnitR | UnitT | UnitN | VelRel | Sun => &DIRECTIONS,
            Time | ArgLat | Lit | Altitude | Density => &SCALARS,
            Pos | Vel => &[],
        }
    }
}

/// The largest |n| of a power `x^n` (folded powers included).
pub const MAX_POWER: i32 = 16;

/// An operator over one operand.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Op1 {
    /// −a (scalar or vector).
    Neg,
    /// sin a.
    Sin,
    /// cos a.
    Cos,
    /// exp a.
    Exp,
    /// √a.
    Sqrt,
    /// |a| of a vector.
    Norm,
    /// The smooth step 1 / (1 + e^(−a)): 0 well before a = 0, 1 well after (a switch-on
    /// at an epoch, `step((t - k0) / k1)`, with a fitted width).
    Step,
    /// a^n, n in −4…4, n ≠ 0.
    Pow(i32),
}

impl Op1 {
    /// The operators written as a call, `name(a)`.
    pub const CALLS: [Op1; 6] = [
        Op1::Sin,
        Op1::Cos,
        Op1::Exp,
        Op1::Sqrt,
        Op1::Norm,
        Op1::Step,
    ];

    /// Its name when written as a call (`None`: prefix `-` or postfix `^n`).
    pub fn call_name(self) -> Option<&'static str> {
        use Op1::*;
        match self {
            Sin => Some("sin"),
            Cos => Some("cos"),
            Exp => Some("exp"),
            Sqrt => Some("sqrt"),
            Norm => Some("norm"),
            Step => Some("step"),
            Neg | Pow(_) => None,
        }
    }

    /// The result's type for an operand of type `a`, or why it is ill-typed.
    pub fn ty(self, a: Ty) -> Result<Ty, &'static str> {
        use Op1::*;
        match (self, a) {
            (Neg, a) => Ok(a),
            (Sin | Cos | Exp | Sqrt | Step | Pow(_), Ty::Scalar) => Ok(Ty::Scalar),
            (Sin | Cos | Exp | Sqrt | Step | Pow(_), Ty::Vector) => {
                Err("a function of a vector that needs a scalar")
            }
            (Norm, Ty::Vector) => Ok(Ty::Scalar),
            (Norm, Ty::Scalar) => Err("norm of a scalar"),
        }
    }

    /// Its value (NaN for an ill-typed operand, which the parser never lets through).
    #[inline(always)]
    pub fn apply<N: Num>(self, a: &Value<N>) -> Value<N> {
        use Op1::*;
        use Value::{S, V};
        let nan = S(N::cst(f64::NAN));
        match (self, a) {
            (Neg, S(x)) => S(-*x),
            (Neg, V(x)) => V([-x[0], -x[1], -x[2]]),
            (Sin, S(x)) => S(x.sin()),
            (Cos, S(x)) => S(x.cos()),
            (Exp, S(x)) => S(x.exp()),
            (Sqrt, S(x)) => S(x.sqrt()),
            (Pow(n), S(x)) => S(x.powi(n)),
            (Norm, V(x)) => S(norm3(*x)),
            (Step, S(x)) => S(logistic(*x)),
            (Sin | Cos | Exp | Sqrt | Step | Pow(_), V(_)) | (Norm, S(_)) => nan,
        }
    }

    /// The simplified `op a`, `a` already simplified: constants folded, −(−x) = x,
    /// x^1 = x, (x^a)^b = x^(ab) (up to the language's largest power), and the norm of a
    /// unit vector is 1.
    pub fn simplified(self, a: Node) -> Node {
        use Op1::*;
        match (self, a) {
            (Pow(1), x) => x,
            (Pow(b), Node::Unary(Pow(a), x)) if (a * b).abs() <= MAX_POWER => {
                Pow(a * b).simplified(*x)
            }
            (Neg, Node::Unary(Neg, inner)) => *inner,
            (Norm, Node::Term(t)) if t.is_unit() => Node::Const(1.0),
            (op @ (Neg | Sin | Cos | Exp | Sqrt | Step | Pow(_)), Node::Const(x)) => {
                match op.apply(&Value::S(x)) {
                    Value::S(y) => Node::Const(y),
                    Value::V(_) => Node::Unary(op, Box::new(Node::Const(x))),
                }
            }
            (op, x) => Node::Unary(op, Box::new(x)),
        }
    }

    /// Binding strength when printed (see [`Node`]'s `Display`).
    pub fn precedence(self) -> u8 {
        use Op1::*;
        match self {
            Neg => 3,
            Pow(_) => 4,
            Sin | Cos | Exp | Sqrt | Norm | Step => 5,
        }
    }

    /// Its code in a generated plugin, operand `a` of type `ty`.
    pub fn code(self, ty: Ty, a: &str) -> String {
        use Op1::*;
        match (self, ty) {
            (Neg, Ty::Scalar) => format!("-{a}"),
            (Neg, Ty::Vector) => format!("neg3({a})"),
            (Sin, _) => format!("{a}.sin()"),
            (Cos, _) => format!("{a}.cos()"),
            (Exp, _) => format!("{a}.exp()"),
            (Sqrt, _) => format!("{a}.sqrt()"),
            (Pow(n), _) => format!("{a}.powi({n})"),
            (Norm, _) => format!("norm3({a})"),
            (Step, _) => format!("logistic({a})"),
        }
    }

    /// What a point mutation turns it into (`None`: left alone).
    pub fn sibling(self) -> Option<Op1> {
        use Op1::*;
        match self {
            Sin => Some(Cos),
            Cos => Some(Sin),
            Pow(k) => Some(Pow(if k == 2 { 3 } else { 2 })),
            Neg | Exp | Sqrt | Norm | Step => None,
        }
    }
}

/// How a binary operator is written.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Spelling {
    /// `a s b`, binding with this strength (left-associative).
    Infix(char, u8),
    /// `name(a, b)`.
    Call(&'static str),
}

/// An operator over two operands.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Op2 {
    /// a + b (same types).
    Add,
    /// a − b (same types).
    Sub,
    /// a × b: scalar·scalar, scalar·vector, vector·scalar.
    Mul,
    /// a ÷ b, b scalar.
    Div,
    /// a · b of vectors.
    Dot,
    /// a × b of vectors.
    Cross,
}

impl Op2 {
    /// Every binary operator.
    pub const ALL: [Op2; 6] = [Op2::Add, Op2::Sub, Op2::Mul, Op2::Div, Op2::Dot, Op2::Cross];

    /// How it is written.
    pub fn spelling(self) -> Spelling {
        use Op2::*;
        match self {
            Add => Spelling::Infix('+', 1),
            Sub => Spelling::Infix('-', 1),
            Mul => Spelling::Infix('*', 2),
            Div => Spelling::Infix('/', 2),
            Dot => Spelling::Call("dot"),
            Cross => Spelling::Call("cross"),
        }
    }

    /// The infix operator `symbol` binding with `strength`, if there is one.
    pub fn infix(symbol: char, strength: u8) -> Option<Op2> {
        Op2::ALL
            .into_iter()
            .find(|op| op.spelling() == Spelling::Infix(symbol, strength))
    }

    /// The operator called `name(a, b)`, if there is one.
    pub fn call(name: &str) -> Option<Op2> {
        Op2::ALL
            .into_iter()
            .find(|op| matches!(op.spelling(), Spelling::Call(n) if n == name))
    }

    /// The result's type for operands of types `a` and `b`, or why it is ill-typed.
    pub fn ty(self, a: Ty, b: Ty) -> Result<Ty, &'static str> {
        use Op2::*;
        use Ty::{Scalar, Vector};
        match (self, a, b) {
            (Add | Sub, a, b) if a == b => Ok(a),
            (Add | Sub, _, _) => Err("adding a scalar to a vector"),
            (Mul, Vector, Vector) => Err("vector × vector (use dot or cross)"),
            (Mul, Scalar, Scalar) => Ok(Scalar),
            (Mul, _, _) => Ok(Vector),
            (Div, _, Vector) => Err("dividing by a vector"),
            (Div, a, Scalar) => Ok(a),
            (Dot, Vector, Vector) => Ok(Scalar),
            (Dot, _, _) => Err("dot of a scalar"),
            (Cross, Vector, Vector) => Ok(Vector),
            (Cross, _, _) => Err("cross of a scalar"),
        }
    }

    /// Its value (NaN for ill-typed operands, which the parser never lets through).
    #[inline(always)]
    pub fn apply<N: Num>(self, a: &Value<N>, b: &Value<N>) -> Value<N> {
        use Op2::*;
        use Value::{S, V};
        match (self, a, b) {
            (Add, S(x), S(y)) => S(*x + *y),
            (Add, V(x), V(y)) => V(add3(*x, *y)),
            (Sub, S(x), S(y)) => S(*x - *y),
            (Sub, V(x), V(y)) => V(sub3(*x, *y)),
            (Mul, S(x), S(y)) => S(*x * *y),
            (Mul, S(x), V(y)) | (Mul, V(y), S(x)) => V(scale3(*x, *y)),
            (Div, S(x), S(y)) => S(*x / *y),
            (Div, V(x), S(y)) => V(scale3(N::cst(1.0) / *y, *x)),
            (Dot, V(x), V(y)) => S(dot3(*x, *y)),
            (Cross, V(x), V(y)) => V(cross3(*x, *y)),
            (Add | Sub, S(_), V(_))
            | (Add | Sub, V(_), S(_))
            | (Mul, V(_), V(_))
            | (Div, _, V(_))
            | (Dot | Cross, S(_), _)
            | (Dot | Cross, V(_), S(_)) => S(N::cst(f64::NAN)),
        }
    }

    /// The simplified `a op c`, both already simplified: constants folded, x + 0, x − 0,
    /// x·1, 0·x (scalars), x/1, x − x (scalars) and the dot products of R, T, N and sun.
    pub fn simplified(self, a: Node, c: Node) -> Node {
        use Node::Const;
        use Op2::*;
        let scalar = |n: &Node| n.ty() == Ok(Ty::Scalar);
        match (self, a.as_const(), c.as_const()) {
            (Add, Some(x), Some(y)) => Const(x + y),
            (Add, Some(0.0), _) => c,
            (Add, _, Some(0.0)) => a,
            // `a + -b` is `a - b`.
            (Add, _, _) if c.negated().is_some() => match c.negated() {
                Some(b) => Node::Binary(Sub, Box::new(a), Box::new(b)),
                None => Node::Binary(Add, Box::new(a), Box::new(c)),
            },
            (Sub, Some(x), Some(y)) => Const(x - y),
            (Sub, _, Some(0.0)) => a,
            (Sub, _, _) if a == c && scalar(&a) => Const(0.0),
            (Mul, Some(x), Some(y)) => Const(x * y),
            (Mul, Some(1.0), _) => c,
            (Mul, _, Some(1.0)) => a,
            (Mul, Some(0.0), _) if scalar(&c) => Const(0.0),
            (Mul, _, Some(0.0)) if scalar(&a) => Const(0.0),
            (Div, Some(x), Some(y)) if y != 0.0 => Const(x / y),
            (Div, _, Some(1.0)) => a,
            (Dot, _, _) => match (&a, &c) {
                (Node::Term(x), Node::Term(y)) if x == y && x.is_unit() => Const(1.0),
                (Node::Term(x), Node::Term(y)) if x.is_rtn() && y.is_rtn() => Const(0.0),
                _ => Node::Binary(Dot, Box::new(a), Box::new(c)),
            },
            (Add | Sub | Mul | Div | Cross, _, _) => Node::Binary(self, Box::new(a), Box::new(c)),
        }
    }

    /// Its code in a generated plugin, operands `a`, `b` of types `ta`, `tb`.
    pub fn code(self, ta: Ty, tb: Ty, a: &str, b: &str) -> String {
        use Op2::*;
        use Ty::{Scalar, Vector};
        match (self, ta, tb) {
            (Add, Scalar, _) => format!("{a} + {b}"),
            (Add, Vector, _) => format!("add3({a}, {b})"),
            (Sub, Scalar, _) => format!("{a} - {b}"),
            (Sub, Vector, _) => format!("sub3({a}, {b})"),
            (Mul, Scalar, Scalar) => format!("{a} * {b}"),
            (Mul, Scalar, Vector) => format!("scale3({a}, {b})"),
            (Mul, Vector, _) => format!("scale3({b}, {a})"),
            (Div, Scalar, _) => format!("{a} / {b}"),
            (Div, Vector, _) => format!("scale3(N::cst(1.0) / {b}, {a})"),
            (Dot, _, _) => format!("dot3({a}, {b})"),
            (Cross, _, _) => format!("cross3({a}, {b})"),
        }
    }

    /// What a point mutation turns it into (`None`: left alone).
    pub fn sibling(self) -> Option<Op2> {
        use Op2::*;
        match self {
            Add => Some(Sub),
            Sub => Some(Add),
            Mul | Div | Dot | Cross => None,
        }
    }
}
