use nalgebra::DMatrix;

use super::*;
use crate::model::{Control, Expr, Objective, SteadyItem, SteadyKind};
use crate::riccati::{solve_dare, DareParams};
use crate::symbolic::testing::*;

/// Calibration of the sticky-price model (values as in Gali 2015, ch. 3 and 5, from memory:
/// beta 0.99, kappa 0.1275, epsilon 6 so alpha_x = kappa / epsilon; sigma 1; rho 0.5 chosen here).
const BETA: f64 = 0.99;
const KAPPA: f64 = 0.1275;
const ALPHA: f64 = 0.1275 / 6.0;
const SIGMA: f64 = 1.0;
const RHO: f64 = 0.5;
const SD: f64 = 0.01;

/// The sticky-price model with a cost-push AR(1) shock (Clarida, Gali and Gertler 1999, JEL 37;
/// Gali 2015, ch. 5): variables pi, x, i, u; a Taylor rule for i (replaced under optimal policy);
/// loss pi^2 + alpha_x x^2, discount beta.
fn sticky_price() -> Model {
    // params: 0 beta, 1 kappa, 2 sigma, 3 rho, 4 alpha, 5 phi
    let params = [
        ("beta", BETA),
        ("kappa", KAPPA),
        ("sigma", SIGMA),
        ("rho", RHO),
        ("alpha", ALPHA),
        ("phi", 1.5),
    ];
    let eqs = vec![
        // pi = beta pi[t+1] + kappa x + u
        (
            v(0, 0),
            add(add(mul(p(0), v(0, 1)), mul(p(1), v(1, 0))), v(3, 0)),
        ),
        // x = x[t+1] - (1/sigma)(i - pi[t+1])
        (
            v(1, 0),
            sub(v(1, 1), mul(div(n(1.0), p(2)), sub(v(2, 0), v(0, 1)))),
        ),
        // i = phi pi
        (v(2, 0), mul(p(5), v(0, 0))),
        // u = rho u[t-1] + e
        (v(3, 0), add(mul(p(3), v(3, -1)), e(0, 0))),
    ];
    let mut m = model(
        &[("pi", false), ("x", false), ("i", false), ("u", false)],
        &["e"],
        &params,
        eqs,
        vec![],
    );
    for (k, l) in ["supply", "demand", "rule", "costpush"].iter().enumerate() {
        m.equations[k].label = Some(l.to_string());
    }
    m.covariance = DMatrix::from_element(1, 1, SD * SD);
    m.objective = Some(Objective {
        loss: add(pow(v(0, 0), n(2.0)), mul(p(4), pow(v(1, 0), n(2.0)))),
        discount: Some(p(0)),
        controls: vec![Control {
            variable: 2,
            replaces: Some(2),
        }],
    });
    m
}

fn state(space: &crate::solution::StateSpace, name: &str) -> usize {
    space
        .states
        .iter()
        .position(|s| s == name)
        .unwrap_or_else(|| panic!("no state {name} in {:?}", space.states))
}

/// Impulse response of variable `var` to a unit innovation `shock`, periods 0..h.
fn irf(solved: &SolvedModel, var: usize, shock: usize, h: usize) -> Vec<f64> {
    let sp = solved.solution.as_ref().unwrap();
    let mut s = sp.h.column(shock).into_owned();
    let mut out = vec![sp.q[(var, shock)]];
    for _ in 1..h {
        out.push((sp.p.row(var) * &s)[(0, 0)]);
        s = &sp.g * &s;
    }
    out
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol * b.abs().max(1e-300)
}

