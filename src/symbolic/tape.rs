//! Straight-line evaluation of graph nodes.
//!
//! A [`Tape`] is the part of a [`Graph`] reachable from a list of output nodes, renumbered into
//! slots `0..len` in topological order. [`Tape::eval`] overwrites `work[0..len]` with every slot's
//! value in one forward loop; outputs are then read from `work[outputs[k]]`. Leaves are resolved at
//! compile time for steady-state evaluation: every dated variable `x[t+k]` and `x[ss]` reads the one
//! value of `x`, every innovation is zero. Integer exponents become `powi`.

use std::collections::{HashMap, HashSet};

use super::graph::{children, step, Graph, Leaf, Node, NodeId};
use crate::model::{Function, Function2};

/// One instruction; operands are slot numbers of earlier instructions.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Instr {
    Const(f64),
    Param(u32),
    /// The steady-state value of endogenous variable `i`.
    Var(u32),
    Neg(u32),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    Pow(u32, u32),
    Powi(u32, i32),
    Call(Function, u32),
    Call2(Function2, u32, u32),
    Step(u32),
}

/// Compiled straight-line code for a list of outputs.
#[derive(Debug, Clone, Default)]
pub struct Tape {
    instrs: Vec<Instr>,
    outputs: Vec<u32>,
}

impl Tape {
    /// Compiles the nodes reachable from `outputs` (no recursion: one sweep down the node ids to
    /// mark, one sweep up to emit).
    pub fn compile(graph: &Graph, outputs: &[NodeId]) -> Tape {
        let nodes = graph.nodes();
        // Reachable nodes by an explicit stack (no recursion), then in id order, which is
        // topological because children always have smaller ids.
        let mut seen: HashSet<NodeId> = HashSet::with_capacity(outputs.len() * 8);
        let mut stack: Vec<NodeId> = outputs.to_vec();
        while let Some(id) = stack.pop() {
            if seen.insert(id) {
                children(nodes[id as usize], |c| {
                    if !seen.contains(&c) {
                        stack.push(c)
                    }
                });
            }
        }
        let mut ids: Vec<NodeId> = seen.into_iter().collect();
        ids.sort_unstable();
        let mut slot: HashMap<NodeId, u32> = HashMap::with_capacity(ids.len());
        let mut instrs = Vec::new();
        for &id in &ids {
            let s = |c: NodeId| slot.get(&c).copied().unwrap_or(u32::MAX);
            let ins = match nodes[id as usize] {
                Node::Const(bits) => Instr::Const(f64::from_bits(bits)),
                Node::Param(p) => Instr::Param(p),
                Node::Leaf(Leaf::Variable { index, .. }) | Node::Leaf(Leaf::SteadyState(index)) => {
                    Instr::Var(index as u32)
                }
                Node::Leaf(Leaf::Innovation { .. }) => Instr::Const(0.0),
                Node::Neg(a) => Instr::Neg(s(a)),
                Node::Add(a, b) => Instr::Add(s(a), s(b)),
                Node::Sub(a, b) => Instr::Sub(s(a), s(b)),
                Node::Mul(a, b) => Instr::Mul(s(a), s(b)),
                Node::Div(a, b) => Instr::Div(s(a), s(b)),
                Node::Pow(a, b) => match graph.as_const(b) {
                    Some(c) if c.fract() == 0.0 && c.abs() <= 64.0 => Instr::Powi(s(a), c as i32),
                    _ => Instr::Pow(s(a), s(b)),
                },
                Node::Call(f, a) => Instr::Call(f, s(a)),
                Node::Call2(f, a, b) => Instr::Call2(f, s(a), s(b)),
                Node::Step(a) => Instr::Step(s(a)),
            };
            slot.insert(id, instrs.len() as u32);
            instrs.push(ins);
        }
        let outputs = outputs
            .iter()
            .map(|o| slot.get(o).copied().unwrap_or(u32::MAX))
            .collect();
        Tape { instrs, outputs }
    }

    pub fn len(&self) -> usize {
        self.instrs.len()
    }

    pub fn is_empty(&self) -> bool {
        self.instrs.is_empty()
    }

    pub fn instrs(&self) -> &[Instr] {
        &self.instrs
    }

    /// Number of outputs.
    pub fn n_outputs(&self) -> usize {
        self.outputs.len()
    }

