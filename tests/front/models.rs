//! Every demo model and the spec's example parse and check; the canonical printer round-trips
//! them; overrides re-evaluate derived parameters.

use saddle::model::print::print_model;
use saddle::model::{check_source, OverrideError};

fn read(name: &str) -> String {
    let path = format!("{}/models/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn demo_models() -> Vec<(String, String)> {
    let dir = format!("{}/models", env!("CARGO_MANIFEST_DIR"));
    let mut v: Vec<(String, String)> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "saddle"))
        .map(|p| {
            (
                p.file_name().unwrap().to_string_lossy().into_owned(),
                std::fs::read_to_string(&p).unwrap(),
            )
        })
        .collect();
    v.sort();
    assert!(v.len() >= 4, "expected the demo models in {dir}");
    v
}

/// The complete example of language.md §1, verbatim.
const SPEC_EXAMPLE: &str = r#"# A three-equation economy with a policy-rate rule (invented demo scenario)
title "Harbour economy: output gap, inflation and the policy rate"

endogenous
  gap   "output gap, percent"
  infl  "inflation, quarterly percent"
  rate  "policy rate, quarterly percent"
  drift "rule disturbance"

exogenous
  e_rate "policy surprise"
  e_cost "cost-push impulse"

parameters
  beta   = 0.99     "discount factor"
  sigma  = 1.5      "inverse elasticity of intertemporal substitution"
  theta  = 0.7      "share of prices kept unchanged each quarter"
  omega  = 1.2
  kappa  = (1 - theta) * (1 - beta * theta) / theta * (sigma + omega)
  phi_pi = 1.6
  phi_y  = 0.2
  rho    = 0.6

equations
  demand: gap  = gap[t+1] - (rate - infl[t+1]) / sigma
  supply: infl = beta * infl[t+1] + kappa * gap + e_cost
  policy: rate = phi_pi * infl + phi_y * gap + drift
  inert:  drift = rho * drift[t-1] + e_rate

covariance
  sd(e_rate) = 0.25
  sd(e_cost) = 0.10
  corr(e_rate, e_cost) = 0
"#;

#[test]
fn spec_example_checks_with_the_values_it_states() {
    let m = check_source(SPEC_EXAMPLE).unwrap();
    assert_eq!(
        m.variable_names(),
        ["gap", "infl", "rate", "drift"].map(String::from)
    );
    assert_eq!(m.shock_names(), ["e_rate", "e_cost"].map(String::from));
    let kappa = m.parameters[m.parameter_index("kappa").unwrap()].value;
    // kappa = (1 - 0.7)(1 - 0.99*0.7)/0.7 * (1.5 + 1.2), computed by hand: 0.3*0.307/0.7*2.7.
    assert!((kappa - 0.3 * 0.307 / 0.7 * 2.7).abs() < 1e-14);
    // kappa comes after the four parameters it uses in the evaluation order.
    let pos = |n: &str| {
        let i = m.parameter_index(n).unwrap();
        m.parameter_order.iter().position(|&j| j == i).unwrap()
    };
    for dep in ["beta", "sigma", "theta", "omega"] {
        assert!(pos(dep) < pos("kappa"));
    }
    let lead_lag: Vec<(u32, u32)> = m
        .endogenous
        .iter()
        .map(|v| (v.max_lead, v.max_lag))
        .collect();
    assert_eq!(lead_lag, [(1, 0), (1, 0), (0, 0), (0, 1)]);
    assert!((m.covariance[(0, 0)] - 0.0625).abs() < 1e-15);
    assert!((m.covariance[(1, 1)] - 0.01).abs() < 1e-15);
    assert_eq!(m.covariance[(0, 1)], 0.0);
    assert_eq!(m.sd_given, [true, true]);
    assert_eq!(m.equation_name(2), "policy");
}

#[test]
fn harbour_demo_is_the_spec_example() {
    assert_eq!(
        check_source(&read("harbour.saddle")),
        check_source(SPEC_EXAMPLE)
    );
}

