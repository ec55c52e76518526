//! Optimal policy (spec §11): the policymaker minimises
//!
//! ```text
//!   E_0 sum_{t>=0} beta^t loss_t    subject to the model's equations other than the controls' rules,
//! ```
//!
//! with `loss_t` a quadratic form in the variables at t and their lags ([`loss`]), over the model
//! linearized at its steady state ([`crate::linear`]).
//!
//! - [`Regime::Commitment`] ([`commitment`]): the timeless-perspective plan. The first-order
//!   conditions of the Lagrangian are added to the constraints as equations, with one multiplier
//!   per constraint as an extra variable (`mult_LABEL`), and the whole system goes through the
//!   ordinary solution path with the stable-root threshold 1/sqrt(beta). A backward-looking model
//!   makes this the linear-quadratic regulator (the same pencil as [`crate::riccati`]).
//! - [`Regime::Discretion`] ([`discretion`]): the Markov-perfect policy, by iteration on the
//!   private sector's expectations rule (Oudiz and Sachs 1985; Backus and Driffill 1986;
//!   Soderlind 1999; Dennis 2007 for this general form).
//! - [`Regime::Rule`]: the model as written.
//!
//! [`expected_loss`] is the unconditional mean of the period loss under any solved regime.

pub mod commitment;
pub mod discretion;
pub mod loss;

#[cfg(test)]
mod tests;

use nalgebra::DMatrix;

use crate::linalg::solve_discrete_lyapunov;
use crate::linear::{linearize, LinearSystem};
use crate::model::{Model, SteadyKind};
use crate::solution::{PreparedModel, SolveError, SolveOptions, SolvedModel, StateSpace};
use crate::steady::solve_steady;
use crate::symbolic::CompiledModel;

pub use loss::{quadratic_loss, LossTerm, QuadraticLoss};

/// Which policy solves the model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Regime {
    /// The model as written (each control follows its rule).
    #[default]
    Rule,
    /// Timeless-perspective commitment.
    Commitment,
    /// Markov-perfect discretion.
    Discretion,
}

impl Regime {
    /// The command line's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Regime::Rule => "rule",
            Regime::Commitment => "commitment",
            Regime::Discretion => "discretion",
        }
    }
}

/// Tuning of the optimal-policy solvers.
#[derive(Debug, Clone, PartialEq)]
pub struct PolicyParams {
    /// Discretion stops when the largest change of the expectations rule and of the value matrix
    /// in one step is at most `tolerance` times (1 + their largest entry). Default 1e-13: the
    /// iteration converges linearly, so the error left is about tolerance / (1 - rate), well
    /// below the 1e-9 to which results are compared with closed forms.
    pub tolerance: f64,
    /// Iteration limit of discretion. Default 20000 (a contraction rate of 0.998 still reaches
    /// 1e-13).
    pub max_iterations: usize,
    /// Two equilibria from different starting points count as different when their decision
    /// rules differ by more than this, relative. Default 1e-6.
    pub distinct_tol: f64,
}

impl Default for PolicyParams {
    fn default() -> Self {
        PolicyParams {
            tolerance: 1e-13,
            max_iterations: 20000,
            distinct_tol: 1e-6,
        }
    }
}

/// Why an optimal policy could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PolicyError {
    #[error("the model has no objective section, so it has no optimal policy")]
    NoObjective,
    #[error("the optimal-policy regimes do not yet support the predetermined variable {variable} (a stock written with a lead); write it with a lag instead (language.md, \"Two timings for a stock\")")]
    PredeterminedStock { variable: String },
    #[error("the objective declares no control, so there is nothing to optimise")]
    NoControls,
    #[error("no discount factor: give one in the objective (`discount = ...`) or in options")]
    NoDiscount,
    #[error("the policymaker's discount factor must be in (0, 1], got {0}")]
    BadDiscount(f64),
    #[error("{0}")]
    Loss(String),
    #[error("the control {control} has no rule; its steady-state value must be given in the steady section (`{control} = ...`)")]
    ControlSteady { control: String },
    #[error("the model has no forward-looking variable and no control, so there is no policy problem to solve")]
    NothingToOptimise,
    #[error("the control {control} appears in no equation other than its own rule, so once the rule is set aside nothing ties it to the economy and no policy can be chosen; it must enter at least one of the model's other equations")]
    ControlUndetermined { control: String },
    #[error("{0}")]
    Solve(#[from] SolveError),
    #[error("discretion: {0}")]
    DiscretionForm(String),
    #[error("discretion did not converge within {iterations} iterations (last relative change {change:e}); the Markov-perfect equilibrium may not exist for this calibration")]
    DiscretionNoConvergence { iterations: usize, change: f64 },
    #[error("discretion: {0}")]
    DiscretionSingular(String),
    #[error("discretion: the equilibrium found is explosive (a root of modulus {modulus} is not below 1/sqrt(discount) = {bound})")]
    DiscretionUnstable { modulus: f64, bound: f64 },
}

