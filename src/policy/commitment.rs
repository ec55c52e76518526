//! Commitment in the timeless perspective: the first-order conditions of
//!
//! ```text
//!   E_0 sum_t beta^t [ loss_t + sum_i mu_{i,t} sum_{j,k} F_{i,j,k} yhat_{j,t+k} ],
//! ```
//!
//! the sum over the constraints i (the equations other than the controls' rules, linearized as
//! in [`crate::linear`]). Differentiating by `yhat_{j,t}` (it appears in `loss_{t+p}` through
//! its lag p, and in constraint i at date `t - k` through offset k) and dividing by `beta^t`:
//!
//! ```text
//!   FOC_j:  sum_p beta^p sum_b H_{(j,p),b} E_t yhat_{b, t+p-q_b}  +  sum_{i,k} beta^{-k} F_{i,j,k} E_t mu_{i,t-k} = 0,
//! ```
//!
//! with H the Hessian of the loss over dated variables (loss = const + d'Hd/2, see
//! [`super::loss`]). The constraints (as written, nonlinear), the FOCs (linear, written in
//! deviations: `y - ybar` for level variables, `ln y - ln ybar` for `log` ones) and one
//! multiplier variable per constraint (`mult_LABEL`, steady value 0) make a square model whose
//! steady state is the original one (given as known values) and whose linearization is the
//! Lagrangian system. It is solved by the ordinary path with the threshold 1/sqrt(beta): the
//! multipliers of forward-looking constraints enter with lags and are states, and starting them
//! at zero is the plan of period 0; their history-given values are the timeless perspective.

use std::collections::BTreeMap;

use super::PolicyProblem;
use crate::model::{
    BinaryOp, Endogenous, Equation, Expr, Function, Model, Objective, SteadyItem, SteadyKind,
};

/// `e` in linearization coordinates around `ybar`: `y - ybar` or `ln y - ln ybar`.
fn deviation(model: &Model, ybar: &[f64], variable: usize, offset: i32) -> Expr {
    let y = Expr::Variable {
        index: variable,
        offset,
    };
    match model.endogenous.get(variable) {
        Some(v) if v.log => Expr::binary(
            BinaryOp::Sub,
            Expr::Call(Function::Ln, Box::new(y)),
            Expr::Number(ybar[variable].ln()),
        ),
        Some(_) => Expr::binary(BinaryOp::Sub, y, Expr::Number(ybar[variable])),
        None => y, // a multiplier: level, steady value 0
    }
}

/// Sum of the terms as a balanced tree (depth log2 of their number, well inside the depth limit).
fn balanced_sum(mut terms: Vec<Expr>) -> Expr {
    if terms.is_empty() {
        return Expr::Number(0.0);
    }
    while terms.len() > 1 {
        let mut next = Vec::with_capacity(terms.len().div_ceil(2));
        let mut it = terms.into_iter();
        while let Some(a) = it.next() {
            match it.next() {
                Some(b) => next.push(Expr::binary(BinaryOp::Add, a, b)),
                None => next.push(a),
            }
        }
        terms = next;
    }
    terms.pop().unwrap_or(Expr::Number(0.0))
}

/// A name not yet among `taken`: `base`, else `base_2`, `base_3`...
fn fresh(base: String, taken: &[String]) -> String {
    if !taken.contains(&base) {
        return base;
    }
    (2..)
        .map(|k| format!("{base}_{k}"))
        .find(|n| !taken.contains(n))
        .unwrap_or(base)
}

