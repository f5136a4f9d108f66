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
//! Operators: `+ - * /`, `^n` (small integer powers), `sin cos exp sqrt norm dot cross`.

pub mod compiled;
pub mod num;
pub mod parse;
pub mod random;

pub use parse::{parse, ParseError};

use num::{add3, cross3, dot3, norm3, scale3, sub3, Dual, Num, V3};
use propagator::solar_system::CenturyClock;
use propagator::StateVector;
use std::fmt;

/// Scalar or vector.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ty {
    /// A number.
    Scalar,
    /// A 3-vector.
    Vector,
}

/// Terminals and operators.
#[derive(Clone, Debug, PartialEq)]
pub enum Node {
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
    /// A number.
    Const(f64),
    /// `k<i>`: a nonlinear constant.
    Param(usize),
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
    SunDir,
    /// a + b.
    Add(Box<Node>, Box<Node>),
    /// a − b.
    Sub(Box<Node>, Box<Node>),
    /// a × b (scalar·scalar, scalar·vector, vector·scalar).
    Mul(Box<Node>, Box<Node>),
    /// a ÷ b (b scalar).
    Div(Box<Node>, Box<Node>),
    /// −a.
    Neg(Box<Node>),
    /// sin a.
    Sin(Box<Node>),
    /// cos a.
    Cos(Box<Node>),
    /// exp a.
    Exp(Box<Node>),
    /// sqrt a.
    Sqrt(Box<Node>),
    /// |a|.
    Norm(Box<Node>),
    /// a · b.
    Dot(Box<Node>, Box<Node>),
    /// a × b.
    Cross(Box<Node>, Box<Node>),
    /// a^n, n in −4…4.
    Pow(Box<Node>, i32),
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
    Node::UnitR,
    Node::UnitT,
    Node::UnitN,
    Node::VelRel,
    Node::Vel,
    Node::Pos,
];

/// A type error, as a sentence.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct TypeError(pub String);

fn b(n: Node) -> Box<Node> {
    Box::new(n)
}

impl Node {
    /// The type, or why the tree is ill-typed.
    pub fn ty(&self) -> Result<Ty, TypeError> {
        use Node::*;
        use Ty::*;
        let err = |m: &str| Err(TypeError(format!("{m} in `{self}`")));
        match self {
            Time | Altitude | Density | ArgLat | Lit | Const(_) | Param(_) => Ok(Scalar),
            Pos | Vel | VelRel | UnitR | UnitT | UnitN | SunDir => Ok(Vector),
            Add(a, c) | Sub(a, c) => {
                let (x, y) = (a.ty()?, c.ty()?);
                if x == y {
                    Ok(x)
                } else {
                    err("adding a scalar to a vector")
                }
            }
            Mul(a, c) => match (a.ty()?, c.ty()?) {
                (Vector, Vector) => err("vector × vector (use dot or cross)"),
                (Scalar, Scalar) => Ok(Scalar),
                _ => Ok(Vector),
            },
            Div(a, c) => match c.ty()? {
                Vector => err("dividing by a vector"),
                Scalar => a.ty(),
            },
            Neg(a) => a.ty(),
            Sin(a) | Cos(a) | Exp(a) | Sqrt(a) | Pow(a, _) => match a.ty()? {
                Scalar => Ok(Scalar),
                Vector => err("a function of a vector that needs a scalar"),
            },
            Norm(a) => match a.ty()? {
                Vector => Ok(Scalar),
                Scalar => err("norm of a scalar"),
            },
            Dot(a, c) => match (a.ty()?, c.ty()?) {
                (Vector, Vector) => Ok(Scalar),
                _ => err("dot of a scalar"),
            },
            Cross(a, c) => match (a.ty()?, c.ty()?) {
                (Vector, Vector) => Ok(Vector),
                _ => err("cross of a scalar"),
            },
        }
    }

