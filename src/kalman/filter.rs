//! The Kalman filter, one observation at a time (Durbin and Koopman 2012, sec. 6.4), with the
//! exact diffuse start (ch. 5; Koopman 1997). For observation i of period t with row z and
//! measurement variance h (after the period's orthogonal diagonalisation of Hm when it is not
//! diagonal):
//!
//! ```text
//!   regular:  v = y - d - z a,  m = P z',  F = z m + h,  a <- a + m v / F,  P <- P - m m' / F,
//!             log L += -0.5 (log 2 pi + log F + v^2 / F)
//!   diffuse (F_inf = z P_inf z' > 0): K0 = P_inf z' / F_inf, a <- a + K0 v,
//!             P_* <- P_* + K0 K0' F_* - K0 m_*' - m_* K0',  P_inf <- P_inf - K0 K0' F_inf
//!             (term left out of log L; -0.5 log F_inf added to `diffuse_log_f_inf`)
//!   between periods: a <- T a,  P_* <- T P_* T' + R Q R',  P_inf <- T P_inf T'.
//! ```
//!
//! An observation with F (and F_inf) zero is skipped (module doc of [`super`]).

use nalgebra::{DMatrix, DVector};

use super::{initial_state, KalmanError, KalmanParams, StateSpaceModel};

/// -0.5 log(2 pi).
pub const HALF_LOG_2PI: f64 = 0.918_938_533_204_672_8;

/// One stored update step (for the smoother). The row `z` is in the coordinates the filter used.
#[derive(Debug, Clone, PartialEq)]
pub enum Step {
    Regular {
        z: DVector<f64>,
        v: f64,
        f: f64,
        /// m = P z' (before the update).
        m: DVector<f64>,
    },
    Diffuse {
        z: DVector<f64>,
        v: f64,
        f_inf: f64,
        f_star: f64,
        m_inf: DVector<f64>,
        m_star: DVector<f64>,
    },
}

/// Everything the filter computed. Vectors indexed by period run over 0..=N (period 0 is the
/// initial state, no data).
#[derive(Debug, Clone, PartialEq)]
pub struct FilterOutput {
    /// Exact log-likelihood of the used observations (module doc of [`super`]).
    pub loglik: f64,
    /// Sum of -0.5 log F_inf over the diffuse observations (left out of `loglik`).
    pub diffuse_log_f_inf: f64,
    /// Observations whose terms are in `loglik`.
    pub n_used: usize,
    /// Observations that resolved the diffuse states (terms left out).
    pub n_diffuse: usize,
    /// Observations skipped because their forecast variance was zero.
    pub n_skipped: usize,
    /// Rank of P_inf0 (0: fully stationary start).
    pub diffuse_rank: usize,
    /// Last period whose prediction still had a diffuse part (0 if none).
    pub diffuse_periods: usize,
    /// a_t = E[alpha_t | data to t-1], t = 0..=N (a_0 = 0).
    pub a_pred: Vec<DVector<f64>>,
    /// P_t (the P_* part during the diffuse phase), t = 0..=N.
    pub p_pred: Vec<DMatrix<f64>>,
    /// P_inf,t while diffuse, t = 0..=N.
    pub p_inf_pred: Vec<Option<DMatrix<f64>>>,
    /// E[alpha_t | data to t], t = 0..=N.
    pub a_filt: Vec<DVector<f64>>,
    /// Var[alpha_N | data to N] (P_* part).
    pub p_filt_last: DMatrix<f64>,
    /// P_inf after the last period, if still diffuse.
    pub p_inf_filt_last: Option<DMatrix<f64>>,
    /// Update steps per period, t = 0..=N.
    pub steps: Vec<Vec<Step>>,
    /// y_t - d - Z a_t for each observed entry (NaN where missing), N x p.
    pub prediction_errors: DMatrix<f64>,
    /// Diagonal of Z P_t Z' + Hm (forecast-error variances; infinite while diffuse), N x p.
    pub prediction_error_var: DMatrix<f64>,
}

/// One row of the period's observation equation, as the filter uses it.
struct Row {
    z: DVector<f64>,
    /// y - d in the filter's coordinates.
    yd: f64,
    h: f64,
    /// Size of the terms y and d came from (for the contradiction test).
    size: f64,
    /// The observable this row mostly belongs to (for messages).
    observable: usize,
}

