//! The period loss as a quadratic form around the steady state:
//!
//! ```text
//!   loss_t = L(ybar) + (1/2) d_t' H d_t,    d_t = (yhat_{j, t-l}) over the dated variables in the loss,
//! ```
//!
//! with H the exact Hessian of the loss at the steady state, in the coordinates of the
//! linearization (deviations for level variables, log deviations for `log` variables: the Hessian
//! in levels times ybar_a ybar_b, exact because the gradient vanishes). The loss must be exactly
//! quadratic (spec §11): every gradient entry vanishes at the steady state (relative test,
//! [`LINEAR_TOL`]) and every third derivative in levels is zero there.

use std::collections::HashMap;

use nalgebra::DMatrix;

use super::PolicyError;
use crate::linear::dated;
use crate::model::{Expr, Model};
use crate::symbolic::{Graph, Leaf, NodeId, Tape};

/// A gradient entry counts as zero when `|g_a| <= LINEAR_TOL * sum_b |H_ab| (|ybar_b| + |ybar_a|)`,
/// or when the loss has no second derivative in that direction, `|g_a| <= LINEAR_TOL *
/// (|L(ybar)| + |ybar_a|)`: a steady state found by Newton carries relative rounding of order
/// 1e-14, so a target written as `(infl - pibar)^2` leaves a gradient near 1e-14 |H| |ybar|; 1e-8
/// separates that from a genuine linear term.
pub const LINEAR_TOL: f64 = 1e-8;

/// Largest number of dated variables in a loss (the third derivatives are cubic in it).
pub const MAX_LOSS_TERMS: usize = 200;

/// A dated variable of the loss: `variable` at `t - lag`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct LossTerm {
    pub variable: usize,
    pub lag: u32,
}

/// The loss as a quadratic form (see the module doc).
#[derive(Debug, Clone, PartialEq)]
pub struct QuadraticLoss {
    /// The dated variables, sorted.
    pub terms: Vec<LossTerm>,
    /// Hessian over `terms`, in linearization coordinates (symmetric).
    pub hessian: DMatrix<f64>,
    /// The loss at the steady state.
    pub constant: f64,
}

impl QuadraticLoss {
    /// Largest lag in the loss (0 when it has only current values).
    pub fn max_lag(&self) -> u32 {
        self.terms.iter().map(|t| t.lag).max().unwrap_or(0)
    }
}

fn eval_nodes(graph: &Graph, nodes: &[NodeId], params: &[f64], ybar: &[f64]) -> Vec<f64> {
    let tape = Tape::compile(graph, nodes);
    let mut work = Vec::new();
    let mut out = vec![0.0; nodes.len()];
    tape.eval(params, ybar, &mut work, &mut out);
    out
}

fn term_name(model: &Model, t: &LossTerm) -> String {
    let name = model
        .endogenous
        .get(t.variable)
        .map_or("?", |v| v.name.as_str());
    dated(name, -(t.lag as i32))
}