    /// Evaluates every slot with parameter values `params` and variable values `x`; overwrites
    /// `work` (resized to the tape's length) and writes output `k` to `out[k]`. A parameter or
    /// variable index out of range reads NaN (the checked model rules this out).
    pub fn eval(&self, params: &[f64], x: &[f64], work: &mut Vec<f64>, out: &mut [f64]) {
        work.clear();
        work.reserve(self.instrs.len());
        for ins in &self.instrs {
            let w = &work[..];
            let v = match *ins {
                Instr::Const(c) => c,
                Instr::Param(p) => params.get(p as usize).copied().unwrap_or(f64::NAN),
                Instr::Var(i) => x.get(i as usize).copied().unwrap_or(f64::NAN),
                Instr::Neg(a) => -w[a as usize],
                Instr::Add(a, b) => w[a as usize] + w[b as usize],
                Instr::Sub(a, b) => w[a as usize] - w[b as usize],
                Instr::Mul(a, b) => w[a as usize] * w[b as usize],
                Instr::Div(a, b) => w[a as usize] / w[b as usize],
                Instr::Pow(a, b) => crate::model::expr::pow(w[a as usize], w[b as usize]),
                Instr::Powi(a, n) => w[a as usize].powi(n),
                Instr::Call(f, a) => f.apply(w[a as usize]),
                Instr::Call2(f, a, b) => f.apply(w[a as usize], w[b as usize]),
                Instr::Step(a) => step(w[a as usize]),
            };
            work.push(v);
        }
        for (o, &s) in out.iter_mut().zip(&self.outputs) {
            *o = work[s as usize];
        }
    }
}

#[cfg(test)]
mod tests {
    use std::collections::HashMap;

    use super::*;
    use crate::model::{BinaryOp, Expr};

    fn var(i: usize, o: i32) -> Expr {
        Expr::Variable {
            index: i,
            offset: o,
        }
    }
    fn bin(op: BinaryOp, a: Expr, b: Expr) -> Expr {
        Expr::binary(op, a, b)
    }

    /// Central difference with step h, for checking exact derivatives (common practice).
    fn central(f: impl Fn(f64) -> f64, x: f64, h: f64) -> f64 {
        (f(x + h) - f(x - h)) / (2.0 * h)
    }

    #[test]
    fn derivatives_match_central_differences_for_every_function() {
        // r(x) = exp(x) * ln(x) + sqrt(x)^3 / log10(x+2) - normcdf(x) + normpdf(x) * x^x
        //        + abs(x - 3) + max(x, 2) * min(x, 1)
        let x0 = var(0, 0);
        let terms = [
            bin(
                BinaryOp::Mul,
                Expr::Call(Function::Exp, Box::new(x0.clone())),
                Expr::Call(Function::Ln, Box::new(x0.clone())),
            ),
            bin(
                BinaryOp::Div,
                bin(
                    BinaryOp::Pow,
                    Expr::Call(Function::Sqrt, Box::new(x0.clone())),
                    Expr::Number(3.0),
                ),
                Expr::Call(
                    Function::Log10,
                    Box::new(bin(BinaryOp::Add, x0.clone(), Expr::Number(2.0))),
                ),
            ),
            Expr::Neg(Box::new(Expr::Call(
                Function::NormCdf,
                Box::new(x0.clone()),
            ))),
            bin(
                BinaryOp::Mul,
                Expr::Call(Function::NormPdf, Box::new(x0.clone())),
                bin(BinaryOp::Pow, x0.clone(), x0.clone()),
            ),
            Expr::Call(
                Function::Abs,
                Box::new(bin(BinaryOp::Sub, x0.clone(), Expr::Number(3.0))),
            ),
            bin(
                BinaryOp::Mul,
                Expr::Call2(
                    Function2::Max,
                    Box::new(x0.clone()),
                    Box::new(Expr::Number(2.0)),
                ),
                Expr::Call2(
                    Function2::Min,
                    Box::new(x0.clone()),
                    Box::new(Expr::Number(1.0)),
                ),
            ),
        ];
        for (k, t) in terms.iter().enumerate() {
            let mut g = Graph::new();
            let r = g.from_expr(t);
            let d = g.diff(
                r,
                Leaf::Variable {
                    index: 0,
                    offset: 0,
                },
                &mut HashMap::new(),
            );
            let tape = Tape::compile(&g, &[r, d]);
            for &x in &[0.4, 0.7, 1.3, 2.5, 3.7] {
                let mut work = Vec::new();
                let mut out = [0.0; 2];
                tape.eval(&[], &[x], &mut work, &mut out);
                let f = |y: f64| {
                    let mut o = [0.0; 2];
                    tape.eval(&[], &[y], &mut Vec::new(), &mut o);
                    o[0]
                };
                let fd = central(f, x, 1e-6);
                // Central differences are accurate to O(h^2) + O(eps/h): about 1e-9 here.
                assert!(
                    (out[1] - fd).abs() <= 1e-7 * (1.0 + fd.abs()),
                    "term {k} at {x}: exact {} vs difference {fd}",
                    out[1]
                );
                // The tape's residual agrees with tree evaluation.
                struct At(f64);
                impl crate::model::Leaves for At {
                    fn parameter(&self, _: usize) -> f64 {
                        f64::NAN
                    }
                    fn variable(&self, _: usize, _: i32) -> f64 {
                        self.0
                    }
                    fn innovation(&self, _: usize, _: i32) -> f64 {
                        0.0
                    }
                    fn steady_state(&self, _: usize) -> f64 {
                        self.0
                    }
                }
                assert_eq!(out[0].to_bits(), t.eval(&At(x)).to_bits());
            }
        }
    }