/// The linear-quadratic problem: the model linearized at its steady state with the rules set
/// aside, the loss as a quadratic form and the discount.
#[derive(Debug, Clone)]
pub struct PolicyProblem {
    /// Steady-state levels.
    pub steady_state: Vec<f64>,
    /// The linearized model, all equations (as many rows as the model has, plus one appended per
    /// control without rule, which fixes its steady value and is never a constraint).
    pub linear: LinearSystem,
    /// The equations that constrain the policymaker (indices into `linear`'s rows).
    pub constraints: Vec<usize>,
    /// Control variables (indices).
    pub controls: Vec<usize>,
    pub loss: QuadraticLoss,
    pub discount: f64,
    /// Parameter values.
    pub params: Vec<f64>,
    pub notes: Vec<String>,
}

/// The discount of the objective, else of the options.
pub fn discount(model: &Model) -> Result<f64, PolicyError> {
    let obj = model.objective.as_ref().ok_or(PolicyError::NoObjective)?;
    let expr = obj
        .discount
        .as_ref()
        .or(model.options.discount.as_ref())
        .ok_or(PolicyError::NoDiscount)?;
    let b = model.eval_parameters(expr);
    if b > 0.0 && b <= 1.0 {
        Ok(b)
    } else {
        Err(PolicyError::BadDiscount(b))
    }
}

/// Builds the linear-quadratic problem of `model` (steady state, linearization, loss). A control
/// without a rule gets its steady value from the `steady` section (a known value).
pub fn problem(model: &Model) -> Result<PolicyProblem, PolicyError> {
    let obj = model.objective.as_ref().ok_or(PolicyError::NoObjective)?;
    if obj.controls.is_empty() {
        return Err(PolicyError::NoControls);
    }
    let beta = discount(model)?;
    // A copy in which each rule-less control is pinned at its known steady value, so that the
    // steady state is a square system.
    let mut sm = model.clone();
    let mut appended = Vec::new();
    for c in obj.controls.iter().filter(|c| c.replaces.is_none()) {
        let name = model.endogenous[c.variable].name.clone();
        let item = model
            .steady
            .iter()
            .find(|s| s.variable == c.variable && s.kind == SteadyKind::Known)
            .ok_or(PolicyError::ControlSteady {
                control: name.clone(),
            })?;
        appended.push(sm.equations.len());
        sm.equations.push(crate::model::Equation {
            label: Some(format!("steady value of {name}")),
            lhs: crate::model::Expr::Variable {
                index: c.variable,
                offset: 0,
            },
            rhs: item.expr.clone(),
        });
    }
    let params: Vec<f64> = sm.parameters.iter().map(|p| p.value).collect();
    if let Some(p) = sm.parameters.iter().find(|p| !p.value.is_finite()) {
        return Err(SolveError::NonFiniteParameter {
            name: p.name.clone(),
            value: p.value,
        }
        .into());
    }
    let compiled = CompiledModel::new(&sm);
    let steady = solve_steady(&sm, &compiled, &params).map_err(SolveError::from)?;
    let linear = linearize(&sm, &compiled, &params, &steady.values).map_err(SolveError::from)?;
    let replaced: Vec<usize> = obj.controls.iter().filter_map(|c| c.replaces).collect();
    let constraints: Vec<usize> = (0..sm.equations.len())
        .filter(|i| !replaced.contains(i) && !appended.contains(i))
        .collect();
    let controls: Vec<usize> = obj.controls.iter().map(|c| c.variable).collect();
    for &c in &controls {
        let enters = linear
            .variable_terms
            .iter()
            .any(|t| t.variable == c && t.value != 0.0 && constraints.contains(&t.equation));
        if !enters {
            return Err(PolicyError::ControlUndetermined {
                control: model.endogenous[c].name.clone(),
            });
        }
    }
    let loss = quadratic_loss(model, &obj.loss, &params, &steady.values)?;
    let forward = linear.variable_terms.iter().any(|t| t.offset > 0);
    if !forward && controls.is_empty() {
        return Err(PolicyError::NothingToOptimise);
    }
    Ok(PolicyProblem {
        steady_state: steady.values,
        linear,
        constraints,
        controls,
        loss,
        discount: beta,
        params,
        notes: steady.notes,
    })
}

