//! The disturbance smoother (de Jong 1989; Koopman 1993; Durbin and Koopman 2012, sec. 4.5) with
//! its exact diffuse extension (Durbin and Koopman 2012, sec. 5.3; Koopman and Durbin 2003), one
//! observation at a time, backward from r = 0, N = 0 after the last period:
//!
//! ```text
//!   regular step (K = m / F, L = I - K z):  r <- z' v / F + L' r,   N <- z' z / F + L' N L
//!   between periods:                        r <- T' r,              N <- T' N T
//!   smoothed state      alpha^_t = a_t + P_t r_t,          Var = P_t - P_t N_t P_t
//!   smoothed innovation e^_t     = Q R' r_t,               Var = Q - Q R' N_t R Q
//! ```
//!
//! with r_t, N_t the values after the backward pass through period t's observations. In the
//! diffuse phase r and N are expanded in 1/kappa (r0, r1; N0, N1, N2) and for a step with
//! F_inf > 0 (K0 = m_inf / F_inf, K1 = (m_* - K0 F_*) / F_inf, L0 = I - K0 z, L1 = -K1 z):
//!
//! ```text
//!   r0 <- L0' r0,   r1 <- z' v / F_inf + L0' r1 + L1' r0,
//!   N0 <- L0' N0 L0,   N1 <- z' z / F_inf + L0' N1 L0 + L1' N0 L0 + L0' N0 L1,
//!   N2 <- -z' z F_* / F_inf^2 + L0' N2 L0 + L0' N1 L1 + L1' N1 L0 + L1' N0 L1,
//!   alpha^_t = a_t + P_*t r0 + P_inf,t r1,
//!   Var = P_* - P_* N0 P_* - P_inf N1 P_* - (P_inf N1 P_*)' - P_inf N2 P_inf.
//! ```
//!
//! No predicted state covariance is ever inverted. The historical decomposition writes the
//! smoothed path as alpha^_t = T^t alpha^_0 + sum_{s<=t} T^{t-s} R e^_s (one term per innovation
//! plus the initial state), which the smoothed quantities satisfy exactly (Durbin and Koopman
//! 2012, sec. 4.6.2, the forward recursion alpha^_{t+1} = T alpha^_t + R e^_{t+1}).

use nalgebra::{DMatrix, DVector};

use super::filter::{FilterOutput, Step};
use super::{KalmanError, StateSpaceModel};

/// Smoothed quantities, t = 0..=N for states (period 0 is the initial state), t = 1..=N for
/// innovations (index t - 1).
#[derive(Debug, Clone, PartialEq)]
pub struct Smoothed {
    pub states: Vec<DVector<f64>>,
    pub state_var: Vec<DMatrix<f64>>,
    pub shocks: Vec<DVector<f64>>,
    pub shock_var: Vec<DMatrix<f64>>,
}

/// Historical decomposition, t = 1..=N (index t - 1).
#[derive(Debug, Clone, PartialEq)]
pub struct Decomposition {
    /// T^t alpha^_0 (n per period).
    pub initial: Vec<DVector<f64>>,
    /// Column s: the contribution of innovation s to each state (n x k per period).
    pub shocks: Vec<DMatrix<f64>>,
}

/// N <- L' N L with L = I - k z' (so L' N L = N - z g' - g z' + (k'g) z z', g = N k).
/// Overwrites `n` only; `g` is workspace.
fn sandwich(n: &mut DMatrix<f64>, k: &DVector<f64>, z: &DVector<f64>, g: &mut DVector<f64>) {
    g.gemv(1.0, n, k, 0.0);
    let c = k.dot(g);
    n.ger(-1.0, z, g, 1.0);
    n.ger(-1.0, g, z, 1.0);
    n.ger(c, z, z, 1.0);
}