    #[test]
    fn simplification_folds_constants_and_identities() {
        let mut g = Graph::new();
        // d/dx (3 * x * y + 2^3 + x^1) = 3 y + 1
        let e = bin(
            BinaryOp::Add,
            bin(
                BinaryOp::Add,
                bin(
                    BinaryOp::Mul,
                    bin(BinaryOp::Mul, Expr::Number(3.0), var(0, 0)),
                    var(1, 0),
                ),
                bin(BinaryOp::Pow, Expr::Number(2.0), Expr::Number(3.0)),
            ),
            bin(BinaryOp::Pow, var(0, 0), Expr::Number(1.0)),
        );
        let r = g.from_expr(&e);
        let d = g.diff(
            r,
            Leaf::Variable {
                index: 0,
                offset: 0,
            },
            &mut HashMap::new(),
        );
        // dy of the derivative w.r.t. x is zero, the derivative w.r.t. an absent leaf is zero.
        let dd = g.diff(
            d,
            Leaf::Variable {
                index: 0,
                offset: 0,
            },
            &mut HashMap::new(),
        );
        assert_eq!(g.as_const(dd), Some(0.0));
        let absent = g.diff(
            r,
            Leaf::Variable {
                index: 0,
                offset: 1,
            },
            &mut HashMap::new(),
        );
        assert_eq!(g.as_const(absent), Some(0.0));
        let tape = Tape::compile(&g, &[d]);
        // 3 * y + 1: constants 3 and 1, the load of y, one multiply, one add.
        assert_eq!(tape.len(), 5, "{:?}", tape.instrs());
        let mut out = [0.0];
        tape.eval(&[], &[10.0, 2.0], &mut Vec::new(), &mut out);
        assert_eq!(out[0], 7.0);
    }

    #[test]
    fn kinks_take_the_right_hand_derivative() {
        let mut g = Graph::new();
        let x = g.leaf(Leaf::Variable {
            index: 0,
            offset: 0,
        });
        let a = g.call(Function::Abs, x);
        let zero = g.constant(0.0);
        let m = g.call2(Function2::Max, x, zero);
        let n = g.call2(Function2::Min, x, zero);
        let wrt = Leaf::Variable {
            index: 0,
            offset: 0,
        };
        let da = g.diff(a, wrt, &mut HashMap::new());
        let dm = g.diff(m, wrt, &mut HashMap::new());
        let dn = g.diff(n, wrt, &mut HashMap::new());
        let tape = Tape::compile(&g, &[da, dm, dn]);
        let mut out = [0.0; 3];
        tape.eval(&[], &[0.0], &mut Vec::new(), &mut out);
        assert_eq!(out, [1.0, 1.0, 1.0]);
        tape.eval(&[], &[-0.5], &mut Vec::new(), &mut out);
        assert_eq!(out, [-1.0, 0.0, 1.0]);
        tape.eval(&[], &[0.5], &mut Vec::new(), &mut out);
        assert_eq!(out, [1.0, 1.0, 0.0]);
    }
}
