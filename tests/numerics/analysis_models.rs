//! Checks on the demo economy through the whole pipeline (front end, solver, analysis): the
//! determinacy boundary of a sweep and closed-form moments.

use std::path::Path;

use saddle::analysis::moments::moments;
use saddle::analysis::sweep::{sweep_model, SweepAxis};
use saddle::model::check::check_source;
use saddle::model::Model;
use saddle::solution::{PreparedModel, SolveOptions};

fn harbour() -> Model {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/harbour.saddle");
    let text = std::fs::read_to_string(path).unwrap();
    check_source(&text).unwrap_or_else(|d| panic!("{d:?}"))
}

fn param(m: &Model, name: &str) -> f64 {
    m.parameters[m.parameter_index(name).unwrap()].value
}

/// kappa (phi_pi - 1) + (1 - beta) phi_y: positive exactly when the Taylor principle holds and
/// the equilibrium is determinate (Bullard and Mitra 2002, JME 49, Proposition 1, for the
/// contemporaneous rule with non-negative coefficients).
fn bullard_mitra(m: &Model, phi_pi: f64, phi_y: f64) -> f64 {
    param(m, "kappa") * (phi_pi - 1.0) + (1.0 - param(m, "beta")) * phi_y
}

#[test]
fn sweep_over_phi_pi_flips_where_bullard_mitra_says() {
    let model = harbour();
    let prepared = PreparedModel::new(&model).unwrap();
    let values: Vec<f64> = (0..=300).map(|i| i as f64 * 0.01).collect();
    let axes = vec![SweepAxis {
        name: "phi_pi".into(),
        values: values.clone(),
    }];
    let r = sweep_model(
        &model,
        &prepared,
        &SolveOptions::default(),
        &axes,
        &|_, _| {},
    )
    .unwrap();
    let phi_y = param(&model, "phi_y");
    // The boundary: phi_pi* = 1 - (1 - beta) phi_y / kappa (about 0.9944 at the calibration).
    let star = 1.0 - (1.0 - param(&model, "beta")) * phi_y / param(&model, "kappa");
    assert!(star > 0.98 && star < 1.0);
    let mut flips = 0;
    for (k, p) in r.points.iter().enumerate() {
        let c = bullard_mitra(&model, values[k], phi_y);
        let want = if c > 0.0 {
            "determinate"
        } else {
            "indeterminate"
        };
        assert_eq!(
            p.status.as_str(),
            want,
            "phi_pi = {}: condition {c}",
            values[k]
        );
        if k > 0 && r.points[k - 1].status != p.status {
            flips += 1;
            assert!(values[k - 1] < star && star < values[k]);
        }
    }
    assert_eq!(flips, 1);
}

#[test]
fn two_parameter_map_follows_the_condition() {
    let model = harbour();
    let prepared = PreparedModel::new(&model).unwrap();
    let axes = vec![
        SweepAxis {
            name: "phi_pi".into(),
            values: (0..25).map(|i| 0.9 + i as f64 * 0.01).collect(),
        },
        SweepAxis {
            name: "phi_y".into(),
            values: (0..21).map(|i| i as f64 * 0.5).collect(),
        },
    ];
    let r = sweep_model(
        &model,
        &prepared,
        &SolveOptions::default(),
        &axes,
        &|_, _| {},
    )
    .unwrap();
    let mut checked = 0;
    for p in &r.points {
        let c = bullard_mitra(&model, p.values[0], p.values[1]);
        // Points within 1e-9 of the boundary are left out: there a root sits on the unit circle.
        if c.abs() < 1e-9 {
            continue;
        }
        let want = if c > 0.0 {
            "determinate"
        } else {
            "indeterminate"
        };
        assert_eq!(p.status.as_str(), want, "{:?}: condition {c}", p.values);
        checked += 1;
    }
    assert!(checked > 500);
    assert!(r.points.iter().any(|p| p.status.as_str() == "determinate"));
    assert!(r
        .points
        .iter()
        .any(|p| p.status.as_str() == "indeterminate"));
}

#[test]
fn harbour_moments_match_undetermined_coefficients() {
    // With drift_t = rho drift_{t-1} + e_rate and i.i.d. e_cost, the solution is
    // gap = a_d drift_t + a_c e_cost, infl = b_d drift_t + b_c e_cost, by the method of
    // undetermined coefficients (as in Gali 2008, Monetary Policy, Inflation, and the Business
    // Cycle, ch. 3, from memory): b_d = kappa a_d / (1 - beta rho),
    // a_d = -1 / ((1 - rho) sigma + phi_y + (phi_pi - rho) kappa / (1 - beta rho)),
    // a_c = -phi_pi / (sigma + phi_y + phi_pi kappa), b_c = 1 + kappa a_c.
    // Then Var gap = a_d^2 Var drift + a_c^2 s_c^2, Var drift = s_r^2 / (1 - rho^2), and the
    // lag-k autocovariance of gap is a_d^2 rho^k Var drift.
    let model = harbour();
    let prepared = PreparedModel::new(&model).unwrap();
    let (solved, _) = prepared.solve(&model, &SolveOptions::default()).unwrap();
    let m = moments(&solved, 3, &[1]).unwrap();
    let (beta, sigma, kappa) = (
        param(&model, "beta"),
        param(&model, "sigma"),
        param(&model, "kappa"),
    );
    let (phi_pi, phi_y, rho) = (
        param(&model, "phi_pi"),
        param(&model, "phi_y"),
        param(&model, "rho"),
    );
    let (s_r, s_c) = (0.25, 0.10);
    let a_d = -1.0 / ((1.0 - rho) * sigma + phi_y + (phi_pi - rho) * kappa / (1.0 - beta * rho));
    let b_d = kappa * a_d / (1.0 - beta * rho);
    let a_c = -phi_pi / (sigma + phi_y + phi_pi * kappa);
    let b_c = 1.0 + kappa * a_c;
    let vd = s_r * s_r / (1.0 - rho * rho);
    let vgap = a_d * a_d * vd + a_c * a_c * s_c * s_c;
    let vinf = b_d * b_d * vd + b_c * b_c * s_c * s_c;
    let close = |x: f64, y: f64| (x - y).abs() <= 1e-9 * y.abs().max(1e-12);
    assert!(
        close(m.std[0].unwrap().powi(2), vgap),
        "{} vs {vgap}",
        m.std[0].unwrap().powi(2)
    );
    assert!(close(m.std[1].unwrap().powi(2), vinf));
    assert!(close(m.std[3].unwrap().powi(2), vd));
    for k in 1..=3 {
        let want = a_d * a_d * rho.powi(k) * vd / vgap;
        assert!(close(m.autocorrelation[0][k as usize - 1], want));
    }
    let share_rate = a_d * a_d * vd / vgap;
    assert!(close(m.variance_decomposition[0][0], share_rate));
    let cov_gi = a_d * b_d * vd + a_c * b_c * s_c * s_c;
    assert!(close(m.correlation[(0, 1)], cov_gi / (vgap * vinf).sqrt()));
}
