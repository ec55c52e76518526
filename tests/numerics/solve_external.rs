//! External checks of the solve pipeline on model text: closed forms from the literature.

use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::model::{check_source, Model};
use saddle::solution::{solve, PreparedModel, SolveOptions, Status, ThresholdSetting};

fn model(src: &str) -> Model {
    match check_source(src) {
        Ok(m) => m,
        Err(d) => panic!("model does not check: {d:?}"),
    }
}

fn harbour() -> Model {
    model(include_str!("../../models/harbour.saddle"))
}

fn param(m: &Model, name: &str) -> f64 {
    m.parameters[m.parameter_index(name).unwrap()].value
}

#[test]
fn harbour_impulse_responses_match_gali_closed_form() {
    // Gali 2015, Monetary Policy, Inflation, and the Business Cycle, 2nd ed., ch. 3: with an
    // AR(1) rule disturbance v (persistence rho) the method of undetermined coefficients gives
    //   gap = -(1 - beta rho) L v,  infl = -kappa L v,
    //   L = 1 / ((1 - beta rho)(sigma (1 - rho) + phi_y) + kappa (phi_pi - rho)).
    // Several calibrations, set the way a user would (derived kappa recomputed).
    for set in [
        vec![],
        vec![("rho", 0.9), ("phi_y", 0.5)],
        vec![
            ("theta", 0.5),
            ("sigma", 1.0),
            ("phi_pi", 3.0),
            ("rho", 0.0),
        ],
    ] {
        let overrides: Vec<(String, f64)> = set.iter().map(|(n, v)| (n.to_string(), *v)).collect();
        let m = harbour().with_overrides(&overrides).unwrap();
        let (beta, sigma, kappa) = (param(&m, "beta"), param(&m, "sigma"), param(&m, "kappa"));
        let (phi_pi, phi_y, rho) = (param(&m, "phi_pi"), param(&m, "phi_y"), param(&m, "rho"));
        let l = 1.0 / ((1.0 - beta * rho) * (sigma * (1.0 - rho) + phi_y) + kappa * (phi_pi - rho));
        let solved = solve(&m, &SolveOptions::default()).unwrap();
        assert_eq!(solved.status, Status::Determinate);
        let shock = m.shock_index("e_rate").unwrap();
        let r = impulse_responses(&solved, &[shock], ImpulseSize::Unit, 12).unwrap();
        let resp = &r.responses[0];
        let (gap, infl, drift) = (0, 1, 3);
        for h in 0..=12 {
            let v = rho.powi(h as i32);
            assert!((resp[(drift, h)] - v).abs() < 1e-12);
            assert!(
                (resp[(gap, h)] + (1.0 - beta * rho) * l * v).abs() < 1e-9,
                "{set:?} h {h}"
            );
            assert!(
                (resp[(infl, h)] + kappa * l * v).abs() < 1e-9,
                "{set:?} h {h}"
            );
        }
        // One standard deviation is the file's sd(e_rate) = 0.25.
        let r = impulse_responses(&solved, &[shock], ImpulseSize::OneSd, 0).unwrap();
        assert!((r.responses[0][(drift, 0)] - 0.25).abs() < 1e-15);
    }
}

#[test]
fn determinacy_boundary_of_bullard_and_mitra() {
    // Bullard and Mitra 2002 (JME 49, "Learning about monetary policy rules"), rule reacting to
    // current inflation and gap: determinate exactly when kappa (phi_pi - 1) + (1 - beta) phi_y > 0.
    // Both sides of the boundary, for several calibrations.
    let base = harbour();
    for (theta, beta, phi_y) in [
        (0.7, 0.99, 0.2),
        (0.5, 0.99, 0.0),
        (0.8, 0.95, 1.0),
        (0.3, 0.9, 0.5),
    ] {
        let m = base
            .with_overrides(&[
                ("theta".into(), theta),
                ("beta".into(), beta),
                ("phi_y".into(), phi_y),
            ])
            .unwrap();
        let kappa = param(&m, "kappa");
        let boundary = 1.0 - (1.0 - beta) * phi_y / kappa;
        let prepared = PreparedModel::new(&m).unwrap();
        for (delta, expect) in [
            (1e-3, Status::Determinate),
            (0.3, Status::Determinate),
            (-1e-3, Status::Indeterminate),
            (-0.3, Status::Indeterminate),
        ] {
            let point = m
                .with_overrides(&[("phi_pi".into(), boundary + delta)])
                .unwrap();
            let (s, _) = prepared.solve(&point, &SolveOptions::default()).unwrap();
            assert_eq!(
                s.status, expect,
                "theta {theta} beta {beta} phi_y {phi_y} delta {delta}"
            );
        }
    }
}