/// A model solved under one regime.
#[derive(Debug, Clone)]
pub struct RegimeSolution {
    pub regime: Regime,
    /// The model that was solved: the original for `rule`, the model with the first-order
    /// conditions and multipliers for `commitment`, the original for `discretion` (whose rule is
    /// not a model equation).
    pub model: Model,
    pub solved: SolvedModel,
    /// Unconditional mean of the period loss; `None` without an objective or when the solution
    /// has no stationary distribution (or none exists).
    pub expected_loss: Option<f64>,
    /// Names of the multiplier variables (commitment).
    pub multipliers: Vec<String>,
    /// Iterations used (discretion).
    pub iterations: Option<usize>,
}

/// Solves `model` under `regime`. For the optimal regimes the stable-root threshold is
/// 1/sqrt(discount) whatever `options` says; `options.boundary_stable` is honoured.
pub fn solve_regime(
    model: &Model,
    regime: Regime,
    options: &SolveOptions,
    params: &PolicyParams,
) -> Result<RegimeSolution, PolicyError> {
    match regime {
        Regime::Rule => {
            let prepared = PreparedModel::new(model)?;
            let (solved, _) = prepared.solve(model, options)?;
            let expected_loss = rule_expected_loss(model, &solved)?;
            Ok(RegimeSolution {
                regime,
                model: model.clone(),
                solved,
                expected_loss,
                multipliers: vec![],
                iterations: None,
            })
        }
        Regime::Commitment => {
            // The first-order conditions are taken in the timing as written; a stock chosen a
            // period ahead would need them in expectation one period earlier.
            if let Some(i) = crate::model::timing::stocks(model).iter().position(|&s| s) {
                return Err(PolicyError::PredeterminedStock {
                    variable: model.endogenous[i].name.clone(),
                });
            }
            let prob = problem(model)?;
            let (aug, multipliers) = commitment::augmented_model(model, &prob);
            let mut opts = *options;
            opts.threshold = crate::solution::ThresholdSetting::Discount(prob.discount);
            let prepared = PreparedModel::new(&aug)?;
            let (mut solved, _) = prepared.solve(&aug, &opts)?;
            if solved.solution.is_some() {
                let mut ybar = prob.steady_state.clone();
                ybar.resize(aug.endogenous.len(), 0.0);
                let linear = linearize(&aug, prepared.compiled(), &prob.params, &ybar)
                    .map_err(SolveError::from)?;
                let dropped = commitment::drop_zero_multipliers(
                    &mut solved,
                    &aug,
                    model.endogenous.len(),
                    &linear,
                );
                if !dropped.is_empty() {
                    solved.warnings.push(format!(
                        "commitment: the plan holds {} at zero in every period, so {} not a state",
                        dropped
                            .iter()
                            .map(|s| s.split('[').next().unwrap_or(s))
                            .collect::<Vec<_>>()
                            .join(", "),
                        if dropped.len() == 1 {
                            "it is"
                        } else {
                            "they are"
                        }
                    ));
                }
            }
            solved.warnings.extend(prob.notes.iter().cloned());
            let expected_loss = expected_loss(&solved, &prob.loss);
            Ok(RegimeSolution {
                regime,
                model: aug,
                solved,
                expected_loss,
                multipliers,
                iterations: None,
            })
        }
        Regime::Discretion => {
            let prob = problem(model)?;
            let (solved, iterations) = discretion::solve(model, &prob, params)?;
            let expected_loss = expected_loss(&solved, &prob.loss);
            Ok(RegimeSolution {
                regime,
                model: model.clone(),
                solved,
                expected_loss,
                multipliers: vec![],
                iterations: Some(iterations),
            })
        }
    }
}

