//! The deterministic steady state (spec §6).
//!
//! Contract: find x with R_i(x) = r_i(x, ..., x; 0) = 0 for every equation i, where every date of
//! a variable takes the same value and innovations are zero.
//!
//! 1. `steady name = expr` items fix values (evaluated in dependency order); `guess name = expr`
//!    items start the search (default 1 for `log` variables, 0 for the others).
//! 2. If every variable is fixed, the residuals are checked against [`KNOWN_VALUE_TOL`] relative
//!    to the size of each equation's terms ([`term_scales`]): |R_i| <= 1e-8 sum_k |term_ik|.
//!    Every convergence test below is relative in the same way, so no test depends on units.
//! 3. Otherwise a damped Newton method solves for the rest with the exact Jacobian from
//!    [`CompiledModel`]: the step solves J d = -R (LU), or, when J is singular or the system has
//!    more equations than unknowns, the Levenberg-Marquardt step (J'J + mu I) d = -J'R; a
//!    backtracking line search on |R|^2 (Armijo) damps it. `log` variables are solved in u = ln x,
//!    so they stay positive. A linear model converges in one step.
//! 4. On failure the error lists the equations whose residuals stay largest, the variables they
//!    involve, the iterations tried, and a hint.

use nalgebra::{DMatrix, DVector};

use crate::model::{BinaryOp, Expr, Leaves, Model, SteadyKind, MAX_EXPR_DEPTH};
use crate::symbolic::CompiledModel;

/// Relative residual below which `steady` values count as satisfying an equation (spec §6): each
/// equation's residual is compared with the size of its terms ([`term_scales`]), so the test
/// means the same for a model in fractions and one in levels of 1e8, and for an equation
/// multiplied through by any constant.
pub const KNOWN_VALUE_TOL: f64 = 1e-8;
/// Newton stops when every residual is below this relative to its equation's terms: two orders
/// below the spec's check, so that the linearization point is accurate well beyond the digits
/// reported, and still some hundred times the round-off of evaluating a sum of terms.
pub const NEWTON_TOL: f64 = 1e-10;
/// Newton iterations before giving up; a well-posed problem from a sensible guess needs < 20.
pub const MAX_NEWTON_ITERATIONS: usize = 100;
/// Step halvings in the line search (2^-40 ~ 1e-12: beyond that the step is noise).
pub const MAX_HALVINGS: usize = 40;
/// Armijo sufficient-decrease constant (Dennis and Schnabel 1983, Numerical Methods for
/// Unconstrained Optimization and Nonlinear Equations, ch. 6: 1e-4 is their recommended value).
pub const ARMIJO: f64 = 1e-4;
/// An LU pivot ratio min|u_ii| / max|u_ii| below this treats the Jacobian as singular (about
/// 50 machine epsilons: the step would be dominated by rounding).
pub const SINGULAR_PIVOT_RATIO: f64 = 1e-14;
/// How many of the worst equations a failure message lists.
pub const REPORT_EQUATIONS: usize = 3;

/// Why no steady state was found. Every message is a sentence a person can act on.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SteadyError {
    #[error("the `steady` values of {names} depend on each other in a cycle; give one of them a value that uses parameters only")]
    Cycle { names: String },
    #[error("{0}")]
    BadValue(String),
    #[error("the `steady` values leave equations unsatisfied (residual above {KNOWN_VALUE_TOL:e} times the size of the equation's terms): {0}. Check these values, or turn them into `guess` lines so the solver can adjust them")]
    KnownValuesInconsistent(String),
    #[error("the steady-state equations cannot be evaluated at the starting point: {0}. Give a `guess` inside the domain (positive arguments of ln, log10, sqrt and of ^ with fractional powers; no division by zero)")]
    Domain(String),
    #[error("the `steady` values put an equation outside its domain: {0}. Check these values (a division by a variable given as zero, the logarithm or square root of a negative value)")]
    DomainAtGivenValues(String),
    #[error("{equation} has {expression} = {value} at the calibration, and that expression depends on parameters only ({parameters}): check their values (no guess of a variable can change it)")]
    ParameterDomain {
        equation: String,
        expression: String,
        value: f64,
        parameters: String,
    },
    #[error("{variable} is declared `log`, but the steady state has {variable} = {value}, which is not positive; drop `log` from its declaration (its deviations are then in levels)")]
    LogNotPositive { variable: String, value: f64 },
    #[error("{variables} in {equation} has no steady state: no constant value satisfies that equation (the dates of {variables} cancel and a constant is left, as in x = x[t-1] + 1: a trend or a unit root). Write the model in growth rates or detrend it")]
    NoConstantSolution { equation: String, variables: String },
    #[error("{0}")]
    Singular(String),
    #[error("Newton's method did not find the steady state after {iterations} iterations; the largest residuals remain in {report}. Hint: give a `guess` closer to the solution for the variables involved, or `steady` values where you know them; check signs, and the domains of ln, sqrt and ^")]
    NotFound { iterations: usize, report: String },
}

