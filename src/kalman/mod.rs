//! Linear Gaussian state-space models: Kalman filter, smoother, likelihood, decompositions and
//! forecasts.
//!
//! ```text
//!     alpha_t = T alpha_{t-1} + R e_t,      e_t ~ N(0, Q)      (transition, n states, k shocks)
//!     y_t     = d + Z alpha_t + u_t,        u_t ~ N(0, Hm)     (observation, p series)
//!     alpha_0 ~ unconditional distribution (stationary part) + diffuse part (unit roots)
//! ```
//!
//! for t = 1..N, with e_t and u_t independent of each other and over time. Missing values of y_t
//! (NaN) drop their rows of the observation equation for that period.
//!
//! Conventions (written down once, used everywhere):
//! - Period 0 carries the initial state and no data: alpha_0 ~ N(0, P_*0) plus, for states with
//!   a unit root, a diffuse component (variance kappa P_inf0, kappa -> infinity). With a stable T
//!   this makes alpha_1 ~ N(0, Sigma) with Sigma = T Sigma T' + R Q R', the usual stationary start
//!   (Hamilton 1994, ch. 13). The stationary covariance comes from the Lyapunov solver of
//!   [`crate::linalg::lyapunov`]; the diffuse part from a reordered complex Schur form of T
//!   ([`init`]).
//! - The filter treats the observations of a period one at a time (Durbin and Koopman 2012,
//!   sec. 6.4, "univariate treatment"); a correlated Hm is first diagonalised period by period by
//!   an orthogonal transformation (which leaves the likelihood unchanged). An observation whose
//!   forecast variance is zero (an exact combination of observations already used, no
//!   measurement error) carries no information and is skipped; if its forecast error is not zero
//!   either, the data contradict the model and the filter returns
//!   [`KalmanError::Contradiction`].
//! - Likelihood: log L = sum over every used observation of
//!   -0.5 (log 2 pi + log F_{t,i} + v_{t,i}^2 / F_{t,i}), all constants included. With a diffuse
//!   start (Durbin and Koopman 2012, ch. 5; Koopman 1997) the observations whose diffuse forecast
//!   variance F_inf is positive are the "diffuse" terms: they are left out entirely (not even
//!   their log 2 pi), so log L is the density of the remaining observations given the diffuse
//!   ones. The left-out sum of -0.5 log F_inf is reported separately
//!   ([`FilterOutput::diffuse_log_f_inf`]) so Durbin and Koopman's diffuse log-likelihood
//!   (their eq. 5.17 style, which keeps the -0.5 log F_inf terms) can be formed from it.
//! - The smoother is the disturbance smoother (de Jong 1989; Koopman 1993; Durbin and Koopman
//!   2012, sec. 4.5, and 5.3 for the exact diffuse version): backward recursions for r and N,
//!   never inverting a predicted state covariance (it is singular for lag states).
//!
//! The likelihood-only path [`loglik`] uses the Chandrasekhar recursions (Morf, Sidhu and
//! Kailath 1974; Herbst 2015, "Using the Chandrasekhar recursions for likelihood evaluation of DSGE
//! models", Computational Economics 45) when the system allows it (complete data, stationary
//! start, positive-definite forecast-error covariances): O(n^2 p) per period instead of O(n^3),
//! exact (no steady-state approximation). Otherwise it runs the univariate filter.

pub mod fast;
pub mod filter;
pub mod forecast;
pub mod init;
pub mod observation;
pub mod smoother;

#[cfg(test)]
mod tests;

use nalgebra::{DMatrix, DVector};
use thiserror::Error;

use crate::linalg::lyapunov::LyapunovError;

pub use fast::loglik;
pub use filter::{filter, FilterOutput};
pub use forecast::{forecast, forecast_given_path, Forecast};
pub use init::{initial_state, InitialState};
pub use observation::{model_state_space, ModelStateSpace, ObservationError};
pub use smoother::{decompose, smooth, Decomposition, Smoothed};

/// Largest state dimension accepted (dense n x n matrices per period; 2000 is 32 MB each).
pub const MAX_STATES: usize = 2000;

/// Largest number of periods accepted (filter storage grows with N n^2).
pub const MAX_PERIODS: usize = 100_000;

