//! A learned force compiled once into a flat instruction list (no tree walk per call):
//! common subexpressions shared, the sum Σ c_k g_k folded in, and only the terminals the
//! formulas use computed. The same list drives the generated plugin source.

use super::num::{add3, cross3, dot3, norm3, scale3, sub3, Num, V3};
use super::{Node, Terminals, Ty};
use std::collections::HashMap;
use std::mem::MaybeUninit;

/// One instruction; operands are indices of earlier instructions.
#[derive(Clone, Debug, PartialEq)]
pub enum Instr {
    /// `t`.
    Time,
    /// `h`.
    Alt,
    /// `rho`.
    Rho,
    /// `u`.
    ArgLat,
    /// `lit`.
    Lit,
    /// A number.
    Const(f64),
    /// `r`.
    Pos,
    /// `v`.
    Vel,
    /// `vrel`.
    VelRel,
    /// `R`.
    UnitR,
    /// `T`.
    UnitT,
    /// `N`.
    UnitN,
    /// `sun`.
    Sun,
    /// Scalar +.
    AddS(usize, usize),
    /// Scalar −.
    SubS(usize, usize),
    /// Scalar ×.
    MulS(usize, usize),
    /// Scalar ÷.
    DivS(usize, usize),
    /// Scalar negation.
    NegS(usize),
    /// sin.
    Sin(usize),
    /// cos.
    Cos(usize),
    /// exp.
    Exp(usize),
    /// sqrt.
    Sqrt(usize),
    /// Integer power.
    Pow(usize, i32),
    /// |v|.
    Norm(usize),
    /// a · b.
    Dot(usize, usize),
    /// Vector +.
    AddV(usize, usize),
    /// Vector −.
    SubV(usize, usize),
    /// scalar × vector (scalar first).
    Scale(usize, usize),
    /// vector ÷ scalar.
    DivV(usize, usize),
    /// Vector negation.
    NegV(usize),
    /// a × b.
    Cross(usize, usize),
}

impl Instr {
    /// The type this instruction produces.
    pub fn ty(&self) -> Ty {
        use Instr::*;
        match self {
            Pos | Vel | VelRel | UnitR | UnitT | UnitN | Sun | AddV(..) | SubV(..) | Scale(..)
            | DivV(..) | NegV(..) | Cross(..) => Ty::Vector,
            Time | Alt | Rho | ArgLat | Lit | Const(_) | AddS(..) | SubS(..) | MulS(..)
            | DivS(..) | NegS(..) | Sin(..) | Cos(..) | Exp(..) | Sqrt(..) | Pow(..) | Norm(..)
            | Dot(..) => Ty::Scalar,
        }
    }
}

/// The compiled sum Σ c_k g_k(θ).
#[derive(Clone, Debug, PartialEq)]
pub struct Program {
    /// Instructions in order; the last one is the result (a vector).
    pub instrs: Vec<Instr>,
}