/// A steady state that was found.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyState {
    /// Levels of the endogenous variables, declaration order.
    pub values: Vec<f64>,
    /// Newton iterations taken (0 when the starting point already solved the equations).
    pub iterations: usize,
    /// Largest absolute residual at `values`.
    pub max_residual: f64,
    /// Largest residual relative to the size of its equation's terms ([`term_scales`]).
    pub relative_residual: f64,
    /// Notes for the person (for example, equations satisfied only by the steady values given).
    pub notes: Vec<String>,
}

/// Leaves for `steady`-section expressions: parameters and already resolved steady values.
struct SteadyLeaves<'a> {
    params: &'a [f64],
    values: &'a [f64],
}

impl Leaves for SteadyLeaves<'_> {
    fn parameter(&self, i: usize) -> f64 {
        self.params.get(i).copied().unwrap_or(f64::NAN)
    }
    fn variable(&self, i: usize, _: i32) -> f64 {
        self.values.get(i).copied().unwrap_or(f64::NAN)
    }
    fn innovation(&self, _: usize, _: i32) -> f64 {
        0.0
    }
    fn steady_state(&self, i: usize) -> f64 {
        self.values.get(i).copied().unwrap_or(f64::NAN)
    }
}

/// The steady-state variables an expression refers to.
fn steady_refs(e: &Expr) -> Vec<usize> {
    let mut v = Vec::new();
    e.walk(&mut |n| {
        if let Expr::SteadyState(i) | Expr::Variable { index: i, .. } = n {
            v.push(*i);
        }
    });
    v
}

/// Evaluates the `steady` items in dependency order. Returns per variable the fixed value (if
/// any) and the starting value.
fn resolve_items(
    model: &Model,
    params: &[f64],
) -> Result<(Vec<Option<f64>>, Vec<f64>), SteadyError> {
    let n = model.endogenous.len();
    let mut known: Vec<Option<f64>> = vec![None; n];
    let mut guess: Vec<Option<f64>> = vec![None; n];
    let has_item: Vec<bool> = (0..n)
        .map(|j| model.steady.iter().any(|s| s.variable == j))
        .collect();
    let default = |j: usize| if model.endogenous[j].log { 1.0 } else { 0.0 };
    let mut done = vec![false; model.steady.len()];
    // Each pass resolves at least one item or stops, so at most len + 1 passes.
    for _ in 0..=model.steady.len() {
        let mut progressed = false;
        for (k, item) in model.steady.iter().enumerate() {
            if done[k] || item.variable >= n {
                continue;
            }
            let refs = steady_refs(&item.expr);
            let ready = refs
                .iter()
                .all(|&r| r < n && (known[r].is_some() || guess[r].is_some() || !has_item[r]));
            if !ready {
                continue;
            }
            let values: Vec<f64> = (0..n)
                .map(|j| known[j].or(guess[j]).unwrap_or_else(|| default(j)))
                .collect();
            let v = item.expr.eval(&SteadyLeaves {
                params,
                values: &values,
            });
            let name = &model.endogenous[item.variable].name;
            if !v.is_finite() {
                return Err(SteadyError::BadValue(format!(
                    "the `steady` section gives {name} a value that is not a finite number ({v}) at this calibration"
                )));
            }
            match item.kind {
                SteadyKind::Known => known[item.variable] = Some(v),
                SteadyKind::Guess => guess[item.variable] = Some(v),
            }
            done[k] = true;
            progressed = true;
        }
        if !progressed {
            break;
        }
    }
    if done.iter().any(|d| !d) {
        let names: Vec<String> = model
            .steady
            .iter()
            .zip(&done)
            .filter(|(_, d)| !**d)
            .filter_map(|(s, _)| model.endogenous.get(s.variable).map(|v| v.name.clone()))
            .collect();
        return Err(SteadyError::Cycle {
            names: names.join(", "),
        });
    }
    let start: Vec<f64> = (0..n)
        .map(|j| known[j].or(guess[j]).unwrap_or_else(|| default(j)))
        .collect();
    for j in 0..n {
        if model.endogenous[j].log && start[j] <= 0.0 {
            let what = if known[j].is_some() { "value" } else { "guess" };
            return Err(SteadyError::BadValue(format!(
                "{} is a `log` variable, so its steady state must be positive, but its {what} is {}; give it a positive `guess` or value",
                model.endogenous[j].name, start[j]
            )));
        }
    }
    Ok((known, start))
}