/// Tuning knobs of the filter, with documented defaults ([`KalmanParams::default`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KalmanParams {
    /// An eigenvalue of T with modulus at least 1 - `unit_root_tol` is a unit root (its direction
    /// gets the diffuse start). Default 1e-8: solved models place unit roots at 1 up to rounding
    /// (about 1e-14); 1e-8 still separates a root of 0.9999 as stationary.
    pub unit_root_tol: f64,
    /// A forecast variance F_{t,i} at most `singular_tol` times the observation's variance before
    /// the period's updates (z P_t z' + h) counts as zero. Default 1e-10: cancellation in F leaves
    /// about n eps of that scale; 1e-10 keeps a margin of 1e3 for n up to a few hundred.
    pub singular_tol: f64,
    /// A forecast error with zero forecast variance contradicts the model when it exceeds
    /// `contradiction_tol` times |y| + |d| + sum_j |z_j a_j| + sqrt(z P_t z' + h) (the size of the
    /// terms it is computed from). Default 1e-8.
    pub contradiction_tol: f64,
    /// The diffuse phase ends when every entry of P_inf is at most `diffuse_tol` times its
    /// largest initial entry; an F_inf at most `diffuse_tol` times ||z||^2 times that entry counts
    /// as zero. Default 1e-10 (relative; P_inf is a projection scaled by T).
    pub diffuse_tol: f64,
}

impl Default for KalmanParams {
    fn default() -> Self {
        KalmanParams {
            unit_root_tol: 1e-8,
            singular_tol: 1e-10,
            contradiction_tol: 1e-8,
            diffuse_tol: 1e-10,
        }
    }
}

/// The state-space model of the module documentation (fields as named there; `hm` is Var u).
#[derive(Debug, Clone, PartialEq)]
pub struct StateSpaceModel {
    /// T: n x n.
    pub t: DMatrix<f64>,
    /// R: n x k.
    pub r: DMatrix<f64>,
    /// Q = Var e: k x k.
    pub q: DMatrix<f64>,
    /// d: p.
    pub d: DVector<f64>,
    /// Z: p x n.
    pub z: DMatrix<f64>,
    /// Hm = Var u: p x p.
    pub hm: DMatrix<f64>,
}

/// Why a filter, smoother or forecast could not be computed.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum KalmanError {
    #[error("the state-space matrices do not fit together: {what}")]
    Shape { what: String },
    #[error("the state-space model is too large ({states} states, {periods} periods; at most {MAX_STATES} states and {MAX_PERIODS} periods)")]
    TooLarge { states: usize, periods: usize },
    #[error("{what} has a non-finite entry (NaN or infinity)")]
    NonFinite { what: String },
    #[error("{what} is not a covariance matrix (not symmetric positive semidefinite: {detail})")]
    NotCovariance { what: String, detail: String },
    #[error("the unconditional distribution of the stationary states could not be computed: {0}")]
    Lyapunov(LyapunovError),
    #[error("the Schur decomposition of the transition matrix did not converge")]
    SchurNoConvergence,
    #[error("observation {observable} in period {period} contradicts the model: it is an exact combination of the other data (no measurement error) but differs from it by {residual:e}")]
    Contradiction {
        /// 1-based period of the sample.
        period: usize,
        /// Index of the observable (into the rows of Z).
        observable: usize,
        residual: f64,
    },
    #[error("the data do not determine the unit-root states by the end of the sample, so forecasts have no finite variance")]
    DiffuseAtEnd,
    #[error("conditional forecast: {what}")]
    Condition { what: String },
}

impl StateSpaceModel {
    pub fn n_states(&self) -> usize {
        self.t.nrows()
    }
    pub fn n_observables(&self) -> usize {
        self.z.nrows()
    }
    pub fn n_shocks(&self) -> usize {
        self.r.ncols()
    }

