//! Damped Newton on the steady-state equations (module doc of [`super`], step 3)
//!
//! ```text
//!     J(x_k) d = -R(x_k)   (or (J'J + mu I) d = -J'R),   x_{k+1} = x_k + t d,
//!     t = 2^-h the first with |R(x_{k+1})|^2 <= (1 - 2 armijo t) |R(x_k)|^2
//! ```
//!
//! `log` variables move in u = ln x. Block by block when the system decomposes.

use super::*;

/// Damped Newton (module doc, step 3) with the variables of `known` fixed, from `start`, in logs
/// for the variables flagged in `log`. Returns the steady state or what went wrong.
#[allow(clippy::too_many_arguments)]
pub(super) fn newton_solve(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    known: &[Option<f64>],
    start: Vec<f64>,
    log: &[bool],
    np: &NewtonParams,
) -> Result<SteadyState, SteadyError> {
    let n = model.endogenous.len();
    let mut x = start;
    let unknown: Vec<usize> = (0..n).filter(|&j| known[j].is_none()).collect();
    let m = unknown.len();

    let mut work = Vec::new();
    let mut r = vec![0.0; compiled.n_equations];
    compiled.residuals.eval(params, &x, &mut work, &mut r);
    if r.iter().any(|v| !v.is_finite()) {
        return Err(SteadyError::Domain(domain_report(model, params, &x, &r)));
    }
    if m == 0 || relative_at(model, params, &x, &r) <= np.tol {
        return finish(model, compiled, params, x, r, 0, m);
    }
    // Block by block when nothing is fixed and the system decomposes; any trouble in a block
    // falls back to the full Newton solve from the same start (whose messages say what failed).
    if m == n {
        if let Some(blocks) = &compiled.steady_blocks {
            let mut xb = x.clone();
            if let Some(iterations) = solve_by_blocks(model, blocks, params, &mut xb, log, np) {
                let mut rb = vec![0.0; compiled.n_equations];
                compiled.residuals.eval(params, &xb, &mut work, &mut rb);
                if rb.iter().all(|v| v.is_finite())
                    && relative_at(model, params, &xb, &rb) <= np.tol
                {
                    return finish(model, compiled, params, xb, rb, iterations, m);
                }
            }
        }
    }

    let mut jv = vec![0.0; compiled.jacobian_pattern.len()];
    let mut col_of = vec![usize::MAX; n];
    for (c, &j) in unknown.iter().enumerate() {
        col_of[j] = c;
    }
    let mut f = 0.5 * norm2(&r);
    let mut singular_seen = false;
    let mut trial = vec![0.0; compiled.n_equations];
    for iter in 1..=np.max_iterations {
        let jac = assemble(compiled, params, &x, &col_of, log, m, &mut work, &mut jv);
        if jac.iter().any(|v| !v.is_finite()) {
            return Err(SteadyError::Domain(DomainReport::JacobianNotFinite {
                iteration: iter,
                at: describe_point(model, &unknown, &x),
            }));
        }
        let rv = DVector::from_column_slice(&r);
        let step = match newton_step(&jac, &rv, np) {
            Some(d) => d,
            None => {
                singular_seen = jac.nrows() == jac.ncols();
                match lm_step(&jac, &rv) {
                    Some(d) => d,
                    None => {
                        let worst =
                            residual_report(model, compiled, &r, &term_scales(model, params, &x));
                        return Err(SteadyError::Singular(SingularReport {
                            during: Some((iter, worst)),
                            ..singular_report(model, &unknown, &jac, &x)
                        }));
                    }
                }
            }
        };
        // Backtracking line search on f = |R|^2 / 2.
        let mut t = 1.0;
        let mut accepted = false;
        let mut xt = x.clone();
        for _ in 0..=np.max_halvings {
            for (c, &j) in unknown.iter().enumerate() {
                xt[j] = if log[j] {
                    (x[j].ln() + t * step[c]).exp()
                } else {
                    x[j] + t * step[c]
                };
            }
            compiled.residuals.eval(params, &xt, &mut work, &mut trial);
            if trial.iter().all(|v| v.is_finite()) {
                let ft = 0.5 * norm2(&trial);
                if ft <= (1.0 - 2.0 * np.armijo * t) * f
                    || relative_at(model, params, &xt, &trial) <= np.tol
                {
                    accepted = true;
                    break;
                }
            }
            t *= 0.5;
        }
        if !accepted {
            if singular_seen {
                return Err(SteadyError::Singular(singular_report(
                    model, &unknown, &jac, &x,
                )));
            }
            return Err(not_found(model, compiled, params, &x, &r, iter, m));
        }
        x.clone_from(&xt);
        r.clone_from(&trial);
        f = 0.5 * norm2(&r);
        if relative_at(model, params, &x, &r) <= np.tol {
            if singular_seen || m < compiled.n_equations {
                // The path went through a singular point or the system is overdetermined: make
                // sure the steady state found is locally unique.
                let jac = assemble(compiled, params, &x, &col_of, log, m, &mut work, &mut jv);
                if !locally_unique(&jac, np) {
                    return Err(SteadyError::Singular(singular_report(
                        model, &unknown, &jac, &x,
                    )));
                }
            }
            polish(
                compiled, params, &mut x, &mut r, &unknown, &col_of, log, &mut work, np,
            );
            return finish(model, compiled, params, x, r, iter, m);
        }
    }
    Err(not_found(
        model,
        compiled,
        params,
        &x,
        &r,
        np.max_iterations,
        m,
    ))
}