/// Finds the steady state of `model` with parameter values `params` (see the module doc).
/// Returns the levels, or an error that says what was tried.
pub fn solve_steady(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
) -> Result<SteadyState, SteadyError> {
    parameter_domain(model, params)?;
    let (known, start) = resolve_items(model, params)?;
    let log: Vec<bool> = model.endogenous.iter().map(|v| v.log).collect();
    match newton_solve(model, compiled, params, &known, start.clone(), &log) {
        Ok(s) => Ok(s),
        Err(e) => explain_failure(model, compiled, params, &known, &start, &log, e),
    }
}

/// Finds a function or power in an equation whose argument depends on parameters only and is
/// outside its domain at the calibration (`ln(p)` with p = -2): no starting point can fix that,
/// so it is reported before Newton runs, naming the expression and its parameters. Returns the
/// first such expression as an error.
fn parameter_domain(model: &Model, params: &[f64]) -> Result<(), SteadyError> {
    use crate::model::{BinaryOp, Expr};
    let values = crate::model::calibrate::Values {
        parameters: params,
        steady: &[],
    };
    let names = crate::model::print::Names::of(model);
    for (i, eq) in model.equations.iter().enumerate() {
        let mut found: Option<(String, f64, Vec<usize>)> = None;
        for side in [&eq.lhs, &eq.rhs] {
            side.walk(&mut |e| {
                if found.is_some() {
                    return;
                }
                let is_call = matches!(
                    e,
                    Expr::Call(..)
                        | Expr::Call2(..)
                        | Expr::Binary(BinaryOp::Pow | BinaryOp::Div, ..)
                );
                if !is_call {
                    return;
                }
                let mut only_parameters = true;
                let mut used = Vec::new();
                e.walk(&mut |x| match x {
                    Expr::Variable { .. } | Expr::Innovation { .. } | Expr::SteadyState(_) => {
                        only_parameters = false
                    }
                    Expr::Parameter(p) => used.push(*p),
                    _ => {}
                });
                if only_parameters && !used.is_empty() {
                    let v = e.eval(&values);
                    if !v.is_finite() {
                        used.sort_unstable();
                        used.dedup();
                        found = Some((crate::model::print::expr_text(e, &names), v, used));
                    }
                }
            });
        }
        if let Some((expression, value, used)) = found {
            let parameters = used
                .iter()
                .filter_map(|&p| {
                    model.parameters.get(p).map(|q| {
                        format!("{} = {}", q.name, params.get(p).copied().unwrap_or(q.value))
                    })
                })
                .collect::<Vec<_>>()
                .join(", ");
            return Err(SteadyError::ParameterDomain {
                equation: model.equation_name(i),
                expression,
                value,
                parameters,
            });
        }
    }
    Ok(())
}

