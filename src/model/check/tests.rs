//! Unit tests of the sections for data, estimation and policy (spec §8-§11): what the checked
//! model holds, the canonical round trip, and overrides.

use crate::model::print::print_model;
use crate::model::{check_source, CovarianceKind, Expr, Model};

fn checked(src: &str) -> Model {
    match check_source(src) {
        Ok(m) => m,
        Err(d) => panic!("{d:#?}"),
    }
}

fn round_trip(m: &Model) {
    let printed = print_model(m);
    let again = checked(&printed);
    assert_eq!(&again, m, "round trip changed the model:\n{printed}");
}

const DATA_MODEL: &str = r#"
endogenous
  log y "output"
  infl
exogenous
  e_y
  e_p
parameters
  rho = 0.9
  me = 0.1
equations
  ln(y) = rho * ln(y[t-1]) + e_y
  infl = 0.5 * infl[t-1] + e_p
observables
  growth = 100 * (ln(y) - ln(y[t-1]))  "output growth, percent"
  inflation_obs = 400 * infl + y[ss]
  level = y
covariance
  sd(e_y) = 0.01
  sd(growth) = me
  var(inflation_obs) = 0.04
  corr(growth, inflation_obs) = 0.5
"#;

#[test]
fn observables_and_measurement_errors_reach_the_model() {
    let m = checked(DATA_MODEL);
    assert_eq!(m.observables.len(), 3);
    assert_eq!(m.observables[0].name, "growth");
    assert_eq!(
        m.observables[0].label.as_deref(),
        Some("output growth, percent")
    );
    // `y[t-1]` keeps its lag; `y[ss]` is the steady value.
    let mut offsets = Vec::new();
    m.observables[0].expr.walk(&mut |e| {
        if let Expr::Variable { offset, .. } = e {
            offsets.push(*offset);
        }
    });
    assert_eq!(offsets, [0, -1]);
    let mut steady = false;
    m.observables[1]
        .expr
        .walk(&mut |e| steady |= matches!(e, Expr::SteadyState(0)));
    assert!(steady);
    // Innovation items and measurement items are kept apart.
    assert_eq!(m.covariance_items.len(), 1);
    assert_eq!(m.measurement_items.len(), 3);
    assert_eq!(m.measurement_items[2].kind, CovarianceKind::Corr);
    assert_eq!(m.measurement_items[2].shocks, (0, 1));
    // Sigma_me = D R D with sd 0.1 and 0.2, corr 0.5; `level` has no measurement error.
    let s = &m.measurement_covariance;
    assert_eq!(s.shape(), (3, 3));
    assert!((s[(0, 0)] - 0.01).abs() < 1e-15);
    assert_eq!(s[(1, 1)], 0.04);
    assert!((s[(0, 1)] - 0.5 * 0.1 * 0.2).abs() < 1e-15);
    assert_eq!(s[(1, 0)], s[(0, 1)]);
    assert_eq!(s[(2, 2)], 0.0);
    assert_eq!(s[(0, 2)], 0.0);
    // Observables do not count as uses of a variable in the equations.
    assert_eq!(m.endogenous[0].max_lag, 1);
    round_trip(&m);
}

#[test]
fn overrides_recompute_the_measurement_covariance() {
    let m = checked(DATA_MODEL);
    let o = m.with_overrides(&[("me".to_string(), 0.3)]).unwrap();
    assert!((o.measurement_covariance[(0, 0)] - 0.09).abs() < 1e-15);
    assert!((o.measurement_covariance[(0, 1)] - 0.5 * 0.3 * 0.2).abs() < 1e-15);
    let err = m.with_overrides(&[("me".to_string(), -1.0)]).unwrap_err();
    assert!(err.to_string().contains("sd(growth) = me"), "{err}");
}

#[test]
fn a_model_without_observables_has_an_empty_measurement_covariance() {
    let m = checked("endogenous\n  x\nequations\n  x = 0.5 * x[t-1]\n");
    assert!(m.observables.is_empty());
    assert_eq!(m.measurement_covariance.shape(), (0, 0));
}

const POLICY_MODEL: &str = r#"
endogenous
  gap
  infl
  rate
exogenous
  e_cost
parameters
  beta = 0.99
  lambda = 0.25
  loss = 0.5        "a parameter named like the objective's word"
  control = 1.5
  discount = 0.98
