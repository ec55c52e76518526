//! Forecasts H periods past the data, unconditional and conditional on a future path of some
//! observables:
//!
//! ```text
//!   E[alpha_{N+h} | Y_N] = T^h a_{N|N},   Var = T Var_{h-1} T' + R Q R'  (Var_0 = P_{N|N})
//!   E[y_{N+h} | Y_N]     = d + Z E[alpha_{N+h}],   Var = Z Var_h Z' + Hm
//! ```
//!
//! A conditional forecast treats the fixed values as data of periods N+1..N+H (measurement error
//! included, cli.md) and returns the exact Gaussian conditional distribution given the data and
//! the conditions (hard conditions in the sense of Waggoner and Zha 1999): the filter and
//! smoother run on the extended sample of the model with its measurement errors moved into the
//! state ([`StateSpaceModel::with_errors_in_state`]), so the observables' distribution, errors
//! included, is read off the smoothed states. A condition the model cannot meet (it is already
//! implied by the data and the other conditions, and differs) is [`KalmanError::Condition`].

use nalgebra::{DMatrix, DVector};

use super::filter::FilterOutput;
use super::smoother::smooth;
use super::{filter, KalmanError, KalmanParams, StateSpaceModel};

/// Means and covariances per horizon h = 1..=H (index h - 1).
#[derive(Debug, Clone, PartialEq)]
pub struct Forecast {
    pub state_mean: Vec<DVector<f64>>,
    pub state_var: Vec<DMatrix<f64>>,
    pub obs_mean: Vec<DVector<f64>>,
    pub obs_var: Vec<DMatrix<f64>>,
}

/// Unconditional forecasts from the end of the filter run `f` (read only). Returns them, or
/// [`KalmanError::DiffuseAtEnd`] when the data left a unit-root direction undetermined.
pub fn forecast(
    model: &StateSpaceModel,
    f: &FilterOutput,
    horizon: usize,
) -> Result<Forecast, KalmanError> {
    if f.p_inf_filt_last.is_some() {
        return Err(KalmanError::DiffuseAtEnd);
    }
    let n = model.n_states();
    let mut a = f
        .a_filt
        .last()
        .cloned()
        .unwrap_or_else(|| DVector::zeros(n));
    let mut p = f.p_filt_last.clone();
    let w = &model.r * &model.q * model.r.transpose();
    let mut out = Forecast {
        state_mean: Vec::with_capacity(horizon),
        state_var: Vec::with_capacity(horizon),
        obs_mean: Vec::with_capacity(horizon),
        obs_var: Vec::with_capacity(horizon),
    };
    for _ in 0..horizon {
        a = &model.t * &a;
        p = &model.t * &p * model.t.transpose() + &w;
        p = (&p + p.transpose()) * 0.5;
        out.obs_mean.push(&model.d + &model.z * &a);
        let ov = &model.z * &p * model.z.transpose() + &model.hm;
        out.obs_var.push((&ov + ov.transpose()) * 0.5);
        out.state_mean.push(a.clone());
        out.state_var.push(p.clone());
    }
    Ok(out)
}

/// Forecasts given the data `y` (N x p) and the conditions `fixed` (H x p: the value of
/// observable j in period N+h, NaN where free); see the module doc. Reads its inputs; returns
/// the conditional means and covariances for h = 1..=H.
pub fn forecast_given_path(
    model: &StateSpaceModel,
    y: &DMatrix<f64>,
    fixed: &DMatrix<f64>,
    params: &KalmanParams,
) -> Result<Forecast, KalmanError> {
    let (n_data, p) = (y.nrows(), model.n_observables());
    let horizon = fixed.nrows();
    if fixed.ncols() != p || y.ncols() != p {
        return Err(KalmanError::Shape {
            what: format!("data and conditions need {p} columns, one per observable"),
        });
    }
    if fixed.iter().any(|v| v.is_infinite()) {
        return Err(KalmanError::Condition {
            what: "a fixed value is infinite".into(),
        });
    }
    let aug = model.with_errors_in_state();
    let mut ext = DMatrix::from_element(n_data + horizon, p, f64::NAN);
    ext.view_mut((0, 0), (n_data, p)).copy_from(y);
    ext.view_mut((n_data, 0), (horizon, p)).copy_from(fixed);
    let f = match filter(&aug, &ext, params) {
        Ok(f) => f,
        Err(KalmanError::Contradiction {
            period,
            observable,
            residual,
        }) if period > n_data => {
            return Err(KalmanError::Condition {
                what: format!(
                    "the value fixed for observable {} at horizon {} cannot be met: the data and the other conditions already determine it, and it differs from what they imply by {residual:e}",
                    observable + 1,
                    period - n_data
                ),
            })
        }
        Err(e) => return Err(e),
    };
    if f.p_inf_filt_last.is_some() {
        return Err(KalmanError::DiffuseAtEnd);
    }
    let s = smooth(&aug, &f)?;
    let n = model.n_states();
    let mut out = Forecast {
        state_mean: Vec::with_capacity(horizon),
        state_var: Vec::with_capacity(horizon),
        obs_mean: Vec::with_capacity(horizon),
        obs_var: Vec::with_capacity(horizon),
    };
    for h in 1..=horizon {
        let a = &s.states[n_data + h];
        let v = &s.state_var[n_data + h];
        out.state_mean.push(a.rows(0, n).into_owned());
        out.state_var.push(v.view((0, 0), (n, n)).into_owned());
        out.obs_mean.push(&aug.d + &aug.z * a);
        let ov = &aug.z * v * aug.z.transpose();
        out.obs_var.push((&ov + ov.transpose()) * 0.5);
    }
    Ok(out)
}