/// After a failed solve, looks for the real cause and returns it in place of `first` (or the
/// steady state, when the failure came from the starting point and a second attempt finds one
/// that agrees with every `steady` value):
/// 1. with `steady` values fixed, the values become the starting point of a solve for every
///    variable: the values fitted the equations after all if that solve lands on them;
///    otherwise the variables where it lands elsewhere are named;
/// 2. with `log` variables, a solve in levels: a non-positive solution means the `log` marker
///    cannot hold;
/// 3. an equation that no constant value satisfies (its steady-state Jacobian row vanishes at
///    two points while its residual does not): a trend or a unit root.
fn explain_failure(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    known: &[Option<f64>],
    start: &[f64],
    log: &[bool],
    first: SteadyError,
) -> Result<SteadyState, SteadyError> {
    if matches!(first, SteadyError::Cycle { .. } | SteadyError::BadValue(_)) {
        return Err(first);
    }
    let n = model.endogenous.len();
    if let SteadyError::Domain(report) = &first {
        return Err(
            if known.iter().any(Option::is_some)
                && domain_only_at_given(model, params, known, start)
            {
                SteadyError::DomainAtGivenValues(report.clone())
            } else {
                first
            },
        );
    }
    let free = vec![None; n];
    if known.iter().any(Option::is_some) {
        if let Ok(mut sol) = newton_solve(model, compiled, params, &free, start.to_vec(), log) {
            let mut exact = sol.values.clone();
            for (v, k) in exact.iter_mut().zip(known) {
                if let Some(k) = k {
                    *v = *k;
                }
            }
            let mut work = Vec::new();
            let mut r = vec![0.0; compiled.n_equations];
            compiled.residuals.eval(params, &exact, &mut work, &mut r);
            let rel = relative_at(model, params, &exact, &r);
            if rel <= KNOWN_VALUE_TOL {
                sol.values = exact;
                sol.max_residual = max_abs(&r);
                sol.relative_residual = rel;
                return Ok(sol);
            }
            let differ: Vec<String> = known
                .iter()
                .enumerate()
                .filter_map(|(j, k)| k.map(|k| (j, k)))
                .filter(|&(j, k)| {
                    let v = sol.values[j];
                    (v - k).abs() > 1e-6 * v.abs().max(k.abs())
                })
                .take(REPORT_EQUATIONS)
                .map(|(j, k)| {
                    format!(
                        "the equations put {} at {} where `steady` gives {}",
                        model.endogenous[j].name,
                        short(sol.values[j]),
                        short(k)
                    )
                })
                .collect();
            if !differ.is_empty() {
                let at_values =
                    residual_report(model, compiled, &r, &term_scales(model, params, &exact));
                return Err(SteadyError::KnownValuesInconsistent(format!(
                    "{at_values}; {}",
                    differ.join("; ")
                )));
            }
        }
    }
    if log.iter().any(|&l| l) {
        let levels = vec![false; n];
        if let Ok(sol) = newton_solve(model, compiled, params, known, start.to_vec(), &levels) {
            if let Some(j) = (0..n).find(|&j| log[j] && sol.values[j] <= 0.0) {
                return Err(SteadyError::LogNotPositive {
                    variable: model.endogenous[j].name.clone(),
                    value: sol.values[j],
                });
            }
        }
    }
    if let Some((equation, variables)) = trending_equation(model, compiled, params, start, log) {
        return Err(SteadyError::NoConstantSolution {
            equation,
            variables,
        });
    }
    Err(first)
}

/// Whether the equations that cannot be evaluated at `start` stay impossible to evaluate when the
/// variables without `steady` values move (to two other points): then the values, not a guess,
/// put them outside their domain.
fn domain_only_at_given(
    model: &Model,
    params: &[f64],
    known: &[Option<f64>],
    start: &[f64],
) -> bool {
    let moved = |f: f64, c: f64| -> Vec<f64> {
        start
            .iter()
            .zip(known)
            .map(|(&v, k)| k.unwrap_or(v * f + c))
            .collect()
    };
    let points = [moved(1.7, 0.9), moved(0.4, 2.3)];
    let bad_at = |x: &[f64], i: usize| {
        let leaves = SteadyLeaves { params, values: x };
        let eq = &model.equations[i];
        !(eq.lhs.eval(&leaves) - eq.rhs.eval(&leaves)).is_finite()
    };
    let bad: Vec<usize> = (0..model.equations.len())
        .filter(|&i| bad_at(start, i))
        .collect();
    !bad.is_empty() && bad.iter().all(|&i| points.iter().all(|x| bad_at(x, i)))
}