    /// The node's place in a tree: a leaf, or an operator over one or two subtrees. Every
    /// variant is listed (no wildcard), so a new operator must say which it is; the
    /// tree walks below all go through here.
    pub fn shape(&self) -> Shape<'_> {
        use Node::*;
        match self {
            Time | Altitude | Density | ArgLat | Lit | Const(_) | Param(_) | Pos | Vel | VelRel
            | UnitR | UnitT | UnitN | SunDir => Shape::Leaf,
            Neg(a) | Sin(a) | Cos(a) | Exp(a) | Sqrt(a) | Norm(a) | Pow(a, _) => Shape::Unary(a),
            Add(a, c) | Sub(a, c) | Mul(a, c) | Div(a, c) | Dot(a, c) | Cross(a, c) => {
                Shape::Binary(a, c)
            }
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
    /// `T` or `N`, or one
    /// `sin` turned into `cos` or back. On near-circular
    /// orbits some of these are indistinguishable over an arc (a once-per-revolution
    /// radial term and the along-track one in quadrature change the orbit alike; `vrel`
    /// is nearly along `T`), so the learner tries them.
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
        use Node::*;
        if *seen == k {
            *seen += 1;
            match self {
                Sin(a) if pick == 0 => *self = Cos(a.clone()),
                Cos(a) if pick == 0 => *self = Sin(a.clone()),
                _ => {
                    let Some(i) = SWAPPABLE.iter().position(|n| n == self) else {
                        // A vector over a scalar (e.g. `vrel / norm(vrel)`) may be a
                        // unit direction in disguise: offer R, T and N in its place.
                        if pick < 3
                            && matches!(self, Div(..))
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

    /// Mutable children (every variant listed, as in [`Node::shape`]).
    pub fn children_mut(&mut self) -> Vec<&mut Node> {
        use Node::*;
        match self {
            Time | Altitude | Density | ArgLat | Lit | Const(_) | Param(_) | Pos | Vel | VelRel
            | UnitR | UnitT | UnitN | SunDir => vec![],
            Neg(a) | Sin(a) | Cos(a) | Exp(a) | Sqrt(a) | Norm(a) | Pow(a, _) => vec![a],
            Add(a, c) | Sub(a, c) | Mul(a, c) | Div(a, c) | Dot(a, c) | Cross(a, c) => vec![a, c],
        }
    }

    fn is_const(&self) -> Option<f64> {
        if let Node::Const(c) = self {
            Some(*c)
        } else {
            None
        }
    }

    /// Simplified copy: constant folding, x·1, x+0, 0·x (scalars), −(−x), x−x.
    pub fn simplify(&self) -> Node {
        use Node::*;
        let s = |n: &Node| n.simplify();
        match self {
            Add(a, c) => {
                let (a, c) = (s(a), s(c));
                match (a.is_const(), c.is_const()) {
                    (Some(x), Some(y)) => Const(x + y),
                    (Some(0.0), _) => c,
                    (_, Some(0.0)) => a,
                    _ => Add(b(a), b(c)),
                }
            }
            Sub(a, c) => {
                let (a, c) = (s(a), s(c));
                match (a.is_const(), c.is_const()) {
                    (Some(x), Some(y)) => Const(x - y),
                    (_, Some(0.0)) => a,
                    _ if a == c && a.ty() == Ok(Ty::Scalar) => Const(0.0),
                    _ => Sub(b(a), b(c)),
                }
            }
            Mul(a, c) => {
                let (a, c) = (s(a), s(c));
                match (a.is_const(), c.is_const()) {
                    (Some(x), Some(y)) => Const(x * y),
                    (Some(1.0), _) => c,
                    (_, Some(1.0)) => a,
                    (Some(0.0), _) if c.ty() == Ok(Ty::Scalar) => Const(0.0),
                    (_, Some(0.0)) if a.ty() == Ok(Ty::Scalar) => Const(0.0),
                    _ => Mul(b(a), b(c)),
                }
            }
            Div(a, c) => {
                let (a, c) = (s(a), s(c));
                match (a.is_const(), c.is_const()) {
                    (Some(x), Some(y)) if y != 0.0 => Const(x / y),
                    (_, Some(1.0)) => a,
                    _ => Div(b(a), b(c)),
                }
            }
            Neg(a) => match s(a) {
                Const(x) => Const(-x),
                Neg(inner) => *inner,
                other => Neg(b(other)),
            },
            Sin(a) => fold1(s(a), f64::sin, Sin),
            Cos(a) => fold1(s(a), f64::cos, Cos),
            Exp(a) => fold1(s(a), f64::exp, Exp),
            Sqrt(a) => fold1(s(a), f64::sqrt, Sqrt),
            // R, T, N and sun are unit vectors, and R, T, N orthogonal, by construction.
            Norm(a) => match s(a) {
                UnitR | UnitT | UnitN | SunDir => Const(1.0),
                x => Norm(b(x)),
            },
            Dot(a, c) => match (s(a), s(c)) {
                (x, y) if x == y && matches!(x, UnitR | UnitT | UnitN | SunDir) => Const(1.0),
                (x, y)
                    if matches!(x, UnitR | UnitT | UnitN) && matches!(y, UnitR | UnitT | UnitN) =>
                {
                    Const(0.0)
                }
                (x, y) => Dot(b(x), b(y)),
            },
            Cross(a, c) => Cross(b(s(a)), b(s(c))),
            Pow(a, n) => match (s(a), *n) {
                (x, 1) => x,
                (Const(x), n) => Const(x.powi(n)),
                (x, n) => Pow(b(x), n),
            },
            other => other.clone(),
        }
    }

    /// Evaluates at one point (`params` are the values of `k0`, `k1`, …).
    pub fn eval<N: Num>(&self, p: &Terminals<N>, params: &[f64]) -> Value<N> {
        use Node::*;
        use Value::{S, V};
        let e = |n: &Node| n.eval(p, params);
        match self {
            Time => S(N::cst(p.t)),
            Altitude => S(p.h),
            Density => S(p.rho),
            ArgLat => S(p.u),
            Lit => S(N::cst(p.lit)),
            Const(c) => S(N::cst(*c)),
            Param(i) => S(N::cst(params.get(*i).copied().unwrap_or(0.0))),
            Pos => V(p.r),
            Vel => V(p.v),
            VelRel => V(p.vrel),
            UnitR => V(p.rh),
            UnitT => V(p.th),
            UnitN => V(p.nh),
            SunDir => V([N::cst(p.sun[0]), N::cst(p.sun[1]), N::cst(p.sun[2])]),
            Add(a, c) => match (e(a), e(c)) {
                (S(x), S(y)) => S(x + y),
                (V(x), V(y)) => V(add3(x, y)),
                _ => S(N::cst(f64::NAN)),
            },
            Sub(a, c) => match (e(a), e(c)) {
                (S(x), S(y)) => S(x - y),
                (V(x), V(y)) => V(sub3(x, y)),
                _ => S(N::cst(f64::NAN)),
            },
            Mul(a, c) => match (e(a), e(c)) {
                (S(x), S(y)) => S(x * y),
                (S(x), V(y)) | (V(y), S(x)) => V(scale3(x, y)),
                _ => S(N::cst(f64::NAN)),
            },
            Div(a, c) => match (e(a), e(c)) {
                (S(x), S(y)) => S(x / y),
                (V(x), S(y)) => V(scale3(N::cst(1.0) / y, x)),
                _ => S(N::cst(f64::NAN)),
            },
            Neg(a) => match e(a) {
                S(x) => S(-x),
                V(x) => V([-x[0], -x[1], -x[2]]),
            },
            Sin(a) => e(a).map_s(|x| x.sin()),
            Cos(a) => e(a).map_s(|x| x.cos()),
            Exp(a) => e(a).map_s(|x| x.exp()),
            Sqrt(a) => e(a).map_s(|x| x.sqrt()),
            Pow(a, n) => e(a).map_s(|x| x.powi(*n)),
            Norm(a) => match e(a) {
                V(x) => S(norm3(x)),
                S(_) => S(N::cst(f64::NAN)),
            },
            Dot(a, c) => match (e(a), e(c)) {
                (V(x), V(y)) => S(dot3(x, y)),
                _ => S(N::cst(f64::NAN)),
            },
            Cross(a, c) => match (e(a), e(c)) {
                (V(x), V(y)) => V(cross3(x, y)),
                _ => S(N::cst(f64::NAN)),
            },
        }
    }
}

fn fold1(a: Node, f: fn(f64) -> f64, wrap: fn(Box<Node>) -> Node) -> Node {
    match a {
        Node::Const(x) => Node::Const(f(x)),
        other => wrap(b(other)),
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
    fn map_s(self, f: impl Fn(N) -> N) -> Value<N> {
        match self {
            Value::S(x) => Value::S(f(x)),
            Value::V(_) => Value::S(N::cst(f64::NAN)),
        }
    }

    /// The vector, or zero for a scalar (a term must be a vector; checked at parse).
    pub fn vector(self) -> V3<N> {
        match self {
            Value::V(v) => v,
            Value::S(_) => [N::cst(f64::NAN); 3],
        }
    }
}

/// The host model's drag density, for a `Density::Host` environment: the learned
/// formula's `rho` is then the very density the host's drag uses (NRLMSISE-00), on the
/// formula's time axis.
#[derive(Clone)]
pub struct HostDensity(pub std::sync::Arc<propagator::force::drag::Drag>);

impl HostDensity {
    /// `rho` at formula time `t` and ECI position `r`, with exact first derivatives in
    /// `r` as far as the host's gradient goes; NaN where the host has no density (the
    /// host's own drag then fails with the reason).
    fn rho<N: Num>(&self, t: f64, r: [N; 3]) -> N {
        let rv = nalgebra::Vector3::new(r[0].val(), r[1].val(), r[2].val());
        match self.0.density_and_gradient(t, &rv) {
            Ok((rho, g)) => crate::codegen::runtime::host_rho(rho, [g[0], g[1], g[2]], r),
            Err(_) => N::cst(f64::NAN),
        }
    }
}

impl HostDensity {
    /// The drag density of `forces` (read from `forces_path`) on a time axis whose zero
    /// is `epoch` (the formula's).
    pub fn of_model(
        forces: &propagator::config::ForcesFile,
        forces_path: &std::path::Path,
        epoch: &propagator::Epoch,
    ) -> Result<Self, String> {
        let drag = forces
            .drag
            .as_ref()
            .ok_or(
                "the learned force reads the host's drag density, but the forces file has no drag",
            )?
            .build(
                &forces.central_body,
                forces_path,
                epoch,
                forces.earth_orientation.as_ref(),
            )?;
        Ok(HostDensity(std::sync::Arc::new(drag)))
    }
}

impl fmt::Debug for HostDensity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "HostDensity({})", self.0.atmosphere.name())
    }
}

impl PartialEq for HostDensity {
    fn eq(&self, other: &Self) -> bool {
        std::sync::Arc::ptr_eq(&self.0, &other.0)
    }
}

/// Constants the terminals need.
#[derive(Clone, Debug, PartialEq)]
pub struct Context {
    /// Earth radius (altitude, shadow), km.
    pub radius_km: f64,
    /// Earth rotation (co-rotating atmosphere), rad/s.
    pub rotation_rad_s: f64,
    /// Maps `t` to the Sun series' time argument.
    pub clock: CenturyClock,
    /// What `rho` and `h` mean: the known model's atmosphere and altitude.
    pub environment: Environment,
    /// The host's drag density when `environment.density` is `Density::Host`.
    pub host: Option<HostDensity>,
}

/// The atmosphere and altitude the `rho` and `h` terminals read (the plugin runtime's
/// type, so a plugin computes them with the same code).
pub use crate::codegen::runtime::{Altitude, Density, Env as Environment, HANDBOOK_ENV};

impl Context {
    /// The terminals of the known model `forces` on a time axis starting at `epoch`: its
    /// Earth radius and rotation, and the atmosphere and altitude of its drag (the
    /// handbook table and spherical altitude when it has no drag). An atmosphere the
    /// plugin runtime cannot compute is an error: a formula's `rho` would silently
    /// differ from the host's.
    pub fn of_model(
        forces: &propagator::config::ForcesFile,
        forces_path: &std::path::Path,
        epoch: &propagator::Epoch,
    ) -> Result<Self, String> {
        use propagator::config::{AltitudeKey, AtmosphereSpec};
        let body = &forces.central_body;
        let mut host = None;
        let environment = match &forces.drag {
            None => HANDBOOK_ENV,
            Some(d) => Environment {
                density: match &d.atmosphere {
                    AtmosphereSpec::Table => Density::Table,
                    AtmosphereSpec::Ussa1976 => Density::Ussa1976,
                    AtmosphereSpec::Exponential(e) => Density::Exponential {
                        rho0_kg_m3: e.rho0_kg_m3,
                        h0_km: e.h0_km,
                        scale_height_km: e.scale_height_km,
                    },
                    AtmosphereSpec::Nrlmsise00(_) => {
                        host = Some(HostDensity::of_model(forces, forces_path, epoch)?);
                        Density::Host
                    }
                },
                altitude: match d.altitude {
                    AltitudeKey::Spherical => Altitude::Spherical,
                    AltitudeKey::Geodetic => Altitude::Geodetic {
                        flattening: body.flattening,
                    },
                },
            },
        };
        Ok(Self {
            radius_km: body.radius_km,
            rotation_rad_s: body.rotation_rad_s,
            clock: CenturyClock::new(epoch),
            environment,
            host,
        })
    }

    /// The switching functions of the `lit` terminal (the conical shadow's boundaries,
    /// see [`propagator::force::Force::switching`]) at `t` (s on the formula's axis) and
    /// state `x`, appended to `out`: a formula reading `lit` has the shadow's kinks.
    pub fn shadow_switching(&self, t: f64, x: &StateVector, out: &mut Vec<f64>) {
        let s = crate::codegen::runtime::sun_km(self.clock.centuries(t));
        propagator::force::srp::shadow_boundaries(
            &nalgebra::Vector3::new(x[0], x[1], x[2]),
            &nalgebra::Vector3::new(s[0], s[1], s[2]),
            self.radius_km,
            propagator::force::srp::Shadow::Conical,
            out,
        );
    }
}

/// All terminal values at one point, computed once and shared by every node. This is the
/// plugin runtime's own type: the library and every generated plugin compute terminals
/// with one implementation.
pub use crate::codegen::runtime::P as Terminals;

impl<N: Num> Terminals<N> {
    /// Terminals at time `t` (s) and position/velocity given as numbers of type `N`.
    pub fn new(t: f64, r: V3<N>, v: V3<N>, ctx: &Context) -> Self {
        Self::with_sun(t, r, v, ctx, true, true)
    }

    /// As [`Terminals::new`], skipping the Sun series (`sun`) and the shadow (`lit`)
    /// when the formulas do not use them (they are then left at zero and one).
    pub fn with_sun(
        t: f64,
        r: V3<N>,
        v: V3<N>,
        ctx: &Context,
        need_sun: bool,
        need_lit: bool,
    ) -> Self {
        let needs = compiled::Needs {
            rtn: true,
            arglat: true,
            density: true,
            altitude: true,
            vrel: true,
            sun: need_sun,
            lit: need_lit,
        };
        Self::with_needs(t, r, v, ctx, &needs)
    }

    /// Computes only the terminals in `needs` (the others are left at zero, `lit` at one).
    pub fn with_needs(t: f64, r: V3<N>, v: V3<N>, ctx: &Context, needs: &compiled::Needs) -> Self {
        let need = crate::codegen::runtime::Need {
            rtn: needs.rtn,
            u: needs.arglat,
            rho: needs.density,
            sun: needs.sun,
            lit: needs.lit,
        };
        let mut p = crate::codegen::runtime::terminals_for(
            t,
            r,
            v,
            ctx.radius_km,
            ctx.rotation_rad_s,
            ctx.clock.t0_centuries,
            need,
            &ctx.environment,
        );
        if needs.density && ctx.environment.density == Density::Host {
            p.rho = match &ctx.host {
                Some(host) => host.rho(t, p.r),
                None => N::cst(f64::NAN),
            };
        }
        p
    }
}

impl Terminals<f64> {
    /// Plain-number terminals of a state.
    pub fn of_state(t: f64, x: &StateVector, ctx: &Context) -> Self {
        Terminals::new(t, [x[0], x[1], x[2]], [x[3], x[4], x[5]], ctx)
    }
}

impl Terminals<Dual> {
    /// Terminals carrying derivatives with respect to the state.
    pub fn of_state_dual(t: f64, x: &StateVector, ctx: &Context) -> Self {
        let d = |k: usize| Dual::var(x[k], k);
        Terminals::new(t, [d(0), d(1), d(2)], [d(3), d(4), d(5)], ctx)
    }
}

/// Binding strength for printing.
fn prec(n: &Node) -> u8 {
    use Node::*;
    match n {
        Add(..) | Sub(..) => 1,
        Mul(..) | Div(..) => 2,
        Neg(..) => 3,
        Pow(..) => 4,
        Const(c) if *c < 0.0 => 3,
        _ => 5,
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
        use Node::*;
        let wrap = |n: &Node, min: u8, f: &mut fmt::Formatter<'_>| -> fmt::Result {
            if prec(n) < min {
                write!(f, "({n})")
            } else {
                write!(f, "{n}")
            }
        };
        match self {
            Time => f.write_str("t"),
            Altitude => f.write_str("h"),
            Density => f.write_str("rho"),
            ArgLat => f.write_str("u"),
            Lit => f.write_str("lit"),
            Const(c) => f.write_str(&fmt_num(*c)),
            Param(i) => write!(f, "k{i}"),
            Pos => f.write_str("r"),
            Vel => f.write_str("v"),
            VelRel => f.write_str("vrel"),
            UnitR => f.write_str("R"),
            UnitT => f.write_str("T"),
            UnitN => f.write_str("N"),
            SunDir => f.write_str("sun"),
            Add(a, c) => {
                wrap(a, 1, f)?;
                f.write_str(" + ")?;
                wrap(c, 2, f)
            }
            Sub(a, c) => {
                wrap(a, 1, f)?;
                f.write_str(" - ")?;
                wrap(c, 2, f)
            }
            Mul(a, c) => {
                wrap(a, 2, f)?;
                f.write_str(" * ")?;
                wrap(c, 3, f)
            }
            Div(a, c) => {
                wrap(a, 2, f)?;
                f.write_str(" / ")?;
                wrap(c, 3, f)
            }
            Neg(a) => {
                f.write_str("-")?;
                wrap(a, 4, f)
            }
            Pow(a, n) => {
                wrap(a, 5, f)?;
                if *n < 0 {
                    write!(f, "^({n})")
                } else {
                    write!(f, "^{n}")
                }
            }
            Sin(a) => write!(f, "sin({a})"),
            Cos(a) => write!(f, "cos({a})"),
            Exp(a) => write!(f, "exp({a})"),
            Sqrt(a) => write!(f, "sqrt({a})"),
            Norm(a) => write!(f, "norm({a})"),
            Dot(a, c) => write!(f, "dot({a}, {c})"),
            Cross(a, c) => write!(f, "cross({a}, {c})"),
        }
    }
}

#[cfg(test)]
mod tests;
