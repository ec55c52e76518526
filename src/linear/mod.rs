//! The first-order system around the steady state.
//!
//! Contract: with yhat_{j,t} = y_{j,t} - ybar_j for level variables and ln y_{j,t} - ln ybar_j for
//! `log` variables (spec §6), the linearized model is, for each equation i,
//!
//! ```text
//!   sum_{j,k} F_{i,j,k} E_t yhat_{j,t+k} + sum_{s,l} E_{i,s,l} e_{s,t-l} = 0,
//! ```
//!
//! where F_{i,j,k} = dr_i/dy_{j,t+k} at the steady state (times ybar_j for a `log` variable: the
//! chain rule dy = ybar * dln y) and E_{i,s,l} = dr_i/de_{s,t-l}. The system is kept sparse as
//! triplets; [`crate::canonical`] assembles the dense pencil from them.

pub mod balance;

use crate::model::{Expr, Function, Function2, Leaves, Model, MAX_EXPR_DEPTH};
use crate::symbolic::{CompiledModel, Leaf};

/// Two arguments of `min`/`max` (or the argument of `abs`/`sign` and zero) closer than this,
/// relative to their size, count as sitting on the kink (a few hundred machine epsilons: ties
/// produced by arithmetic rather than by construction still count).
pub const KINK_TOL: f64 = 1e-12;

/// One nonzero coefficient on a dated variable: F_{equation, variable, offset}.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VariableTerm {
    pub equation: usize,
    pub variable: usize,
    /// Lead (> 0), current (0) or lag (< 0).
    pub offset: i32,
    pub value: f64,
}

/// One nonzero coefficient on an innovation: E_{equation, shock, lag}.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InnovationTerm {
    pub equation: usize,
    pub shock: usize,
    /// 0 for e_t, l for e_{t-l}.
    pub lag: u32,
    pub value: f64,
}

/// The linearized model (see the module doc).
#[derive(Debug, Clone, PartialEq)]
pub struct LinearSystem {
    pub n_equations: usize,
    pub n_variables: usize,
    pub n_shocks: usize,
    pub variable_terms: Vec<VariableTerm>,
    pub innovation_terms: Vec<InnovationTerm>,
    /// Notes for the person (kinks at the steady state).
    pub warnings: Vec<String>,
}

/// Why the linearization failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LinearError {
    #[error("the derivative of {equation} with respect to {what} is not finite at the steady state ({value}); the equation is not differentiable there (check ln, sqrt and ^ near zero)")]
    NonFinite {
        equation: String,
        what: String,
        value: f64,
    },
}

impl LinearSystem {
    /// Largest lead of variable `j` with a nonzero coefficient (0 if none).
    pub fn max_lead(&self, j: usize) -> u32 {
        self.variable_terms
            .iter()
            .filter(|t| t.variable == j && t.offset > 0)
            .map(|t| t.offset as u32)
            .max()
            .unwrap_or(0)
    }
}

/// Evaluates the coefficient tape of `compiled` at the steady state `ybar` with parameter values
/// `params`; returns the linear system, or an error naming the first non-finite coefficient.
pub fn linearize(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    ybar: &[f64],
) -> Result<LinearSystem, LinearError> {
    let mut values = vec![0.0; compiled.coefficient_pattern.len()];
    let mut work = Vec::new();
    compiled
        .coefficients
        .eval(params, ybar, &mut work, &mut values);
    let mut variable_terms = Vec::new();
    let mut innovation_terms = Vec::new();
    for (c, &v) in compiled.coefficient_pattern.iter().zip(&values) {
        if !v.is_finite() {
            let what = match c.leaf {
                Leaf::Variable { index, offset } => dated(&model.endogenous[index].name, offset),
                Leaf::Innovation { index, offset } => dated(&model.exogenous[index].name, offset),
                Leaf::SteadyState(index) => format!("{}[ss]", model.endogenous[index].name),
            };
            return Err(LinearError::NonFinite {
                equation: model.equation_name(c.equation),
                what,
                value: v,
            });
        }
        if v == 0.0 {
            continue;
        }
        match c.leaf {
            Leaf::Variable { index, offset } => {
                let scale = if model.endogenous[index].log {
                    ybar[index]
                } else {
                    1.0
                };
                variable_terms.push(VariableTerm {
                    equation: c.equation,
                    variable: index,
                    offset,
                    value: v * scale,
                });
            }
            Leaf::Innovation { index, offset } => innovation_terms.push(InnovationTerm {
                equation: c.equation,
                shock: index,
                lag: (-offset).max(0) as u32,
                value: v,
            }),
            Leaf::SteadyState(_) => {}
        }
    }
    let mut warnings = Vec::new();
    for (i, eq) in model.equations.iter().enumerate() {
        if compiled.has_kink.get(i).copied().unwrap_or(false) {
            let at = AtSteady { params, ybar };
            let mut found = Vec::new();
            kinks(&eq.lhs, &at, 0, &mut found);
            kinks(&eq.rhs, &at, 0, &mut found);
            if !found.is_empty() {
                found.dedup();
                warnings.push(format!(
                    "{} sits on a kink at the steady state ({}): the linearization uses the one-sided derivative (abs: the slope for a rising argument; min and max: the first argument's slope)",
                    model.equation_name(i),
                    found.join(", ")
                ));
            }
        }
    }
    Ok(LinearSystem {
        n_equations: model.equations.len(),
        n_variables: model.endogenous.len(),
        n_shocks: model.exogenous.len(),
        variable_terms,
        innovation_terms,
        warnings,
    })
}

