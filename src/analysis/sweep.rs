//! Determinacy sweeps: the solution status over a grid of one or two parameters
//!
//! ```text
//!     grid = axis_1 x axis_2 (row-major, the first parameter varies slowest)
//!     point k -> solve(model with the parameters set to grid[k]) -> status, unstable count,
//!                forward-looking count, largest stable |root|
//! ```
//!
//! Points are independent and solved in parallel (rayon); the model is prepared once (symbolic
//! derivatives, tapes) by the caller and each point only re-evaluates it. A point that fails for
//! any reason (an override the model rejects, no steady state, a numerical failure, even a panic,
//! which would be a bug) becomes a row with status `error` and a message; the sweep never stops at
//! one bad point. Progress is reported through a callback so the library draws nothing.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;
use thiserror::Error;

use crate::model::Model;
use crate::solution::{PreparedModel, SolveOptions, SolvedModel, Status};

/// Largest number of grid points (a CSV of a million rows is already about 80 MB).
pub const MAX_SWEEP_POINTS: usize = 1_000_000;

/// The status written for a point that failed for a reason other than the conditions.
pub const ERROR_STATUS: &str = "error";

/// The outcome at one grid point: a solution status of the contract, or a failure for another
/// reason (`error`, with a message).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SweepStatus {
    Solved(Status),
    Error,
}

impl SweepStatus {
    /// The contract's spelling (`determinate`, ..., `error`).
    pub fn as_str(self) -> &'static str {
        match self {
            SweepStatus::Solved(s) => s.as_str(),
            SweepStatus::Error => ERROR_STATUS,
        }
    }
}

/// One varied parameter and its values.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepAxis {
    pub name: String,
    pub values: Vec<f64>,
}

/// The result at one grid point.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    /// The varied parameters' values, in axis order.
    pub values: Vec<f64>,
    /// A contract status (`determinate`, ...) or `error`.
    pub status: SweepStatus,
    pub unstable: Option<usize>,
    pub forward_looking: Option<usize>,
    /// Largest modulus among the stable roots (`None` when no root is stable or on error).
    pub largest_stable_modulus: Option<f64>,
    /// Why the point failed (only for `error`).
    pub message: Option<String>,
    /// Expected loss of the model's objective (`sweep --measure loss`; `None` otherwise or
    /// where there is no unique stable solution).
    pub expected_loss: Option<f64>,
}

/// Every grid point, row-major (the first parameter varies slowest).
#[derive(Debug, Clone, PartialEq)]
pub struct SweepResult {
    pub parameters: Vec<String>,
    pub axes: Vec<Vec<f64>>,
    pub points: Vec<SweepPoint>,
}

impl SweepResult {
    /// How many points have each status, in first-seen order.
    pub fn status_counts(&self) -> Vec<(SweepStatus, usize)> {
        let mut out: Vec<(SweepStatus, usize)> = Vec::new();
        for p in &self.points {
            match out.iter_mut().find(|(s, _)| *s == p.status) {
                Some((_, n)) => *n += 1,
                None => out.push((p.status, 1)),
            }
        }
        out
    }
}

/// Why a sweep could not start.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SweepError {
    #[error("a sweep needs one or two parameters to vary, got {0}")]
    AxisCount(usize),
    #[error("`{0}` is varied twice")]
    Duplicate(String),
    #[error("the axis of `{0}` has no values")]
    EmptyAxis(String),
    #[error("the axis of `{name}` has a non-finite value")]
    NonFinite { name: String },
    #[error("the model has no parameter `{0}` to vary")]
    UnknownParameter(String),
    #[error("the grid has {0} points; at most {MAX_SWEEP_POINTS}")]
    TooManyPoints(usize),
}

/// Checks the axes and returns the number of grid points.
pub fn check_axes(axes: &[SweepAxis]) -> Result<usize, SweepError> {
    if axes.is_empty() || axes.len() > 2 {
        return Err(SweepError::AxisCount(axes.len()));
    }
    if axes.len() == 2 && axes[0].name == axes[1].name {
        return Err(SweepError::Duplicate(axes[0].name.clone()));
    }
    let mut total: usize = 1;
    for a in axes {
        if a.values.is_empty() {
            return Err(SweepError::EmptyAxis(a.name.clone()));
        }
        if a.values.iter().any(|v| !v.is_finite()) {
            return Err(SweepError::NonFinite {
                name: a.name.clone(),
            });
        }
        total = total.saturating_mul(a.values.len());
    }
    if total > MAX_SWEEP_POINTS {
        return Err(SweepError::TooManyPoints(total));
    }
    Ok(total)
}

