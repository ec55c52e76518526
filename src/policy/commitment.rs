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

/// Multipliers that the plan holds at zero in every period (the multiplier of the demand equation
/// when the rate is not in the loss: its first-order condition is `mu_demand = 0`) are states of
/// the canonical form only formally: a nonzero history of them is not consistent with the
/// first-order conditions, so no rule satisfies the equations in those directions and the
/// plug-back residual over all states is of order one. This removes every state `m[t-l]` of a
/// multiplier m whose rows of P and Q vanish (below `ZERO_MULTIPLIER_TOL` times the largest
/// entry of P and Q) and re-checks the remaining solution in the linearized Lagrangian system
/// `linear` (variables of `aug`), replacing the solver's residual warning by the new figure.
/// Overwrites `solved.solution` and `solved.warnings`; returns the names of the dropped states.
pub fn drop_zero_multipliers(
    solved: &mut crate::solution::SolvedModel,
    aug: &Model,
    n_original: usize,
    linear: &crate::linear::LinearSystem,
) -> Vec<String> {
    let Some(sp) = solved.solution.as_ref() else {
        return vec![];
    };
    let scale =
        sp.p.iter()
            .chain(sp.q.iter())
            .fold(0.0f64, |a, v| a.max(v.abs()));
    let zero: Vec<usize> = (n_original..aug.endogenous.len())
        .filter(|&j| {
            j < sp.p.nrows()
                && sp
                    .p
                    .row(j)
                    .iter()
                    .chain(sp.q.row(j).iter())
                    .all(|v| v.abs() <= ZERO_MULTIPLIER_TOL * scale)
        })
        .collect();
    let names: Vec<String> = zero
        .iter()
        .map(|&j| aug.endogenous[j].name.clone())
        .collect();
    let is_dropped = |state: &str| {
        names.iter().any(|n| {
            state
                .strip_prefix(n.as_str())
                .is_some_and(|r| r.starts_with("[t-"))
        })
    };
    let keep: Vec<usize> = (0..sp.states.len())
        .filter(|&k| !is_dropped(&sp.states[k]))
        .collect();
    if keep.len() == sp.states.len() {
        return vec![];
    }
    let dropped: Vec<String> = (0..sp.states.len())
        .filter(|k| !keep.contains(k))
        .map(|k| sp.states[k].clone())
        .collect();
    let reduced = crate::solution::StateSpace {
        states: keep.iter().map(|&k| sp.states[k].clone()).collect(),
        p: nalgebra::DMatrix::from_fn(sp.p.nrows(), keep.len(), |r, c| sp.p[(r, keep[c])]),
        q: sp.q.clone(),
        g: nalgebra::DMatrix::from_fn(keep.len(), keep.len(), |r, c| sp.g[(keep[r], keep[c])]),
        h: nalgebra::DMatrix::from_fn(keep.len(), sp.h.ncols(), |r, c| sp.h[(keep[r], c)]),
    };
    let resid = plug_back_by_name(linear, aug, &reduced, &zero);
    solved
        .warnings
        .retain(|w| !w.starts_with("the solution leaves a relative residual"));
    if !(resid <= crate::solution::solve::PLUG_BACK_TOL) {
        solved.warnings.push(format!(
            "the solution leaves a relative residual of {resid:.1e} in the linearized first-order conditions (above {:e}); the results may be inaccurate",
            crate::solution::solve::PLUG_BACK_TOL
        ));
    }
    solved.solution = Some(reduced);
    dropped
}

/// A multiplier counts as held at zero when its rows of P and Q are below this times the largest
/// entry of P and Q: exact zeros come out of the QZ as rounding of order 1e-16 relative.
pub const ZERO_MULTIPLIER_TOL: f64 = 1e-12;

/// The largest residual of `space` in `linear` relative to the size of the terms of its equation
/// (as [`crate::solution::check`], with states found by name: `x[t-l]` and `e[t-l]`); variables in
/// `zero` are identically zero. NaN when a lagged term has no state.
fn plug_back_by_name(
    linear: &crate::linear::LinearSystem,
    model: &Model,
    space: &crate::solution::StateSpace,
    zero: &[usize],
) -> f64 {
    use crate::linear::dated;
    use nalgebra::DMatrix;
    let nk = space.g.nrows();
    let ne = space.q.ncols();
    let width = nk + ne;
    let state = |name: String| space.states.iter().position(|s| *s == name);
    let mut resid = DMatrix::<f64>::zeros(linear.n_equations, width);
    let mut scale = vec![0.0f64; linear.n_equations];
    let mut gh = DMatrix::<f64>::zeros(nk, width);
    gh.view_mut((0, 0), (nk, nk)).copy_from(&space.g);
    gh.view_mut((0, nk), (nk, ne)).copy_from(&space.h);
    for t in &linear.variable_terms {
        let j = t.variable;
        let mut row = vec![0.0; width];
        if zero.contains(&j) {
            // identically zero
        } else if t.offset >= 0 {
            let mut m = DMatrix::<f64>::zeros(0, 0);
            let base: DMatrix<f64> = if t.offset == 0 {
                let mut r = DMatrix::<f64>::zeros(1, width);
                for c in 0..nk {
                    r[(0, c)] = space.p[(j, c)];
                }
                for c in 0..ne {
                    r[(0, nk + c)] = space.q[(j, c)];
                }
                r
            } else {
                for k in 0..t.offset {
                    m = if k == 0 { gh.clone() } else { &space.g * &m };
                }
                let r = space.p.row(j) * &m;
                DMatrix::from_fn(1, width, |_, c| r[(0, c)])
            };
            for c in 0..width {
                row[c] = base[(0, c)];
            }
        } else {
            match state(dated(&model.endogenous[j].name, t.offset)) {
                Some(s) => row[s] = 1.0,
                None => return f64::NAN,
            }
        }
        for c in 0..width {
            let term = t.value * row[c];
            resid[(t.equation, c)] += term;
            scale[t.equation] = scale[t.equation].max(term.abs());
        }
    }
    for t in &linear.innovation_terms {
        let c = if t.lag == 0 {
            Some(nk + t.shock)
        } else {
            state(dated(&model.exogenous[t.shock].name, -(t.lag as i32)))
        };
        let Some(c) = c else { return f64::NAN };
        resid[(t.equation, c)] += t.value;
        scale[t.equation] = scale[t.equation].max(t.value.abs());
    }
    let mut rel = 0.0f64;
    for i in 0..linear.n_equations {
        for c in 0..width {
            let r = resid[(i, c)].abs();
            if r.is_nan() {
                return f64::NAN;
            }
            if r > 0.0 {
                rel = rel.max(r / scale[i].max(f64::MIN_POSITIVE));
            }
        }
    }
    rel
}
