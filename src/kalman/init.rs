//! The initial state alpha_0 of the filter:
//!
//! ```text
//!     alpha_0 = U_1 delta + eta_0,   delta diffuse (variance kappa I, kappa -> infinity),
//!                                    eta_0 ~ N(0, P_*0),
//!     P_inf0 = U_1 U_1',   P_*0 = U_2 X_22 U_2',   X_22 = S_22 X_22 S_22' + (U' R Q R' U)_22
//! ```
//!
//! where T = U S U^H is a complex Schur form reordered so that the eigenvalues of modulus at
//! least 1 - `unit_root_tol` come first (U = [U_1 U_2]). The stationary coordinates
//! w_2 = U_2^H alpha evolve on their own (w_2,t = S_22 w_2,t-1 + U_2^H R e_t) and start from their
//! unconditional distribution; the unit-root coordinates get the exact diffuse start of Durbin and
//! Koopman (2012, ch. 5). With no unit root this is P_*0 = Sigma, Sigma = T Sigma T' + R Q R',
//! from [`solve_discrete_lyapunov`] directly (real arithmetic).

use nalgebra::DMatrix;

use super::{KalmanError, KalmanParams, StateSpaceModel};
use crate::linalg::{
    cmul, relative_residual, solve_discrete_lyapunov, solve_triangular_stein,
    solve_with_real_schur, to_complex, ComplexSchur, LyapunovError, RealSchur, RESIDUAL_TOL,
};

/// The distribution of alpha_0 (mean zero).
#[derive(Debug, Clone, PartialEq)]
pub struct InitialState {
    /// P_*0 (n x n).
    pub p_star: DMatrix<f64>,
    /// P_inf0 (n x n), `None` when no state has a unit root.
    pub p_inf: Option<DMatrix<f64>>,
    /// Number of unit-root directions (the rank of P_inf0).
    pub diffuse_rank: usize,
}

/// Computes the initial distribution of the module doc for `model` (read only). Returns it, or
/// the Lyapunov or Schur failure.
pub fn initial_state(
    model: &StateSpaceModel,
    params: &KalmanParams,
) -> Result<InitialState, KalmanError> {
    let n = model.n_states();
    let w = &model.r * &model.q * model.r.transpose();
    let w = (&w + w.transpose()) * 0.5;
    if n == 0 {
        return Ok(InitialState {
            p_star: DMatrix::zeros(0, 0),
            p_inf: None,
            diffuse_rank: 0,
        });
    }
    let limit = 1.0 - params.unit_root_tol;
    // One real Schur form decides: no eigenvalue of modulus >= 1 - tol means a stationary start.
    let real = RealSchur::new(&model.t).map_err(|e| match e {
        LyapunovError::SchurNoConvergence => KalmanError::SchurNoConvergence,
        e => KalmanError::Lyapunov(e),
    })?;
    if real.spectral_radius() < limit {
        let x = match solve_with_real_schur(&real, &w) {
            Ok(x) if relative_residual(&model.t, &w, &x) <= RESIDUAL_TOL => x,
            _ => {
                solve_discrete_lyapunov(&model.t, &w)
                    .map_err(KalmanError::Lyapunov)?
                    .x
            }
        };
        return Ok(InitialState {
            p_star: x,
            p_inf: None,
            diffuse_rank: 0,
        });
    }
    let mut schur = ComplexSchur::new(&model.t).map_err(|e| match e {
        LyapunovError::SchurNoConvergence => KalmanError::SchurNoConvergence,
        e => KalmanError::Lyapunov(e),
    })?;
    let m = schur.reorder_front(|z| z.norm() >= limit);
    let u = &schur.u;
    let u1 = u.columns(0, m).into_owned();
    let u2 = u.columns(m, n - m).into_owned();
    let p_inf = cmul(&u1, &u1.adjoint()).map(|z| z.re);
    let p_inf = (&p_inf + p_inf.transpose()) * 0.5;
    let p_star = if m < n {
        let s22 = schur.t.view((m, m), (n - m, n - m)).into_owned();
        let wc = to_complex(&w);
        let c = cmul(&cmul(&u2.adjoint(), &wc), &u2);
        let x22 = solve_triangular_stein(&s22, &c).map_err(KalmanError::Lyapunov)?;
        let x = cmul(&cmul(&u2, &x22), &u2.adjoint()).map(|z| z.re);
        (&x + x.transpose()) * 0.5
    } else {
        DMatrix::zeros(n, n)
    };
    Ok(InitialState {
        p_star,
        p_inf: Some(p_inf),
        diffuse_rank: m,
    })
}