    /// Checks shapes, finiteness and that Q and Hm are symmetric positive semidefinite (to a
    /// relative 1e-10 of their largest diagonal entry: a rounding margin). Returns `Ok(())` or
    /// the first problem found.
    pub fn validate(&self, periods: usize) -> Result<(), KalmanError> {
        let n = self.t.nrows();
        let k = self.r.ncols();
        let p = self.z.nrows();
        let shape = |what: &str| {
            Err(KalmanError::Shape {
                what: what.to_string(),
            })
        };
        if self.t.ncols() != n {
            return shape("T is not square");
        }
        if self.r.nrows() != n {
            return shape("R has not as many rows as T");
        }
        if self.q.nrows() != k || self.q.ncols() != k {
            return shape("Q is not k x k for the k columns of R");
        }
        if self.z.ncols() != n {
            return shape("Z has not as many columns as there are states");
        }
        if self.d.len() != p {
            return shape("d has not as many entries as Z has rows");
        }
        if self.hm.nrows() != p || self.hm.ncols() != p {
            return shape("Hm is not p x p for the p rows of Z");
        }
        if n > MAX_STATES || periods > MAX_PERIODS {
            return Err(KalmanError::TooLarge { states: n, periods });
        }
        for (m, what) in [
            (&self.t, "T"),
            (&self.r, "R"),
            (&self.q, "Q"),
            (&self.z, "Z"),
            (&self.hm, "Hm"),
        ] {
            if m.iter().any(|v| !v.is_finite()) {
                return Err(KalmanError::NonFinite {
                    what: what.to_string(),
                });
            }
        }
        if self.d.iter().any(|v| !v.is_finite()) {
            return Err(KalmanError::NonFinite { what: "d".into() });
        }
        check_covariance(&self.q, "the innovation covariance Q")?;
        check_covariance(&self.hm, "the measurement-error covariance Hm")?;
        Ok(())
    }

    /// Whether Hm is diagonal (exact zeros off the diagonal).
    pub fn diagonal_hm(&self) -> bool {
        let p = self.hm.nrows();
        (0..p).all(|i| (0..p).all(|j| i == j || self.hm[(i, j)] == 0.0))
    }

    /// The same model with the measurement errors moved into the state:
    /// alpha* = [alpha; u], T* = diag(T, 0), R* = diag(R, I), Q* = diag(Q, Hm), Z* = [Z, I],
    /// Hm* = 0. Smoothed states of the result give the joint distribution of states and errors.
    pub fn with_errors_in_state(&self) -> StateSpaceModel {
        let (n, k, p) = (self.n_states(), self.n_shocks(), self.n_observables());
        let mut t = DMatrix::zeros(n + p, n + p);
        t.view_mut((0, 0), (n, n)).copy_from(&self.t);
        let mut r = DMatrix::zeros(n + p, k + p);
        r.view_mut((0, 0), (n, k)).copy_from(&self.r);
        r.view_mut((n, k), (p, p)).fill_with_identity();
        let mut q = DMatrix::zeros(k + p, k + p);
        q.view_mut((0, 0), (k, k)).copy_from(&self.q);
        q.view_mut((k, k), (p, p)).copy_from(&self.hm);
        let mut z = DMatrix::zeros(p, n + p);
        z.view_mut((0, 0), (p, n)).copy_from(&self.z);
        z.view_mut((0, n), (p, p)).fill_with_identity();
        StateSpaceModel {
            t,
            r,
            q,
            d: self.d.clone(),
            z,
            hm: DMatrix::zeros(p, p),
        }
    }
}

/// Checks that `m` is symmetric and positive semidefinite to a relative 1e-10 of its largest
/// diagonal entry (symmetric eigenvalues). Returns the problem in words.
pub fn check_covariance(m: &DMatrix<f64>, what: &str) -> Result<(), KalmanError> {
    let n = m.nrows();
    if n == 0 {
        return Ok(());
    }
    let scale = (0..n).map(|i| m[(i, i)].abs()).fold(0.0, f64::max);
    for i in 0..n {
        for j in 0..i {
            if (m[(i, j)] - m[(j, i)]).abs() > 1e-10 * scale.max(f64::MIN_POSITIVE) {
                return Err(KalmanError::NotCovariance {
                    what: what.to_string(),
                    detail: format!(
                        "entries ({}, {}) and ({}, {}) differ",
                        i + 1,
                        j + 1,
                        j + 1,
                        i + 1
                    ),
                });
            }
        }
    }
    let sym = (m + m.transpose()) * 0.5;
    let eig = sym.symmetric_eigenvalues();
    let min = eig.iter().copied().fold(f64::INFINITY, f64::min);
    if min < -1e-10 * scale {
        return Err(KalmanError::NotCovariance {
            what: what.to_string(),
            detail: format!("smallest eigenvalue {min:e}"),
        });
    }
    Ok(())
}
