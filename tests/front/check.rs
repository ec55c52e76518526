//! The checked model in detail: how expressions, dates, sections and defaults come out of the
//! checker (in-process; the diagnostics themselves are tested through the binary in
//! front_diagnostics.rs).

use saddle::model::check::did_you_mean;
use saddle::model::{check_source, BinaryOp, Expr, Function, Model, SteadyKind};

fn model(body: &str) -> Model {
    check_source(body).unwrap_or_else(|d| panic!("{d:#?}"))
}

fn eq(m: &Model, i: usize) -> (&Expr, &Expr) {
    (&m.equations[i].lhs, &m.equations[i].rhs)
}

#[test]
fn dates_become_offsets_and_ss_becomes_a_steady_state_leaf() {
    let m = model(
        "endogenous\n  x\n  y\nexogenous\n  e\nequations\n  x = x[t+3] + x[t-2] + x[t] + x[t+0] + y[ss] + e[t-1]\n  y = e\n",
    );
    let mut leaves = Vec::new();
    eq(&m, 0).1.walk(&mut |e| match e {
        Expr::Variable { .. } | Expr::Innovation { .. } | Expr::SteadyState(_) => {
            leaves.push(e.clone())
        }
        _ => {}
    });
    assert_eq!(
        leaves,
        [
            Expr::Variable {
                index: 0,
                offset: 3
            },
            Expr::Variable {
                index: 0,
                offset: -2
            },
            Expr::Variable {
                index: 0,
                offset: 0
            },
            Expr::Variable {
                index: 0,
                offset: 0
            },
            Expr::SteadyState(1),
            Expr::Innovation {
                index: 0,
                offset: -1
            },
        ]
    );
    assert_eq!((m.endogenous[0].max_lead, m.endogenous[0].max_lag), (3, 2));
    // y appears only as y[ss] in the first equation but at t in the second.
    assert_eq!((m.endogenous[1].max_lead, m.endogenous[1].max_lag), (0, 0));
    assert_eq!(m.exogenous[0].max_lag, 1);
}

#[test]
fn precedence_follows_the_specification() {
    let m = model("endogenous\n  x\nparameters\n  a = -2^2\n  b = 2^3^2\n  c = 2 - 3 - 4\n  d = 2 / 4 * 8\n  f = 2^-1\nequations\n  x = 0\n");
    let v: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    // -2^2 is -(2^2); ^ is right-associative; - and / are left-associative.
    assert_eq!(v, [-4.0, 512.0, -5.0, 4.0, 0.5]);
}

#[test]
fn negative_literals_fold_and_log_is_ln() {
    let m = model("endogenous\n  x\nequations\n  x = -0.5 * log(x[t-1]) + ln(x[t-1])\n");
    let (_, rhs) = eq(&m, 0);
    let Expr::Binary(BinaryOp::Add, a, b) = rhs else {
        panic!("{rhs:?}")
    };
    assert_eq!(
        **a,
        Expr::binary(
            BinaryOp::Mul,
            Expr::Number(-0.5),
            Expr::Call(
                Function::Ln,
                Box::new(Expr::Variable {
                    index: 0,
                    offset: -1
                })
            )
        )
    );
    assert_eq!(
        **b,
        Expr::Call(
            Function::Ln,
            Box::new(Expr::Variable {
                index: 0,
                offset: -1
            })
        )
    );
}

#[test]
fn a_bare_expression_is_an_equation_equal_to_zero() {
    let m = model("endogenous\n  x\nequations\n  x - 0.5 * x[t-1]\n");
    assert_eq!(eq(&m, 0).1, &Expr::Number(0.0));
    assert_eq!(m.equations[0].label, None);
    assert_eq!(m.equation_name(0), "equation 1");
}

#[test]
fn sections_repeat_and_accumulate_in_file_order() {
    let m = model(
        "endogenous\n  a\nequations\n  a = b\nendogenous\n  b, log c \"labelled\"\nequations\n  b = 0.5 * b[t-1]\n  c = 1\n",
    );
    assert_eq!(m.variable_names(), ["a", "b", "c"].map(String::from));
    assert!(m.endogenous[2].log);
    assert_eq!(m.endogenous[2].label.as_deref(), Some("labelled"));
    assert_eq!(m.equations.len(), 3);
}