/// The values of grid point `k` (row-major: the last axis varies fastest).
pub fn grid_values(axes: &[SweepAxis], k: usize) -> Vec<f64> {
    let mut rest = k;
    let mut out = vec![0.0; axes.len()];
    for (i, a) in axes.iter().enumerate().rev() {
        let n = a.values.len();
        out[i] = a.values[rest % n];
        rest /= n;
    }
    out
}

/// The row of a solved point: its status, counts and the largest stable modulus.
pub fn point_from_solved(values: Vec<f64>, solved: &SolvedModel) -> SweepPoint {
    let largest = solved
        .roots
        .iter()
        .filter(|r| r.stable)
        .filter_map(|r| r.modulus)
        .fold(None, |m: Option<f64>, x| Some(m.map_or(x, |m| m.max(x))));
    SweepPoint {
        values,
        status: SweepStatus::Solved(solved.status),
        unstable: Some(solved.counts.unstable),
        forward_looking: Some(solved.counts.forward_looking),
        largest_stable_modulus: largest,
        message: None,
        expected_loss: None,
    }
}

/// The row of a failed point.
pub fn error_point(values: Vec<f64>, message: impl Into<String>) -> SweepPoint {
    SweepPoint {
        values,
        status: SweepStatus::Error,
        unstable: None,
        forward_looking: None,
        largest_stable_modulus: None,
        message: Some(message.into()),
        expected_loss: None,
    }
}

/// Evaluates every grid point in parallel with `evaluate` (given the point's values in axis
/// order) and returns the rows in grid order. `progress(done, total)` is called after each point,
/// from worker threads. A panic inside `evaluate` becomes an `error` row. Reads only.
pub fn run_sweep<F>(
    axes: &[SweepAxis],
    evaluate: F,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<SweepResult, SweepError>
where
    F: Fn(&[f64]) -> SweepPoint + Sync,
{
    let total = check_axes(axes)?;
    let done = AtomicUsize::new(0);
    let points: Vec<SweepPoint> = (0..total)
        .into_par_iter()
        .map(|k| {
            let values = grid_values(axes, k);
            let point = match catch_unwind(AssertUnwindSafe(|| evaluate(&values))) {
                Ok(p) => p,
                Err(_) => error_point(
                    values.clone(),
                    "internal error while solving this point (a bug; please report it)",
                ),
            };
            let n = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(n, total);
            point
        })
        .collect();
    Ok(SweepResult {
        parameters: axes.iter().map(|a| a.name.clone()).collect(),
        axes: axes.iter().map(|a| a.values.clone()).collect(),
        points,
    })
}

/// Sweeps `model` (already carrying any `--set` overrides) over `axes`: each point applies the
/// axis values as overrides (derived parameters recomputed) and solves with the structure
/// `prepared` once. An unknown parameter is an error before anything runs; everything that goes
/// wrong at one point (an override the model rejects, no steady state, a numerical failure) is
/// that point's `error` row. Reads only.
pub fn sweep_model(
    model: &Model,
    prepared: &PreparedModel,
    options: &SolveOptions,
    axes: &[SweepAxis],
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<SweepResult, SweepError> {
    for a in axes {
        if model.parameter_index(&a.name).is_none() {
            return Err(SweepError::UnknownParameter(a.name.clone()));
        }
    }
    run_sweep(
        axes,
        |values| {
            let overrides: Vec<(String, f64)> = axes
                .iter()
                .zip(values)
                .map(|(a, v)| (a.name.clone(), *v))
                .collect();
            match model.with_overrides(&overrides) {
                Err(e) => error_point(values.to_vec(), e.to_string()),
                Ok(m) => match prepared.solve(&m, options) {
                    Ok((solved, _)) => point_from_solved(values.to_vec(), &solved),
                    Err(e) => error_point(values.to_vec(), e.to_string()),
                },
            }
        },
        progress,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grid_is_row_major_first_axis_slowest() {
        let axes = vec![
            SweepAxis {
                name: "a".into(),
                values: vec![1.0, 2.0],
            },
            SweepAxis {
                name: "b".into(),
                values: vec![10.0, 20.0, 30.0],
            },
        ];
        let got: Vec<Vec<f64>> = (0..6).map(|k| grid_values(&axes, k)).collect();
        assert_eq!(got[0], vec![1.0, 10.0]);
        assert_eq!(got[2], vec![1.0, 30.0]);
        assert_eq!(got[3], vec![2.0, 10.0]);
        assert_eq!(check_axes(&axes), Ok(6));
    }
}
