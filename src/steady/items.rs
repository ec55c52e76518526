//! The `steady` section at a calibration: fixed values and starting guesses in dependency order,
//! and the parameter-only expressions that no guess can bring into their domain.
//!
//! ```text
//!     x_j = value_j(params, x_k for earlier items)     (`steady` or `guess` item for x_j)
//! ```

use super::*;

/// Leaves for `steady`-section expressions: parameters and already resolved steady values.
pub(super) struct SteadyLeaves<'a> {
    pub(super) params: &'a [f64],
    pub(super) values: &'a [f64],
}

impl Leaves for SteadyLeaves<'_> {
    fn parameter(&self, i: usize) -> f64 {
        self.params.get(i).copied().unwrap_or(f64::NAN)
    }
    fn variable(&self, i: usize, _: i32) -> f64 {
        self.values.get(i).copied().unwrap_or(f64::NAN)
    }
    fn innovation(&self, _: usize, _: i32) -> f64 {
        0.0
    }
    fn steady_state(&self, i: usize) -> f64 {
        self.values.get(i).copied().unwrap_or(f64::NAN)
    }
}

/// The steady-state variables an expression refers to.
pub(super) fn steady_refs(e: &Expr) -> Vec<usize> {
    let mut v = Vec::new();
    e.walk(&mut |n| {
        if let Expr::SteadyState(i) | Expr::Variable { index: i, .. } = n {
            v.push(*i);
        }
    });
    v
}

/// Evaluates the `steady` items in dependency order. Returns per variable the fixed value (if
/// any) and the starting value.
pub(super) fn resolve_items(
    model: &Model,
    params: &[f64],
) -> Result<(Vec<Option<f64>>, Vec<f64>), SteadyError> {
    let n = model.endogenous.len();
    let mut known: Vec<Option<f64>> = vec![None; n];
    let mut guess: Vec<Option<f64>> = vec![None; n];
    let has_item: Vec<bool> = (0..n)
        .map(|j| model.steady.iter().any(|s| s.variable == j))
        .collect();
    let default = |j: usize| if model.endogenous[j].log { 1.0 } else { 0.0 };
    let mut done = vec![false; model.steady.len()];
    // Each pass resolves at least one item or stops, so at most len + 1 passes.
    for _ in 0..=model.steady.len() {
        let mut progressed = false;
        for (k, item) in model.steady.iter().enumerate() {
            if done[k] || item.variable >= n {
                continue;
            }
            let refs = steady_refs(&item.expr);
            let ready = refs
                .iter()
                .all(|&r| r < n && (known[r].is_some() || guess[r].is_some() || !has_item[r]));
            if !ready {
                continue;
            }
            let values: Vec<f64> = (0..n)
                .map(|j| known[j].or(guess[j]).unwrap_or_else(|| default(j)))
                .collect();
            let v = item.expr.eval(&SteadyLeaves {
                params,
                values: &values,
            });
            let name = &model.endogenous[item.variable].name;
            if !v.is_finite() {
                return Err(SteadyError::NotFiniteValue {
                    variable: name.clone(),
                    value: v,
                });
            }
            match item.kind {
                SteadyKind::Known => known[item.variable] = Some(v),
                SteadyKind::Guess => guess[item.variable] = Some(v),
            }
            done[k] = true;
            progressed = true;
        }
        if !progressed {
            break;
        }
    }
    if done.iter().any(|d| !d) {
        let names: Vec<String> = model
            .steady
            .iter()
            .zip(&done)
            .filter(|(_, d)| !**d)
            .filter_map(|(s, _)| model.endogenous.get(s.variable).map(|v| v.name.clone()))
            .collect();
        return Err(SteadyError::Cycle { names });
    }
    let start: Vec<f64> = (0..n)
        .map(|j| known[j].or(guess[j]).unwrap_or_else(|| default(j)))
        .collect();
    for j in 0..n {
        if model.endogenous[j].log && start[j] <= 0.0 {
            return Err(SteadyError::LogStartNotPositive {
                variable: model.endogenous[j].name.clone(),
                value: start[j],
                is_guess: known[j].is_none(),
            });
        }
    }
    Ok((known, start))
}

/// Finds a function or power in an equation whose argument depends on parameters only and is
/// outside its domain at the calibration (`ln(p)` with p = -2): no starting point can fix that,
/// so it is reported before Newton runs, naming the expression and its parameters. Returns the
/// first such expression as an error.
pub(super) fn parameter_domain(model: &Model, params: &[f64]) -> Result<(), SteadyError> {
    use crate::model::{BinaryOp, Expr};
    let values = crate::model::calibrate::Values {
        parameters: params,
        steady: &[],
    };
    let names = crate::model::print::Names::of(model);
    for (i, eq) in model.equations.iter().enumerate() {
        let mut found: Option<(String, f64, Vec<usize>)> = None;
        for side in [&eq.lhs, &eq.rhs] {
            side.walk(&mut |e| {
                if found.is_some() {
                    return;
                }
                let is_call = matches!(
                    e,
                    Expr::Call(..)
                        | Expr::Call2(..)
                        | Expr::Binary(BinaryOp::Pow | BinaryOp::Div, ..)
                );
                if !is_call {
                    return;
                }
                let mut only_parameters = true;
                let mut used = Vec::new();
                e.walk(&mut |x| match x {
                    Expr::Variable { .. } | Expr::Innovation { .. } | Expr::SteadyState(_) => {
                        only_parameters = false
                    }
                    Expr::Parameter(p) => used.push(*p),
                    _ => {}
                });
                if only_parameters && !used.is_empty() {
                    let v = e.eval(&values);
                    if !v.is_finite() {
                        used.sort_unstable();
                        used.dedup();
                        found = Some((crate::model::print::expr_text(e, &names), v, used));
                    }
                }
            });
        }
        if let Some((expression, value, used)) = found {
            let parameters = used
                .iter()
                .filter_map(|&p| {
                    model.parameters.get(p).map(|q| {
                        format!("{} = {}", q.name, params.get(p).copied().unwrap_or(q.value))
                    })
                })
                .collect::<Vec<_>>()
                .join(", ");
            return Err(SteadyError::ParameterDomain {
                equation: model.equation_name(i),
                expression,
                value,
                parameters,
            });
        }
    }
    Ok(())
}