#[test]
fn every_demo_model_checks_and_round_trips() {
    for (name, src) in demo_models() {
        let m = check_source(&src).unwrap_or_else(|d| panic!("{name}: {d:#?}"));
        let printed = print_model(&m);
        let again = check_source(&printed)
            .unwrap_or_else(|d| panic!("{name} reprinted: {d:#?}\n{printed}"));
        assert_eq!(m, again, "{name}: round trip changed the model\n{printed}");
        // Printing is a fixed point.
        assert_eq!(printed, print_model(&again));
    }
}

#[test]
fn growth_models_have_logs_and_steady_sections() {
    for name in [
        "island_growth.saddle",
        "island_growth_full_depreciation.saddle",
    ] {
        let m = check_source(&read(name)).unwrap();
        assert!(m.endogenous.iter().all(|v| v.log), "{name}");
        assert!(!m.steady.is_empty(), "{name}");
        let k = m.variable_names().iter().position(|n| n == "k").unwrap();
        assert_eq!(m.endogenous[k].max_lag, 1);
    }
}

#[test]
fn ferry_has_a_two_period_lead_and_lagged_innovations() {
    let m = check_source(&read("ferry.saddle")).unwrap();
    assert_eq!(m.endogenous[0].name, "fare");
    assert_eq!(m.endogenous[0].max_lead, 2);
    let lags: Vec<u32> = m.exogenous.iter().map(|e| e.max_lag).collect();
    assert_eq!(lags, [2, 1]);
    // var(e_fuel) = 0.04 gives sd 0.2; e_tide defaults to sd 1.
    assert!((m.covariance[(0, 0)] - 0.04).abs() < 1e-15);
    assert_eq!(m.covariance[(1, 1)], 1.0);
    assert_eq!(m.sd_given, [true, false]);
    assert_eq!(m.options.horizon, Some(24));
}

#[test]
fn overrides_recompute_derived_parameters() {
    let m = check_source(SPEC_EXAMPLE).unwrap();
    let o = m.with_overrides(&[("theta".into(), 0.5)]).unwrap();
    let kappa = o.parameters[o.parameter_index("kappa").unwrap()].value;
    assert!((kappa - 0.5 * (1.0 - 0.495) / 0.5 * 2.7).abs() < 1e-14);
    // The original is untouched.
    assert_eq!(m.parameters[2].value, 0.7);
    // Overriding a derived parameter replaces its expression: later changes to theta no
    // longer reach it.
    let o = m
        .with_overrides(&[("kappa".into(), 0.1), ("theta".into(), 0.2)])
        .unwrap();
    assert_eq!(o.parameters[o.parameter_index("kappa").unwrap()].value, 0.1);
    // Overrides feed the covariance matrix too.
    let src = SPEC_EXAMPLE.replace("sd(e_rate) = 0.25", "sd(e_rate) = 2 * rho");
    let m = check_source(&src).unwrap();
    let o = m.with_overrides(&[("rho".into(), 0.1)]).unwrap();
    assert!((o.covariance[(0, 0)] - 0.04).abs() < 1e-15);
}

#[test]
fn override_errors_name_the_problem() {
    let m = check_source(SPEC_EXAMPLE).unwrap();
    match m.with_overrides(&[("thetta".into(), 0.5)]) {
        Err(OverrideError::UnknownParameter { name, suggestion }) => {
            assert_eq!(name, "thetta");
            assert_eq!(suggestion.as_deref(), Some("theta"));
        }
        other => panic!("{other:?}"),
    }
    match m.with_overrides(&[("theta".into(), 0.0)]) {
        Err(e @ OverrideError::ParameterNotFinite { .. }) => {
            let text = e.to_string();
            assert!(text.contains("kappa"), "{text}");
        }
        other => panic!("{other:?}"),
    }
    assert!(matches!(
        m.with_overrides(&[("beta".into(), f64::NAN)]),
        Err(OverrideError::NotFinite { .. })
    ));
    let src = SPEC_EXAMPLE.replace("sd(e_rate) = 0.25", "sd(e_rate) = rho - 0.5");
    let m = check_source(&src).unwrap();
    assert!(matches!(
        m.with_overrides(&[("rho".into(), 0.2)]),
        Err(OverrideError::Covariance { .. })
    ));
}