/// The model of the Lagrangian system (see the module doc) and the names of its multipliers.
pub fn augmented_model(model: &Model, prob: &PolicyProblem) -> (Model, Vec<String>) {
    let n = model.endogenous.len();
    let beta = prob.discount;
    let ybar = &prob.steady_state;
    let mut taken = model.variable_names();
    let mut mult_names = Vec::new();
    let mut mult_of = BTreeMap::new(); // constraint row -> multiplier variable index
    for (k, &i) in prob.constraints.iter().enumerate() {
        let base = match model.equations.get(i).and_then(|e| e.label.as_deref()) {
            Some(l) => format!("mult_{l}"),
            None => format!("mult_eq{}", i + 1),
        };
        let name = fresh(base, &taken);
        taken.push(name.clone());
        mult_names.push(name);
        mult_of.insert(i, n + k);
    }
    // FOC coefficients: per variable j, a map (variable, offset) -> coefficient.
    let mut foc: Vec<BTreeMap<(usize, i32), f64>> = vec![BTreeMap::new(); n];
    for t in &prob.linear.variable_terms {
        if let Some(&mu) = mult_of.get(&t.equation) {
            *foc[t.variable].entry((mu, -t.offset)).or_insert(0.0) +=
                beta.powi(-t.offset) * t.value;
        }
    }
    let terms = &prob.loss.terms;
    for (a, ta) in terms.iter().enumerate() {
        for (b, tb) in terms.iter().enumerate() {
            let h = prob.loss.hessian[(a, b)];
            if h != 0.0 {
                let p = ta.lag as i32;
                let offset = p - tb.lag as i32;
                *foc[ta.variable].entry((tb.variable, offset)).or_insert(0.0) += beta.powi(p) * h;
            }
        }
    }
    let mut endogenous: Vec<Endogenous> = model
        .endogenous
        .iter()
        .map(|v| Endogenous {
            max_lead: 0,
            max_lag: 0,
            ..v.clone()
        })
        .collect();
    for (k, name) in mult_names.iter().enumerate() {
        endogenous.push(Endogenous {
            name: name.clone(),
            label: Some(format!(
                "Lagrange multiplier of {}",
                model.equation_name(prob.constraints[k])
            )),
            log: false,
            max_lead: 0,
            max_lag: 0,
            predetermined: false,
        });
    }
    let mut equations: Vec<Equation> = prob
        .constraints
        .iter()
        .filter_map(|&i| model.equations.get(i).cloned())
        .collect();
    for (j, coefs) in foc.iter().enumerate() {
        let parts: Vec<Expr> = coefs
            .iter()
            .filter(|(_, c)| **c != 0.0)
            .map(|(&(v, o), &c)| {
                Expr::binary(BinaryOp::Mul, Expr::Number(c), deviation(model, ybar, v, o))
            })
            .collect();
        equations.push(Equation {
            label: Some(fresh(format!("foc_{}", model.endogenous[j].name), &taken)),
            lhs: balanced_sum(parts),
            rhs: Expr::Number(0.0),
        });
    }
    let pairs: Vec<(Expr, Expr)> = equations
        .iter()
        .map(|e| (e.lhs.clone(), e.rhs.clone()))
        .collect();
    let mut exogenous: Vec<_> = model
        .exogenous
        .iter()
        .map(|e| crate::model::Exogenous {
            max_lag: 0,
            ..e.clone()
        })
        .collect();
    crate::model::record_leads_and_lags(&mut endogenous, &mut exogenous, &pairs);
    let steady: Vec<SteadyItem> = (0..endogenous.len())
        .map(|j| SteadyItem {
            kind: SteadyKind::Known,
            variable: j,
            expr: Expr::Number(if j < n { ybar[j] } else { 0.0 }),
        })
        .collect();
    let mut options = model.options.clone();
    options.discount = Some(Expr::Number(beta));
    options.threshold = Some(Expr::Number(1.0 / beta.sqrt()));
    let objective = model.objective.as_ref().map(|o| Objective {
        loss: o.loss.clone(),
        discount: Some(Expr::Number(beta)),
        controls: o
            .controls
            .iter()
            .map(|c| crate::model::Control {
                variable: c.variable,
                replaces: None,
            })
            .collect(),
    });
    let aug = Model {
        endogenous,
        exogenous,
        equations,
        steady,
        options,
        objective,
        ..model.clone()
    };
    (aug, mult_names)
}