#[test]
fn discretion_matches_the_closed_form_of_the_sticky_price_model() {
    // Gali (2015, ch. 5, section on discretion); CGG (1999): x = -(kappa/alpha) pi,
    // pi = alpha Psi u, x = -kappa Psi u, Psi = 1 / (kappa^2 + alpha (1 - beta rho)).
    let m = sticky_price();
    let r = solve_regime(
        &m,
        Regime::Discretion,
        &Default::default(),
        &PolicyParams::default(),
    )
    .unwrap();
    let psi = 1.0 / (KAPPA * KAPPA + ALPHA * (1.0 - BETA * RHO));
    let sp = r.solved.solution.as_ref().unwrap();
    assert_eq!(sp.states, vec!["u[t-1]".to_string()]);
    let su = state(sp, "u[t-1]");
    assert!(
        close(sp.q[(0, 0)], ALPHA * psi, 1e-9),
        "pi on e: {}",
        sp.q[(0, 0)]
    );
    assert!(
        close(sp.q[(1, 0)], -KAPPA * psi, 1e-9),
        "x on e: {}",
        sp.q[(1, 0)]
    );
    assert!(close(sp.p[(0, su)], RHO * ALPHA * psi, 1e-9));
    assert!(close(sp.p[(1, su)], -RHO * KAPPA * psi, 1e-9));
    // The targeting rule x = -(kappa/alpha) pi.
    assert!(close(sp.q[(1, 0)], -(KAPPA / ALPHA) * sp.q[(0, 0)], 1e-9));
    // The interest rate from the demand equation: i = E pi' + sigma (E x' - x).
    let i_want = RHO * ALPHA * psi + SIGMA * KAPPA * psi * (1.0 - RHO);
    assert!(
        close(sp.q[(2, 0)], i_want, 1e-9),
        "i on e: {}",
        sp.q[(2, 0)]
    );
    // Expected loss: (alpha^2 + alpha kappa^2) Psi^2 Var(u), Var(u) = sd^2 / (1 - rho^2).
    let var_u = SD * SD / (1.0 - RHO * RHO);
    let want = (ALPHA * ALPHA + ALPHA * KAPPA * KAPPA) * psi * psi * var_u;
    let got = r.expected_loss.unwrap();
    assert!(close(got, want, 1e-9), "expected loss {got} vs {want}");
}

/// Commitment in the timeless perspective (Gali 2015, ch. 5): phat_t = delta phat_{t-1} +
/// delta / (1 - beta delta rho) u_t, delta = (1 - sqrt(1 - 4 beta a^2)) / (2 a beta),
/// a = alpha / (alpha (1 + beta) + kappa^2), x_t = -(alpha... ) namely x_t = -(kappa/alpha) phat_t.
fn commitment_closed_form(h: usize) -> (Vec<f64>, Vec<f64>) {
    let a = ALPHA / (ALPHA * (1.0 + BETA) + KAPPA * KAPPA);
    let delta = (1.0 - (1.0 - 4.0 * BETA * a * a).sqrt()) / (2.0 * a * BETA);
    let mut phat = 0.0;
    let mut pi = Vec::new();
    let mut x = Vec::new();
    for t in 0..h {
        let u = RHO.powi(t as i32);
        let new = delta * phat + delta / (1.0 - BETA * delta * RHO) * u;
        pi.push(new - phat);
        x.push(-(KAPPA / ALPHA) * new);
        phat = new;
    }
    (pi, x)
}

#[test]
fn commitment_matches_the_timeless_closed_form() {
    let m = sticky_price();
    let r = solve_regime(
        &m,
        Regime::Commitment,
        &Default::default(),
        &PolicyParams::default(),
    )
    .unwrap();
    assert_eq!(
        r.multipliers,
        vec!["mult_supply", "mult_demand", "mult_costpush"]
    );
    let sp = r.solved.solution.as_ref().expect("determinate");
    assert!(
        sp.states.iter().any(|s| s == "mult_supply[t-1]"),
        "{:?}",
        sp.states
    );
    let (pi_want, x_want) = commitment_closed_form(40);
    let pi = irf(&r.solved, 0, 0, 40);
    let x = irf(&r.solved, 1, 0, 40);
    for t in 0..40 {
        assert!(
            (pi[t] - pi_want[t]).abs() <= 1e-9 * pi_want[0].abs(),
            "pi at {t}: {} vs {}",
            pi[t],
            pi_want[t]
        );
        assert!(
            (x[t] - x_want[t]).abs() <= 1e-9 * x_want[0].abs(),
            "x at {t}: {} vs {}",
            x[t],
            x_want[t]
        );
    }
    // Expected loss: with the MA(infinity) coefficients of the closed form (unit innovation),
    // E[loss] = sd^2 sum_k (pi_k^2 + alpha x_k^2); 3000 terms leave delta^3000 ~ 0.
    let (pi_ma, x_ma) = commitment_closed_form(3000);
    let want: f64 = SD
        * SD
        * pi_ma
            .iter()
            .zip(&x_ma)
            .map(|(p, x)| p * p + ALPHA * x * x)
            .sum::<f64>();
    let got = r.expected_loss.unwrap();
    assert!(close(got, want, 1e-9), "expected loss {got} vs {want}");
    // Commitment is never worse than discretion or the simple rule.
    let d = solve_regime(
        &m,
        Regime::Discretion,
        &Default::default(),
        &PolicyParams::default(),
    )
    .unwrap();
    let rule = solve_regime(
        &m,
        Regime::Rule,
        &Default::default(),
        &PolicyParams::default(),
    )
    .unwrap();
    assert!(got < d.expected_loss.unwrap());
    assert!(got < rule.expected_loss.unwrap());
}