#[test]
fn brock_mirman_exact_policy_and_steady_state() {
    // Brock and Mirman 1972 (JET 4, "Optimal economic growth and uncertainty: the discounted
    // case"): log utility, Cobb-Douglas output and full depreciation give k' = alpha beta z k^alpha
    // exactly, so in log deviations k = alpha k[t-1] + rho z[t-1] + e_z (coefficient alpha on
    // lagged capital, impact one) and the steady state is k = (alpha beta)^(1/(1-alpha)).
    let m = model(include_str!(
        "../../models/island_growth_full_depreciation.saddle"
    ));
    let (alpha, beta, rho) = (param(&m, "alpha"), param(&m, "beta"), param(&m, "rho"));
    let s = solve(&m, &SolveOptions::default()).unwrap();
    let k = s.variables.iter().position(|v| v == "k").unwrap();
    let kss = (alpha * beta).powf(1.0 / (1.0 - alpha));
    assert!((s.steady_state[k] - kss).abs() < 1e-12 * kss);
    let x = s.solution.as_ref().unwrap();
    let ik = x.states.iter().position(|v| v == "k[t-1]").unwrap();
    let iz = x.states.iter().position(|v| v == "z[t-1]").unwrap();
    assert!((x.p[(k, ik)] - alpha).abs() < 1e-10);
    assert!((x.p[(k, iz)] - rho).abs() < 1e-10);
    assert!((x.q[(k, 0)] - 1.0).abs() < 1e-10);
    // The same model without the `steady` section: Newton must find the same point.
    let src = include_str!("../../models/island_growth_full_depreciation.saddle");
    let cut = src.find("\nsteady").unwrap();
    let m2 = model(&src[..cut]);
    let s2 = solve(&m2, &SolveOptions::default()).unwrap();
    assert!((s2.steady_state[k] - kss).abs() < 1e-10 * kss);
}

const FORWARD_PRICE: &str = "
endogenous
  p, m
exogenous
  e
parameters
  a = 0.9
  rho = 0.7
equations
  price: p = a * p[t+1] + m
  cost:  m = rho * m[t-1] + e
";

#[test]
fn forward_price_solution_and_failures() {
    // Forward iteration (common practice): p = m / (1 - a rho) when |a| < 1 and |rho| < 1.
    let m = model(FORWARD_PRICE);
    let s = solve(&m, &SolveOptions::default()).unwrap();
    let x = s.solution.unwrap();
    assert!((x.q[(0, 0)] - 1.0 / (1.0 - 0.9 * 0.7)).abs() < 1e-12);
    // a > 1: indeterminate.
    let s = solve(
        &m.with_overrides(&[("a".into(), 1.1)]).unwrap(),
        &SolveOptions::default(),
    )
    .unwrap();
    assert_eq!(s.status, Status::Indeterminate);
    assert!(s.solution.is_none() && s.diagnosis.is_some());
    // A purely backward root above the threshold: no stable solution.
    let s = solve(
        &m.with_overrides(&[("rho".into(), 1.2)]).unwrap(),
        &SolveOptions::default(),
    )
    .unwrap();
    assert_eq!(s.status, Status::NoStableSolution);
    let d = s.diagnosis.unwrap();
    assert!(d.contains("1 too many") && d.contains("cost"), "{d}");
    // The same root under a threshold above it (discount 0.5: threshold sqrt 2) is stable again,
    // while the price's root 1/a = 2 stays outside.
    let opts = SolveOptions {
        threshold: ThresholdSetting::Discount(0.5),
        boundary_stable: true,
    };
    let m2 = m
        .with_overrides(&[("rho".into(), 1.2), ("a".into(), 0.5)])
        .unwrap();
    let s = solve(&m2, &opts).unwrap();
    assert_eq!(s.status, Status::Determinate);
    assert!((s.threshold - 2f64.sqrt()).abs() < 1e-15);
}

