//! The observation equation of a solved model (spec §9): each observable
//! o_j = f_j(y_t, y_{t-1}, ..., parameters, steady values) linearized exactly at the steady
//! state, keeping its constant so data stay in their own units,
//!
//! ```text
//!   o_{j,t} = f_j(ybar) + sum_{i,l} df_j/dy_{i,t-l} (ybar) * c_i * yhat_{i,t-l} + u_{j,t}
//!   (c_i = ybar_i for a `log` variable, whose yhat is a log deviation; 1 otherwise)
//! ```
//!
//! on the state alpha_t = [yhat_t; s_t; yhat_{t-1}; ...; yhat_{t-L}] (L the largest lag in the
//! observables) built from the decision rule yhat_t = P s_{t-1} + Q e_t, s_t = G s_{t-1} + H e_t:
//!
//! ```text
//!   T = [0 P 0 .. 0; 0 G 0 .. 0; I 0 0 .. 0; 0 0 I .. 0; ...],  R = [Q; H; 0; ...],
//!   Var e = the model's innovation covariance,  Hm = the measurement-error covariance.
//! ```
//!
//! Derivatives are symbolic ([`crate::symbolic::Graph::diff`]), evaluated once at the steady
//! state.

use std::collections::HashMap;

use nalgebra::{DMatrix, DVector};
use thiserror::Error;

use super::StateSpaceModel;
use crate::linear::dated;
use crate::model::Model;
use crate::solution::SolvedModel;
use crate::symbolic::{Graph, Leaf, Tape};

/// Largest lag of a variable accepted in an observable (the state grows by one copy of the
/// variables per lag).
pub const MAX_OBSERVABLE_LAG: usize = 64;

/// The state-space form of a solved model with its observables, and the names of its pieces.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelStateSpace {
    pub system: StateSpaceModel,
    /// Observable names (rows of Z), file order.
    pub observables: Vec<String>,
    /// Declared variables: the first `variables.len()` states.
    pub variables: Vec<String>,
    /// Innovation names (columns of R).
    pub shocks: Vec<String>,
    /// Names of every state (`gap`, `k[t-1]` for the solution's states, `gap[t-1]` for lags).
    pub state_names: Vec<String>,
    /// The largest lag of a variable in the observables.
    pub max_lag: usize,
}

/// Why a model's observation equation could not be built.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ObservationError {
    #[error("the model has no unique stable solution, so it has no state-space form")]
    NoSolution,
    #[error("the model declares no observables (an `observables` section is needed for data)")]
    NoObservables,
    #[error("observable {observable}: {what} is not finite at the steady state ({value}); it cannot be linearized there")]
    NonFinite {
        observable: String,
        what: String,
        value: f64,
    },
    #[error("observable {observable} uses {what}: observables may use only variables at t and their lags (at most {MAX_OBSERVABLE_LAG})")]
    BadLeaf { observable: String, what: String },
    #[error(
        "the measurement-error covariance is {rows}x{cols} but there are {observables} observables"
    )]
    Shape {
        rows: usize,
        cols: usize,
        observables: usize,
    },
}

