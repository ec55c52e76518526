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
