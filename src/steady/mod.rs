//! The deterministic steady state (spec §6).
//!
//! Contract: find x with R_i(x) = r_i(x, ..., x; 0) = 0 for every equation i, where every date of
//! a variable takes the same value and innovations are zero.
//!
//! 1. `steady name = expr` items fix values (evaluated in dependency order); `guess name = expr`
//!    items start the search (default 1 for `log` variables, 0 for the others).
//! 2. If every variable is fixed, the residuals are checked against [`KNOWN_VALUE_TOL`] relative
//!    to the size of each equation's terms ([`term_scales`]): |R_i| <= 1e-8 sum_k |term_ik|.
//!    Every convergence test below is relative in the same way, so no test depends on units.
//! 3. Otherwise a damped Newton method solves for the rest with the exact Jacobian from
//!    [`CompiledModel`]: the step solves J d = -R (LU), or, when J is singular or the system has
//!    more equations than unknowns, the Levenberg-Marquardt step (J'J + mu I) d = -J'R; a
//!    backtracking line search on |R|^2 (Armijo) damps it. `log` variables are solved in u = ln x,
//!    so they stay positive. A linear model converges in one step.
//! 4. On failure the error lists the equations whose residuals stay largest, the variables they
//!    involve, the iterations tried, and a hint.

use nalgebra::{DMatrix, DVector};

use crate::model::{BinaryOp, Expr, Leaves, Model, SteadyKind, MAX_EXPR_DEPTH};
use crate::symbolic::CompiledModel;

mod explain;
pub mod failure;
mod items;
mod newton;
mod scales;

use explain::*;
use failure::short;
pub use failure::{
    DomainProblem, DomainReport, KnownValuesDetail, Point, ResidualReport, SingularReport,
    ValueConflict, VariableValue, WorstEquation,
};
use items::*;
use newton::*;
use scales::*;
pub use scales::{equation_scale, relative_residual, term_scales};

/// Relative residual below which `steady` values count as satisfying an equation (spec §6): each
/// equation's residual is compared with the size of its terms ([`term_scales`]), so the test
/// means the same for a model in fractions and one in levels of 1e8, and for an equation
/// multiplied through by any constant.
pub const KNOWN_VALUE_TOL: f64 = 1e-8;

/// Newton stops when every residual is below this relative to its equation's terms: two orders
/// below the spec's check, so that the linearization point is accurate well beyond the digits
/// reported, and still some hundred times the round-off of evaluating a sum of terms.
pub const NEWTON_TOL: f64 = 1e-10;

/// Newton iterations before giving up; a well-posed problem from a sensible guess needs < 20.
pub const MAX_NEWTON_ITERATIONS: usize = 100;

/// Step halvings in the line search (2^-40 ~ 1e-12: beyond that the step is noise).
pub const MAX_HALVINGS: usize = 40;

/// Armijo sufficient-decrease constant (Dennis and Schnabel 1983, Numerical Methods for
/// Unconstrained Optimization and Nonlinear Equations, ch. 6: 1e-4 is their recommended value).
pub const ARMIJO: f64 = 1e-4;

/// An LU pivot ratio min|u_ii| / max|u_ii| below this treats the Jacobian as singular (about
/// 50 machine epsilons: the step would be dominated by rounding).
pub const SINGULAR_PIVOT_RATIO: f64 = 1e-14;

/// How many of the worst equations a failure message lists.
pub const REPORT_EQUATIONS: usize = 3;

/// Tuning of the damped Newton method (module doc, step 3). The defaults are the constants
/// above and need no change for saddle's models.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub struct NewtonParams {
    /// Convergence: every residual at most this times its equation's terms. Default
    /// [`NEWTON_TOL`] (1e-10).
    pub tol: f64,
    /// Newton iterations before giving up (per block when solving block by block). Default
    /// [`MAX_NEWTON_ITERATIONS`] (100).
    pub max_iterations: usize,
    /// Step halvings in the line search. Default [`MAX_HALVINGS`] (40).
    pub max_halvings: usize,
    /// Armijo sufficient-decrease constant, in (0, 1/2). Default [`ARMIJO`] (1e-4).
    pub armijo: f64,
    /// LU pivot ratio below which the Jacobian counts as singular. Default
    /// [`SINGULAR_PIVOT_RATIO`] (1e-14).
    pub singular_pivot_ratio: f64,
}

