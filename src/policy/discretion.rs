//! Discretion: the Markov-perfect policy (Oudiz and Sachs 1985; Backus and Driffill 1986;
//! Soderlind 1999, "Solution and estimation of RE macromodels with optimal policy", EER 43;
//! Dennis 2007, "Optimal policy in rational expectations models: new solution algorithms",
//! Macroeconomic Dynamics 11, whose structural form this follows).
//!
//! The constraints in first-order form, y_t all n variables (controls u_t among them):
//!
//! ```text
//!   F0 y_t + F1 E_t y_{t+1} + Fm y_{t-1} + E e_t = 0        (n - m equations)
//! ```
//!
//! The policymaker of period t takes the private sector's expectations rule `E_t y_{t+1} = H y_t`
//! and the continuation value `beta y_t' P y_t / 2` as given. Then `D = F0 + F1 H` gives the
//! non-controls as `x_t = -D_x^{-1}(Fm y_{t-1} + D_u u_t + E e_t)`, i.e.
//! `y_t = M y_{t-1} + N u_t + K e_t`, and with `z_t = (y_t, y_{t-1})`, `loss_t = z_t' W z_t / 2`:
//!
//! ```text
//!   u_t = F y_{t-1} + F_e e_t,    F = -(N~' W~ N~)^{-1} N~' W~ [M; I],  N~ = [N; 0],
//!   W~ = W + beta diag(P, 0),     H' = M + N F,   P' = C' W C + beta H'' P H',  C = [H'; I].
//! ```
//!
//! The iteration stops when H and P change by at most [`PolicyParams::tolerance`] (relative) in
//! one step, or fails after [`PolicyParams::max_iterations`]. It is started from H = 0, P = 0 and
//! again from H = 0.9 I; two different limits mean more than one equilibrium (Blake and Kirsanova
//! 2012), which the solution's warnings say. Handles leads and lags of one period and
//! innovations at t (other models: an error asking for auxiliary variables).

use nalgebra::DMatrix;

use super::{PolicyError, PolicyParams, PolicyProblem};
use crate::model::Model;
use crate::solution::{Counts, Root, SolvedModel, StateSpace, Status};

/// First-order structural matrices of the constraints.
struct Form {
    f0: DMatrix<f64>,
    f1: DMatrix<f64>,
    fm: DMatrix<f64>,
    e: DMatrix<f64>,
    /// Loss Hessian over z = (y_t, y_{t-1}).
    w: DMatrix<f64>,
    x: Vec<usize>,
    u: Vec<usize>,
}

fn form(model: &Model, prob: &PolicyProblem) -> Result<Form, PolicyError> {
    let n = model.endogenous.len();
    let ne = model.exogenous.len();
    let nc = prob.constraints.len();
    if let Some(v) = model.endogenous.iter().find(|v| v.predetermined) {
        return Err(PolicyError::DiscretionForm(format!(
            "the predetermined variable {} is not supported; write it with a lag instead",
            v.name
        )));
    }
    let row: std::collections::HashMap<usize, usize> = prob
        .constraints
        .iter()
        .enumerate()
        .map(|(r, &i)| (i, r))
        .collect();
    let mut f0 = DMatrix::zeros(nc, n);
    let mut f1 = DMatrix::zeros(nc, n);
    let mut fm = DMatrix::zeros(nc, n);
    let mut e = DMatrix::zeros(nc, ne);
    for t in &prob.linear.variable_terms {
        let Some(&r) = row.get(&t.equation) else {
            continue;
        };
        match t.offset {
            0 => f0[(r, t.variable)] += t.value,
            1 => f1[(r, t.variable)] += t.value,
            -1 => fm[(r, t.variable)] += t.value,
            o => {
                return Err(PolicyError::DiscretionForm(format!(
                    "{} appears with offset {o}; only leads and lags of one period are handled (add an auxiliary variable for longer ones)",
                    model.endogenous[t.variable].name
                )))
            }
        }
    }
    for t in &prob.linear.innovation_terms {
        let Some(&r) = row.get(&t.equation) else {
            continue;
        };
        if t.lag != 0 {
            return Err(PolicyError::DiscretionForm(format!(
                "the innovation {} appears lagged; only innovations at t are handled (add an auxiliary variable)",
                model.exogenous[t.shock].name
            )));
        }
        e[(r, t.shock)] += t.value;
    }
    if prob.loss.max_lag() > 1 {
        return Err(PolicyError::DiscretionForm(
            "the loss has lags longer than one period; only one-period lags are handled".into(),
        ));
    }
    let mut w = DMatrix::zeros(2 * n, 2 * n);
    let pos = |t: &super::LossTerm| t.variable + n * t.lag as usize;
    for (a, ta) in prob.loss.terms.iter().enumerate() {
        for (b, tb) in prob.loss.terms.iter().enumerate() {
            w[(pos(ta), pos(tb))] += prob.loss.hessian[(a, b)];
        }
    }
    let u = prob.controls.clone();
    let x: Vec<usize> = (0..n).filter(|j| !u.contains(j)).collect();
    if x.len() != nc {
        return Err(PolicyError::DiscretionForm(format!(
            "{} constraints for {} non-control variables",
            nc,
            x.len()
        )));
    }
    Ok(Form {
        f0,
        f1,
        fm,
        e,
        w,
        x,
        u,
    })
}

