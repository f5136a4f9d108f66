//! A learned force compiled once into a flat instruction list (no tree walk per call):
//! common subexpressions shared, the sum Σ c_k g_k folded in, and only the terminals the
//! formulas use computed. The same list drives the generated plugin source.

use super::num::{Num, V3};
use super::{Node, Op1, Op2, Terminal, Terminals, Ty, Value};
use std::collections::HashMap;
use std::mem::MaybeUninit;

/// One instruction; operands are indices of earlier instructions. The operators are the
/// formula's own ([`Op1`], [`Op2`]): one table serves the tree, this list and the plugin.
#[derive(Clone, Debug, PartialEq)]
pub enum Instr {
    /// A terminal.
    Term(Terminal),
    /// A number.
    Const(f64),
    /// `op a`.
    Unary(Op1, usize),
    /// `a op b`.
    Binary(Op2, usize, usize),
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
    let key = format!("{n}");
    if let Some(&i) = memo.get(&key) {
        return i;
    }
    let ins = match n {
        Node::Term(t) => Instr::Term(*t),
        Node::Const(c) => Instr::Const(*c),
        Node::Param(i) => Instr::Const(params.get(*i).copied().unwrap_or(f64::NAN)),
        Node::Unary(op, a) => Instr::Unary(*op, lower(a, params, out, memo)),
        Node::Binary(op, a, b) => {
            let ia = lower(a, params, out, memo);
            let ib = lower(b, params, out, memo);
            Instr::Binary(*op, ia, ib)
        }
    };
    out.push(ins);
    let i = out.len() - 1;
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
            out.push(Instr::Binary(Op2::Mul, ci, g));
            let term = out.len() - 1;
            acc = Some(match acc {
                None => term,
                Some(a) => {
                    out.push(Instr::Binary(Op2::Add, a, term));
                    out.len() - 1
                }
            });
        }
        if acc.is_none() {
            out.push(Instr::Const(0.0));
            out.push(Instr::Term(Terminal::Pos));
            out.push(Instr::Binary(Op2::Mul, 0, 1));
        }
        Program { instrs: out }
    }

    /// The terminals the program reads.
    pub fn needs(&self) -> Needs {
        let mut n = Needs::default();
        for i in &self.instrs {
            if let Instr::Term(t) = i {
                t.needs(&mut n);
            }
        }
        n
    }

    /// The type each instruction produces.
    pub fn types(&self) -> Vec<Ty> {
        let mut types: Vec<Ty> = Vec::with_capacity(self.instrs.len());
        for ins in &self.instrs {
            // The parser let only well-typed trees through; a scalar stands in otherwise.
            let ty = match *ins {
                Instr::Term(t) => t.ty(),
                Instr::Const(_) => Ty::Scalar,
                Instr::Unary(op, a) => op.ty(types[a]).unwrap_or(Ty::Scalar),
                Instr::Binary(op, a, b) => op.ty(types[a], types[b]).unwrap_or(Ty::Scalar),
            };
            types.push(ty);
        }
        types
    }

    /// Evaluates the sum at the terminals `p` (vector result, km/s²).
    pub fn eval<N: Num>(&self, p: &Terminals<N>) -> V3<N> {
        // Registers live on the stack for the usual small program. The array is created
        // in place and never moved: wrapping it in an enum made every call copy it
        // (1.5 kB), most of the evaluator's cost.
        const INLINE: usize = 48;
        if self.instrs.len() <= INLINE {
            let mut regs = [const { MaybeUninit::<Value<N>>::uninit() }; INLINE];
            self.run(p, &mut regs)
        } else {
            let mut regs = vec![MaybeUninit::<Value<N>>::uninit(); self.instrs.len()];
            self.run(p, &mut regs)
        }
    }

    /// Runs the instructions with `regs` (at least one slot per instruction) as storage.
    fn run<N: Num>(&self, p: &Terminals<N>, regs: &mut [MaybeUninit<Value<N>>]) -> V3<N> {
        let mut last = [N::cst(f64::NAN); 3];
        for (k, ins) in self.instrs.iter().enumerate() {
            let (done, rest) = regs.split_at_mut(k);
            // Operands index earlier instructions, so `done[i]` (bounds-checked against
            // k) was written in an earlier iteration.
            // SAFETY: every slot below k was initialised by the `write` of its iteration.
            let get = |i: usize| unsafe { done[i].assume_init_ref() };
            let r = match *ins {
                Instr::Term(t) => t.value(p),
                Instr::Const(c) => Value::S(N::cst(c)),
                Instr::Unary(op, a) => op.apply(get(a)),
                Instr::Binary(op, a, b) => op.apply(get(a), get(b)),
            };
            if k + 1 == self.instrs.len() {
                if let Value::V(x) = r {
                    last = x;
                }
            }
            rest[0].write(r);
        }
        last
    }
}