/// x = a x[t-1] + b u[t-1] + e, loss q x^2 + r u^2, u a control without rule: the regulator.
fn regulator(a: f64, b: f64, q: f64, r: f64) -> Model {
    let eqs = vec![(
        v(0, 0),
        add(add(mul(n(a), v(0, -1)), mul(n(b), v(1, -1))), e(0, 0)),
    )];
    let mut m = model(
        &[("x", false), ("u", false)],
        &["e"],
        &[("beta", 0.95)],
        eqs,
        vec![SteadyItem {
            kind: SteadyKind::Known,
            variable: 1,
            expr: Expr::Number(0.0),
        }],
    );
    m.equations[0].label = Some("law".into());
    m.objective = Some(Objective {
        loss: add(
            mul(n(q), pow(v(0, 0), n(2.0))),
            mul(n(r), pow(v(1, 0), n(2.0))),
        ),
        discount: Some(p(0)),
        controls: vec![Control {
            variable: 1,
            replaces: None,
        }],
    });
    m
}

#[test]
fn on_a_backward_model_both_regimes_are_the_regulator() {
    let (a, b, q, r) = (1.1, 0.5, 1.0, 0.3);
    let m = regulator(a, b, q, r);
    let dare = solve_dare(
        &DMatrix::from_element(1, 1, a),
        &DMatrix::from_element(1, 1, b),
        &DMatrix::from_element(1, 1, q),
        &DMatrix::from_element(1, 1, r),
        None,
        0.95,
        &DareParams::default(),
    )
    .unwrap();
    let f = dare.gain[(0, 0)];
    for regime in [Regime::Commitment, Regime::Discretion] {
        let sol = solve_regime(&m, regime, &Default::default(), &PolicyParams::default()).unwrap();
        let sp = sol.solved.solution.as_ref().unwrap();
        // u_t = -F x_t = -F (a x[t-1] + b u[t-1] + e_t).
        assert!(
            close(sp.q[(1, 0)], -f, 1e-10),
            "{regime:?}: {} vs {}",
            sp.q[(1, 0)],
            -f
        );
        let sx = state(sp, "x[t-1]");
        let su = state(sp, "u[t-1]");
        assert!(close(sp.p[(1, sx)], -f * a, 1e-10), "{regime:?}");
        assert!(close(sp.p[(1, su)], -f * b, 1e-10), "{regime:?}");
        // Expected loss (q + r F^2) Var(x), Var(x) = 1 / (1 - (a - bF)^2) (sd 1).
        let c = a - b * f;
        let want = (q + r * f * f) / (1.0 - c * c);
        let got = sol.expected_loss.unwrap();
        assert!(close(got, want, 1e-10), "{regime:?}: {got} vs {want}");
    }
}

#[test]
fn a_loss_with_a_linear_or_cubic_term_is_refused_naming_it() {
    let mut m = sticky_price();
    // pi^2 + alpha x^2 + 0.1 x: linear in x at the steady state x = 0.
    m.objective.as_mut().unwrap().loss = add(
        add(pow(v(0, 0), n(2.0)), mul(p(4), pow(v(1, 0), n(2.0)))),
        mul(n(0.1), v(1, 0)),
    );
    let err = problem(&m).unwrap_err().to_string();
    assert!(err.contains("linear term in x"), "{err}");
    m.objective.as_mut().unwrap().loss = add(pow(v(0, 0), n(2.0)), pow(v(1, 0), n(3.0)));
    let err = problem(&m).unwrap_err().to_string();
    assert!(err.contains("not quadratic") && err.contains("x"), "{err}");
}

