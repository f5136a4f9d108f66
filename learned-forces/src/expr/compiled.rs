//! A learned force compiled once into a flat instruction list (no tree walk per call):
//! common subexpressions shared, the sum Σ c_k g_k folded in, and only the terminals the
//! formulas use computed. The same list drives the generated plugin source.

use super::num::{add3, cross3, dot3, norm3, scale3, sub3, Num, V3};
use super::{Node, Terminals, Ty};
use std::collections::HashMap;

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
            _ => Ty::Scalar,
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
                _ => {}
            }
        }
        n
    }

    /// Evaluates the sum at the terminals `p` (vector result, km/s²).
    pub fn eval<N: Num>(&self, p: &Terminals<N>) -> V3<N> {
        #[derive(Clone, Copy)]
        enum R<N> {
            S(N),
            V(V3<N>),
        }
        let mut regs: smallvec_like::Regs<R<N>> = smallvec_like::Regs::new(self.instrs.len());
        let s = |regs: &smallvec_like::Regs<R<N>>, i: usize| match &regs[i] {
            R::S(x) => *x,
            R::V(_) => N::cst(f64::NAN),
        };
        let v = |regs: &smallvec_like::Regs<R<N>>, i: usize| match &regs[i] {
            R::V(x) => *x,
            R::S(_) => [N::cst(f64::NAN); 3],
        };
        for ins in &self.instrs {
            use Instr::*;
            let r = match ins {
                Time => R::S(N::cst(p.t)),
                Alt => R::S(p.h),
                Rho => R::S(p.rho),
                ArgLat => R::S(p.u),
                Lit => R::S(N::cst(p.lit)),
                Const(c) => R::S(N::cst(*c)),
                Pos => R::V(p.r),
                Vel => R::V(p.v),
                VelRel => R::V(p.vrel),
                UnitR => R::V(p.rh),
                UnitT => R::V(p.th),
                UnitN => R::V(p.nh),
                Sun => R::V([N::cst(p.sun[0]), N::cst(p.sun[1]), N::cst(p.sun[2])]),
                AddS(a, b) => R::S(s(&regs, *a) + s(&regs, *b)),
                SubS(a, b) => R::S(s(&regs, *a) - s(&regs, *b)),
                MulS(a, b) => R::S(s(&regs, *a) * s(&regs, *b)),
                DivS(a, b) => R::S(s(&regs, *a) / s(&regs, *b)),
                NegS(a) => R::S(-s(&regs, *a)),
                Sin(a) => R::S(s(&regs, *a).sin()),
                Cos(a) => R::S(s(&regs, *a).cos()),
                Exp(a) => R::S(s(&regs, *a).exp()),
                Sqrt(a) => R::S(s(&regs, *a).sqrt()),
                Pow(a, k) => R::S(s(&regs, *a).powi(*k)),
                Norm(a) => R::S(norm3(v(&regs, *a))),
                Dot(a, b) => R::S(dot3(v(&regs, *a), v(&regs, *b))),
                AddV(a, b) => R::V(add3(v(&regs, *a), v(&regs, *b))),
                SubV(a, b) => R::V(sub3(v(&regs, *a), v(&regs, *b))),
                Scale(a, b) => R::V(scale3(s(&regs, *a), v(&regs, *b))),
                DivV(a, b) => R::V(scale3(N::cst(1.0) / s(&regs, *b), v(&regs, *a))),
                NegV(a) => {
                    let x = v(&regs, *a);
                    R::V([-x[0], -x[1], -x[2]])
                }
                Cross(a, b) => R::V(cross3(v(&regs, *a), v(&regs, *b))),
            };
            regs.push(r);
        }
        v(&regs, regs.len() - 1)
    }
}

/// Register storage on the stack for small programs (no allocation per call).
mod smallvec_like {
    use std::mem::MaybeUninit;

    const INLINE: usize = 48;

    pub enum Regs<T> {
        Inline([MaybeUninit<T>; INLINE], usize),
        Heap(Vec<T>),
    }

    impl<T: Copy> Regs<T> {
        pub fn new(n: usize) -> Self {
            if n <= INLINE {
                Regs::Inline([const { MaybeUninit::uninit() }; INLINE], 0)
            } else {
                Regs::Heap(Vec::with_capacity(n))
            }
        }
        pub fn push(&mut self, x: T) {
            match self {
                Regs::Inline(a, len) => {
                    a[*len] = MaybeUninit::new(x);
                    *len += 1;
                }
                Regs::Heap(v) => v.push(x),
            }
        }
        pub fn len(&self) -> usize {
            match self {
                Regs::Inline(_, len) => *len,
                Regs::Heap(v) => v.len(),
            }
        }
    }

    impl<T: Copy> std::ops::Index<usize> for Regs<T> {
        type Output = T;
        fn index(&self, i: usize) -> &T {
            match self {
                Regs::Inline(a, len) => {
                    assert!(i < *len);
                    // SAFETY: slots below `len` were written by `push`.
                    unsafe { a[i].assume_init_ref() }
                }
                Regs::Heap(v) => &v[i],
            }
        }
    }
}