/// Runs the filter on `y` (N x p, NaN = missing) for `model` (both read only). With `store`
/// false only the likelihood fields are filled (the vectors stay empty). Returns the output, or
/// the first problem (shapes, initial state, a contradiction in the data).
pub fn filter_with(
    model: &StateSpaceModel,
    y: &DMatrix<f64>,
    params: &KalmanParams,
    store: bool,
) -> Result<FilterOutput, KalmanError> {
    let n_periods = y.nrows();
    model.validate(n_periods)?;
    let n = model.n_states();
    let p = model.n_observables();
    if y.ncols() != p {
        return Err(KalmanError::Shape {
            what: format!(
                "the data have {} series but the model has {p} observables",
                y.ncols()
            ),
        });
    }
    if y.iter().any(|v| v.is_infinite()) {
        return Err(KalmanError::NonFinite {
            what: "the data".into(),
        });
    }
    let init = initial_state(model, params)?;
    let w = &model.r * &model.q * model.r.transpose();
    let w = (&w + w.transpose()) * 0.5;
    let tt = model.t.transpose();
    let diag_h = model.diagonal_hm();

    let mut a = DVector::zeros(n);
    let mut pm = init.p_star.clone();
    let mut pinf = init.p_inf.clone();
    let pinf_scale = pinf
        .as_ref()
        .map_or(0.0, |m| m.iter().fold(0.0f64, |s, v| s.max(v.abs())));
    let mut out = FilterOutput {
        loglik: 0.0,
        diffuse_log_f_inf: 0.0,
        n_used: 0,
        n_diffuse: 0,
        n_skipped: 0,
        diffuse_rank: init.diffuse_rank,
        diffuse_periods: 0,
        a_pred: Vec::new(),
        p_pred: Vec::new(),
        p_inf_pred: Vec::new(),
        a_filt: Vec::new(),
        p_filt_last: DMatrix::zeros(n, n),
        p_inf_filt_last: None,
        steps: Vec::new(),
        prediction_errors: DMatrix::from_element(n_periods, p, f64::NAN),
        prediction_error_var: DMatrix::from_element(n_periods, p, f64::NAN),
    };
    if store {
        out.a_pred.push(a.clone());
        out.p_pred.push(pm.clone());
        out.p_inf_pred.push(pinf.clone());
        out.a_filt.push(a.clone());
        out.steps.push(Vec::new());
    }
    let mut tmp = DMatrix::zeros(n, n);
    let mut m = DVector::zeros(n);
    let mut m2 = DVector::zeros(n);
    for t in 1..=n_periods {
        // Prediction: a <- T a, P <- T P T' + W, P_inf <- T P_inf T'.
        a = &model.t * &a;
        tmp.gemm(1.0, &model.t, &pm, 0.0);
        pm.gemm(1.0, &tmp, &tt, 0.0);
        pm += &w;
        symmetrize(&mut pm);
        if let Some(pi) = pinf.as_mut() {
            tmp.gemm(1.0, &model.t, pi, 0.0);
            pi.gemm(1.0, &tmp, &tt, 0.0);
            symmetrize(pi);
            out.diffuse_periods = t;
        }
        if store {
            out.a_pred.push(a.clone());
            out.p_pred.push(pm.clone());
            out.p_inf_pred.push(pinf.clone());
        }
        // The period's rows.
        let observed: Vec<usize> = (0..p).filter(|&j| !y[(t - 1, j)].is_nan()).collect();
        for &j in &observed {
            let zj = model.z.row(j);
            let pred = model.d[j] + (zj * &a)[0];
            out.prediction_errors[(t - 1, j)] = y[(t - 1, j)] - pred;
            let var = if pinf.as_ref().is_some_and(|pi| {
                (zj * pi * zj.transpose())[0] > params.diffuse_tol * pinf_scale * zj.norm_squared()
            }) {
                f64::INFINITY
            } else {
                (zj * &pm * zj.transpose())[0] + model.hm[(j, j)]
            };
            out.prediction_error_var[(t - 1, j)] = var;
        }
        let rows = period_rows(model, y, t - 1, &observed, diag_h);
        let mut steps = Vec::new();
        // Scales from the period-start variances (O(n) per row).
        let sd: Vec<f64> = (0..n).map(|i| pm[(i, i)].max(0.0).sqrt()).collect();
        for row in rows {
            let z = &row.z;
            let v = row.yd - z.dot(&a);
            let zs: f64 = z.iter().zip(&sd).map(|(zi, s)| zi.abs() * s).sum();
            let scale = zs * zs + row.h;
            if let Some(pi) = pinf.as_mut() {
                m.gemv(1.0, pi, z, 0.0);
                let f_inf = z.dot(&m);
                if f_inf > params.diffuse_tol * pinf_scale * z.norm_squared() {
                    m2.gemv(1.0, &pm, z, 0.0);
                    let f_star = z.dot(&m2) + row.h;
                    // a += K0 v; P_* += K0 K0' F_* - K0 m_*' - m_* K0'; P_inf -= m m' / F_inf.
                    let k0 = &m / f_inf;
                    a.axpy(v, &k0, 1.0);
                    pm.ger(f_star, &k0, &k0, 1.0);
                    pm.ger(-1.0, &k0, &m2, 1.0);
                    pm.ger(-1.0, &m2, &k0, 1.0);
                    pi.ger(-1.0 / f_inf, &m, &m, 1.0);
                    out.diffuse_log_f_inf -= 0.5 * f_inf.ln();
                    out.n_diffuse += 1;
                    if store {
                        steps.push(Step::Diffuse {
                            z: z.clone(),
                            v,
                            f_inf,
                            f_star,
                            m_inf: m.clone(),
                            m_star: m2.clone(),
                        });
                    }
                    continue;
                }
            }
            m.gemv(1.0, &pm, z, 0.0);
            let f = z.dot(&m) + row.h;
            if f > params.singular_tol * scale && f > 0.0 {
                a.axpy(v / f, &m, 1.0);
                pm.ger(-1.0 / f, &m, &m, 1.0);
                out.loglik -= HALF_LOG_2PI + 0.5 * (f.ln() + v * v / f);
                out.n_used += 1;
                if store {
                    steps.push(Step::Regular {
                        z: z.clone(),
                        v,
                        f,
                        m: m.clone(),
                    });
                }
            } else {
                let za: f64 = z.iter().zip(a.iter()).map(|(zi, ai)| (zi * ai).abs()).sum();
                let size = row.size + za + scale.max(0.0).sqrt();
                if v.abs() > params.contradiction_tol * size {
                    return Err(KalmanError::Contradiction {
                        period: t,
                        observable: row.observable,
                        residual: v,
                    });
                }
                out.n_skipped += 1;
            }
        }
        symmetrize(&mut pm);
        if let Some(pi) = pinf.as_mut() {
            symmetrize(pi);
            let big = pi.iter().fold(0.0f64, |s, v| s.max(v.abs()));
            if big <= params.diffuse_tol * pinf_scale {
                pinf = None;
            }
        }
        if store {
            out.a_filt.push(a.clone());
            out.steps.push(steps);
        }
    }
    out.p_filt_last = pm;
    out.p_inf_filt_last = pinf;
    Ok(out)
}