equations
  demand: gap = gap[t+1] - (rate - infl[t+1]) / 1.5
  supply: infl = beta * infl[t+1] + 0.1 * gap + e_cost
  policy: rate = control * infl + loss * gap
objective
  loss = infl^2 + lambda * gap^2 + 0.1 * (rate - rate[t-1])^2
  discount = beta
  control rate replaces policy
"#;

#[test]
fn objective_reaches_the_model_and_its_words_stay_usable_as_names() {
    let m = checked(POLICY_MODEL);
    let o = m.objective.as_ref().expect("an objective");
    assert_eq!(o.controls.len(), 1);
    assert_eq!(o.controls[0].variable, 2);
    assert_eq!(o.controls[0].replaces, Some(2));
    assert_eq!(o.discount, Some(Expr::Parameter(0)));
    assert!(m.parameter_index("loss").is_some());
    // The loss keeps the lag of `rate`.
    let mut lag = false;
    o.loss.walk(&mut |e| {
        lag |= matches!(
            e,
            Expr::Variable {
                index: 2,
                offset: -1
            }
        )
    });
    assert!(lag);
    round_trip(&m);
    let err = m.with_overrides(&[("beta".to_string(), 1.2)]).unwrap_err();
    assert!(err.to_string().contains("objective's discount"), "{err}");
}

#[test]
fn a_control_without_a_rule_allows_one_equation_fewer() {
    let src = POLICY_MODEL
        .replace("  policy: rate = control * infl + loss * gap\n", "")
        .replace("control rate replaces policy", "control rate");
    let m = checked(&src);
    assert_eq!(m.equations.len(), 2);
    assert_eq!(m.objective.as_ref().unwrap().controls[0].replaces, None);
    round_trip(&m);
    // The same file without the objective has one equation too few.
    let cut = src.split("\nobjective\n").next().unwrap().to_string();
    let d = check_source(&cut).unwrap_err();
    assert!(d.iter().any(|d| d.code == "equation-count"), "{d:#?}");
}

#[test]
fn priors_in_both_forms_reach_the_model_and_round_trip() {
    use crate::model::PriorTarget;
    use crate::stats::Distribution;
    let src = format!(
        "{DATA_MODEL}\npriors\n  rho ~ beta(mean = 0.6, sd = 0.2)\n  me ~ gamma(shape = 2, scale = 0.05) in [0.01, 1]\n  sd(e_y) ~ invgamma(mean = 0.02, sd = 0.01)\n  sd(growth) ~ uniform(lo = 0, hi = 1)\n"
    );
    // `sd(growth)` is `me`, a parameter expression: the prior is on the sd itself.
    let m = checked(&src);
    assert_eq!(m.priors.len(), 4);
    assert_eq!(m.priors[0].target, PriorTarget::Parameter(0));
    let beta = m.priors[0].distribution;
    assert!((beta.mean().unwrap() - 0.6).abs() < 1e-14);
    assert!((beta.sd().unwrap() - 0.2).abs() < 1e-14);
    assert_eq!(
        m.priors[1].distribution,
        Distribution::Gamma {
            shape: 2.0,
            scale: 0.05
        }
    );
    assert_eq!(m.priors[1].truncation, Some((0.01, 1.0)));
    assert_eq!(m.priors[2].target, PriorTarget::ShockSd(0));
    assert_eq!(m.priors[3].target, PriorTarget::MeasurementSd(0));
    round_trip(&m);
    let flat = checked(&format!("{DATA_MODEL}\npriors\n  rho ~ flat()\n"));
    assert_eq!(flat.priors[0].distribution, Distribution::Flat);
}

#[test]
fn predetermined_marker_in_either_order_with_log() {
    let src = "endogenous\n  log predetermined k\n  predetermined log q\n  predetermined z\nequations\n  k[t+1] = k^0.3\n  q[t+1] = q^0.5\n  z[t+1] = 0.5 * z\nsteady\n  k = 1\n  q = 1\n";
    let m = checked(src);
    assert!(m.endogenous.iter().all(|v| v.predetermined));
    assert!(m.endogenous[0].log && m.endogenous[1].log && !m.endogenous[2].log);
    round_trip(&m);
}