/// Reads the quadratic form of `loss` at the steady state `ybar` (levels) with parameter values
/// `params`. Returns it, or the first term that breaks the contract.
pub fn quadratic_loss(
    model: &Model,
    loss: &Expr,
    params: &[f64],
    ybar: &[f64],
) -> Result<QuadraticLoss, PolicyError> {
    let mut graph = Graph::new();
    let root = graph.from_expr(loss);
    let mut terms = Vec::new();
    for leaf in graph.leaves_of(root) {
        match leaf {
            Leaf::Variable { index, offset } if offset <= 0 => terms.push(LossTerm {
                variable: index,
                lag: offset.unsigned_abs(),
            }),
            Leaf::Variable { index, offset } => {
                return Err(PolicyError::Loss(format!(
                    "the loss contains the lead {}; the period loss may use variables at t and their lags only",
                    dated(&model.endogenous[index].name, offset)
                )))
            }
            Leaf::Innovation { index, offset } => {
                return Err(PolicyError::Loss(format!(
                    "the loss contains the innovation {}; the period loss may use endogenous variables only",
                    dated(&model.exogenous[index].name, offset)
                )))
            }
            Leaf::SteadyState(_) => {}
        }
    }
    terms.sort();
    if terms.len() > MAX_LOSS_TERMS {
        return Err(PolicyError::Loss(format!(
            "the loss has {} dated variables, more than the {MAX_LOSS_TERMS} supported",
            terms.len()
        )));
    }
    let leaf = |t: &LossTerm| Leaf::Variable {
        index: t.variable,
        offset: -(t.lag as i32),
    };
    let k = terms.len();
    let mut first = Vec::with_capacity(k);
    for t in &terms {
        let mut memo = HashMap::new();
        first.push(graph.diff(root, leaf(t), &mut memo));
    }
    let mut second = vec![vec![0 as NodeId; k]; k];
    for b in 0..k {
        // One memo per differentiation variable, shared by every first derivative.
        let mut memo = HashMap::new();
        for a in 0..k {
            second[a][b] = graph.diff(first[a], leaf(&terms[b]), &mut memo);
        }
    }
    let mut third = Vec::new();
    let mut third_index = Vec::new();
    for a in 0..k {
        for b in a..k {
            if graph.as_const(second[a][b]) == Some(0.0) {
                continue;
            }
            for c in b..k {
                let mut mc = HashMap::new();
                let node = graph.diff(second[a][b], leaf(&terms[c]), &mut mc);
                if graph.as_const(node) != Some(0.0) {
                    third.push(node);
                    third_index.push((a, b, c));
                }
            }
        }
    }
    let mut nodes = vec![root];
    nodes.extend(&first);
    for row in &second {
        nodes.extend(row);
    }
    nodes.extend(&third);
    let vals = eval_nodes(&graph, &nodes, params, ybar);
    if let Some(bad) = vals.iter().position(|v| !v.is_finite()) {
        return Err(PolicyError::Loss(format!(
            "the loss or one of its derivatives is not finite at the steady state (value {})",
            vals[bad]
        )));
    }
    let constant = vals[0];
    let grad = &vals[1..1 + k];
    let hess_levels = DMatrix::from_fn(k, k, |a, b| vals[1 + k + a * k + b]);
    let third_vals = &vals[1 + k + k * k..];
    for (v, &(a, b, c)) in third_vals.iter().zip(&third_index) {
        if *v != 0.0 {
            return Err(PolicyError::Loss(format!(
                "the loss is not quadratic: its third derivative with respect to {}, {} and {} is {v} at the steady state, not zero",
                term_name(model, &terms[a]),
                term_name(model, &terms[b]),
                term_name(model, &terms[c])
            )));
        }
    }
    let ybar_of = |t: &LossTerm| ybar.get(t.variable).copied().unwrap_or(f64::NAN);
    for a in 0..k {
        let ya = ybar_of(&terms[a]).abs();
        let mut scale: f64 = (0..k)
            .map(|b| hess_levels[(a, b)].abs() * (ybar_of(&terms[b]).abs() + ya))
            .sum();
        if scale == 0.0 {
            scale = constant.abs() + ya;
        }
        if grad[a].abs() > LINEAR_TOL * scale {
            return Err(PolicyError::Loss(format!(
                "the loss has a linear term in {}: its derivative there is {} at the steady state, not zero (a quadratic loss around the steady state has no linear part; write the target as the steady-state value)",
                term_name(model, &terms[a]),
                grad[a]
            )));
        }
    }
    let scale: Vec<f64> = terms
        .iter()
        .map(|t| {
            if model.endogenous.get(t.variable).is_some_and(|v| v.log) {
                ybar_of(t)
            } else {
                1.0
            }
        })
        .collect();
    let mut hessian = DMatrix::from_fn(k, k, |a, b| hess_levels[(a, b)] * scale[a] * scale[b]);
    hessian = (&hessian + hessian.transpose()) * 0.5;
    Ok(QuadraticLoss {
        terms,
        hessian,
        constant,
    })
}