#[test]
fn boundary_roots_follow_the_setting_and_are_warned_about() {
    // rho exactly at the threshold: on the boundary, stable by default, unstable on request.
    let m = model(FORWARD_PRICE)
        .with_overrides(&[("rho".into(), 1.0)])
        .unwrap();
    let s = solve(&m, &SolveOptions::default()).unwrap();
    assert_eq!(s.status, Status::Determinate);
    assert!(
        s.warnings.iter().any(|w| w.contains("boundary")),
        "{:?}",
        s.warnings
    );
    let s = solve(
        &m,
        &SolveOptions {
            threshold: ThresholdSetting::FromModel,
            boundary_stable: false,
        },
    )
    .unwrap();
    assert_eq!(s.status, Status::NoStableSolution);
}

#[test]
fn two_period_lead_and_lagged_innovation_from_text() {
    // p = a E p[t+2] + m, m = rho m[t-1] + e[t-1]; undetermined coefficients (common practice):
    // p = c1 m + c2 e with c1 = 1/(1 - a rho^2), c2 = a rho c1.
    let m = model(
        "endogenous\n p, m\nexogenous\n e\nparameters\n a = 0.8\n rho = 0.6\nequations\n p = a * p[t+2] + m\n m = rho * m[t-1] + e[t-1]\n",
    );
    let s = solve(&m, &SolveOptions::default()).unwrap();
    let x = s.solution.unwrap();
    let c1 = 1.0 / (1.0 - 0.8 * 0.36);
    assert!((x.q[(0, 0)] - 0.8 * 0.6 * c1).abs() < 1e-12);
    let ie = x.states.iter().position(|v| v == "e[t-1]").unwrap();
    assert!((x.p[(0, ie)] - c1).abs() < 1e-12);
}

#[test]
fn demo_models_solve_with_small_residuals() {
    for src in [
        include_str!("../../models/harbour.saddle"),
        include_str!("../../models/ferry.saddle"),
        include_str!("../../models/island_growth.saddle"),
        include_str!("../../models/island_growth_full_depreciation.saddle"),
    ] {
        let m = model(src);
        let d = PreparedModel::new(&m)
            .unwrap()
            .solve_detailed(&m, &SolveOptions::default())
            .unwrap();
        assert_eq!(d.solved.status, Status::Determinate, "{:?}", m.title);
        assert!(
            d.max_residual.unwrap() < 1e-10,
            "{:?}: {:?}",
            m.title,
            d.max_residual
        );
    }
}

#[test]
fn static_and_shockless_models_solve() {
    // Purely static: y = 2 e, w = y^2 + 1 (nonlinear, steady state w = 1). No dynamics at all.
    let m = model("endogenous\n y, w\nexogenous\n e\nequations\n y = 2 * e\n w = y^2 + 1\n");
    let s = solve(&m, &SolveOptions::default()).unwrap();
    assert_eq!(s.status, Status::Determinate);
    assert!(s.roots.is_empty());
    let x = s.solution.unwrap();
    assert!(x.states.is_empty());
    assert!((x.q[(0, 0)] - 2.0).abs() < 1e-15 && x.q[(1, 0)].abs() < 1e-15);
    assert!((s.steady_state[1] - 1.0).abs() < 1e-14);
    // No innovations: a deterministic saddle path.
    let m =
        model("endogenous\n k, q\nequations\n k = 0.5 * k[t-1] + 0.1 * q\n q = 0.5 * q[t+1] + k\n");
    let s = solve(&m, &SolveOptions::default()).unwrap();
    assert_eq!(s.status, Status::Determinate);
    assert_eq!(s.solution.unwrap().q.ncols(), 0);
}