impl Default for NewtonParams {
    fn default() -> Self {
        NewtonParams {
            tol: NEWTON_TOL,
            max_iterations: MAX_NEWTON_ITERATIONS,
            max_halvings: MAX_HALVINGS,
            armijo: ARMIJO,
            singular_pivot_ratio: SINGULAR_PIVOT_RATIO,
        }
    }
}

impl NewtonParams {
    /// The defaults with a different iteration limit.
    pub fn with_max_iterations(mut self, max_iterations: usize) -> Self {
        self.max_iterations = max_iterations;
        self
    }
}

/// Why no steady state was found. Every message is a sentence a person can act on.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SteadyError {
    #[error("the `steady` values of {} depend on each other in a cycle; give one of them a value that uses parameters only", .names.join(", "))]
    Cycle { names: Vec<String> },
    #[error("the `steady` section gives {variable} a value that is not a finite number ({value}) at this calibration")]
    NotFiniteValue { variable: String, value: f64 },
    #[error("{variable} is a `log` variable, so its steady state must be positive, but its {} is {value}; give it a positive `guess` or value", if *.is_guess { "guess" } else { "value" })]
    LogStartNotPositive {
        variable: String,
        value: f64,
        /// The starting value came from a `guess` (else from a `steady` value).
        is_guess: bool,
    },
    #[error("the `steady` values leave equations unsatisfied (residual above {KNOWN_VALUE_TOL:e} times the size of the equation's terms): {worst}{detail}. Check these values, or turn them into `guess` lines so the solver can adjust them")]
    KnownValuesInconsistent {
        worst: ResidualReport,
        detail: KnownValuesDetail,
    },
    #[error("the steady-state equations cannot be evaluated at the starting point: {0}. Give a `guess` inside the domain (positive arguments of ln, log10, sqrt and of ^ with fractional powers; no division by zero)")]
    Domain(DomainReport),
    #[error("the `steady` values put an equation outside its domain: {0}. Check these values (a division by a variable given as zero, the logarithm or square root of a negative value)")]
    DomainAtGivenValues(DomainReport),
    #[error("{equation} has {expression} = {value} at the calibration, and that expression depends on parameters only ({parameters}): check their values (no guess of a variable can change it)")]
    ParameterDomain {
        equation: String,
        expression: String,
        value: f64,
        parameters: String,
    },
    #[error("{variable} is declared `log`, but the steady state has {variable} = {value}, which is not positive; drop `log` from its declaration (its deviations are then in levels)")]
    LogNotPositive { variable: String, value: f64 },
    #[error("{variables} in {equation} has no steady state: no constant value satisfies that equation (the dates of {variables} cancel and a constant is left, as in x = x[t-1] + 1: a trend or a unit root). Write the model in growth rates or detrend it")]
    NoConstantSolution { equation: String, variables: String },
    #[error("{0}")]
    Singular(SingularReport),
    #[error("Newton's method did not find the steady state after {iterations} iterations; the largest residuals remain in {report}. Hint: give a `guess` closer to the solution for the variables involved, or `steady` values where you know them; check signs, and the domains of ln, sqrt and ^")]
    NotFound {
        iterations: usize,
        report: ResidualReport,
    },
}

/// A steady state that was found.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyState {
    /// Levels of the endogenous variables, declaration order.
    pub values: Vec<f64>,
    /// Newton iterations taken (0 when the starting point already solved the equations).
    pub iterations: usize,
    /// Largest absolute residual at `values`.
    pub max_residual: f64,
    /// Largest residual relative to the size of its equation's terms ([`term_scales`]).
    pub relative_residual: f64,
    /// Notes for the person (for example, equations satisfied only by the steady values given).
    pub notes: Vec<String>,
}

/// Finds the steady state of `model` with parameter values `params` (see the module doc).
/// Returns the levels, or an error that says what was tried. Newton runs with the default
/// [`NewtonParams`]; see [`solve_steady_with`].
pub fn solve_steady(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
) -> Result<SteadyState, SteadyError> {
    solve_steady_with(model, compiled, params, &NewtonParams::default())
}

/// As [`solve_steady`], with the Newton tuning `np`.
pub fn solve_steady_with(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    np: &NewtonParams,
) -> Result<SteadyState, SteadyError> {
    parameter_domain(model, params)?;
    let (known, start) = resolve_items(model, params)?;
    let log: Vec<bool> = model.endogenous.iter().map(|v| v.log).collect();
    match newton_solve(model, compiled, params, &known, start.clone(), &log, np) {
        Ok(s) => Ok(s),
        Err(e) => explain_failure(model, compiled, params, &known, &start, &log, e, np),
    }
}

#[cfg(test)]
mod tests;
