//! The checked model compiled once: residual, steady-state Jacobian and linearization tapes.
//!
//! With r_i(y, e) = lhs_i - rhs_i, a [`CompiledModel`] holds three tapes evaluated at a steady
//! state x (every date of variable j equal to x_j, innovations zero):
//! - `residuals`: r_i(x), i = 1..n;
//! - `steady_jacobian`: the nonzeros dR_i/dx_j of the static system R(x) = r(x, ..., x; 0), which
//!   is the sum over dates of dr_i/dy_{j,t+k} plus dr_i/d x_j[ss];
//! - `coefficients`: the nonzeros dr_i/dy_{j,t+k} and dr_i/de_{s,t-l} used by the linearization.
//!
//! Everything here depends only on the model's structure and expressions, never on parameter
//! values, so one compilation serves every point of a parameter sweep.

use std::collections::HashMap;

use super::graph::{Graph, Leaf, NodeId};
use super::tape::Tape;
use crate::model::Model;

/// Where a coefficient of the linearized system sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Coefficient {
    pub equation: usize,
    pub leaf: Leaf,
}

/// The compiled model (see the module doc).
#[derive(Debug, Clone)]
pub struct CompiledModel {
    pub n_equations: usize,
    pub n_variables: usize,
    pub residuals: Tape,
    /// `(equation, variable)` of each output of `steady_jacobian`, sorted by equation.
    pub jacobian_pattern: Vec<(usize, usize)>,
    pub steady_jacobian: Tape,
    /// Leaf of each output of `coefficients` (only `Variable` and `Innovation` leaves).
    pub coefficient_pattern: Vec<Coefficient>,
    pub coefficients: Tape,
    /// Per equation: contains `abs`, `sign`, `min` or `max`.
    pub has_kink: Vec<bool>,
    /// Per equation: the variables it involves (any date, or `[ss]`), sorted.
    pub variables_in: Vec<Vec<usize>>,
    /// No steady-state Jacobian entry depends on a variable: R(x) is affine in x.
    pub is_linear: bool,
    /// The static system's block-triangular decomposition with a residual and a Jacobian tape per
    /// block, in solving order; `None` when it is structurally singular.
    pub steady_blocks: Option<Vec<SteadyBlock>>,
}

/// A block's Jacobian entries while they are gathered: positions and derivative nodes.
type BlockEntries = (Vec<(usize, usize)>, Vec<NodeId>);

/// One diagonal block of the static system R(x) = 0 (see [`super::blocks`]).
#[derive(Debug, Clone)]
pub struct SteadyBlock {
    pub equations: Vec<usize>,
    pub variables: Vec<usize>,
    /// Outputs: the residuals of `equations`, in order.
    pub residuals: Tape,
    /// `(row, column)` within the block of each output of `jacobian`.
    pub jacobian_pattern: Vec<(usize, usize)>,
    pub jacobian: Tape,
}

impl CompiledModel {
    /// Builds the graph of every residual, differentiates each by every leaf it contains and
    /// compiles the three tapes.
    pub fn new(model: &Model) -> CompiledModel {
        let mut g = Graph::new();
        let n = model.equations.len();
        let mut roots = Vec::with_capacity(n);
        for eq in &model.equations {
            let l = g.from_expr(&eq.lhs);
            let r = g.from_expr(&eq.rhs);
            roots.push(g.sub(l, r));
        }
        let mut jacobian_pattern = Vec::new();
        let mut jac_nodes: Vec<NodeId> = Vec::new();
        let mut coefficient_pattern = Vec::new();
        let mut coef_nodes: Vec<NodeId> = Vec::new();
        let mut has_kink = Vec::with_capacity(n);
        let mut variables_in = Vec::with_capacity(n);
        let mut memo = HashMap::new();
        for (i, &root) in roots.iter().enumerate() {
            has_kink.push(g.has_kink(root));
            let leaves = g.leaves_of(root);
            let mut per_var: Vec<(usize, NodeId)> = Vec::new();
            for &leaf in &leaves {
                memo.clear();
                let d = g.diff(root, leaf, &mut memo);
                match leaf {
                    Leaf::Variable { index, .. } | Leaf::SteadyState(index) => {
                        per_var.push((index, d));
                    }
                    Leaf::Innovation { .. } => {}
                }
                if !matches!(leaf, Leaf::SteadyState(_)) && g.as_const(d) != Some(0.0) {
                    coefficient_pattern.push(Coefficient { equation: i, leaf });
                    coef_nodes.push(d);
                }
            }
            per_var.sort_by_key(|p| p.0);
            let mut vars: Vec<usize> = per_var.iter().map(|p| p.0).collect();
            vars.dedup();
            for &j in &vars {
                let mut sum = g.constant(0.0);
                for &(_, d) in per_var.iter().filter(|p| p.0 == j) {
                    sum = g.add(sum, d);
                }
                if g.as_const(sum) != Some(0.0) {
                    jacobian_pattern.push((i, j));
                    jac_nodes.push(sum);
                }
            }
            variables_in.push(vars);
        }
        let is_linear = jac_nodes.iter().all(|&d| {
            g.leaves_of(d)
                .iter()
                .all(|l| matches!(l, Leaf::Innovation { .. }))
        });
        let steady_blocks = if n == model.endogenous.len() {
            let mut adj = vec![Vec::new(); n];
            for &(i, j) in &jacobian_pattern {
                adj[i].push(j);
            }
            super::blocks::block_triangular(n, &adj).map(|blocks| {
                let mut row_of = vec![usize::MAX; n];
                let mut col_of = vec![usize::MAX; n];
                let mut block_of = vec![usize::MAX; n];
                for (b, blk) in blocks.iter().enumerate() {
                    for (r, &e) in blk.equations.iter().enumerate() {
                        row_of[e] = r;
                        block_of[e] = b;
                    }
                    for (c, &v) in blk.variables.iter().enumerate() {
                        col_of[v] = c;
                    }
                }
                let mut per_block: Vec<BlockEntries> = vec![(Vec::new(), Vec::new()); blocks.len()];
                for (k, &(i, j)) in jacobian_pattern.iter().enumerate() {
                    let b = block_of[i];
                    if blocks[b].variables.binary_search(&j).is_ok() {
                        per_block[b].0.push((row_of[i], col_of[j]));
                        per_block[b].1.push(jac_nodes[k]);
                    }
                }
                blocks
                    .into_iter()
                    .zip(per_block)
                    .map(|(blk, (pattern, nodes))| {
                        let res: Vec<NodeId> = blk.equations.iter().map(|&e| roots[e]).collect();
                        SteadyBlock {
                            residuals: Tape::compile(&g, &res),
                            jacobian_pattern: pattern,
                            jacobian: Tape::compile(&g, &nodes),
                            equations: blk.equations,
                            variables: blk.variables,
                        }
                    })
                    .collect()
            })
        } else {
            None
        };
        CompiledModel {
            steady_blocks,
            n_equations: n,
            n_variables: model.endogenous.len(),
            residuals: Tape::compile(&g, &roots),
            jacobian_pattern,
            steady_jacobian: Tape::compile(&g, &jac_nodes),
            coefficient_pattern,
            coefficients: Tape::compile(&g, &coef_nodes),
            has_kink,
            variables_in,
            is_linear,
        }
    }
}
