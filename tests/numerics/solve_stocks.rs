//! Stocks at the start of the period (spec §8): the island growth economy written with capital
//! as an end-of-period stock (`k[t-1]` in production) and as a start-of-period stock
//! (`predetermined k`, `k[t+1]` in the accumulation law) is the same economy, so the two files
//! must give the same solution: the start-of-period stock at t is the end-of-period stock at t-1
//! (common practice: the two timing conventions of the growth model, e.g. King, Plosser and
//! Rebelo 1988 write the start-of-period one), and every other variable responds identically.

use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::model::check_source;
use saddle::solution::{solve, SolveOptions, Status};

const END_OF_PERIOD: &str = include_str!("../../models/island_growth.saddle");

/// The same economy with capital dated at the start of the period; `marker` is `predetermined`
/// or empty.
fn start_of_period(marker: &str) -> String {
    format!(
        r#"
endogenous
  log {marker} k
  log c
  log y
  log z
exogenous
  e_z
parameters
  alpha = 0.36
  beta  = 0.99
  delta = 0.025
  sigma = 2
  rho   = 0.95
  sd_z  = 0.007
equations
  output: y = z * k^alpha
  budget: c + k[t+1] = y + (1 - delta) * k
  euler:  c^(-sigma) = beta * c[t+1]^(-sigma) * (alpha * z[t+1] * k[t+1]^(alpha - 1) + 1 - delta)
  tech:   ln(z) = rho * ln(z[t-1]) + e_z
covariance
  sd(e_z) = sd_z
steady
  z = 1
  k = (alpha / (1 / beta - 1 + delta))^(1 / (1 - alpha))
  y = z * k^alpha
  guess c = 0.7 * y
"#
    )
}

const H: usize = 30;

fn responses(source: &str) -> (Vec<String>, nalgebra::DMatrix<f64>, Vec<String>) {
    let model = check_source(source).unwrap_or_else(|d| panic!("model does not check: {d:?}"));
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    assert_eq!(solved.status, Status::Determinate, "{:?}", solved.diagnosis);
    let irf = impulse_responses(&solved, &[], ImpulseSize::OneSd, H).unwrap();
    let states = solved.solution.as_ref().unwrap().states.clone();
    (irf.variables.clone(), irf.responses[0].clone(), states)
}

#[test]
fn both_timings_of_capital_give_the_same_economy() {
    let (vars, end, end_states) = responses(END_OF_PERIOD);
    let (vars2, start, start_states) = responses(&start_of_period("predetermined"));
    assert_eq!(vars, vars2);
    let k = vars.iter().position(|v| v == "k").unwrap();
    // Capital as written at the start of the period does not move on impact...
    assert_eq!(start[(k, 0)], 0.0);
    for h in 0..=H {
        for (i, _) in vars.iter().enumerate() {
            let (a, b) = if i == k {
                if h == 0 {
                    continue;
                }
                (start[(i, h)], end[(i, h - 1)])
            } else {
                (start[(i, h)], end[(i, h)])
            };
            assert!(
                (a - b).abs() <= 1e-10 * (1e-3 + b.abs()),
                "{} at h = {h}: {a} (start of period) vs {b} (end of period)",
                vars[i]
            );
        }
    }
    // ...and the states are named as written.
    assert_eq!(end_states, vec!["k[t-1]", "z[t-1]"]);
    assert_eq!(start_states, vec!["k", "z[t-1]"]);
}

#[test]
fn without_the_marker_the_stock_is_read_as_forward_looking() {
    let model = check_source(&start_of_period("")).unwrap();
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    assert_eq!(solved.status, Status::Indeterminate);
    let text = solved.diagnosis.unwrap_or_default();
    assert!(text.contains("predetermined"), "{text}");
    assert!(!text.contains("policy rule"), "{text}");
}

#[test]
fn a_marker_on_a_variable_without_a_lead_is_named() {
    let src = END_OF_PERIOD.replace("log k ", "log predetermined k ");
    let model = check_source(&src).unwrap();
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    assert_eq!(solved.status, Status::Determinate);
    assert!(
        solved
            .warnings
            .iter()
            .any(|w| w.contains("k is declared predetermined but never appears with a lead")),
        "{:?}",
        solved.warnings
    );
}

/// The advice names the model's own rule when it has one (the harbour economy's `policy`
/// equation, made passive: phi_pi below 1 breaks the Taylor principle, Bullard and Mitra 2002)
/// and never points at a stock there.
#[test]
fn indeterminacy_advice_names_the_rule_the_model_has() {
    let src = include_str!("../../models/harbour.saddle");
    let model = check_source(src)
        .unwrap()
        .with_overrides(&[("phi_pi".to_string(), 0.5)])
        .unwrap();
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    assert_eq!(solved.status, Status::Indeterminate);
    let text = solved.diagnosis.unwrap_or_default();
    assert!(text.contains("`policy`"), "{text}");
    assert!(!text.contains("predetermined"), "{text}");
}

/// The optimal-policy regimes refuse a stock written with a lead (their first-order conditions
/// are taken in the timing as written), with the variable named, rather than solving a
/// different problem; the rule regime solves it.
#[test]
fn optimal_regimes_refuse_a_predetermined_stock() {
    use saddle::policy::{solve_regime, PolicyError, PolicyParams, Regime};
    let src = "endogenous\n  predetermined k\n  i\n  x\nexogenous\n  e\nequations\n  acc: k[t+1] = 0.9*k + i + e\n  rule: i = -0.5*k\n  fwd: x = 0.9*x[t+1] + k\nobjective\n  loss = k^2 + i^2\n  discount = 0.99\n  control i replaces rule\n";
    let model = check_source(src).unwrap();
    let opts = SolveOptions::default();
    let params = PolicyParams::default();
    let rule = solve_regime(&model, Regime::Rule, &opts, &params).unwrap();
    assert_eq!(rule.solved.status, Status::Determinate);
    match solve_regime(&model, Regime::Commitment, &opts, &params) {
        Err(PolicyError::PredeterminedStock { variable }) => assert_eq!(variable, "k"),
        other => panic!("{other:?}"),
    }
    assert!(solve_regime(&model, Regime::Discretion, &opts, &params).is_err());
}
