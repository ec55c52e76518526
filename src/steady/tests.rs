use super::*;
use crate::model::SteadyItem;
use crate::symbolic::testing::*;

fn growth_model() -> Model {
    // Brock and Mirman 1972 (JET 4), log utility, Cobb-Douglas, full depreciation:
    //   1/c = beta * alpha * exp(z[t+1]) * k^(alpha-1) / c[t+1]
    //   c + k = exp(z) * k[t-1]^alpha
    //   z = rho * z[t-1] + e
    // k, c in logs; z in levels.
    let (alpha, beta) = (p(0), p(1));
    model(
        &[("k", true), ("c", true), ("z", false)],
        &["e"],
        &[("alpha", 0.33), ("beta", 0.96), ("rho", 0.9)],
        vec![
            (
                div(n(1.0), v(1, 0)),
                div(
                    mul(
                        mul(
                            mul(beta.clone(), alpha.clone()),
                            Expr::Call(crate::model::Function::Exp, Box::new(v(2, 1))),
                        ),
                        pow(v(0, 0), sub(alpha.clone(), n(1.0))),
                    ),
                    v(1, 1),
                ),
            ),
            (
                add(v(1, 0), v(0, 0)),
                mul(
                    Expr::Call(crate::model::Function::Exp, Box::new(v(2, 0))),
                    pow(v(0, -1), alpha),
                ),
            ),
            (v(2, 0), add(mul(p(2), v(2, -1)), e(0, 0))),
        ],
        vec![],
    )
}

#[test]
fn growth_model_steady_state_matches_closed_form() {
    // Brock and Mirman 1972: k = (alpha*beta)^(1/(1-alpha)), c = k^alpha - k.
    let m = growth_model();
    let c = CompiledModel::new(&m);
    assert!(!c.is_linear);
    let params: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    let ss = solve_steady(&m, &c, &params).unwrap();
    let k = (0.33f64 * 0.96).powf(1.0 / (1.0 - 0.33));
    assert!((ss.values[0] - k).abs() < 1e-12 * k, "{:?}", ss);
    assert!((ss.values[1] - (k.powf(0.33) - k)).abs() < 1e-12);
    assert!(ss.values[2].abs() < 1e-14);
    assert!(ss.iterations > 0 && ss.iterations < 30);
}

#[test]
fn linear_model_takes_one_newton_step() {
    // x = 0.5 x[t-1] + 2  =>  x = 4;  y = x + 1 => y = 5.
    let m = model(
        &[("x", false), ("y", false)],
        &[],
        &[],
        vec![
            (v(0, 0), add(mul(n(0.5), v(0, -1)), n(2.0))),
            (v(1, 0), add(v(0, 0), n(1.0))),
        ],
        vec![],
    );
    let c = CompiledModel::new(&m);
    assert!(c.is_linear);
    let ss = solve_steady(&m, &c, &[]).unwrap();
    assert_eq!(ss.iterations, 1);
    assert!((ss.values[0] - 4.0).abs() < 1e-14 && (ss.values[1] - 5.0).abs() < 1e-14);
}

#[test]
fn known_values_are_checked_and_failures_named() {
    let mut m = model(
        &[("x", false), ("y", false)],
        &[],
        &[("a", 2.0)],
        vec![(v(0, 0), p(0)), (v(1, 0), mul(n(3.0), v(0, 0)))],
        vec![],
    );
    m.equations[1].label = Some("triple".into());
    m.steady = vec![
        SteadyItem {
            kind: SteadyKind::Known,
            variable: 0,
            expr: p(0),
        },
        SteadyItem {
            kind: SteadyKind::Known,
            variable: 1,
            expr: add(Expr::SteadyState(0), n(1.0)),
        },
    ];
    let c = CompiledModel::new(&m);
    let err = solve_steady(&m, &c, &[2.0]).unwrap_err();
    let msg = err.to_string();
    assert!(
        matches!(err, SteadyError::KnownValuesInconsistent { .. }),
        "{msg}"
    );
    assert!(
        msg.contains("triple") && !msg.contains("equation 1 "),
        "{msg}"
    );
    // The error carries the worst equation as data: y = x + 1 = 3 against 3 x = 6, residual 3.
    let SteadyError::KnownValuesInconsistent { worst, detail } = &err else {
        unreachable!()
    };
    assert_eq!(worst.0[0].equation, "triple");
    assert_eq!(worst.0[0].variables, ["x", "y"]);
    assert!((worst.0[0].residual.abs() - 3.0).abs() < 1e-12, "{worst:?}");
    // A solve for every variable lands on y = 6 where `steady` gives 3.
    match detail {
        KnownValuesDetail::Differ(c) => {
            assert_eq!(c.len(), 1, "{c:?}");
            assert_eq!(c[0].variable, "y");
            assert!(
                (c[0].solved - 6.0).abs() < 1e-9 && c[0].given == 3.0,
                "{c:?}"
            );
        }
        other => panic!("expected the conflicting values, got {other:?}"),
    }
    // With the right value (depending on x's, listed after it: order-free), it passes.
    m.steady[1].expr = mul(n(3.0), Expr::SteadyState(0));
    m.steady.swap(0, 1);
    let ss = solve_steady(&m, &c, &[2.0]).unwrap();
    assert_eq!(ss.values, vec![2.0, 6.0]);
    assert_eq!(ss.iterations, 0);
}