/// `name`, `name[t+k]` or `name[t-k]`.
pub fn dated(name: &str, offset: i32) -> String {
    match offset {
        0 => name.to_string(),
        k if k > 0 => format!("{name}[t+{k}]"),
        k => format!("{name}[t-{}]", -k),
    }
}

struct AtSteady<'a> {
    params: &'a [f64],
    ybar: &'a [f64],
}

impl Leaves for AtSteady<'_> {
    fn parameter(&self, i: usize) -> f64 {
        self.params.get(i).copied().unwrap_or(f64::NAN)
    }
    fn variable(&self, i: usize, _: i32) -> f64 {
        self.ybar.get(i).copied().unwrap_or(f64::NAN)
    }
    fn innovation(&self, _: usize, _: i32) -> f64 {
        0.0
    }
    fn steady_state(&self, i: usize) -> f64 {
        self.ybar.get(i).copied().unwrap_or(f64::NAN)
    }
}

fn tie(a: f64, b: f64) -> bool {
    (a - b).abs() <= KINK_TOL * (1.0 + a.abs().max(b.abs()))
}

/// Collects a description of every abs/sign/min/max in `e` whose arguments sit on its kink.
fn kinks(e: &Expr, at: &AtSteady, depth: usize, out: &mut Vec<String>) {
    if depth > MAX_EXPR_DEPTH {
        return;
    }
    match e {
        Expr::Call(f @ (Function::Abs | Function::Sign), a) => {
            if tie(a.eval(at), 0.0) {
                out.push(format!("{} of 0", f.name()));
            }
            kinks(a, at, depth + 1, out);
        }
        Expr::Call2(f, a, b) => {
            let (x, y) = (a.eval(at), b.eval(at));
            if tie(x, y) {
                let f: Function2 = *f;
                out.push(format!("{} with both arguments {x}", f.name()));
            }
            kinks(a, at, depth + 1, out);
            kinks(b, at, depth + 1, out);
        }
        Expr::Neg(a) | Expr::Call(_, a) => kinks(a, at, depth + 1, out),
        Expr::Binary(_, a, b) => {
            kinks(a, at, depth + 1, out);
            kinks(b, at, depth + 1, out);
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::symbolic::testing::*;

    #[test]
    fn log_variables_are_scaled_by_their_steady_state() {
        // k = 0.3 * k[t-1]^0.5 * exp(e): in logs, khat = 0.5 khat[t-1] + e; in levels the slope
        // on k[t-1] is 0.15 / sqrt(kbar) = 0.5 at kbar = 0.09.
        for log in [true, false] {
            let m = model(
                &[("k", log)],
                &["e"],
                &[],
                vec![(
                    v(0, 0),
                    mul(
                        mul(n(0.3), pow(v(0, -1), n(0.5))),
                        Expr::Call(Function::Exp, Box::new(e(0, 0))),
                    ),
                )],
                vec![],
            );
            let c = CompiledModel::new(&m);
            let ybar = [0.09];
            let lin = linearize(&m, &c, &[], &ybar).unwrap();
            let get = |o: i32| {
                lin.variable_terms
                    .iter()
                    .find(|t| t.offset == o)
                    .unwrap()
                    .value
            };
            let scale = if log { 0.09 } else { 1.0 };
            assert!((get(0) - scale).abs() < 1e-15);
            assert!((get(-1) + 0.5 * scale).abs() < 1e-15, "{}", get(-1));
            assert!((lin.innovation_terms[0].value + 0.09).abs() < 1e-15);
        }
    }

    #[test]
    fn a_kink_at_the_steady_state_is_warned_about() {
        // x = max(x[t-1], 0) at xbar = 0.
        let m = model(
            &[("x", false)],
            &[],
            &[],
            vec![(
                v(0, 0),
                Expr::Call2(Function2::Max, Box::new(v(0, -1)), Box::new(n(0.0))),
            )],
            vec![],
        );
        let c = CompiledModel::new(&m);
        let lin = linearize(&m, &c, &[], &[0.0]).unwrap();
        assert_eq!(lin.warnings.len(), 1, "{:?}", lin.warnings);
        assert!(lin.warnings[0].contains("max"));
        // Away from the kink, no warning.
        let lin = linearize(&m, &c, &[], &[1.0]).unwrap();
        assert!(lin.warnings.is_empty());
    }
}