/// The failure after Newton stopped: with some values fixed by `steady` items the likely culprit
/// is those values (the rest were fitted by least squares), otherwise the search itself.
pub(super) fn not_found(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    x: &[f64],
    r: &[f64],
    iterations: usize,
    n_unknown: usize,
) -> SteadyError {
    let report = residual_report(model, compiled, r, &term_scales(model, params, x));
    if n_unknown < compiled.n_equations {
        SteadyError::KnownValuesInconsistent {
            worst: report,
            detail: KnownValuesDetail::FittedOver { iterations },
        }
    } else {
        SteadyError::NotFound { iterations, report }
    }
}

/// Damped Newton on each diagonal block in turn (earlier blocks' values fixed), overwriting the
/// block's entries of `x`. Returns the largest number of iterations a block took, or `None` if a
/// block hits a singular Jacobian, a non-finite value, a failed line search or the iteration
/// limit. The block Jacobians being nonsingular at the end makes the whole Jacobian nonsingular
/// (it is block triangular), so the steady state found is locally unique.
pub(super) fn solve_by_blocks(
    model: &Model,
    blocks: &[crate::symbolic::SteadyBlock],
    params: &[f64],
    x: &mut [f64],
    log: &[bool],
    np: &NewtonParams,
) -> Option<usize> {
    let mut work = Vec::new();
    let mut most = 0;
    for blk in blocks {
        let nb = blk.variables.len();
        let mut r = vec![0.0; nb];
        let mut trial = vec![0.0; nb];
        let mut jv = vec![0.0; blk.jacobian_pattern.len()];
        blk.residuals.eval(params, x, &mut work, &mut r);
        if r.iter().any(|v| !v.is_finite()) {
            return None;
        }
        let block_rel = |x: &[f64], r: &[f64]| {
            let scales: Vec<f64> = blk
                .equations
                .iter()
                .map(|&i| equation_scale(model, params, x, i))
                .collect();
            relative_residual(r, &scales)
        };
        let mut iters = 0;
        let mut converged_at: Option<usize> = if block_rel(x, &r) <= np.tol {
            Some(0)
        } else {
            None
        };
        // Iterate to convergence, then one polishing step (kept only if not worse).
        while converged_at.is_none_or(|c| c == iters && iters > 0) {
            if iters >= np.max_iterations {
                return None;
            }
            blk.jacobian.eval(params, x, &mut work, &mut jv);
            let mut jac = DMatrix::<f64>::zeros(nb, nb);
            for (k, &(i, c)) in blk.jacobian_pattern.iter().enumerate() {
                let j = blk.variables[c];
                jac[(i, c)] += if log[j] { jv[k] * x[j] } else { jv[k] };
            }
            let d = newton_step(&jac, &DVector::from_column_slice(&r), np)?;
            let old: Vec<f64> = blk.variables.iter().map(|&j| x[j]).collect();
            let f = 0.5 * norm2(&r);
            let polishing = converged_at.is_some();
            let mut t = 1.0;
            let mut accepted = false;
            for _ in 0..=np.max_halvings {
                for (c, &j) in blk.variables.iter().enumerate() {
                    x[j] = if log[j] {
                        (old[c].ln() + t * d[c]).exp()
                    } else {
                        old[c] + t * d[c]
                    };
                }
                blk.residuals.eval(params, x, &mut work, &mut trial);
                if trial.iter().all(|v| v.is_finite()) {
                    let ok = if polishing {
                        max_abs(&trial) <= max_abs(&r)
                    } else {
                        0.5 * norm2(&trial) <= (1.0 - 2.0 * np.armijo * t) * f
                            || block_rel(x, &trial) <= np.tol
                    };
                    if ok {
                        accepted = true;
                        break;
                    }
                }
                if polishing {
                    break;
                }
                t *= 0.5;
            }
            if !polishing {
                iters += 1;
            }
            if !accepted {
                for (c, &j) in blk.variables.iter().enumerate() {
                    x[j] = old[c];
                }
                if polishing {
                    break;
                }
                return None;
            }
            r.clone_from(&trial);
            if polishing {
                break;
            }
            if block_rel(x, &r) <= np.tol {
                converged_at = Some(iters);
            }
        }
        if converged_at != Some(0) {
            // Local uniqueness: the block Jacobian at the solution must be nonsingular.
            blk.jacobian.eval(params, x, &mut work, &mut jv);
            let mut jac = DMatrix::<f64>::zeros(nb, nb);
            for (k, &(i, c)) in blk.jacobian_pattern.iter().enumerate() {
                let j = blk.variables[c];
                jac[(i, c)] += if log[j] { jv[k] * x[j] } else { jv[k] };
            }
            if !locally_unique(&jac, np) {
                return None;
            }
        }
        most = most.max(iters);
    }
    Some(most)
}