#[test]
fn domain_error_at_the_guess_is_named() {
    // ln(x) = 0 with x in levels and a negative guess.
    let mut m = model(
        &[("x", false)],
        &[],
        &[],
        vec![(ln(v(0, 0)), n(0.0))],
        vec![],
    );
    m.steady = vec![SteadyItem {
        kind: SteadyKind::Guess,
        variable: 0,
        expr: n(-2.0),
    }];
    let c = CompiledModel::new(&m);
    let err = solve_steady(&m, &c, &[]).unwrap_err();
    let msg = err.to_string();
    assert!(msg.contains("ln of -2") && msg.contains("x = -2"), "{msg}");
}

#[test]
fn singular_jacobian_is_reported_with_the_variables() {
    // x + y = 1 and 2x + 2y = 2: a line of steady states.
    let m = model(
        &[("x", false), ("y", false), ("w", false)],
        &[],
        &[],
        vec![
            (add(v(0, 0), v(1, 0)), n(1.0)),
            (mul(n(2.0), add(v(0, 0), v(1, 0))), n(2.0)),
            (v(2, 0), n(3.0)),
        ],
        vec![],
    );
    let c = CompiledModel::new(&m);
    let err = solve_steady(&m, &c, &[]).unwrap_err();
    let msg = err.to_string();
    assert!(matches!(err, SteadyError::Singular(_)), "{msg}");
    assert!(
        msg.contains("pin down x, y") || msg.contains("pin down y, x"),
        "{msg}"
    );
    let SteadyError::Singular(report) = &err else {
        unreachable!()
    };
    let mut free = report.undetermined.clone();
    free.sort();
    assert_eq!(free, ["x", "y"]);
}

#[test]
fn no_solution_reports_residuals_iterations_and_hint() {
    // x^2 + 1 = 0 has no real solution.
    let mut m = model(
        &[("x", false)],
        &[],
        &[],
        vec![(add(pow(v(0, 0), n(2.0)), n(1.0)), n(0.0))],
        vec![],
    );
    m.steady = vec![SteadyItem {
        kind: SteadyKind::Guess,
        variable: 0,
        expr: n(1.0),
    }];
    let c = CompiledModel::new(&m);
    let err = solve_steady(&m, &c, &[]).unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("equation 1") && msg.contains("involves x"),
        "{msg}"
    );
    assert!(msg.contains("guess"), "{msg}");
}

#[test]
fn log_variables_need_positive_values() {
    let mut m = model(&[("k", true)], &[], &[], vec![(v(0, 0), n(2.0))], vec![]);
    m.steady = vec![SteadyItem {
        kind: SteadyKind::Guess,
        variable: 0,
        expr: n(-1.0),
    }];
    let c = CompiledModel::new(&m);
    let msg = solve_steady(&m, &c, &[]).unwrap_err().to_string();
    assert!(msg.contains("positive"), "{msg}");
    m.steady.clear();
    assert!((solve_steady(&m, &c, &[]).unwrap().values[0] - 2.0).abs() < 1e-13);
}