/// Runs the smoother on the filter's output `f` for `model` (both read only). Returns the
/// smoothed states, innovations and their variances, or a shape error when `f` holds no stored
/// steps.
pub fn smooth(model: &StateSpaceModel, f: &FilterOutput) -> Result<Smoothed, KalmanError> {
    let n = model.n_states();
    let periods = f.steps.len();
    if periods == 0 || f.a_pred.len() != periods || f.p_pred.len() != periods {
        return Err(KalmanError::Shape {
            what: "the smoother needs a filter run that stored its steps".into(),
        });
    }
    let last = periods - 1;
    let tt = model.t.transpose();
    let qr = &model.q * model.r.transpose();
    let mut r0 = DVector::zeros(n);
    let mut r1 = DVector::zeros(n);
    let mut n0 = DMatrix::zeros(n, n);
    let mut n1 = DMatrix::zeros(n, n);
    let mut n2 = DMatrix::zeros(n, n);
    let mut g = DVector::zeros(n);
    let mut tmp = DMatrix::zeros(n, n);
    let mut states = vec![DVector::zeros(0); periods];
    let mut state_var = vec![DMatrix::zeros(0, 0); periods];
    let mut shocks = vec![DVector::zeros(0); last];
    let mut shock_var = vec![DMatrix::zeros(0, 0); last];
    for t in (0..=last).rev() {
        let diffuse = t <= f.diffuse_periods && f.diffuse_periods > 0;
        for step in f.steps[t].iter().rev() {
            match step {
                Step::Regular { z, v, f: fv, m } => {
                    let k = m / *fv;
                    let kr = k.dot(&r0);
                    r0.axpy(v / fv - kr, z, 1.0);
                    sandwich(&mut n0, &k, z, &mut g);
                    n0.ger(1.0 / fv, z, z, 1.0);
                    if diffuse {
                        let kr1 = k.dot(&r1);
                        r1.axpy(-kr1, z, 1.0);
                        sandwich(&mut n1, &k, z, &mut g);
                        sandwich(&mut n2, &k, z, &mut g);
                    }
                }
                Step::Diffuse {
                    z,
                    v,
                    f_inf,
                    f_star,
                    m_inf,
                    m_star,
                } => {
                    let k0 = m_inf / *f_inf;
                    let k1 = (m_star - &k0 * *f_star) / *f_inf;
                    // r1 <- z v / F_inf + L0' r1 + L1' r0;  r0 <- L0' r0.
                    let c1 = v / f_inf - k0.dot(&r1) - k1.dot(&r0);
                    r1.axpy(c1, z, 1.0);
                    let c0 = -k0.dot(&r0);
                    r0.axpy(c0, z, 1.0);
                    // h0 = L0' N0 K1, h1 = L0' N1 K1 (old N0, N1).
                    let g0 = &n0 * &k1;
                    let h0 = &g0 - z * k0.dot(&g0);
                    let k1n0k1 = k1.dot(&g0);
                    let g1 = &n1 * &k1;
                    let h1 = &g1 - z * k0.dot(&g1);
                    // N2 <- -z z' F_*/F_inf^2 + L0' N2 L0 - h1 z' - z h1' + (K1'N0K1) z z'.
                    sandwich(&mut n2, &k0, z, &mut g);
                    n2.ger(-1.0, &h1, z, 1.0);
                    n2.ger(-1.0, z, &h1, 1.0);
                    n2.ger(k1n0k1 - f_star / (f_inf * f_inf), z, z, 1.0);
                    // N1 <- z z' / F_inf + L0' N1 L0 - z h0' - h0 z'.
                    sandwich(&mut n1, &k0, z, &mut g);
                    n1.ger(-1.0, z, &h0, 1.0);
                    n1.ger(-1.0, &h0, z, 1.0);
                    n1.ger(1.0 / f_inf, z, z, 1.0);
                    // N0 <- L0' N0 L0.
                    sandwich(&mut n0, &k0, z, &mut g);
                }
            }
        }
        // Smoothed state and variance at t.
        let p = &f.p_pred[t];
        let mut a = &f.a_pred[t] + p * &r0;
        let pn = p * &n0;
        let mut var = p - &pn * p;
        if diffuse {
            if let Some(pi) = &f.p_inf_pred[t] {
                a += pi * &r1;
                let x = pi * &n1 * p;
                var -= &x;
                var -= x.transpose();
                var -= pi * &n2 * pi;
            }
        }
        let var = (&var + var.transpose()) * 0.5;
        states[t] = a;
        state_var[t] = var;
        if t >= 1 {
            shocks[t - 1] = &qr * &r0;
            let sv = &model.q - &qr * &n0 * qr.transpose();
            shock_var[t - 1] = (&sv + sv.transpose()) * 0.5;
            // Across the period boundary: r <- T' r, N <- T' N T.
            r0 = &tt * &r0;
            tmp.gemm(1.0, &tt, &n0, 0.0);
            n0.gemm(1.0, &tmp, &model.t, 0.0);
            if t - 1 <= f.diffuse_periods && f.diffuse_periods > 0 {
                r1 = &tt * &r1;
                tmp.gemm(1.0, &tt, &n1, 0.0);
                n1.gemm(1.0, &tmp, &model.t, 0.0);
                tmp.gemm(1.0, &tt, &n2, 0.0);
                n2.gemm(1.0, &tmp, &model.t, 0.0);
            }
        }
    }
    Ok(Smoothed {
        states,
        state_var,
        shocks,
        shock_var,
    })
}

/// The historical decomposition of the module doc from the smoothed initial state and
/// innovations `s` (read only). Returns one entry per period 1..=N.
pub fn decompose(model: &StateSpaceModel, s: &Smoothed) -> Decomposition {
    let n = model.n_states();
    let k = model.n_shocks();
    let mut init = s
        .states
        .first()
        .cloned()
        .unwrap_or_else(|| DVector::zeros(n));
    let mut contrib = DMatrix::zeros(n, k);
    let mut initial = Vec::with_capacity(s.shocks.len());
    let mut shocks = Vec::with_capacity(s.shocks.len());
    for e in &s.shocks {
        init = &model.t * &init;
        contrib = &model.t * &contrib;
        for j in 0..k {
            contrib.column_mut(j).axpy(e[j], &model.r.column(j), 1.0);
        }
        initial.push(init.clone());
        shocks.push(contrib.clone());
    }
    Decomposition { initial, shocks }
}
