//! The log-likelihood alone, as fast as the system allows. With complete data and a stationary
//! start it runs the Chandrasekhar recursions (Morf, Sidhu and Kailath 1974; Herbst 2015), which
//! carry the change of the predicted covariance, P_{t+1} - P_t = W_t M_t W_t' (n x p times p x p),
//! instead of P_t itself:
//!
//! ```text
//!   v_t = y_t - d - Z a_t,   log L += -0.5 (p log 2 pi + log det F_t + v_t' F_t^{-1} v_t)
//!   a_{t+1} = T a_t + K_t F_t^{-1} v_t                      (K_t = T P_t Z')
//!   F_{t+1} = F_t + Z W_t M_t W_t' Z',    K_{t+1} = K_t + T W_t M_t W_t' Z'
//!   W_{t+1} = (T - K_t F_t^{-1} Z) W_t,   M_{t+1} = M_t - M_t W_t' Z' F_{t+1}^{-1} Z W_t M_t
//!   start: P_1 = Sigma (Lyapunov), F_1 = Z Sigma Z' + Hm, K_1 = W_1 = T Sigma Z', M_1 = -F_1^{-1}
//! ```
//!
//! These are exact (the same numbers as the covariance recursion, no steady-state switch) at
//! O(n^2 p) per period instead of O(n^3). The first period of the filter here is alpha_1 ~
//! N(0, Sigma), the same sample as [`super::filter`]'s alpha_0 convention. Every buffer is
//! allocated before the loop. Missing values, a diffuse start or an F_t that is not positive
//! definite (a singular forecast-error covariance) send the call to the univariate filter, which
//! handles them and gives the same likelihood where both apply.

use nalgebra::{DMatrix, DVector};

use super::filter::{filter_with, HALF_LOG_2PI};
use super::init::initial_state;
use super::{KalmanError, KalmanParams, StateSpaceModel};
use crate::linalg::{cholesky_in_place, cholesky_solve};

/// The exact log-likelihood of `y` (N x p, NaN = missing) under `model` (both read only), with
/// the conventions of the module doc of [`super`]. Returns it, or the filter's error.
pub fn loglik(
    model: &StateSpaceModel,
    y: &DMatrix<f64>,
    params: &KalmanParams,
) -> Result<f64, KalmanError> {
    if y.iter().all(|v| v.is_finite()) && y.ncols() == model.n_observables() {
        model.validate(y.nrows())?;
        let init = initial_state(model, params)?;
        if init.p_inf.is_none() {
            if let Some(ll) = chandrasekhar(model, y, &init.p_star) {
                return Ok(ll);
            }
        }
    }
    Ok(filter_with(model, y, params, false)?.loglik)
}

/// Smallest accepted Cholesky pivot of F_t relative to its largest diagonal entry: below 1e-13
/// the matrix is singular to working precision and the univariate filter takes over.
const PIVOT_TOL: f64 = 1e-13;

/// The Chandrasekhar recursions of the module doc from P_1 = `sigma`. Returns `None` when some
/// F_t is not numerically positive definite (the caller then uses the univariate filter).
fn chandrasekhar(model: &StateSpaceModel, y: &DMatrix<f64>, sigma: &DMatrix<f64>) -> Option<f64> {
    let n = model.n_states();
    let p = model.n_observables();
    let t = &model.t;
    let z = &model.z;
    // Period 1: P_1 = Sigma.
    let pz = sigma * z.transpose(); // n x p
    let mut f = z * &pz + &model.hm; // F_1
    f = (&f + f.transpose()) * 0.5;
    let mut k = t * &pz; // K_1 = T Sigma Z'
    let mut w = k.clone(); // W_1
    let mut fl = f.clone();
    let mut logdet = cholesky_in_place(&mut fl, PIVOT_TOL)?;
    // M_1 = -F_1^{-1}
    let mut m = -DMatrix::<f64>::identity(p, p);
    cholesky_solve(&fl, &mut m);
    let mut a = DVector::<f64>::zeros(n);
    let mut v = DMatrix::<f64>::zeros(p, 1);
    let mut u = DMatrix::<f64>::zeros(p, 1);
    let mut a_next = DVector::<f64>::zeros(n);
    let mut tw = DMatrix::<f64>::zeros(n, p);
    let mut zw = DMatrix::<f64>::zeros(p, p);
    let mut zwm = DMatrix::<f64>::zeros(p, p);
    let mut finv_zw = DMatrix::<f64>::zeros(p, p);
    let mut fl_next = DMatrix::<f64>::zeros(p, p);
    let mut g = DMatrix::<f64>::zeros(p, p);
    let mut mm = DMatrix::<f64>::zeros(p, p);
    let mut ll = 0.0;
    let n_periods = y.nrows();
    for s in 0..n_periods {
        // v_t and its term.
        for j in 0..p {
            let mut pred = model.d[j];
            for i in 0..n {
                pred += z[(j, i)] * a[i];
            }
            v[(j, 0)] = y[(s, j)] - pred;
        }
        u.copy_from(&v);
        cholesky_solve(&fl, &mut u);
        let quad = v.dot(&u);
        ll -= p as f64 * HALF_LOG_2PI + 0.5 * (logdet + quad);
        // a_{t+1} = T a_t + K_t F_t^{-1} v_t
        a_next.gemv(1.0, t, &a, 0.0);
        a_next.gemv(1.0, &k, &u.column(0), 1.0);
        std::mem::swap(&mut a, &mut a_next);
        if s + 1 == n_periods {
            break;
        }
        // ZW, TW, ZW M.
        zw.gemm(1.0, z, &w, 0.0);
        tw.gemm(1.0, t, &w, 0.0);
        zwm.gemm(1.0, &zw, &m, 0.0);
        // F_{t+1} = F_t + ZW M ZW'; K_{t+1} = K_t + TW M ZW' (K_t kept for W first).
        // W_{t+1} = TW - K_t F_t^{-1} ZW.
        finv_zw.copy_from(&zw);
        cholesky_solve(&fl, &mut finv_zw);
        // mm = M ZW' = (ZW M)' (M is symmetric).
        zwm.transpose_to(&mut mm);
        // w <- TW - K F^{-1} ZW  (n x p)
        w.copy_from(&tw);
        w.gemm(-1.0, &k, &finv_zw, 1.0);
        // K += TW M ZW'
        k.gemm(1.0, &tw, &mm, 1.0);
        f.gemm(1.0, &zw, &mm, 1.0);
        for i in 0..p {
            for j in 0..i {
                let x = 0.5 * (f[(i, j)] + f[(j, i)]);
                f[(i, j)] = x;
                f[(j, i)] = x;
            }
        }
        fl_next.copy_from(&f);
        logdet = cholesky_in_place(&mut fl_next, PIVOT_TOL)?;
        std::mem::swap(&mut fl, &mut fl_next);
        // M_{t+1} = M - (ZW M)' F_{t+1}^{-1} (ZW M)
        g.copy_from(&zwm);
        cholesky_solve(&fl, &mut g);
        m.gemm_tr(-1.0, &zwm, &g, 1.0);
        for i in 0..p {
            for j in 0..i {
                let x = 0.5 * (m[(i, j)] + m[(j, i)]);
                m[(i, j)] = x;
                m[(j, i)] = x;
            }
        }
    }
    Some(ll)
}
