//! A solved model confronted with a data set: the filter, smoother, historical decomposition and
//! forecasts of [`crate::kalman`] on the model's state-space form ([`ModelStateSpace`]), read off
//! per declared variable, innovation and observable:
//!
//! ```text
//!   filtered_t  = E[yhat_t | o_1..o_t],   smoothed_t = E[yhat_t | o_1..o_N],
//!   smoothed_t  = initial_t + sum_j contribution_{j,t}   (historical decomposition)
//!   forecast    : E[yhat_{N+h}], E[o_{N+h}] given o_1..o_N (and fixed future values of o)
//! ```
//!
//! yhat are deviations from the steady state (log deviations for `log` variables), o the
//! observables in data units. Every function here reads its inputs and returns new values.

use nalgebra::{DMatrix, DVector};

use super::DataSet;
use crate::kalman::{
    decompose, filter, forecast, forecast_given_path, smooth, KalmanError, KalmanParams,
    ModelStateSpace,
};

/// The filter and smoother read off per name. Matrices are N x (names), row t - 1 for period t.
#[derive(Debug, Clone, PartialEq)]
pub struct FilterResults {
    pub loglik: f64,
    /// Observations whose terms are in `loglik`.
    pub n_used: usize,
    /// Observations that resolved unit-root (diffuse) states; their terms are left out.
    pub n_diffuse: usize,
    /// Observations skipped as exact combinations of others (zero forecast variance).
    pub n_skipped: usize,
    /// Number of unit-root directions of the state (0: stationary start).
    pub diffuse_rank: usize,
    /// E[yhat_t | data to t] (N x variables).
    pub filtered: DMatrix<f64>,
    /// E[yhat_t | all data] (N x variables).
    pub smoothed: DMatrix<f64>,
    /// Standard deviation of yhat_t given all data (N x variables).
    pub smoothed_sd: DMatrix<f64>,
    /// E[e_t | all data] (N x shocks).
    pub smoothed_shocks: DMatrix<f64>,
    /// Standard deviation of e_t given all data (N x shocks).
    pub smoothed_shocks_sd: DMatrix<f64>,
    /// o_t - E[o_t | data to t-1] where o_t is observed, NaN where missing (N x observables).
    pub prediction_errors: DMatrix<f64>,
    /// d + Z E[alpha_t | all data]: the observables the smoothed states imply, without
    /// measurement error, in data units (N x observables).
    pub smoothed_observables: DMatrix<f64>,
}

/// Historical decomposition per variable: `contributions[v]` is N x (shocks + 1), the last
/// column the initial state's contribution; each row adds up to the smoothed value.
#[derive(Debug, Clone, PartialEq)]
pub struct DecompositionResults {
    pub smoothed: DMatrix<f64>,
    pub contributions: Vec<DMatrix<f64>>,
}

/// Forecast means and standard deviations for h = 1..=H (rows), variables then observables
/// (columns, as [`ForecastResults::names`]).
#[derive(Debug, Clone, PartialEq)]
pub struct ForecastResults {
    pub names: Vec<String>,
    /// Whether each column is an observable (data units) rather than a variable (deviations).
    pub is_observable: Vec<bool>,
    pub mean: DMatrix<f64>,
    pub sd: DMatrix<f64>,
}

/// Most numbers the filter and smoother may store for one run (periods x states^2, a few
/// matrices each): 2^27 doubles is 1 GiB per matrix sequence, beyond any macroeconomic use and
/// below the memory of an ordinary machine, so a huge model times a long sample is refused
/// instead of exhausting memory.
pub const MAX_STORED: usize = 1 << 27;

fn check_size(ss: &ModelStateSpace, periods: usize) -> Result<(), KalmanError> {
    let n = ss.system.n_states() + ss.observables.len();
    if periods.saturating_mul(n.saturating_mul(n)) > MAX_STORED {
        return Err(KalmanError::Shape {
            what: format!(
                "{periods} periods of a {n}-state system would store more than {MAX_STORED} numbers per covariance sequence; use fewer periods or a smaller model"
            ),
        });
    }
    Ok(())
}

fn checked(ss: &ModelStateSpace, data: &DataSet) -> Result<(), KalmanError> {
    check_size(ss, data.values.nrows())?;
    if data.values.ncols() != ss.observables.len() {
        return Err(KalmanError::Shape {
            what: format!(
                "the data hold {} series for {} observables",
                data.values.ncols(),
                ss.observables.len()
            ),
        });
    }
    Ok(())
}