fn lower(
    n: &Node,
    params: &[f64],
    out: &mut Vec<Instr>,
    memo: &mut HashMap<String, usize>,
) -> usize {
    use Node as N;
    let key = format!("{n}");
    if let Some(&i) = memo.get(&key) {
        return i;
    }
    let emit = |i: Instr, out: &mut Vec<Instr>| {
        out.push(i);
        out.len() - 1
    };
    let ins = match n {
        N::Time => Instr::Time,
        N::Altitude => Instr::Alt,
        N::Density => Instr::Rho,
        N::ArgLat => Instr::ArgLat,
        N::Lit => Instr::Lit,
        N::Const(c) => Instr::Const(*c),
        N::Param(i) => Instr::Const(params.get(*i).copied().unwrap_or(f64::NAN)),
        N::Pos => Instr::Pos,
        N::Vel => Instr::Vel,
        N::VelRel => Instr::VelRel,
        N::UnitR => Instr::UnitR,
        N::UnitT => Instr::UnitT,
        N::UnitN => Instr::UnitN,
        N::SunDir => Instr::Sun,
        N::Add(a, b)
        | N::Sub(a, b)
        | N::Mul(a, b)
        | N::Div(a, b)
        | N::Dot(a, b)
        | N::Cross(a, b) => {
            let (ta, tb) = (a.ty().unwrap_or(Ty::Scalar), b.ty().unwrap_or(Ty::Scalar));
            let ia = lower(a, params, out, memo);
            let ib = lower(b, params, out, memo);
            match (n, ta, tb) {
                (N::Add(..), Ty::Scalar, _) => Instr::AddS(ia, ib),
                (N::Add(..), _, _) => Instr::AddV(ia, ib),
                (N::Sub(..), Ty::Scalar, _) => Instr::SubS(ia, ib),
                (N::Sub(..), _, _) => Instr::SubV(ia, ib),
                (N::Mul(..), Ty::Scalar, Ty::Scalar) => Instr::MulS(ia, ib),
                (N::Mul(..), Ty::Scalar, Ty::Vector) => Instr::Scale(ia, ib),
                (N::Mul(..), _, _) => Instr::Scale(ib, ia),
                (N::Div(..), Ty::Scalar, _) => Instr::DivS(ia, ib),
                (N::Div(..), _, _) => Instr::DivV(ia, ib),
                (N::Dot(..), _, _) => Instr::Dot(ia, ib),
                _ => Instr::Cross(ia, ib),
            }
        }
        N::Neg(a) => {
            let ia = lower(a, params, out, memo);
            if a.ty() == Ok(Ty::Vector) {
                Instr::NegV(ia)
            } else {
                Instr::NegS(ia)
            }
        }
        N::Sin(a) => Instr::Sin(lower(a, params, out, memo)),
        N::Cos(a) => Instr::Cos(lower(a, params, out, memo)),
        N::Exp(a) => Instr::Exp(lower(a, params, out, memo)),
        N::Sqrt(a) => Instr::Sqrt(lower(a, params, out, memo)),
        N::Norm(a) => Instr::Norm(lower(a, params, out, memo)),
        N::Pow(a, k) => Instr::Pow(lower(a, params, out, memo), *k),
    };
    let i = emit(ins, out);
    memo.insert(key, i);
    i
}

/// Which terminals a program reads (the rest are never computed).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Needs {
    /// R̂, T̂, N̂ (and u, which needs the orbit normal).
    pub rtn: bool,
    /// v_rel.
    pub vrel: bool,
    /// h or ρ.
    pub altitude: bool,
    /// ρ.
    pub density: bool,
    /// u.
    pub arglat: bool,
    /// Sun direction.
    pub sun: bool,
    /// Sunlit fraction.
    pub lit: bool,
}

impl Program {
    /// Compiles Σ c_k g_k with constants `params` substituted.
    pub fn compile(nodes: &[Node], coefficients: &[f64], params: &[f64]) -> Program {
        let mut out = Vec::new();
        let mut memo = HashMap::new();
        let mut acc: Option<usize> = None;
        for (n, c) in nodes.iter().zip(coefficients) {
            let g = lower(n, params, &mut out, &mut memo);
            out.push(Instr::Const(*c));
            let ci = out.len() - 1;
            out.push(Instr::Scale(ci, g));
            let term = out.len() - 1;
            acc = Some(match acc {
                None => term,
                Some(a) => {
                    out.push(Instr::AddV(a, term));
                    out.len() - 1
                }
            });
        }
        if acc.is_none() {
            out.push(Instr::Const(0.0));
            out.push(Instr::Pos);
            out.push(Instr::Scale(0, 1));
        }
        Program { instrs: out }
    }

    /// The terminals the program reads.
    pub fn needs(&self) -> Needs {
        let mut n = Needs::default();
        for i in &self.instrs {
            match i {
                Instr::UnitR | Instr::UnitT | Instr::UnitN => n.rtn = true,
                Instr::VelRel => n.vrel = true,
                Instr::Alt => n.altitude = true,
                Instr::Rho => {
                    n.altitude = true;
                    n.density = true;
                }
                Instr::ArgLat => {
                    n.arglat = true;
                    n.rtn = true;
                }
                Instr::Sun => n.sun = true,
                Instr::Lit => n.lit = true,
                // Terminals every evaluation has, constants and operators: no extra need.
                Instr::Time
                | Instr::Const(_)
                | Instr::Pos
                | Instr::Vel
                | Instr::AddS(..)
                | Instr::SubS(..)
                | Instr::MulS(..)
                | Instr::DivS(..)
                | Instr::NegS(..)
                | Instr::Sin(..)
                | Instr::Cos(..)
                | Instr::Exp(..)
                | Instr::Sqrt(..)
                | Instr::Pow(..)
                | Instr::Norm(..)
                | Instr::Dot(..)
                | Instr::AddV(..)
                | Instr::SubV(..)
                | Instr::Scale(..)
                | Instr::DivV(..)
                | Instr::NegV(..)
                | Instr::Cross(..) => {}
            }
        }
        n
    }