/// An equation that holds at no constant value: its residual is nonzero while its steady-state
/// Jacobian row is zero at `start` and at a second point, and it has a variable at two dates (so
/// the dates cancel in the steady state, as in `x = x[t-1] + 1`). Returns its name and the
/// variables that appear at several dates.
fn trending_equation(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    start: &[f64],
    log: &[bool],
) -> Option<(String, String)> {
    let n = model.endogenous.len();
    let col_of: Vec<usize> = (0..n).collect();
    let other: Vec<f64> = start
        .iter()
        .zip(log)
        .map(|(&v, &l)| if l { v * 1.7 + 0.3 } else { v * 1.7 + 0.9 })
        .collect();
    let mut work = Vec::new();
    let mut jv = vec![0.0; compiled.jacobian_pattern.len()];
    let j1 = assemble(compiled, params, start, &col_of, log, n, &mut work, &mut jv);
    let j2 = assemble(
        compiled, params, &other, &col_of, log, n, &mut work, &mut jv,
    );
    let mut r = vec![0.0; compiled.n_equations];
    compiled.residuals.eval(params, start, &mut work, &mut r);
    for (i, eq) in model.equations.iter().enumerate() {
        let zero_row = |j: &DMatrix<f64>| j.row(i).iter().all(|v| *v == 0.0);
        if r[i] == 0.0 || !r[i].is_finite() || !zero_row(&j1) || !zero_row(&j2) {
            continue;
        }
        let mut dates: Vec<(usize, i32)> = Vec::new();
        for side in [&eq.lhs, &eq.rhs] {
            side.walk(&mut |e| {
                if let Expr::Variable { index, offset } = e {
                    dates.push((*index, *offset));
                }
            });
        }
        dates.sort_unstable();
        dates.dedup();
        let mut several: Vec<&str> = dates
            .windows(2)
            .filter(|w| w[0].0 == w[1].0)
            .filter_map(|w| model.endogenous.get(w[0].0).map(|v| v.name.as_str()))
            .collect();
        several.dedup();
        if !several.is_empty() {
            return Some((model.equation_name(i), several.join(", ")));
        }
    }
    None
}