/// A variance at most this fraction of the largest variance of its matrix is round-off of an
/// exact zero (a fixed value, a state the data pin down): the smoother forms variances by
/// subtraction, which leaves errors of a few hundred eps (about 1e-14) times their scale; 1e-12
/// keeps a margin of 100 above that and is far below any variance worth reporting.
pub const VARIANCE_ROUNDOFF: f64 = 1e-12;

/// sqrt of a variance, with |v| at most [`VARIANCE_ROUNDOFF`] times `scale` read as 0; a larger
/// negative value stays NaN (it would be a bug, shown rather than hidden).
fn sd_of(v: f64, scale: f64) -> f64 {
    if v.abs() <= VARIANCE_ROUNDOFF * scale {
        0.0
    } else if v > 0.0 {
        v.sqrt()
    } else {
        f64::NAN
    }
}

/// Runs the filter and smoother of `ss` on `data` (both read only). Returns the results per
/// name, or the filter's error (a contradiction names the 1-based period and observable).
pub fn run_filter(
    ss: &ModelStateSpace,
    data: &DataSet,
    params: &KalmanParams,
) -> Result<FilterResults, KalmanError> {
    checked(ss, data)?;
    let sys = &ss.system;
    let y = &data.values;
    let f = filter(sys, y, params)?;
    let s = smooth(sys, &f)?;
    let (n_t, nv, k, p) = (y.nrows(), ss.variables.len(), ss.shocks.len(), y.ncols());
    let mut out = FilterResults {
        loglik: f.loglik,
        n_used: f.n_used,
        n_diffuse: f.n_diffuse,
        n_skipped: f.n_skipped,
        diffuse_rank: f.diffuse_rank,
        filtered: DMatrix::zeros(n_t, nv),
        smoothed: DMatrix::zeros(n_t, nv),
        smoothed_sd: DMatrix::zeros(n_t, nv),
        smoothed_shocks: DMatrix::zeros(n_t, k),
        smoothed_shocks_sd: DMatrix::zeros(n_t, k),
        prediction_errors: f.prediction_errors.clone(),
        smoothed_observables: DMatrix::zeros(n_t, p),
    };
    for t in 1..=n_t {
        let a = &s.states[t];
        let v = &s.state_var[t];
        let scale = (0..v.nrows()).map(|i| v[(i, i)].abs()).fold(0.0, f64::max);
        for i in 0..nv {
            out.filtered[(t - 1, i)] = f.a_filt[t][i];
            out.smoothed[(t - 1, i)] = a[i];
            out.smoothed_sd[(t - 1, i)] = sd_of(v[(i, i)], scale);
        }
        let e = &s.shocks[t - 1];
        let ev = &s.shock_var[t - 1];
        let escale = (0..k).map(|j| sys.q[(j, j)].abs()).fold(0.0, f64::max);
        for j in 0..k {
            out.smoothed_shocks[(t - 1, j)] = e[j];
            out.smoothed_shocks_sd[(t - 1, j)] = sd_of(ev[(j, j)], escale);
        }
        let o = &sys.d + &sys.z * a;
        for j in 0..p {
            out.smoothed_observables[(t - 1, j)] = o[j];
        }
    }
    Ok(out)
}

/// The historical decomposition of the smoothed variables of `ss` given `data` (read only).
pub fn run_decomposition(
    ss: &ModelStateSpace,
    data: &DataSet,
    params: &KalmanParams,
) -> Result<DecompositionResults, KalmanError> {
    checked(ss, data)?;
    let sys = &ss.system;
    let f = filter(sys, &data.values, params)?;
    let s = smooth(sys, &f)?;
    let d = decompose(sys, &s);
    let (n_t, nv, k) = (data.values.nrows(), ss.variables.len(), ss.shocks.len());
    let mut smoothed = DMatrix::zeros(n_t, nv);
    let mut contributions = vec![DMatrix::zeros(n_t, k + 1); nv];
    for t in 0..n_t {
        for (i, c) in contributions.iter_mut().enumerate() {
            smoothed[(t, i)] = s.states[t + 1][i];
            for j in 0..k {
                c[(t, j)] = d.shocks[t][(i, j)];
            }
            c[(t, k)] = d.initial[t][i];
        }
    }
    Ok(DecompositionResults {
        smoothed,
        contributions,
    })
}