    /// Evaluates the sum at the terminals `p` (vector result, km/s²).
    pub fn eval<N: Num>(&self, p: &Terminals<N>) -> V3<N> {
        // Registers live on the stack for the usual small program. The array is created
        // in place and never moved: wrapping it in an enum made every call copy it
        // (1.5 kB), most of the evaluator's cost.
        const INLINE: usize = 48;
        if self.instrs.len() <= INLINE {
            let mut regs = [const { MaybeUninit::<Reg<N>>::uninit() }; INLINE];
            self.run(p, &mut regs)
        } else {
            let mut regs = vec![MaybeUninit::<Reg<N>>::uninit(); self.instrs.len()];
            self.run(p, &mut regs)
        }
    }

    /// Runs the instructions with `regs` (at least one slot per instruction) as storage.
    fn run<N: Num>(&self, p: &Terminals<N>, regs: &mut [MaybeUninit<Reg<N>>]) -> V3<N> {
        let mut last = [N::cst(f64::NAN); 3];
        for (k, ins) in self.instrs.iter().enumerate() {
            let (done, rest) = regs.split_at_mut(k);
            // Operands index earlier instructions, so `done[i]` (bounds-checked against
            // k) was written in an earlier iteration.
            // SAFETY: every slot below k was initialised by the `write` of its iteration.
            let get = |i: usize| unsafe { done[i].assume_init_ref() };
            let s = |i: usize| match get(i) {
                Reg::S(x) => *x,
                Reg::V(_) => N::cst(f64::NAN),
            };
            let v = |i: usize| match get(i) {
                Reg::V(x) => *x,
                Reg::S(_) => [N::cst(f64::NAN); 3],
            };
            use Instr::*;
            let r = match *ins {
                Time => Reg::S(N::cst(p.t)),
                Alt => Reg::S(p.h),
                Rho => Reg::S(p.rho),
                ArgLat => Reg::S(p.u),
                Lit => Reg::S(N::cst(p.lit)),
                Const(c) => Reg::S(N::cst(c)),
                Pos => Reg::V(p.r),
                Vel => Reg::V(p.v),
                VelRel => Reg::V(p.vrel),
                UnitR => Reg::V(p.rh),
                UnitT => Reg::V(p.th),
                UnitN => Reg::V(p.nh),
                Sun => Reg::V([N::cst(p.sun[0]), N::cst(p.sun[1]), N::cst(p.sun[2])]),
                AddS(a, b) => Reg::S(s(a) + s(b)),
                SubS(a, b) => Reg::S(s(a) - s(b)),
                MulS(a, b) => Reg::S(s(a) * s(b)),
                DivS(a, b) => Reg::S(s(a) / s(b)),
                NegS(a) => Reg::S(-s(a)),
                Sin(a) => Reg::S(s(a).sin()),
                Cos(a) => Reg::S(s(a).cos()),
                Exp(a) => Reg::S(s(a).exp()),
                Sqrt(a) => Reg::S(s(a).sqrt()),
                Pow(a, e) => Reg::S(s(a).powi(e)),
                Norm(a) => Reg::S(norm3(v(a))),
                Dot(a, b) => Reg::S(dot3(v(a), v(b))),
                AddV(a, b) => Reg::V(add3(v(a), v(b))),
                SubV(a, b) => Reg::V(sub3(v(a), v(b))),
                Scale(a, b) => Reg::V(scale3(s(a), v(b))),
                DivV(a, b) => Reg::V(scale3(N::cst(1.0) / s(b), v(a))),
                NegV(a) => {
                    let x = v(a);
                    Reg::V([-x[0], -x[1], -x[2]])
                }
                Cross(a, b) => Reg::V(cross3(v(a), v(b))),
            };
            if k + 1 == self.instrs.len() {
                if let Reg::V(x) = r {
                    last = x;
                }
            }
            rest[0].write(r);
        }
        last
    }
}

/// One register: a scalar or a vector value.
#[derive(Clone, Copy)]
enum Reg<N> {
    S(N),
    V(V3<N>),
}