/// Checks the final residuals against the spec's tolerance and packages the result.
pub(super) fn finish(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    values: Vec<f64>,
    r: Vec<f64>,
    iterations: usize,
    n_unknown: usize,
) -> Result<SteadyState, SteadyError> {
    let worst = max_abs(&r);
    let relative = relative_at(model, params, &values, &r);
    if relative > KNOWN_VALUE_TOL {
        if n_unknown == 0 {
            return Err(SteadyError::KnownValuesInconsistent {
                worst: residual_report(model, compiled, &r, &term_scales(model, params, &values)),
                detail: KnownValuesDetail::None,
            });
        }
        return Err(not_found(
            model, compiled, params, &values, &r, iterations, n_unknown,
        ));
    }
    Ok(SteadyState {
        values,
        iterations,
        max_residual: worst,
        relative_residual: relative,
        notes: Vec::new(),
    })
}

/// Evaluates the steady-state Jacobian at `x` into a dense matrix over the unknowns (`col_of[j]`
/// is variable j's column or `usize::MAX` when its value is fixed), in u = ln x for `log`
/// variables. Overwrites `work` and `jv`.
#[allow(clippy::too_many_arguments)]
pub(super) fn assemble(
    compiled: &CompiledModel,
    params: &[f64],
    x: &[f64],
    col_of: &[usize],
    log: &[bool],
    m: usize,
    work: &mut Vec<f64>,
    jv: &mut [f64],
) -> DMatrix<f64> {
    compiled.steady_jacobian.eval(params, x, work, jv);
    let mut jac = DMatrix::<f64>::zeros(compiled.n_equations, m);
    for (k, &(i, j)) in compiled.jacobian_pattern.iter().enumerate() {
        let c = col_of[j];
        if c != usize::MAX {
            // d/du of x = exp(u) is x: chain rule for log variables.
            jac[(i, c)] += if log[j] { jv[k] * x[j] } else { jv[k] };
        }
    }
    jac
}

