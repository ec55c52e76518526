//! Posterior bands: for draws x_1, ..., x_S of the estimated quantities (a draws file,
//! [`super::draws`]) and a computation g from a solved model to m numbers (impulse responses,
//! moments, filtered paths, forecasts), the band of element j at probability p is
//!
//! ```text
//!   b_j(p) = Q_p{ g_j(model at x_s) : s in the kept draws where g is defined and g_j finite }
//! ```
//!
//! with Q_p the sample quantile by linear interpolation between order statistics (numpy's
//! default, Hyndman and Fan 1996 type 7; [`super::diagnostics::quantile_sorted`]). The kept
//! draws are at most [`BandParams::max_draws`] rows evenly spaced through the file ([`thin`]).
//! A draw where the model has no unique stable solution (or no steady state, or where g fails)
//! is counted in [`Bands::failed`] with its reason and left out; it never stops the run.

use rayon::prelude::*;

use super::diagnostics::quantile_sorted;
use super::posterior::{model_at, solve_point, PointFailure};
use crate::model::{Model, PriorTarget};
use crate::policy::Regime;
use crate::solution::{PreparedModel, SolveOptions, SolvedModel};

/// Most failures kept with their reasons in [`Bands::failures`] (all are counted).
pub const MAX_FAILURES_LISTED: usize = 5;

/// Tuning of [`posterior_bands`].
#[derive(Debug, Clone, PartialEq)]
pub struct BandParams {
    /// Most draws used, evenly spaced through the file (default 500: the 5% and 95% quantiles
    /// then rest on 25 draws in each tail).
    pub max_draws: usize,
    /// Probabilities of the bands, each in [0, 1] (default 0.05, 0.5, 0.95).
    pub quantiles: Vec<f64>,
}

impl Default for BandParams {
    fn default() -> Self {
        BandParams {
            max_draws: 500,
            quantiles: vec![0.05, 0.5, 0.95],
        }
    }
}

/// Why bands cannot be computed at all (single draws failing is not an error).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum BandError {
    #[error("a quantile must be between 0 and 1, got {0}")]
    BadQuantile(f64),
    #[error("at most {0} draws must be at least 1")]
    NoDraws(usize),
    #[error("none of the {tried} draws used could be computed (the first: row {row}: {reason})")]
    AllFailed {
        tried: usize,
        row: usize,
        reason: String,
    },
}

/// The bands of m elements.
#[derive(Debug, Clone, PartialEq)]
pub struct Bands {
    /// The probabilities, as given.
    pub quantiles: Vec<f64>,
    /// `values[j][k]`: band of element j at `quantiles[k]` (NaN where no draw has a finite
    /// value of the element).
    pub values: Vec<Vec<f64>>,
    /// Rows in the draws.
    pub rows: usize,
    /// Rows used (after thinning), failed ones included.
    pub used: usize,
    /// Used rows where the computation failed.
    pub failed: usize,
    /// The first [`MAX_FAILURES_LISTED`] failures: (row index from 0, reason).
    pub failures: Vec<(usize, String)>,
}

impl Bands {
    /// The draws that entered the bands (used minus failed).
    pub fn computed(&self) -> usize {
        self.used - self.failed
    }
}

/// Indices of at most `max` of `n` rows, evenly spaced: row floor(k n / max) for k = 0..max
/// (all rows when n <= max).
pub fn thin(n: usize, max: usize) -> Vec<usize> {
    if n <= max {
        return (0..n).collect();
    }
    (0..max)
        .map(|k| ((k as u128 * n as u128) / max as u128) as usize)
        .collect()
}

/// Why one draw failed, in words.
fn reason(e: &PointFailure) -> String {
    e.to_string()
}

/// The parameter draws bands are made over: each row of `x` holds one value per target.
#[derive(Debug, Clone, Copy)]
pub struct DrawSet<'a> {
    pub targets: &'a [PriorTarget],
    pub x: &'a [Vec<f64>],
}

/// The bands of `g` over `draws` (read only) for the model `base`
/// solved with `options` under `regime`. `g` receives the model at a draw (as solved) and its
/// solution and returns m values (the same m for every draw; a different length counts as a
/// failure), or why it cannot. Draws run in parallel; the result does not depend on the thread
/// count. Returns the bands, or an error when the settings are wrong or no draw can be computed.
pub fn posterior_bands<G>(
    base: &Model,
    draws: DrawSet<'_>,
    options: &SolveOptions,
    regime: Regime,
    params: &BandParams,
    m: usize,
    g: G,
) -> Result<Bands, BandError>
where
    G: Fn(&Model, &SolvedModel) -> Result<Vec<f64>, String> + Sync,
{
    if let Some(&q) = params
        .quantiles
        .iter()
        .find(|q| !(**q >= 0.0 && **q <= 1.0))
    {
        return Err(BandError::BadQuantile(q));
    }
    if params.max_draws == 0 {
        return Err(BandError::NoDraws(params.max_draws));
    }
    let rows = thin(draws.x.len(), params.max_draws);
    let prepared = if regime == Regime::Rule {
        PreparedModel::new(base).ok()
    } else {
        None
    };
    let results: Vec<Result<Vec<f64>, String>> = rows
        .par_iter()
        .map(|&r| {
            let model = model_at(base, draws.targets, &draws.x[r]).map_err(|e| reason(&e))?;
            let (model, solved) =
                solve_point(prepared.as_ref(), model, options, regime).map_err(|e| reason(&e))?;
            let v = g(&model, &solved)?;
            if v.len() != m {
                return Err(format!(
                    "the computation gave {} numbers where the calibration gave {m}",
                    v.len()
                ));
            }
            Ok(v)
        })
        .collect();
    let mut failures = Vec::new();
    let mut failed = 0;
    let mut good: Vec<&Vec<f64>> = Vec::new();
    for (&r, res) in rows.iter().zip(&results) {
        match res {
            Ok(v) => good.push(v),
            Err(e) => {
                failed += 1;
                if failures.len() < MAX_FAILURES_LISTED {
                    failures.push((r, e.clone()));
                }
            }
        }
    }
    if good.is_empty() {
        let (row, reason) = failures
            .first()
            .cloned()
            .unwrap_or((0, "no draws".to_string()));
        return Err(BandError::AllFailed {
            tried: rows.len(),
            row,
            reason,
        });
    }
    let mut column = Vec::with_capacity(good.len());
    let values = (0..m)
        .map(|j| {
            column.clear();
            column.extend(good.iter().map(|v| v[j]).filter(|x| x.is_finite()));
            column.sort_by(f64::total_cmp);
            params
                .quantiles
                .iter()
                .map(|&q| quantile_sorted(&column, q))
                .collect()
        })
        .collect();
    Ok(Bands {
        quantiles: params.quantiles.clone(),
        values,
        rows: draws.x.len(),
        used: rows.len(),
        failed,
        failures,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thinning_is_even_and_keeps_everything_when_short() {
        assert_eq!(thin(3, 5), vec![0, 1, 2]);
        assert_eq!(thin(10, 5), vec![0, 2, 4, 6, 8]);
        assert_eq!(thin(7, 3), vec![0, 2, 4]);
        assert_eq!(thin(1_000_000, 500).len(), 500);
    }
}