#[test]
fn compiled_jacobians_match_central_differences_on_a_whole_model() {
    // Every coefficient dr_i/dy_{j,t+k} and dr_i/de (tapes) against central differences of the
    // tree-evaluated residual with one date perturbed (common practice check).
    use crate::model::Leaves;
    use crate::symbolic::Leaf;
    let m = growth_model();
    let c = CompiledModel::new(&m);
    let params: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    let x = [0.7, 0.4, 0.05];
    struct At<'a> {
        params: &'a [f64],
        x: &'a [f64],
        bump: Option<(Leaf, f64)>,
    }
    impl Leaves for At<'_> {
        fn parameter(&self, i: usize) -> f64 {
            self.params[i]
        }
        fn variable(&self, i: usize, o: i32) -> f64 {
            let b = match self.bump {
                Some((Leaf::Variable { index, offset }, h)) if index == i && offset == o => h,
                _ => 0.0,
            };
            self.x[i] + b
        }
        fn innovation(&self, i: usize, o: i32) -> f64 {
            match self.bump {
                Some((Leaf::Innovation { index, offset }, h)) if index == i && offset == o => h,
                _ => 0.0,
            }
        }
        fn steady_state(&self, i: usize) -> f64 {
            self.x[i]
        }
    }
    let mut vals = vec![0.0; c.coefficient_pattern.len()];
    c.coefficients.eval(&params, &x, &mut Vec::new(), &mut vals);
    let h = 1e-6;
    for (coef, &v) in c.coefficient_pattern.iter().zip(&vals) {
        let eq = &m.equations[coef.equation];
        let r = |step: f64| {
            let at = At {
                params: &params,
                x: &x,
                bump: Some((coef.leaf, step)),
            };
            eq.lhs.eval(&at) - eq.rhs.eval(&at)
        };
        let fd = (r(h) - r(-h)) / (2.0 * h);
        assert!(
            (v - fd).abs() < 1e-7 * (1.0 + fd.abs()),
            "{coef:?}: {v} vs {fd}"
        );
    }
    // The steady-state Jacobian sums the dates.
    let mut jv = vec![0.0; c.jacobian_pattern.len()];
    c.steady_jacobian
        .eval(&params, &x, &mut Vec::new(), &mut jv);
    for (&(i, j), &v) in c.jacobian_pattern.iter().zip(&jv) {
        let r = |step: f64| {
            let mut y = x;
            y[j] += step;
            let mut out = vec![0.0; 3];
            c.residuals.eval(&params, &y, &mut Vec::new(), &mut out);
            out[i]
        };
        let fd = (r(h) - r(-h)) / (2.0 * h);
        assert!(
            (v - fd).abs() < 1e-7 * (1.0 + fd.abs()),
            "({i},{j}): {v} vs {fd}"
        );
    }
}

#[test]
fn inconsistent_partial_values_are_blamed_on_the_values() {
    // x = 2 and y = 3 x with the value y = 5 given: no x satisfies both equations.
    let mut m = model(
        &[("x", false), ("y", false)],
        &[],
        &[],
        vec![(v(0, 0), n(2.0)), (v(1, 0), mul(n(3.0), v(0, 0)))],
        vec![],
    );
    m.steady = vec![SteadyItem {
        kind: SteadyKind::Known,
        variable: 1,
        expr: n(5.0),
    }];
    let c = CompiledModel::new(&m);
    let err = solve_steady(&m, &c, &[]).unwrap_err();
    assert!(
        matches!(err, SteadyError::KnownValuesInconsistent { .. }),
        "{err}"
    );
    // Consistent partial values: the rest is solved.
    m.steady[0].expr = n(6.0);
    let ss = solve_steady(&m, &c, &[]).unwrap();
    assert!((ss.values[0] - 2.0).abs() < 1e-12);
}

/// Steady state of a model written in the language (checked, compiled, solved).
fn steady_of_source(src: &str) -> Result<SteadyState, SteadyError> {
    let model = crate::model::check_source(src).expect("model checks");
    let compiled = CompiledModel::new(&model);
    let params: Vec<f64> = model.parameters.iter().map(|p| p.value).collect();
    solve_steady(&model, &compiled, &params)
}

#[test]
fn a_log_variable_with_a_negative_solution_is_told_to_drop_log() {
    let err = steady_of_source(
        "endogenous\n  log y\n  x\nexogenous\n  e\nequations\n  y = -2 + 0 * x\n  x = 0.5 * x[t-1] + e\n",
    )
    .expect_err("no positive steady state");
    assert!(
        matches!(&err, SteadyError::LogNotPositive { variable, value } if variable == "y" && (*value + 2.0).abs() < 1e-9),
        "{err}"
    );
    assert!(err.to_string().contains("drop `log`"), "{err}");
}