#[test]
fn rank_failure_is_reported_separately() {
    // An explosive state nothing can offset, next to a stable forward variable: the counts match
    // (one stable root, one predetermined variable) but the stable direction does not involve the
    // state (Blanchard and Kahn 1980 rank condition; common practice example).
    let m = model(
        "endogenous\n k, x\nexogenous\n e\nequations\n k = 2 * k[t-1] + e\n x[t+1] = 0.5 * x\n",
    );
    let s = solve(&m, &SolveOptions::default()).unwrap();
    assert_eq!(s.status, Status::RankFailure);
    assert_eq!(s.counts.unstable, s.counts.forward_looking);
    assert!(s.solution.is_none());
    assert!(s.diagnosis.unwrap().contains("Rank condition fails"));
}

#[test]
fn file_options_set_the_threshold_and_command_line_overrides_them() {
    // rho = 1.05 is explosive at threshold 1 but stable at 1/sqrt(0.9) = 1.054...
    let src = "endogenous\n p, m\nexogenous\n e\nparameters\n a = 0.5\n rho = 1.05\n b = 0.9\nequations\n p = a * p[t+1] + m\n m = rho * m[t-1] + e\noptions\n discount = b\n horizon = 5\n";
    let m = model(src);
    let s = solve(&m, &SolveOptions::default()).unwrap();
    assert!((s.threshold - 1.0 / 0.9f64.sqrt()).abs() < 1e-15);
    assert_eq!(s.status, Status::Determinate);
    let s = solve(
        &m,
        &SolveOptions {
            threshold: ThresholdSetting::Explicit(1.0),
            boundary_stable: true,
        },
    )
    .unwrap();
    assert_eq!(s.status, Status::NoStableSolution);
    // A threshold that evaluates to nonsense is an error, not a silent default (the front end
    // refuses such an override; a library caller editing values directly gets the solver's error).
    assert!(m.with_overrides(&[("b".into(), -1.0)]).is_err());
    let mut bad = m.clone();
    let i = bad.parameter_index("b").unwrap();
    bad.parameters[i].value = -1.0;
    let err = solve(&bad, &SolveOptions::default()).unwrap_err();
    assert!(err.to_string().contains("threshold"), "{err}");
}

/// `n` copies of a state k_i and a forward variable x_i, written as model text.
fn many_pairs(n: usize, k_root: f64) -> Model {
    let mut s = String::from("endogenous\n");
    for i in 0..n {
        s.push_str(&format!(" k{i}, x{i}\n"));
    }
    s.push_str("exogenous\n e\nequations\n");
    for i in 0..n {
        let j = (i + 1) % n;
        if k_root < 1.0 {
            // Determinate: stable states, forward variables with root 1/0.5 = 2.
            s.push_str(&format!(
                " k{i} = {k_root} * k{i}[t-1] + 0.05 * k{j}[t-1] + e\n"
            ));
            s.push_str(&format!(" x{i} = 0.5 * x{i}[t+1] + k{i}\n"));
        } else {
            // Explosive states nothing offsets, stable forward dynamics: counts match, rank fails.
            s.push_str(&format!(" k{i} = {k_root} * k{i}[t-1] + e\n"));
            s.push_str(&format!(" x{i}[t+1] = 0.5 * x{i} + 0.01 * x{j}\n"));
        }
    }
    model(&s)
}

#[test]
fn large_models_use_the_estimated_rank_condition_correctly() {
    // 70 states: above the exact-SVD limit of 60.
    let d = {
        let m = many_pairs(70, 0.6);
        PreparedModel::new(&m)
            .unwrap()
            .solve_detailed(&m, &SolveOptions::default())
            .unwrap()
    };
    assert_eq!(d.solved.status, Status::Determinate);
    assert!(d.max_residual.unwrap() < 1e-10);
    let s = solve(&many_pairs(70, 2.0), &SolveOptions::default()).unwrap();
    assert_eq!(s.status, Status::RankFailure, "{:?}", s.diagnosis);
}