#[test]
fn no_discount_and_no_objective_are_clear_errors() {
    let mut m = sticky_price();
    m.objective.as_mut().unwrap().discount = None;
    assert_eq!(problem(&m).unwrap_err(), PolicyError::NoDiscount);
    m.objective = None;
    assert_eq!(problem(&m).unwrap_err(), PolicyError::NoObjective);
}

#[test]
fn discretion_that_cannot_converge_says_so() {
    let m = sticky_price();
    let prob = problem(&m).unwrap();
    let params = PolicyParams {
        max_iterations: 2,
        ..PolicyParams::default()
    };
    let err = discretion::solve(&m, &prob, &params).unwrap_err();
    assert!(
        matches!(
            err,
            PolicyError::DiscretionNoConvergence { iterations: 2, .. }
        ),
        "{err:?}"
    );
}

/// The timeless plan honours the history the multipliers carry; the plan of period 0 starts
/// them at zero. From the steady state both start from zero multipliers, so their responses to
/// a shock coincide (that is the same state space started at the same point); from a history
/// with a nonzero multiplier of the price-setting equation the timeless plan follows Gali (2015,
/// ch. 5): x_t - x_{t-1} = -(kappa/alpha) pi_t, i.e. phat_t = delta phat_{t-1} without shocks,
/// with phat_{-1} = -(alpha/kappa) x_{-1}, while the period-0 plan stays at the steady state.
#[test]
fn the_timeless_plan_differs_from_the_period_zero_plan_only_through_history() {
    let m = sticky_price();
    let r = solve_regime(
        &m,
        Regime::Commitment,
        &Default::default(),
        &PolicyParams::default(),
    )
    .unwrap();
    let sp = r.solved.solution.as_ref().unwrap();
    let ms = state(sp, "mult_supply[t-1]");
    // The multiplier's link to the gap: FOC_x is 2 alpha x_t + F_sx mu_t = 0 (the demand
    // equation's multiplier is zero), with F_sx the coefficient of x at t in the linearized
    // supply equation (its sign depends on how the equation is written).
    let prob = problem(&m).unwrap();
    let f_sx: f64 = prob
        .linear
        .variable_terms
        .iter()
        .filter(|t| t.equation == 0 && t.variable == 1 && t.offset == 0)
        .map(|t| t.value)
        .sum();
    assert!((f_sx.abs() - KAPPA).abs() < 1e-12, "{f_sx}");
    let mu0 = 0.01;
    let x_prev = -f_sx * mu0 / (2.0 * ALPHA);
    let mut phat = -(ALPHA / KAPPA) * x_prev;
    let a = ALPHA / (ALPHA * (1.0 + BETA) + KAPPA * KAPPA);
    let delta = (1.0 - (1.0 - 4.0 * BETA * a * a).sqrt()) / (2.0 * a * BETA);
    let ns = sp.states.len();
    let mut s = DMatrix::<f64>::zeros(ns, 1);
    s[(ms, 0)] = mu0;
    let mut zero_plan = DMatrix::<f64>::zeros(ns, 1);
    for t in 0..30 {
        let y = &sp.p * &s;
        let new = delta * phat;
        let (pi_want, x_want) = (new - phat, -(KAPPA / ALPHA) * new);
        assert!(
            (y[(0, 0)] - pi_want).abs() <= 1e-9 * x_prev.abs(),
            "pi at {t}: {} vs {pi_want}",
            y[(0, 0)]
        );
        assert!(
            (y[(1, 0)] - x_want).abs() <= 1e-9 * x_prev.abs(),
            "x at {t}: {} vs {x_want}",
            y[(1, 0)]
        );
        phat = new;
        s = &sp.g * &s;
        // The period-0 plan from the steady state: nothing moves without a shock.
        let y0 = &sp.p * &zero_plan;
        assert!(y0.iter().all(|v| *v == 0.0));
        zero_plan = &sp.g * &zero_plan;
    }
    // The two differ at t = 0 from this history.
    let y = &sp.p * {
        let mut s = DMatrix::<f64>::zeros(ns, 1);
        s[(ms, 0)] = mu0;
        s
    };
    assert!(y[(1, 0)].abs() > 1e-3 * x_prev.abs());
}