#[test]
fn a_trend_is_named_as_having_no_steady_state() {
    let err = steady_of_source(
        "endogenous\n  x\n  y\nexogenous\n  e\nequations\n  x = x[t-1] + 1\n  y = 0.5 * y[t-1] + e\n",
    )
    .expect_err("no steady state");
    assert!(
        matches!(&err, SteadyError::NoConstantSolution { variables, .. } if variables == "x"),
        "{err}"
    );
    assert!(err.to_string().contains("growth rates"), "{err}");
}

#[test]
fn a_division_by_a_value_given_as_zero_blames_the_value() {
    let err = steady_of_source(
        "endogenous\n  b\n  y\nexogenous\n  e\nequations\n  b = 0.5 * b[t-1] + e\n  y = 1 / b + 0 * y[t-1]\nsteady\n  b = 0\n  guess y = 1\n",
    )
    .expect_err("division by zero");
    assert!(matches!(err, SteadyError::DomainAtGivenValues(_)), "{err}");
    assert!(!err.to_string().contains("Give a `guess`"), "{err}");
}

/// Issue 8 item 1: with some values fixed, a start far from the solution must not be blamed on
/// the values: the values become the starting point of a full solve, which confirms them.
#[test]
fn fixed_values_that_are_right_are_confirmed_by_a_full_solve() {
    // c = y - delta k holds at the given values; the guess for k is far off, and the
    // least-squares fit with y and z fixed used to give up.
    let src = "endogenous\n  log k\n  log c\n  log y\n  log z\nexogenous\n  e\nparameters\n  alpha = 0.36\n  beta = 0.99\n  delta = 0.025\n  kbar = (alpha / (1 / beta - 1 + delta))^(1 / (1 - alpha))\nequations\n  y = z * k[t-1]^alpha\n  c + k = y + (1 - delta) * k[t-1]\n  1 / c = beta / c[t+1] * (alpha * z[t+1] * k^(alpha - 1) + 1 - delta)\n  ln(z) = 0.9 * ln(z[t-1]) + e\nsteady\n  z = 1\n  y = kbar^alpha\n  c = kbar^alpha - delta * kbar\n  guess k = 1000 * kbar\n";
    let s = steady_of_source(src).expect("the steady state is found");
    let kbar = (0.36f64 / (1.0 / 0.99 - 1.0 + 0.025)).powf(1.0 / 0.64);
    assert!(
        (s.values[0] / kbar - 1.0).abs() < 1e-9,
        "k = {}",
        s.values[0]
    );
}

#[test]
fn a_parameter_outside_a_domain_is_blamed_not_the_guess() {
    // x = ln(p) + 0.5 x[t-1] with p = -2: no guess of x can help, so the message names ln(p)
    // and p's value (it used to blame the starting point of x).
    let src = "endogenous\n  x\nexogenous\n  e\nparameters\n  p = -2\nequations\n  x = ln(p) + 0.5 * x[t-1] + e\n";
    let m = crate::model::check_source(src).unwrap();
    let c = CompiledModel::new(&m);
    let params: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    match solve_steady(&m, &c, &params) {
        Err(SteadyError::ParameterDomain {
            expression,
            parameters,
            ..
        }) => {
            assert_eq!(expression, "ln(p)");
            assert_eq!(parameters, "p = -2");
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn newton_params_bound_the_iterations() {
    let m = growth_model();
    let c = CompiledModel::new(&m);
    let params: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    let free = solve_steady(&m, &c, &params).unwrap();
    assert!(free.iterations > 1, "{free:?}");
    // One iteration cannot reach the nonlinear steady state from the default guesses.
    let tight = NewtonParams::default().with_max_iterations(1);
    match solve_steady_with(&m, &c, &params, &tight) {
        Err(SteadyError::NotFound { iterations: 1, .. }) => {}
        other => panic!("expected NotFound after 1 iteration, got {other:?}"),
    }
    // A generous limit gives the same answer as the default.
    let loose = NewtonParams::default().with_max_iterations(2 * MAX_NEWTON_ITERATIONS);
    let again = solve_steady_with(&m, &c, &params, &loose).unwrap();
    assert_eq!(again.values, free.values);
}