#[test]
fn steady_items_resolve_to_steady_state_leaves() {
    let m = model(
        "endogenous\n  log k\n  log y\nparameters\n  alpha = 0.3\nequations\n  y = k[t-1]^alpha\n  k = 0.2 * y\nsteady\n  y = k^alpha\n  k = 0.5\n",
    );
    assert_eq!(m.steady.len(), 2);
    assert_eq!(m.steady[0].kind, SteadyKind::Known);
    assert_eq!(m.steady[0].variable, 1);
    assert_eq!(
        m.steady[0].expr,
        Expr::binary(BinaryOp::Pow, Expr::SteadyState(0), Expr::Parameter(0))
    );
    let d = check_source("endogenous\n  k\nequations\n  k = 0\nsteady\n  k = 1\n  guess k = 2\n")
        .unwrap_err();
    assert_eq!(d.len(), 1);
    assert!(d[0].message.contains("both a value of and a guess for `k`"));
}

#[test]
fn innovations_default_to_unit_sd_and_var_sets_the_scale() {
    let m = model(
        "endogenous\n  x\nexogenous\n  a, b, c\nequations\n  x = a + b + c\ncovariance\n  var(a) = 0.04\n  sd(b) = 3\n  corr(a, b) = 0.5\n",
    );
    assert_eq!(m.sd_given, [true, true, false]);
    assert!((m.covariance[(0, 0)] - 0.04).abs() < 1e-15);
    assert_eq!(m.covariance[(1, 1)], 9.0);
    assert_eq!(m.covariance[(2, 2)], 1.0);
    // cov(a, b) = corr * sd_a * sd_b = 0.5 * 0.2 * 3
    assert!((m.covariance[(0, 1)] - 0.3).abs() < 1e-15);
    assert_eq!(m.covariance[(0, 1)], m.covariance[(1, 0)]);
    assert_eq!(m.covariance[(0, 2)], 0.0);
}

#[test]
fn options_are_kept_as_expressions_and_horizon_as_a_count() {
    let m = model("endogenous\n  x\nparameters\n  b = 0.98\nequations\n  x = 0\noptions\n  discount = b\n  horizon = 12\n");
    assert_eq!(m.options.horizon, Some(12));
    assert_eq!(m.options.discount, Some(Expr::Parameter(0)));
    assert_eq!(m.options.threshold, None);
    let d = check_source(
        "endogenous\n  x\nparameters\n  h = 3\nequations\n  x = 0\noptions\n  horizon = h\n",
    )
    .unwrap_err();
    assert_eq!(d[0].code, "bad-horizon");
}

#[test]
fn did_you_mean_finds_typos_and_not_strangers() {
    let names = ["infl", "gap", "rate", "phi_pi", "kappa"];
    assert_eq!(did_you_mean("inlf", names.iter().copied()), Some("infl"));
    assert_eq!(
        did_you_mean("phi_py", names.iter().copied()),
        Some("phi_pi")
    );
    assert_eq!(did_you_mean("kapa", names.iter().copied()), Some("kappa"));
    assert_eq!(did_you_mean("z", names.iter().copied()), None);
    assert_eq!(did_you_mean("output", names.iter().copied()), None);
}

#[test]
fn parameters_evaluate_in_dependency_order_whatever_the_file_order() {
    let m = model(
        "endogenous\n  x\nparameters\n  c = b * 2\n  b = a + 1\n  a = 1\nequations\n  x = c\n",
    );
    let v: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
    assert_eq!(v, [4.0, 2.0, 1.0]);
    assert_eq!(m.parameter_order, [2, 1, 0]);
}

#[test]
fn with_overrides_leaves_derived_parameters_consistent() {
    let m = model(
        "endogenous\n  x\nparameters\n  c = b * 2\n  b = a + 1\n  a = 1\nequations\n  x = c\n",
    );
    let o = m.with_overrides(&[("a".into(), 10.0)]).unwrap();
    let v: Vec<f64> = o.parameters.iter().map(|p| p.value).collect();
    assert_eq!(v, [22.0, 11.0, 10.0]);
    let o = m.with_overrides(&[("b".into(), 5.0)]).unwrap();
    let v: Vec<f64> = o.parameters.iter().map(|p| p.value).collect();
    assert_eq!(v, [10.0, 5.0, 1.0]);
    assert_eq!(o.parameters[1].expr, Expr::Number(5.0));
}