fn max_abs(m: &DMatrix<f64>) -> f64 {
    m.iter().fold(0.0f64, |a, v| a.max(v.abs()))
}

/// One fixed point of the iteration from `(h, p)`; returns `(H, J, P, iterations)`.
#[allow(clippy::type_complexity)]
fn iterate(
    f: &Form,
    beta: f64,
    mut h: DMatrix<f64>,
    mut p: DMatrix<f64>,
    params: &PolicyParams,
) -> Result<(DMatrix<f64>, DMatrix<f64>, DMatrix<f64>, usize), PolicyError> {
    let n = h.nrows();
    let nx = f.x.len();
    let m = f.u.len();
    let ne = f.e.ncols();
    let mut change = f64::INFINITY;
    for it in 1..=params.max_iterations {
        let d = &f.f0 + &f.f1 * &h;
        let dx = DMatrix::from_fn(nx, nx, |r, c| d[(r, f.x[c])]);
        let du = DMatrix::from_fn(nx, m, |r, c| d[(r, f.u[c])]);
        let lu = dx.lu();
        let singular = || {
            PolicyError::DiscretionSingular(
                "the private sector's equations do not determine the non-control variables given the controls (a singular block)".into(),
            )
        };
        let mx = lu.solve(&(-&f.fm)).ok_or_else(singular)?;
        let nx_ = lu.solve(&(-&du)).ok_or_else(singular)?;
        let kx = lu.solve(&(-&f.e)).ok_or_else(singular)?;
        let mut mm = DMatrix::zeros(n, n);
        let mut nn = DMatrix::zeros(n, m);
        let mut kk = DMatrix::zeros(n, ne);
        for (r, &j) in f.x.iter().enumerate() {
            mm.row_mut(j).copy_from(&mx.row(r));
            nn.row_mut(j).copy_from(&nx_.row(r));
            kk.row_mut(j).copy_from(&kx.row(r));
        }
        for (c, &j) in f.u.iter().enumerate() {
            nn[(j, c)] = 1.0;
        }
        let mut wt = f.w.clone();
        {
            let mut blk = wt.view_mut((0, 0), (n, n));
            blk += &p * beta;
        }
        let mut zy = DMatrix::zeros(2 * n, n);
        zy.view_mut((0, 0), (n, n)).copy_from(&mm);
        for i in 0..n {
            zy[(n + i, i)] = 1.0;
        }
        let mut zu = DMatrix::zeros(2 * n, m);
        zu.view_mut((0, 0), (n, m)).copy_from(&nn);
        let mut ze = DMatrix::zeros(2 * n, ne);
        ze.view_mut((0, 0), (n, ne)).copy_from(&kk);
        let zuw = zu.transpose() * &wt;
        let a = &zuw * &zu;
        let alu = a.clone().lu();
        let fy = -alu.solve(&(&zuw * &zy)).ok_or_else(|| {
            PolicyError::DiscretionSingular(
                "the loss does not pin down the controls (the second-order matrix of the period problem is singular); give the controls a weight in the loss or check that they move the variables in it".into(),
            )
        })?;
        let fe = -alu.solve(&(&zuw * &ze)).ok_or_else(|| {
            PolicyError::DiscretionSingular(
                "the second-order matrix of the period problem is singular".into(),
            )
        })?;
        let h_new = &mm + &nn * &fy;
        let j_new = &kk + &nn * &fe;
        let zc = &zy + &zu * &fy;
        let mut p_new = zc.transpose() * &f.w * &zc + h_new.transpose() * &p * &h_new * beta;
        p_new = (&p_new + p_new.transpose()) * 0.5;
        if !h_new.iter().chain(p_new.iter()).all(|v| v.is_finite()) {
            return Err(PolicyError::DiscretionNoConvergence {
                iterations: it,
                change: f64::INFINITY,
            });
        }
        let ch = max_abs(&(&h_new - &h)) / (1.0 + max_abs(&h_new));
        let cp = max_abs(&(&p_new - &p)) / (1.0 + max_abs(&p_new));
        change = ch.max(cp);
        h = h_new;
        p = p_new;
        if change <= params.tolerance {
            // Second-order condition at the fixed point: the period problem is a minimum.
            if a.clone().cholesky().is_none() {
                return Err(PolicyError::DiscretionSingular(
                    "at the fixed point the period problem is not a minimum (its second-order matrix is not positive definite)".into(),
                ));
            }
            return Ok((h, j_new, p, it));
        }
    }
    Err(PolicyError::DiscretionNoConvergence {
        iterations: params.max_iterations,
        change,
    })
}