/// Damped Newton (module doc, step 3) with the variables of `known` fixed, from `start`, in logs
/// for the variables flagged in `log`. Returns the steady state or what went wrong.
fn newton_solve(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    known: &[Option<f64>],
    start: Vec<f64>,
    log: &[bool],
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
    if m == 0 || relative_at(model, params, &x, &r) <= NEWTON_TOL {
        return finish(model, compiled, params, x, r, 0, m);
    }
    // Block by block when nothing is fixed and the system decomposes; any trouble in a block
    // falls back to the full Newton solve from the same start (whose messages say what failed).
    if m == n {
        if let Some(blocks) = &compiled.steady_blocks {
            let mut xb = x.clone();
            if let Some(iterations) = solve_by_blocks(model, blocks, params, &mut xb, log) {
                let mut rb = vec![0.0; compiled.n_equations];
                compiled.residuals.eval(params, &xb, &mut work, &mut rb);
                if rb.iter().all(|v| v.is_finite())
                    && relative_at(model, params, &xb, &rb) <= NEWTON_TOL
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
    for iter in 1..=MAX_NEWTON_ITERATIONS {
        let jac = assemble(compiled, params, &x, &col_of, log, m, &mut work, &mut jv);
        if jac.iter().any(|v| !v.is_finite()) {
            return Err(SteadyError::Domain(format!(
                "the Jacobian is not finite at iteration {iter} ({})",
                describe_point(model, &unknown, &x)
            )));
        }
        let rv = DVector::from_column_slice(&r);
        let step = match newton_step(&jac, &rv) {
            Some(d) => d,
            None => {
                singular_seen = jac.nrows() == jac.ncols();
                match lm_step(&jac, &rv) {
                    Some(d) => d,
                    None => {
                        return Err(SteadyError::Singular(format!(
                            "{} (Newton iteration {iter}; largest residuals in {})",
                            singular_report(model, &unknown, &jac, &x),
                            residual_report(model, compiled, &r, &term_scales(model, params, &x))
                        )))
                    }
                }
            }
        };
        // Backtracking line search on f = |R|^2 / 2.
        let mut t = 1.0;
        let mut accepted = false;
        let mut xt = x.clone();
        for _ in 0..=MAX_HALVINGS {
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
                if ft <= (1.0 - 2.0 * ARMIJO * t) * f
                    || relative_at(model, params, &xt, &trial) <= NEWTON_TOL
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
        if relative_at(model, params, &x, &r) <= NEWTON_TOL {
            if singular_seen || m < compiled.n_equations {
                // The path went through a singular point or the system is overdetermined: make
                // sure the steady state found is locally unique.
                let jac = assemble(compiled, params, &x, &col_of, log, m, &mut work, &mut jv);
                if !locally_unique(&jac) {
                    return Err(SteadyError::Singular(singular_report(
                        model, &unknown, &jac, &x,
                    )));
                }
            }
            polish(
                compiled, params, &mut x, &mut r, &unknown, &col_of, log, &mut work,
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
        MAX_NEWTON_ITERATIONS,
        m,
    ))
}

/// The failure after Newton stopped: with some values fixed by `steady` items the likely culprit
/// is those values (the rest were fitted by least squares), otherwise the search itself.
fn not_found(
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
        SteadyError::KnownValuesInconsistent(format!(
            "{report} (the other variables were fitted by least squares over {iterations} iterations)"
        ))
    } else {
        SteadyError::NotFound { iterations, report }
    }
}

/// Damped Newton on each diagonal block in turn (earlier blocks' values fixed), overwriting the
/// block's entries of `x`. Returns the largest number of iterations a block took, or `None` if a
/// block hits a singular Jacobian, a non-finite value, a failed line search or the iteration
/// limit. The block Jacobians being nonsingular at the end makes the whole Jacobian nonsingular
/// (it is block triangular), so the steady state found is locally unique.
fn solve_by_blocks(
    model: &Model,
    blocks: &[crate::symbolic::SteadyBlock],
    params: &[f64],
    x: &mut [f64],
    log: &[bool],
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
        let mut converged_at: Option<usize> = if block_rel(x, &r) <= NEWTON_TOL {
            Some(0)
        } else {
            None
        };
        // Iterate to convergence, then one polishing step (kept only if not worse).
        while converged_at.is_none_or(|c| c == iters && iters > 0) {
            if iters >= MAX_NEWTON_ITERATIONS {
                return None;
            }
            blk.jacobian.eval(params, x, &mut work, &mut jv);
            let mut jac = DMatrix::<f64>::zeros(nb, nb);
            for (k, &(i, c)) in blk.jacobian_pattern.iter().enumerate() {
                let j = blk.variables[c];
                jac[(i, c)] += if log[j] { jv[k] * x[j] } else { jv[k] };
            }
            let d = newton_step(&jac, &DVector::from_column_slice(&r))?;
            let old: Vec<f64> = blk.variables.iter().map(|&j| x[j]).collect();
            let f = 0.5 * norm2(&r);
            let polishing = converged_at.is_some();
            let mut t = 1.0;
            let mut accepted = false;
            for _ in 0..=MAX_HALVINGS {
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
                        0.5 * norm2(&trial) <= (1.0 - 2.0 * ARMIJO * t) * f
                            || block_rel(x, &trial) <= NEWTON_TOL
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
            if block_rel(x, &r) <= NEWTON_TOL {
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
            if !locally_unique(&jac) {
                return None;
            }
        }
        most = most.max(iters);
    }
    Some(most)
}

/// Checks the final residuals against the spec's tolerance and packages the result.
fn finish(
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
            return Err(SteadyError::KnownValuesInconsistent(residual_report(
                model,
                compiled,
                &r,
                &term_scales(model, params, &values),
            )));
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
fn assemble(
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
fn polish(
    compiled: &CompiledModel,
    params: &[f64],
    x: &mut Vec<f64>,
    r: &mut Vec<f64>,
    unknown: &[usize],
    col_of: &[usize],
    log: &[bool],
    work: &mut Vec<f64>,
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
    let Some(d) = newton_step(&jac, &DVector::from_column_slice(r)) else {
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
fn locally_unique(jac: &DMatrix<f64>) -> bool {
    if jac.nrows() == jac.ncols() {
        return newton_step(jac, &DVector::zeros(jac.nrows())).is_some();
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
fn newton_step(jac: &DMatrix<f64>, r: &DVector<f64>) -> Option<DVector<f64>> {
    if jac.nrows() != jac.ncols() {
        return None;
    }
    let lu = jac.clone().lu();
    let u = lu.u();
    let diag: Vec<f64> = u.diagonal().iter().map(|v| v.abs()).collect();
    let big = diag.iter().copied().fold(0.0, f64::max);
    let small = diag.iter().copied().fold(f64::INFINITY, f64::min);
    if big.is_nan() || big <= 0.0 || small < SINGULAR_PIVOT_RATIO * big {
        return None;
    }
    lu.solve(&(-r))
}

/// The Levenberg-Marquardt step (J'J + mu I) d = -J'r with mu = 1e-8 * |J'J|_max (Levenberg
/// 1944; Marquardt 1963): minimum-norm-like in the directions J does not see.
fn lm_step(jac: &DMatrix<f64>, r: &DVector<f64>) -> Option<DVector<f64>> {
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

fn norm2(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum()
}

/// The size of each equation's terms at the steady-state point `x`: the sum of the absolute
/// values of the additive terms of both sides (the operands of top-level `+`, `-` and unary
/// minus). A residual is "small" relative to this: it is the scale of the numbers whose
/// difference it is, so rounding alone leaves a residual of a few epsilons times it. Returns
/// one value per equation (NaN where a term does not evaluate).
pub fn term_scales(model: &Model, params: &[f64], x: &[f64]) -> Vec<f64> {
    (0..model.equations.len())
        .map(|i| equation_scale(model, params, x, i))
        .collect()
}

/// The term size of equation `i` alone (see [`term_scales`]; NaN for an index out of range).
pub fn equation_scale(model: &Model, params: &[f64], x: &[f64], i: usize) -> f64 {
    let Some(eq) = model.equations.get(i) else {
        return f64::NAN;
    };
    let leaves = SteadyLeaves { params, values: x };
    let mut total = 0.0;
    let mut stack: Vec<&Expr> = vec![&eq.lhs, &eq.rhs];
    while let Some(e) = stack.pop() {
        match e {
            Expr::Binary(BinaryOp::Add | BinaryOp::Sub, a, b) => {
                stack.push(a);
                stack.push(b);
            }
            Expr::Neg(a) => stack.push(a),
            other => total += other.eval(&leaves).abs(),
        }
    }
    total
}

/// [`relative_residual`] of the full residual vector `r` at `x`.
fn relative_at(model: &Model, params: &[f64], x: &[f64], r: &[f64]) -> f64 {
    relative_residual(r, &term_scales(model, params, x))
}

/// The largest residual relative to its equation's terms (`r_i / scale_i`; an exact zero counts
/// as zero whatever its scale, a non-finite value as infinity).
pub fn relative_residual(r: &[f64], scales: &[f64]) -> f64 {
    r.iter()
        .zip(scales)
        .map(|(&ri, &si)| {
            if ri == 0.0 {
                0.0
            } else if !ri.is_finite() || si.is_nan() || si <= 0.0 {
                f64::INFINITY
            } else {
                ri.abs() / si
            }
        })
        .fold(0.0, f64::max)
}

fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0, |a: f64, x| a.max(x.abs()))
}

fn describe_point(model: &Model, vars: &[usize], x: &[f64]) -> String {
    let parts: Vec<String> = vars
        .iter()
        .take(8)
        .map(|&j| format!("{} = {}", model.endogenous[j].name, short(x[j])))
        .collect();
    let more = if vars.len() > 8 { ", ..." } else { "" };
    format!("{}{more}", parts.join(", "))
}

fn short(v: f64) -> String {
    format!("{v:.6}")
        .trim_end_matches('0')
        .trim_end_matches('.')
        .to_string()
}

/// The equations with the largest residuals relative to their terms (`scales`, from
/// [`term_scales`]) and the variables each involves.
fn residual_report(model: &Model, compiled: &CompiledModel, r: &[f64], scales: &[f64]) -> String {
    let rel = |i: usize| relative_residual(&[r[i]], &[scales.get(i).copied().unwrap_or(f64::NAN)]);
    let mut order: Vec<usize> = (0..r.len()).collect();
    order.sort_by(|&a, &b| {
        rel(b)
            .partial_cmp(&rel(a))
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    let parts: Vec<String> = order
        .iter()
        .take(REPORT_EQUATIONS)
        .filter(|&&i| r[i] != 0.0)
        .map(|&i| {
            let vars: Vec<&str> = compiled.variables_in[i]
                .iter()
                .map(|&j| model.endogenous[j].name.as_str())
                .collect();
            format!(
                "{} (residual {:.3e}, {:.1e} of the size of its terms; involves {})",
                model.equation_name(i),
                r[i],
                rel(i),
                if vars.is_empty() {
                    "no variable".to_string()
                } else {
                    vars.join(", ")
                }
            )
        })
        .collect();
    parts.join("; ")
}

/// Names the variables a singular Jacobian leaves undetermined (the largest entries of its null
/// direction, from the SVD; skipped above 400 unknowns where the SVD would dominate the run).
fn singular_report(model: &Model, unknown: &[usize], jac: &DMatrix<f64>, x: &[f64]) -> String {
    let mut involved = String::new();
    if jac.ncols() <= 400 && jac.nrows() >= jac.ncols() {
        let svd = jac.clone().svd(false, true);
        if let Some(vt) = svd.v_t {
            // nalgebra sorts singular values in decreasing order: the last row of V' is the null
            // direction.
            let k = svd.singular_values.len().saturating_sub(1);
            let row = vt.row(k);
            let mut idx: Vec<usize> = (0..row.len()).collect();
            idx.sort_by(|&a, &b| {
                row[b]
                    .abs()
                    .partial_cmp(&row[a].abs())
                    .unwrap_or(std::cmp::Ordering::Equal)
            });
            let big = row.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            let names: Vec<&str> = idx
                .iter()
                .take(4)
                .filter(|&&c| row[c].abs() >= 0.1 * big)
                .map(|&c| model.endogenous[unknown[c]].name.as_str())
                .collect();
            if !names.is_empty() {
                involved = format!(
                    "; the equations do not pin down {} (they can move together without changing any residual)",
                    names.join(", ")
                );
            }
        }
    }
    format!(
        "the Jacobian of the steady-state equations is singular at {}{involved}. Give these variables `steady` values, a different `guess`, or check for an equation that repeats another",
        describe_point(model, unknown, x)
    )
}

/// Finds, in each equation with a non-finite residual, the innermost operation whose arguments are
/// finite but whose value is not, and says what it was.
fn domain_report(model: &Model, params: &[f64], x: &[f64], r: &[f64]) -> String {
    let leaves = SteadyLeaves { params, values: x };
    let mut parts = Vec::new();
    for (i, eq) in model.equations.iter().enumerate() {
        if r.get(i).is_some_and(|v| v.is_finite()) {
            continue;
        }
        let what = first_bad(&eq.lhs, &leaves, 0)
            .or_else(|| first_bad(&eq.rhs, &leaves, 0))
            .unwrap_or_else(|| "a value that is not finite".to_string());
        let vars: Vec<String> = {
            let mut v = steady_refs(&eq.lhs);
            v.extend(steady_refs(&eq.rhs));
            v.sort();
            v.dedup();
            v.iter()
                .filter_map(|&j| {
                    model
                        .endogenous
                        .get(j)
                        .map(|e| format!("{} = {}", e.name, short(x[j])))
                })
                .collect()
        };
        parts.push(format!(
            "{} has {what} (at {})",
            model.equation_name(i),
            vars.join(", ")
        ));
        if parts.len() >= REPORT_EQUATIONS {
            break;
        }
    }
    parts.join("; ")
}

fn first_bad(e: &Expr, leaves: &SteadyLeaves, depth: usize) -> Option<String> {
    if depth > MAX_EXPR_DEPTH || e.eval(leaves).is_finite() {
        return None;
    }
    let children: Vec<&Expr> = match e {
        Expr::Neg(a) | Expr::Call(_, a) => vec![a],
        Expr::Binary(_, a, b) | Expr::Call2(_, a, b) => vec![a, b],
        _ => vec![],
    };
    for c in &children {
        if let Some(s) = first_bad(c, leaves, depth + 1) {
            return Some(s);
        }
    }
    let v = |a: &Expr| short(a.eval(leaves));
    Some(match e {
        Expr::Call(f, a) => format!("{} of {}", f.name(), v(a)),
        Expr::Binary(crate::model::BinaryOp::Div, a, b) => {
            format!("a division of {} by {}", v(a), v(b))
        }
        Expr::Binary(crate::model::BinaryOp::Pow, a, b) => format!("({}) ^ {}", v(a), v(b)),
        _ => "an operation that overflows".to_string(),
    })
}

#[cfg(test)]
mod tests;