/// One more full Newton step after convergence, kept only if it does not raise the largest
/// residual: quadratic convergence makes this take the last digits nearly for free. Overwrites
/// `x` and `r` when the step is kept.
#[allow(clippy::too_many_arguments)]
pub(super) fn polish(
    compiled: &CompiledModel,
    params: &[f64],
    x: &mut Vec<f64>,
    r: &mut Vec<f64>,
    unknown: &[usize],
    col_of: &[usize],
    log: &[bool],
    work: &mut Vec<f64>,
    np: &NewtonParams,
) {
    let mut jv = vec![0.0; compiled.jacobian_pattern.len()];
    let jac = assemble(
        compiled,
        params,
        x,
        col_of,
        log,
        unknown.len(),
        work,
        &mut jv,
    );
    let Some(d) = newton_step(&jac, &DVector::from_column_slice(r), np) else {
        return;
    };
    let mut xt = x.clone();
    for (c, &j) in unknown.iter().enumerate() {
        xt[j] = if log[j] {
            (x[j].ln() + d[c]).exp()
        } else {
            x[j] + d[c]
        };
    }
    let mut rt = vec![0.0; r.len()];
    compiled.residuals.eval(params, &xt, work, &mut rt);
    if rt.iter().all(|v| v.is_finite()) && max_abs(&rt) <= max_abs(r) {
        *x = xt;
        *r = rt;
    }
}

/// Whether J has full column rank (square: LU pivots; otherwise singular values, skipped above
/// 400 columns where the SVD would dominate the run).
pub(super) fn locally_unique(jac: &DMatrix<f64>, np: &NewtonParams) -> bool {
    if jac.nrows() == jac.ncols() {
        return newton_step(jac, &DVector::zeros(jac.nrows()), np).is_some();
    }
    if jac.ncols() > 400 {
        return true;
    }
    let sv = jac.clone().singular_values();
    let big = sv.iter().copied().fold(0.0, f64::max);
    let small = sv.iter().copied().fold(f64::INFINITY, f64::min);
    big > 0.0 && small >= 1e-12 * big
}

/// The Newton step d with J d = -r, or `None` if J is not square or is singular.
pub(super) fn newton_step(
    jac: &DMatrix<f64>,
    r: &DVector<f64>,
    np: &NewtonParams,
) -> Option<DVector<f64>> {
    if jac.nrows() != jac.ncols() {
        return None;
    }
    let lu = jac.clone().lu();
    let u = lu.u();
    let diag: Vec<f64> = u.diagonal().iter().map(|v| v.abs()).collect();
    let big = diag.iter().copied().fold(0.0, f64::max);
    let small = diag.iter().copied().fold(f64::INFINITY, f64::min);
    if big.is_nan() || big <= 0.0 || small < np.singular_pivot_ratio * big {
        return None;
    }
    lu.solve(&(-r))
}

/// The Levenberg-Marquardt step (J'J + mu I) d = -J'r with mu = 1e-8 * |J'J|_max (Levenberg
/// 1944; Marquardt 1963): minimum-norm-like in the directions J does not see.
pub(super) fn lm_step(jac: &DMatrix<f64>, r: &DVector<f64>) -> Option<DVector<f64>> {
    let jtj = jac.transpose() * jac;
    let scale = jtj.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if scale.is_nan() || scale <= 0.0 {
        return None;
    }
    let mut m = jtj;
    for i in 0..m.nrows() {
        m[(i, i)] += 1e-8 * scale;
    }
    let rhs = -(jac.transpose() * r);
    let d = m.cholesky()?.solve(&rhs);
    if d.iter().all(|v| v.is_finite()) && d.norm() > 0.0 {
        Some(d)
    } else {
        None
    }
}

pub(super) fn norm2(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum()
}