/// Forecasts `horizon` periods past `data` (read only); `fixed` (horizon x observables, NaN
/// where free, values in data units) conditions on future observables when it has any value.
pub fn run_forecast(
    ss: &ModelStateSpace,
    data: &DataSet,
    horizon: usize,
    fixed: &DMatrix<f64>,
    params: &KalmanParams,
) -> Result<ForecastResults, KalmanError> {
    checked(ss, data)?;
    check_size(ss, data.values.nrows().saturating_add(horizon))?;
    let sys = &ss.system;
    let p = ss.observables.len();
    if fixed.nrows() != horizon || fixed.ncols() != p {
        return Err(KalmanError::Shape {
            what: format!("the conditions must be {horizon} x {p}"),
        });
    }
    let fc = if fixed.iter().all(|v| v.is_nan()) {
        let f = filter(sys, &data.values, params)?;
        forecast(sys, &f, horizon)?
    } else {
        forecast_given_path(sys, &data.values, fixed, params)?
    };
    let nv = ss.variables.len();
    let mut names = ss.variables.clone();
    names.extend(ss.observables.iter().cloned());
    let mut is_observable = vec![false; nv];
    is_observable.extend(vec![true; p]);
    let mut mean = DMatrix::zeros(horizon, nv + p);
    let mut sd = DMatrix::zeros(horizon, nv + p);
    for h in 0..horizon {
        let (a, v) = (&fc.state_mean[h], &fc.state_var[h]);
        let scale = (0..v.nrows()).map(|i| v[(i, i)].abs()).fold(0.0, f64::max);
        for i in 0..nv {
            mean[(h, i)] = a[i];
            sd[(h, i)] = sd_of(v[(i, i)], scale);
        }
        let (om, ov): (&DVector<f64>, &DMatrix<f64>) = (&fc.obs_mean[h], &fc.obs_var[h]);
        let oscale = (0..p).map(|j| ov[(j, j)].abs()).fold(scale, f64::max);
        for j in 0..p {
            mean[(h, nv + j)] = om[j];
            sd[(h, nv + j)] = sd_of(ov[(j, j)], oscale);
        }
    }
    Ok(ForecastResults {
        names,
        is_observable,
        mean,
        sd,
    })
}

/// Labels for the `horizon` periods after `last`: an integer label counts on (`40` -> `41`), a
/// quarter label `YYYYQn` or `YYYYqn` moves on by quarters, a month label `YYYYMmm` by months;
/// any other label `L` gives `L+1`, `L+2`, ...
pub fn future_labels(last: &str, horizon: usize) -> Vec<String> {
    let t = last.trim();
    if let Ok(i) = t.parse::<i64>() {
        return (1..=horizon as i64)
            .map(|h| i.saturating_add(h).to_string())
            .collect();
    }
    let by = |sep: char, per_year: i64, width: usize| -> Option<Vec<String>> {
        let (y, q) = t.split_once(sep)?;
        let year: i64 = y.parse().ok()?;
        let sub: i64 = q.parse().ok()?;
        if y.len() != 4 || !(1..=per_year).contains(&sub) || q.len() > width {
            return None;
        }
        let up = sep.to_string();
        Some(
            (1..=horizon as i64)
                .map(|h| {
                    let z = (sub - 1) + h;
                    let yy = year + z.div_euclid(per_year);
                    let ss = z.rem_euclid(per_year) + 1;
                    if width == 2 {
                        format!("{yy}{up}{ss:02}")
                    } else {
                        format!("{yy}{up}{ss}")
                    }
                })
                .collect(),
        )
    };
    for (sep, per, w) in [('Q', 4, 1), ('q', 4, 1), ('M', 12, 2), ('m', 12, 2)] {
        if let Some(v) = by(sep, per, w) {
            return v;
        }
    }
    (1..=horizon).map(|h| format!("{t}+{h}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn future_labels_count_on() {
        assert_eq!(future_labels("40", 2), vec!["41", "42"]);
        assert_eq!(
            future_labels("2031Q3", 3),
            vec!["2031Q4", "2032Q1", "2032Q2"]
        );
        assert_eq!(
            future_labels("2031M11", 3),
            vec!["2031M12", "2032M01", "2032M02"]
        );
        assert_eq!(future_labels("spring", 2), vec!["spring+1", "spring+2"]);
        assert_eq!(future_labels("2031Q7", 1), vec!["2031Q7+1"]);
    }
}