/// The expected loss of `model` solved as written (`solved`): `None` without an objective or a
/// solution; an error when the loss is not a quadratic form.
pub fn rule_expected_loss(model: &Model, solved: &SolvedModel) -> Result<Option<f64>, PolicyError> {
    match (&model.objective, &solved.solution) {
        (Some(obj), Some(_)) => {
            let params: Vec<f64> = model.parameters.iter().map(|p| p.value).collect();
            let q = quadratic_loss(model, &obj.loss, &params, &solved.steady_state)?;
            Ok(expected_loss(solved, &q))
        }
        _ => Ok(None),
    }
}

/// The unconditional mean of the period loss, `L(ybar) + (1/2) tr(H Var(d_t))`, with `Var(d_t)`
/// from the state space (`s_t = G s_{t-1} + H e_t`, the discrete Lyapunov equation for the states'
/// covariance). Reads `solved` (variables indexed as in the loss); returns `None` when there is no
/// solution or the states have no stationary distribution (a root on or outside the unit circle).
pub fn expected_loss(solved: &SolvedModel, loss: &QuadraticLoss) -> Option<f64> {
    let space: &StateSpace = solved.solution.as_ref()?;
    let ns = space.g.nrows();
    let ne = space.q.ncols();
    let lmax = loss.max_lag() as usize;
    // Basis: s_{t-lmax-1}, then e_{t-lmax}, ..., e_t. Coefficients of s_{t-l-1} and y_{t-l}.
    let dim = ns + ne * (lmax + 1);
    let mut s_coef = DMatrix::<f64>::zeros(ns, dim);
    for i in 0..ns {
        s_coef[(i, i)] = 1.0;
    }
    let mut y_of_lag: Vec<DMatrix<f64>> = vec![DMatrix::zeros(0, 0); lmax + 1];
    for step in 0..=lmax {
        let l = lmax - step; // y_{t-l} = P s_{t-l-1} + Q e_{t-l}
        let col = ns + ne * step;
        let mut y = &space.p * &s_coef;
        for r in 0..space.q.nrows() {
            for c in 0..ne {
                y[(r, col + c)] += space.q[(r, c)];
            }
        }
        y_of_lag[l] = y;
        // s_{t-l} = G s_{t-l-1} + H e_{t-l}
        let mut next = &space.g * &s_coef;
        for r in 0..ns {
            for c in 0..ne {
                next[(r, col + c)] += space.h[(r, c)];
            }
        }
        s_coef = next;
    }
    let mut cov = DMatrix::<f64>::zeros(dim, dim);
    if ns > 0 {
        let w = &space.h * &solved.covariance * space.h.transpose();
        let sol = solve_discrete_lyapunov(&space.g, &w).ok()?;
        cov.view_mut((0, 0), (ns, ns)).copy_from(&sol.x);
    }
    for step in 0..=lmax {
        let o = ns + ne * step;
        cov.view_mut((o, o), (ne, ne)).copy_from(&solved.covariance);
    }
    let k = loss.terms.len();
    let mut coef = DMatrix::<f64>::zeros(k, dim);
    for (a, t) in loss.terms.iter().enumerate() {
        let y = &y_of_lag[t.lag as usize];
        if t.variable >= y.nrows() {
            return None;
        }
        coef.row_mut(a).copy_from(&y.row(t.variable));
    }
    let var_d = &coef * &cov * coef.transpose();
    let value = loss.constant + 0.5 * (&loss.hessian * var_d).trace();
    value.is_finite().then_some(value)
}
