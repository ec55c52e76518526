//! Why the steady state was not found: the real cause behind a failed solve, and the reports that
//! name equations, variables and values
//!
//! ```text
//!     worst equations: argmax_i |R_i(x)| / sum_k |term_ik(x)|
//! ```

use super::*;

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
#[allow(clippy::too_many_arguments)]
pub(super) fn explain_failure(
    model: &Model,
    compiled: &CompiledModel,
    params: &[f64],
    known: &[Option<f64>],
    start: &[f64],
    log: &[bool],
    first: SteadyError,
    np: &NewtonParams,
) -> Result<SteadyState, SteadyError> {
    if matches!(
        first,
        SteadyError::Cycle { .. }
            | SteadyError::NotFiniteValue { .. }
            | SteadyError::LogStartNotPositive { .. }
    ) {
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
        if let Ok(mut sol) = newton_solve(model, compiled, params, &free, start.to_vec(), log, np) {
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
            let differ: Vec<ValueConflict> = known
                .iter()
                .enumerate()
                .filter_map(|(j, k)| k.map(|k| (j, k)))
                .filter(|&(j, k)| {
                    let v = sol.values[j];
                    (v - k).abs() > 1e-6 * v.abs().max(k.abs())
                })
                .take(REPORT_EQUATIONS)
                .map(|(j, k)| ValueConflict {
                    variable: model.endogenous[j].name.clone(),
                    solved: sol.values[j],
                    given: k,
                })
                .collect();
            if !differ.is_empty() {
                let at_values =
                    residual_report(model, compiled, &r, &term_scales(model, params, &exact));
                return Err(SteadyError::KnownValuesInconsistent {
                    worst: at_values,
                    detail: KnownValuesDetail::Differ(differ),
                });
            }
        }
    }
    if log.iter().any(|&l| l) {
        let levels = vec![false; n];
        if let Ok(sol) = newton_solve(model, compiled, params, known, start.to_vec(), &levels, np) {
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
pub(super) fn domain_only_at_given(
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
pub(super) fn trending_equation(
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

/// The first eight of the variables `vars` at `x`.
pub(super) fn describe_point(model: &Model, vars: &[usize], x: &[f64]) -> Point {
    Point {
        shown: vars
            .iter()
            .take(8)
            .map(|&j| VariableValue {
                name: model.endogenous[j].name.clone(),
                value: x[j],
            })
            .collect(),
        more: vars.len() > 8,
    }
}

/// The equations with the largest residuals relative to their terms (`scales`, from
/// [`term_scales`]) and the variables each involves.
pub(super) fn residual_report(
    model: &Model,
    compiled: &CompiledModel,
    r: &[f64],
    scales: &[f64],
) -> ResidualReport {
    let rel = |i: usize| relative_residual(&[r[i]], &[scales.get(i).copied().unwrap_or(f64::NAN)]);
    let mut order: Vec<usize> = (0..r.len()).collect();
    order.sort_by(|&a, &b| {
        rel(b)
            .partial_cmp(&rel(a))
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    ResidualReport(
        order
            .iter()
            .take(REPORT_EQUATIONS)
            .filter(|&&i| r[i] != 0.0)
            .map(|&i| WorstEquation {
                equation: model.equation_name(i),
                residual: r[i],
                relative: rel(i),
                variables: compiled.variables_in[i]
                    .iter()
                    .map(|&j| model.endogenous[j].name.clone())
                    .collect(),
            })
            .collect(),
    )
}

/// Names the variables a singular Jacobian leaves undetermined (the largest entries of its null
/// direction, from the SVD; skipped above 400 unknowns where the SVD would dominate the run).
pub(super) fn singular_report(
    model: &Model,
    unknown: &[usize],
    jac: &DMatrix<f64>,
    x: &[f64],
) -> SingularReport {
    let mut undetermined = Vec::new();
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
            undetermined = idx
                .iter()
                .take(4)
                .filter(|&&c| row[c].abs() >= 0.1 * big)
                .map(|&c| model.endogenous[unknown[c]].name.clone())
                .collect();
        }
    }
    SingularReport {
        at: describe_point(model, unknown, x),
        undetermined,
        during: None,
    }
}

/// Finds, in each equation with a non-finite residual, the innermost operation whose arguments are
/// finite but whose value is not, and says what it was.
pub(super) fn domain_report(model: &Model, params: &[f64], x: &[f64], r: &[f64]) -> DomainReport {
    let leaves = SteadyLeaves { params, values: x };
    let mut parts = Vec::new();
    for (i, eq) in model.equations.iter().enumerate() {
        if r.get(i).is_some_and(|v| v.is_finite()) {
            continue;
        }
        let what = first_bad(&eq.lhs, &leaves, 0)
            .or_else(|| first_bad(&eq.rhs, &leaves, 0))
            .unwrap_or_else(|| "a value that is not finite".to_string());
        let at: Vec<VariableValue> = {
            let mut v = steady_refs(&eq.lhs);
            v.extend(steady_refs(&eq.rhs));
            v.sort();
            v.dedup();
            v.iter()
                .filter_map(|&j| {
                    model.endogenous.get(j).map(|e| VariableValue {
                        name: e.name.clone(),
                        value: x[j],
                    })
                })
                .collect()
        };
        parts.push(DomainProblem {
            equation: model.equation_name(i),
            what,
            at,
        });
        if parts.len() >= REPORT_EQUATIONS {
            break;
        }
    }
    DomainReport::Equations(parts)
}

pub(super) fn first_bad(e: &Expr, leaves: &SteadyLeaves, depth: usize) -> Option<String> {
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