/// Builds the state-space form of the module doc from the checked `model` and its solution
/// `solved` (both read only).
pub fn model_state_space(
    model: &Model,
    solved: &SolvedModel,
) -> Result<ModelStateSpace, ObservationError> {
    let sol = solved
        .solution
        .as_ref()
        .ok_or(ObservationError::NoSolution)?;
    let p = model.observables.len();
    if p == 0 {
        return Err(ObservationError::NoObservables);
    }
    let nv = solved.variables.len();
    let ns = sol.states.len();
    let k = solved.shocks.len();
    let params: Vec<f64> = model.parameters.iter().map(|p| p.value).collect();
    let ybar = &solved.steady_state;

    // Linearize every observable: constant and coefficients on (variable, lag).
    let mut graph = Graph::new();
    let mut roots = Vec::with_capacity(p);
    let mut terms: Vec<Vec<(usize, usize)>> = Vec::with_capacity(p);
    let mut outputs = Vec::new();
    let mut max_lag = 0usize;
    for obs in &model.observables {
        let root = graph.from_expr(&obs.expr);
        roots.push(root);
        outputs.push(root);
        let mut mine = Vec::new();
        for leaf in graph.leaves_of(root) {
            match leaf {
                Leaf::Variable { index, offset } if offset <= 0 && index < nv => {
                    let lag = (-offset) as usize;
                    if lag > MAX_OBSERVABLE_LAG {
                        return Err(ObservationError::BadLeaf {
                            observable: obs.name.clone(),
                            what: dated(&solved.variables[index], offset),
                        });
                    }
                    max_lag = max_lag.max(lag);
                    let mut memo = HashMap::new();
                    let d = graph.diff(root, leaf, &mut memo);
                    outputs.push(d);
                    mine.push((index, lag));
                }
                Leaf::SteadyState(_) => {}
                other => {
                    let what = match other {
                        Leaf::Variable { index, offset } => model
                            .endogenous
                            .get(index)
                            .map_or("an unknown variable".to_string(), |v| {
                                dated(&v.name, offset)
                            }),
                        Leaf::Innovation { index, .. } => model
                            .exogenous
                            .get(index)
                            .map_or("an innovation".to_string(), |e| {
                                format!("innovation {}", e.name)
                            }),
                        Leaf::SteadyState(_) => String::new(),
                    };
                    return Err(ObservationError::BadLeaf {
                        observable: obs.name.clone(),
                        what,
                    });
                }
            }
        }
        terms.push(mine);
    }
    let tape = Tape::compile(&graph, &outputs);
    let mut values = vec![0.0; outputs.len()];
    let mut work = Vec::new();
    tape.eval(&params, ybar, &mut work, &mut values);

    // State layout: [yhat_t (nv); s_t (ns); yhat_{t-1}; ...; yhat_{t-L}].
    let n = nv + ns + nv * max_lag;
    let lag_block = |lag: usize| {
        if lag == 0 {
            0
        } else {
            nv + ns + (lag - 1) * nv
        }
    };
    let mut z = DMatrix::zeros(p, n);
    let mut d = DVector::zeros(p);
    let mut at = 0;
    for (j, obs) in model.observables.iter().enumerate() {
        let c = values[at];
        at += 1;
        if !c.is_finite() {
            return Err(ObservationError::NonFinite {
                observable: obs.name.clone(),
                what: "its value".into(),
                value: c,
            });
        }
        d[j] = c;
        for &(var, lag) in &terms[j] {
            let v = values[at];
            at += 1;
            if !v.is_finite() {
                return Err(ObservationError::NonFinite {
                    observable: obs.name.clone(),
                    what: format!(
                        "the derivative with respect to {}",
                        dated(&solved.variables[var], -(lag as i32))
                    ),
                    value: v,
                });
            }
            let scale = if solved.log.get(var).copied().unwrap_or(false) {
                ybar[var]
            } else {
                1.0
            };
            z[(j, lag_block(lag) + var)] += v * scale;
        }
    }
    let mut t = DMatrix::zeros(n, n);
    t.view_mut((0, nv), (nv, ns)).copy_from(&sol.p);
    t.view_mut((nv, nv), (ns, ns)).copy_from(&sol.g);
    for lag in 1..=max_lag {
        let from = if lag == 1 { 0 } else { lag_block(lag - 1) };
        let to = lag_block(lag);
        for i in 0..nv {
            t[(to + i, from + i)] = 1.0;
        }
    }
    let mut r = DMatrix::zeros(n, k);
    r.view_mut((0, 0), (nv, k)).copy_from(&sol.q);
    r.view_mut((nv, 0), (ns, k)).copy_from(&sol.h);
    let hm = if model.measurement_covariance.nrows() == 0
        && model.measurement_covariance.ncols() == 0
    {
        DMatrix::zeros(p, p)
    } else if model.measurement_covariance.nrows() == p && model.measurement_covariance.ncols() == p
    {
        model.measurement_covariance.clone()
    } else {
        return Err(ObservationError::Shape {
            rows: model.measurement_covariance.nrows(),
            cols: model.measurement_covariance.ncols(),
            observables: p,
        });
    };
    let mut state_names: Vec<String> = solved.variables.clone();
    state_names.extend(sol.states.iter().map(|s| format!("state {s}")));
    for lag in 1..=max_lag {
        state_names.extend(solved.variables.iter().map(|v| dated(v, -(lag as i32))));
    }
    Ok(ModelStateSpace {
        system: StateSpaceModel {
            t,
            r,
            q: solved.covariance.clone(),
            d,
            z,
            hm,
        },
        observables: model.observables.iter().map(|o| o.name.clone()).collect(),
        variables: solved.variables.clone(),
        shocks: solved.shocks.clone(),
        state_names,
        max_lag,
    })
}