/// Solves for the discretionary equilibrium of `model` (the problem `prob` built from it).
/// Returns the solved model (its states are the lagged variables the equilibrium depends on; its
/// roots the eigenvalues of their law of motion) and the iterations of the first start.
pub fn solve(
    model: &Model,
    prob: &PolicyProblem,
    params: &PolicyParams,
) -> Result<(SolvedModel, usize), PolicyError> {
    let f = form(model, prob)?;
    let n = model.endogenous.len();
    let beta = prob.discount;
    let (h, j, _p, iterations) =
        iterate(&f, beta, DMatrix::zeros(n, n), DMatrix::zeros(n, n), params)?;
    let mut warnings = prob.notes.clone();
    if let Ok((h2, j2, _, _)) = iterate(
        &f,
        beta,
        DMatrix::identity(n, n) * 0.9,
        DMatrix::zeros(n, n),
        params,
    ) {
        let scale = 1.0 + max_abs(&h).max(max_abs(&j));
        let diff = max_abs(&(&h2 - &h)).max(max_abs(&(&j2 - &j))) / scale;
        if diff > params.distinct_tol {
            warnings.push(format!(
                "discretion: starting the iteration elsewhere reached a different equilibrium (decision rules differ by {diff:.1e}, relative); the Markov-perfect equilibrium is not unique here and the one reported is the limit from zero expectations"
            ));
        }
    }
    // States: lagged variables the equilibrium depends on.
    let hmax = max_abs(&h);
    let states: Vec<usize> = (0..n)
        .filter(|&c| (0..n).any(|r| h[(r, c)].abs() > 64.0 * f64::EPSILON * hmax))
        .collect();
    let ns = states.len();
    let p = DMatrix::from_fn(n, ns, |r, c| h[(r, states[c])]);
    let g = DMatrix::from_fn(ns, ns, |r, c| h[(states[r], states[c])]);
    let hs = DMatrix::from_fn(ns, j.ncols(), |r, c| j[(states[r], c)]);
    let bound = 1.0 / beta.sqrt();
    let mut roots: Vec<Root> = Vec::new();
    if ns > 0 {
        let schur = nalgebra::linalg::Schur::try_new(g.clone(), f64::EPSILON, 100 * ns)
            .ok_or_else(|| {
                PolicyError::DiscretionSingular(
                    "the eigenvalues of the equilibrium law of motion did not converge".into(),
                )
            })?;
        for z in schur.complex_eigenvalues().iter() {
            let modulus = z.norm();
            roots.push(Root {
                re: z.re,
                im: z.im,
                modulus: Some(modulus),
                infinite: false,
                stable: modulus < bound,
                boundary: false,
            });
        }
        roots.sort_by(|a, b| {
            a.modulus
                .partial_cmp(&b.modulus)
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        if let Some(r) = roots.iter().find(|r| !r.stable) {
            return Err(PolicyError::DiscretionUnstable {
                modulus: r.modulus.unwrap_or(f64::INFINITY),
                bound,
            });
        }
    }
    // Plug back: F0 H + F1 H H + Fm = 0 and F0 J + F1 H J + E = 0.
    let r1 = &f.f0 * &h + &f.f1 * &h * &h + &f.fm;
    let r2 = &f.f0 * &j + &f.f1 * &h * &j + &f.e;
    let scale = 1.0 + max_abs(&f.f0).max(max_abs(&f.f1)).max(max_abs(&f.fm)) * (1.0 + hmax);
    let resid = max_abs(&r1).max(max_abs(&r2)) / scale;
    if !(resid <= 1e-9) {
        warnings.push(format!(
            "discretion: the equilibrium leaves a relative residual of {resid:.1e} in the linearized equations"
        ));
    }
    let names: Vec<String> = states
        .iter()
        .map(|&s| format!("{}[t-1]", model.endogenous[s].name))
        .collect();
    let solved = SolvedModel {
        title: model.title.clone(),
        status: Status::Determinate,
        threshold: bound,
        counts: Counts {
            stable: ns,
            unstable: 0,
            forward_looking: 0,
            predetermined: ns,
        },
        roots,
        variables: model.variable_names(),
        log: model.endogenous.iter().map(|v| v.log).collect(),
        shocks: model.shock_names(),
        steady_state: prob.steady_state.clone(),
        covariance: model.covariance.clone(),
        diagnosis: None,
        warnings,
        solution: Some(StateSpace {
            states: names,
            p,
            q: j,
            g,
            h: hs,
        }),
    };
    Ok((solved, iterations))
}