/// Runs the filter and keeps everything the smoother needs; see [`filter_with`].
pub fn filter(
    model: &StateSpaceModel,
    y: &DMatrix<f64>,
    params: &KalmanParams,
) -> Result<FilterOutput, KalmanError> {
    filter_with(model, y, params, true)
}

/// Overwrites `m` with (m + m') / 2.
fn symmetrize(m: &mut DMatrix<f64>) {
    let n = m.nrows();
    for i in 0..n {
        for j in 0..i {
            let v = 0.5 * (m[(i, j)] + m[(j, i)]);
            m[(i, j)] = v;
            m[(j, i)] = v;
        }
    }
}

/// The rows of period `t0` (0-based) for the observed series: as they are when Hm is diagonal,
/// else rotated by the eigenvectors V of Hm restricted to the observed series (y* = V'(y - d),
/// Z* = V'Z, Hm* = diag of eigenvalues; the Jacobian of an orthogonal map is one, so the
/// likelihood is unchanged).
fn period_rows(
    model: &StateSpaceModel,
    y: &DMatrix<f64>,
    t0: usize,
    observed: &[usize],
    diag_h: bool,
) -> Vec<Row> {
    if diag_h || observed.len() <= 1 {
        return observed
            .iter()
            .map(|&j| Row {
                z: model.z.row(j).transpose(),
                yd: y[(t0, j)] - model.d[j],
                h: model.hm[(j, j)],
                size: y[(t0, j)].abs() + model.d[j].abs(),
                observable: j,
            })
            .collect();
    }
    let k = observed.len();
    let hw = DMatrix::from_fn(k, k, |a, b| {
        0.5 * (model.hm[(observed[a], observed[b])] + model.hm[(observed[b], observed[a])])
    });
    let eig = hw.symmetric_eigen();
    (0..k)
        .map(|c| {
            let vcol = eig.eigenvectors.column(c);
            let mut z = DVector::zeros(model.n_states());
            let mut yd = 0.0;
            let mut size = 0.0;
            let mut best = (0.0, observed[0]);
            for (a, &j) in observed.iter().enumerate() {
                let w = vcol[a];
                z.axpy(w, &model.z.row(j).transpose(), 1.0);
                yd += w * (y[(t0, j)] - model.d[j]);
                size += w.abs() * (y[(t0, j)].abs() + model.d[j].abs());
                if w.abs() > best.0 {
                    best = (w.abs(), j);
                }
            }
            Row {
                z,
                yd,
                h: eig.eigenvalues[c].max(0.0),
                size,
                observable: best.1,
            }
        })
        .collect()
}
