//! Solving the canonical form: QZ of the pencil, the counting and rank conditions, and the
//! decision rule mapped back to the declared variables.
//!
//! For the canonical form A E_t z_{t+1} = B z_t + C e_t the generalized eigenvalues are the
//! lambda with B v = lambda A v; saddle computes them as alpha/beta from the generalized Schur form
//! of the pencil (B, A) and calls a root stable when |alpha| < threshold * |beta| (never forming
//! the ratio, so infinite roots, beta = 0, are exact and never stable).
//!
//! The solution is y_t - ybar = P s_{t-1} + Q e_t for the declared variables and
//! s_t = G s_{t-1} + H e_t for the state vector (spec §7).

use nalgebra::DMatrix;
use serde::Serialize;

/// Outcome of the counting and rank conditions (spec §7; cli.md `status`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    Determinate,
    Indeterminate,
    NoStableSolution,
    RankFailure,
}

impl Status {
    /// The contract's spelling (`"no_stable_solution"`...).
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Determinate => "determinate",
            Status::Indeterminate => "indeterminate",
            Status::NoStableSolution => "no_stable_solution",
            Status::RankFailure => "rank_failure",
        }
    }
}

/// One generalized eigenvalue of the pencil, classified against the threshold.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Root {
    pub re: f64,
    pub im: f64,
    /// `None` for an infinite root.
    pub modulus: Option<f64>,
    pub infinite: bool,
    pub stable: bool,
    /// Within the boundary tolerance (1e-6 relative) of the threshold.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub boundary: bool,
}

/// Root counts against the number of forward-looking elements (Blanchard and Kahn 1980).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Counts {
    pub stable: usize,
    pub unstable: usize,
    pub forward_looking: usize,
    pub predetermined: usize,
}

/// The decision rule and the states' law of motion, in deviations from the steady state (log
/// deviations for `log` variables).
#[derive(Debug, Clone, PartialEq)]
pub struct StateSpace {
    /// Names of the elements of s_{t-1}, like `k[t-1]` or `e_rate[t-2]`.
    pub states: Vec<String>,
    /// P: variables x states.
    pub p: DMatrix<f64>,
    /// Q: variables x shocks.
    pub q: DMatrix<f64>,
    /// G: states x states.
    pub g: DMatrix<f64>,
    /// H: states x shocks.
    pub h: DMatrix<f64>,
}

/// Everything `solve` reports: the roots, counts, diagnosis and, when determinate, the solution.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedModel {
    pub title: Option<String>,
    pub status: Status,
    pub threshold: f64,
    pub counts: Counts,
    /// By increasing modulus, infinite roots last.
    pub roots: Vec<Root>,
    /// Declared endogenous variables, declaration order.
    pub variables: Vec<String>,
    /// Per variable: linearized in logs.
    pub log: Vec<bool>,
    /// Declared innovations, declaration order.
    pub shocks: Vec<String>,
    /// Steady-state levels of the declared variables.
    pub steady_state: Vec<f64>,
    /// Innovation covariance (shocks x shocks).
    pub covariance: DMatrix<f64>,
    /// A sentence for a person when the status is not determinate.
    pub diagnosis: Option<String>,
    pub warnings: Vec<String>,
    /// `Some` exactly when `status` is `Determinate`.
    pub solution: Option<StateSpace>,
}

pub mod check;
mod diagnosis;
pub mod solve;
mod stocks;
pub mod threshold;

pub use diagnosis::describe_root;
pub use solve::{
    solve, NumericalFailure, PreparedModel, SolveDetails, SolveError, SolveOptions,
    ThresholdSetting, Timings, MAX_PENCIL_DIM,
};

#[cfg(test)]
mod tests;
