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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::check::check_source;
    use crate::solution::{PreparedModel, SolveOptions};

    /// A first-order process x, a log level w tied to it, and three observables: a level with a
    /// constant, a growth rate (a lag of one) and a level two periods back (a lag of two).
    const SRC: &str = "
endogenous
  x
  log w
exogenous
  e
parameters
  rho = 0.5
  wbar = 2
equations
  x = rho * x[t-1] + e
  ln(w) = ln(wbar) + 0.3 * x
steady
  w = wbar
observables
  x_obs = 3 + 10 * x
  w_growth = 100 * (ln(w) - ln(w[t-1]))
  w_back = w[t-2]
covariance
  sd(e) = 0.5
  sd(x_obs) = 0.2
";

    fn build(src: &str) -> (Model, SolvedModel) {
        let model = check_source(src).unwrap_or_else(|d| panic!("{d:?}"));
        let prepared = PreparedModel::new(&model).unwrap();
        let (solved, _) = prepared.solve(&model, &SolveOptions::default()).unwrap();
        (model, solved)
    }

    /// Closed form by hand: with yhat = [x, log(w / wbar)], the state is
    /// [x_t, w_t; s_t; x_{t-1}, w_{t-1}; x_{t-2}, w_{t-2}] with s_t = x_t, so
    /// x_obs = 3 + 10 x_t, w_growth = 100 (what_t - what_{t-1}) (d ln w / d w times w = 1),
    /// w_back = wbar + wbar what_{t-2} (d w / d w = 1 times the log scale wbar = 2).
    #[test]
    fn observables_give_the_closed_form_measurement_equation() {
        let (model, solved) = build(SRC);
        let ss = model_state_space(&model, &solved).unwrap();
        assert_eq!(ss.max_lag, 2);
        assert_eq!(ss.observables, vec!["x_obs", "w_growth", "w_back"]);
        let sol = solved.solution.as_ref().unwrap();
        assert_eq!(sol.states.len(), 1, "states {:?}", sol.states);
        let n = ss.system.n_states();
        assert_eq!(n, 2 + 1 + 2 * 2);
        let tol = 1e-12;
        let want_d = [3.0, 0.0, 2.0];
        let mut want_z = DMatrix::zeros(3, n);
        want_z[(0, 0)] = 10.0; // x_t
        want_z[(1, 1)] = 100.0; // w_t
        want_z[(1, 4)] = -100.0; // w_{t-1}
        want_z[(2, 6)] = 2.0; // w_{t-2}
        for j in 0..3 {
            assert!(
                (ss.system.d[j] - want_d[j]).abs() < tol,
                "d {}",
                ss.system.d
            );
            for i in 0..n {
                assert!(
                    (ss.system.z[(j, i)] - want_z[(j, i)]).abs() < tol * 100.0,
                    "Z[{j},{i}] = {} want {}",
                    ss.system.z[(j, i)],
                    want_z[(j, i)]
                );
            }
        }
        // Transition: x_t = rho x_{t-1} + e, what_t = 0.3 x_t, s_t = x_t; the state s_{t-1}
        // sits at column 2 of alpha_{t-1}. The sign of s is the solver's; P G Q H fix it.
        let (p, g, q, h) = (&sol.p, &sol.g, &sol.q, &sol.h);
        assert!((g[(0, 0)] - 0.5).abs() < tol);
        assert!((p[(0, 0)] * h[(0, 0)] - 0.5).abs() < tol);
        assert!((q[(0, 0)] - 1.0).abs() < tol && (q[(1, 0)] - 0.3).abs() < tol);
        let t = &ss.system.t;
        assert_eq!(t[(0, 2)], p[(0, 0)]);
        assert_eq!(t[(1, 2)], p[(1, 0)]);
        assert_eq!(t[(2, 2)], g[(0, 0)]);
        // Lag copies: alpha[3..5] <- alpha[0..2], alpha[5..7] <- alpha[3..5].
        for (to, from) in [(3, 0), (4, 1), (5, 3), (6, 4)] {
            assert_eq!(t[(to, from)], 1.0);
            assert_eq!(t.row(to).iter().filter(|v| **v != 0.0).count(), 1);
        }
        assert_eq!(ss.system.r[(0, 0)], q[(0, 0)]);
        assert_eq!(ss.system.r[(2, 0)], h[(0, 0)]);
        assert!(ss.system.r.rows(3, 4).iter().all(|v| *v == 0.0));
        assert!((ss.system.q[(0, 0)] - 0.25).abs() < tol);
        let mut want_hm = DMatrix::zeros(3, 3);
        want_hm[(0, 0)] = 0.04;
        assert!((&ss.system.hm - want_hm).amax() < tol);
        assert_eq!(ss.state_names[4], "w[t-1]");
        assert_eq!(ss.state_names[6], "w[t-2]");
    }

    /// The measurement equation applied to a simulated path reproduces the observables
    /// computed directly from the levels to first order (exactly for the linear ones).
    #[test]
    fn simulated_path_through_the_bridge_matches_the_observables_in_levels() {
        let (model, solved) = build(SRC);
        let ss = model_state_space(&model, &solved).unwrap();
        let sys = &ss.system;
        let mut alpha = DVector::zeros(sys.n_states());
        let shocks = [0.3, -0.2, 0.1, 0.0, 0.25];
        let mut xs = vec![0.0, 0.0];
        let mut ws = vec![2.0, 2.0];
        for &e in &shocks {
            alpha = &sys.t * &alpha + &sys.r * DVector::from_element(1, e);
            let x = 0.5 * xs[xs.len() - 1] + e;
            xs.push(x);
            ws.push(2.0 * (0.3 * x).exp());
            let o = &sys.d + &sys.z * &alpha;
            let m = xs.len() - 1;
            assert!((o[0] - (3.0 + 10.0 * x)).abs() < 1e-12);
            // Linear in log w: exact.
            let growth = 100.0 * (ws[m].ln() - ws[m - 1].ln());
            assert!((o[1] - growth).abs() < 1e-10, "{} {growth}", o[1]);
            // w_back = w_{t-2} is linearized: 2 (1 + log(w/2)) against w; equal to first order.
            let lw = (ws[m - 2] / 2.0).ln();
            assert!((o[2] - 2.0 * (1.0 + lw)).abs() < 1e-12);
        }
    }

    #[test]
    fn a_model_without_observables_is_an_error() {
        let src = "endogenous\n x\nexogenous\n e\nparameters\n rho = 0.5\nequations\n x = rho * x[t-1] + e\n";
        let (model, solved) = build(src);
        assert_eq!(
            model_state_space(&model, &solved),
            Err(ObservationError::NoObservables)
        );
    }
}
