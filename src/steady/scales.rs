//! Units-free residuals: each equation's residual against the size of its terms
//!
//! ```text
//!     rel_i = |R_i(x)| / sum_k |term_ik(x)|
//! ```
//!
//! so that every convergence test means the same for any units and any equation multiplied
//! through by a constant.

use super::*;

/// The size of each equation's terms at the steady-state point `x`: the sum of the absolute
/// values of the additive terms of both sides (the operands of top-level `+`, `-` and unary
/// minus). A residual is "small" relative to this: it is the scale of the numbers whose
/// difference it is, so rounding alone leaves a residual of a few epsilons times it. Returns
/// one value per equation (NaN where a term does not evaluate).
pub fn term_scales(model: &Model, params: &[f64], x: &[f64]) -> Vec<f64> {
    (0..model.equations.len())
        .map(|i| equation_scale(model, params, x, i))
        .collect()
}

/// The term size of equation `i` alone (see [`term_scales`]; NaN for an index out of range).
pub fn equation_scale(model: &Model, params: &[f64], x: &[f64], i: usize) -> f64 {
    let Some(eq) = model.equations.get(i) else {
        return f64::NAN;
    };
    let leaves = SteadyLeaves { params, values: x };
    let mut total = 0.0;
    let mut stack: Vec<&Expr> = vec![&eq.lhs, &eq.rhs];
    while let Some(e) = stack.pop() {
        match e {
            Expr::Binary(BinaryOp::Add | BinaryOp::Sub, a, b) => {
                stack.push(a);
                stack.push(b);
            }
            Expr::Neg(a) => stack.push(a),
            other => total += other.eval(&leaves).abs(),
        }
    }
    total
}

/// [`relative_residual`] of the full residual vector `r` at `x`.
pub(super) fn relative_at(model: &Model, params: &[f64], x: &[f64], r: &[f64]) -> f64 {
    relative_residual(r, &term_scales(model, params, x))
}

/// The largest residual relative to its equation's terms (`r_i / scale_i`; an exact zero counts
/// as zero whatever its scale, a non-finite value as infinity).
pub fn relative_residual(r: &[f64], scales: &[f64]) -> f64 {
    r.iter()
        .zip(scales)
        .map(|(&ri, &si)| {
            if ri == 0.0 {
                0.0
            } else if !ri.is_finite() || si.is_nan() || si <= 0.0 {
                f64::INFINITY
            } else {
                ri.abs() / si
            }
        })
        .fold(0.0, f64::max)
}

pub(super) fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0, |a: f64, x| a.max(x.abs()))
}
