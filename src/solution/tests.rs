use super::*;
use crate::symbolic::testing::*;

/// The spec's three-equation economy, with parameters in the order
/// beta, sigma, kappa, phi_pi, phi_y, rho.
pub(crate) fn harbour(
    beta: f64,
    sigma: f64,
    kappa: f64,
    phi_pi: f64,
    phi_y: f64,
    rho: f64,
) -> crate::model::Model {
    let (gap, infl, rate, drift) = (0, 1, 2, 3);
    model(
        &[
            ("gap", false),
            ("infl", false),
            ("rate", false),
            ("drift", false),
        ],
        &["e_rate", "e_cost"],
        &[
            ("beta", beta),
            ("sigma", sigma),
            ("kappa", kappa),
            ("phi_pi", phi_pi),
            ("phi_y", phi_y),
            ("rho", rho),
        ],
        vec![
            (
                v(gap, 0),
                sub(v(gap, 1), div(sub(v(rate, 0), v(infl, 1)), p(1))),
            ),
            (
                v(infl, 0),
                add(add(mul(p(0), v(infl, 1)), mul(p(2), v(gap, 0))), e(1, 0)),
            ),
            (
                v(rate, 0),
                add(
                    add(mul(p(3), v(infl, 0)), mul(p(4), v(gap, 0))),
                    v(drift, 0),
                ),
            ),
            (v(drift, 0), add(mul(p(5), v(drift, -1)), e(0, 0))),
        ],
        vec![],
    )
}

#[test]
fn harbour_matches_the_closed_form() {
    // Gali 2015, Monetary Policy, Inflation, and the Business Cycle, 2nd ed., ch. 3 (method of
    // undetermined coefficients for an AR(1) monetary policy shock v):
    //   gap = -(1 - beta rho) L v,  infl = -kappa L v,
    //   L = 1 / ((1 - beta rho)(sigma (1 - rho) + phi_y) + kappa (phi_pi - rho)).
    let (beta, sigma, kappa, phi_pi, phi_y, rho) = (0.99, 1.5, 0.3, 1.6, 0.2, 0.6);
    let m = harbour(beta, sigma, kappa, phi_pi, phi_y, rho);
    let prepared = PreparedModel::new(&m).unwrap();
    let d = prepared
        .solve_detailed(&m, &SolveOptions::default())
        .unwrap();
    assert_eq!(
        d.solved.status,
        Status::Determinate,
        "{:?}",
        d.solved.diagnosis
    );
    let s = d.solved.solution.as_ref().unwrap();
    assert_eq!(s.states, vec!["drift[t-1]".to_string()]);
    let l = 1.0 / ((1.0 - beta * rho) * (sigma * (1.0 - rho) + phi_y) + kappa * (phi_pi - rho));
    // y = P drift[t-1] + Q e with drift = rho drift[t-1] + e_rate.
    let gap_v = -(1.0 - beta * rho) * l;
    let infl_v = -kappa * l;
    assert!(
        (s.q[(0, 0)] - gap_v).abs() < 1e-12,
        "{} vs {gap_v}",
        s.q[(0, 0)]
    );
    assert!((s.q[(1, 0)] - infl_v).abs() < 1e-12);
    assert!((s.p[(0, 0)] - gap_v * rho).abs() < 1e-12);
    assert!((s.p[(1, 0)] - infl_v * rho).abs() < 1e-12);
    assert!((s.g[(0, 0)] - rho).abs() < 1e-14 && (s.h[(0, 0)] - 1.0).abs() < 1e-14);
    assert!(d.max_residual.unwrap() < 1e-12);
    // Eliminating the static rate equation and keeping it give the same solution.
    let kept = PreparedModel::new(&m)
        .unwrap()
        .with_static_treatment(crate::canonical::StaticTreatment::Keep);
    let dk = kept.solve_detailed(&m, &SolveOptions::default()).unwrap();
    let sk = dk.solved.solution.as_ref().unwrap();
    assert!((&sk.p - &s.p).amax() < 1e-12 && (&sk.q - &s.q).amax() < 1e-12);
    assert_eq!(dk.solved.roots.iter().filter(|r| r.infinite).count(), 1);
    assert_eq!(d.solved.roots.len() + 1, dk.solved.roots.len());
}

#[test]
fn harbour_determinacy_boundary_bullard_mitra() {
    // Bullard and Mitra 2002 (JME 49), contemporaneous rule: determinate iff
    // kappa (phi_pi - 1) + (1 - beta) phi_y > 0.
    for &(beta, sigma, kappa, phi_y) in &[
        (0.99, 1.0, 0.024, 0.0),
        (0.99, 1.5, 0.3, 0.5),
        (0.95, 2.0, 0.1, 0.125),
    ] {
        let boundary = 1.0 - (1.0 - beta) * phi_y / kappa;
        for (phi_pi, expect) in [
            (boundary + 0.02, Status::Determinate),
            (boundary - 0.02, Status::Indeterminate),
        ] {
            let m = harbour(beta, sigma, kappa, phi_pi, phi_y, 0.5);
            let s = solve(&m, &SolveOptions::default()).unwrap();
            assert_eq!(
                s.status, expect,
                "beta {beta} kappa {kappa} phi_y {phi_y} phi_pi {phi_pi}: {:?}",
                s.diagnosis
            );
            if expect == Status::Indeterminate {
                let d = s.diagnosis.unwrap();
                assert!(d.contains("1 too few"), "{d}");
                assert!(d.contains("moves mostly"), "{d}");
            }
        }
    }
}

fn solve_default(m: &crate::model::Model) -> SolveDetails {
    PreparedModel::new(m)
        .unwrap()
        .solve_detailed(m, &SolveOptions::default())
        .unwrap()
}

#[test]
fn brock_mirman_policy_is_exactly_log_linear() {
    // Brock and Mirman 1972 (JET 4): log utility, Cobb-Douglas, full depreciation give
    // k_t = alpha beta exp(z_t) k_{t-1}^alpha exactly, so in logs khat = alpha khat[t-1] + z and
    // with z = rho z[t-1] + e: coefficient alpha on k[t-1], rho on z[t-1], impact one.
    // Consumption is the constant share (1 - alpha beta) of output: the same coefficients.
    let (alpha, beta, rho) = (0.33, 0.96, 0.9);
    let m = model(
        &[("k", true), ("c", true), ("z", false)],
        &["e"],
        &[("alpha", alpha), ("beta", beta), ("rho", rho)],
        vec![
            (
                div(n(1.0), v(1, 0)),
                div(
                    mul(
                        mul(
                            mul(p(1), p(0)),
                            Expr::Call(crate::model::Function::Exp, Box::new(v(2, 1))),
                        ),
                        pow(v(0, 0), sub(p(0), n(1.0))),
                    ),
                    v(1, 1),
                ),
            ),
            (
                add(v(1, 0), v(0, 0)),
                mul(
                    Expr::Call(crate::model::Function::Exp, Box::new(v(2, 0))),
                    pow(v(0, -1), p(0)),
                ),
            ),
            (v(2, 0), add(mul(p(2), v(2, -1)), e(0, 0))),
        ],
        vec![],
    );
    let d = solve_default(&m);
    let s = d.solved.solution.as_ref().unwrap();
    let kss = (alpha * beta).powf(1.0 / (1.0 - alpha));
    assert!((d.solved.steady_state[0] - kss).abs() < 1e-12 * kss);
    let ik = s.states.iter().position(|x| x == "k[t-1]").unwrap();
    let iz = s.states.iter().position(|x| x == "z[t-1]").unwrap();
    for row in [0, 1] {
        assert!((s.p[(row, ik)] - alpha).abs() < 1e-10, "{}", s.p);
        assert!((s.p[(row, iz)] - rho).abs() < 1e-10);
        assert!((s.q[(row, 0)] - 1.0).abs() < 1e-10);
    }
    assert!(d.max_residual.unwrap() < 1e-10);
}

use crate::model::Expr;

fn forward_price(a: f64, rho: f64) -> crate::model::Model {
    // p = a E p[t+1] + m,  m = rho m[t-1] + e
    model(
        &[("p", false), ("m", false)],
        &["e"],
        &[("a", a), ("rho", rho)],
        vec![
            (v(0, 0), add(mul(p(0), v(0, 1)), v(1, 0))),
            (v(1, 0), add(mul(p(1), v(1, -1)), e(0, 0))),
        ],
        vec![],
    )
}

#[test]
fn forward_price_closed_form_and_failures() {
    // Forward solution of p = a E p' + m with AR(1) m: p = m / (1 - a rho) (common practice:
    // iterate forward, E_t m_{t+k} = rho^k m_t, sum the geometric series).
    let (a, rho) = (0.9, 0.7);
    let d = solve_default(&forward_price(a, rho));
    let s = d.solved.solution.unwrap();
    assert!((s.q[(0, 0)] - 1.0 / (1.0 - a * rho)).abs() < 1e-12);
    assert!((s.p[(0, 0)] - rho / (1.0 - a * rho)).abs() < 1e-12);
    // a > 1: the root 1/a of the price equation is stable too: indeterminate.
    let d = solve_default(&forward_price(1.25, rho));
    assert_eq!(d.solved.status, Status::Indeterminate);
    assert!(
        d.solved
            .diagnosis
            .as_ref()
            .unwrap()
            .contains("moves mostly p"),
        "{:?}",
        d.solved.diagnosis
    );
    // A backward root above the threshold: no stable solution.
    let d = solve_default(&forward_price(0.5, 1.5));
    assert_eq!(d.solved.status, Status::NoStableSolution);
    let text = d.solved.diagnosis.unwrap();
    assert!(
        text.contains("1 too many") && text.contains("1.5000"),
        "{text}"
    );
    assert!(text.contains("comes mostly from equation 2"), "{text}");
}

#[test]
fn two_period_lead_and_lagged_innovation() {
    // p = a E p[t+2] + m,  m = rho m[t-1] + e[t-1]. Undetermined coefficients (common practice):
    // p = c1 m + c2 e with c1 = 1 / (1 - a rho^2), c2 = a rho c1.
    let (a, rho) = (0.8, 0.6);
    let m = model(
        &[("p", false), ("m", false)],
        &["e"],
        &[("a", a), ("rho", rho)],
        vec![
            (v(0, 0), add(mul(p(0), v(0, 2)), v(1, 0))),
            (v(1, 0), add(mul(p(1), v(1, -1)), e(0, -1))),
        ],
        vec![],
    );
    let d = solve_default(&m);
    let s = d.solved.solution.as_ref().unwrap();
    assert_eq!(s.states, vec!["m[t-1]".to_string(), "e[t-1]".to_string()]);
    let c1 = 1.0 / (1.0 - a * rho * rho);
    let c2 = a * rho * c1;
    assert!((s.p[(0, 0)] - c1 * rho).abs() < 1e-12);
    assert!((s.p[(0, 1)] - c1).abs() < 1e-12);
    assert!((s.q[(0, 0)] - c2).abs() < 1e-12, "{}", s.q);
    assert!((s.p[(1, 0)] - rho).abs() < 1e-12 && (s.p[(1, 1)] - 1.0).abs() < 1e-12);
    assert!(s.q[(1, 0)].abs() < 1e-12);
    assert!(d.max_residual.unwrap() < 1e-12);
}

#[test]
fn singular_pencil_is_a_clear_error() {
    // x[t+1] = y and 2 x[t+1] = 2 y: det(B - zA) vanishes for every z.
    let m = model(
        &[("x", false), ("y", false)],
        &[],
        &[],
        vec![
            (v(0, 1), v(1, 0)),
            (mul(n(2.0), v(0, 1)), mul(n(2.0), v(1, 0))),
        ],
        vec![],
    );
    let err = PreparedModel::new(&m)
        .unwrap()
        .solve(&m, &SolveOptions::default())
        .unwrap_err();
    // Both variables appear in both equations: none stands out.
    assert!(
        matches!(&err, SolveError::SingularPencil { absent } if absent.is_empty()),
        "{err}"
    );
    assert!(err.to_string().contains("singular"));
    assert!(err.to_string().contains("every variable"), "{err}");
}

#[test]
fn random_models_with_planted_roots() {
    use rand_chacha::rand_core::{RngCore, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let mut unif = move || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    for trial in 0..20 {
        let nb = 1 + trial % 3;
        let nf = 1 + (trial / 3) % 3;
        let nn = nb + nf;
        // Planted roots: stable in (-0.9, 0.9), unstable with modulus in (1.2, 3).
        let mut lambda: Vec<f64> = (0..nb).map(|_| 1.8 * unif() - 0.9).collect();
        lambda.extend((0..nf).map(|_| {
            let m = 1.2 + 1.8 * unif();
            if unif() < 0.3 {
                -m
            } else {
                m
            }
        }));
        let vm = nalgebra::DMatrix::from_fn(nn, nn, |i, j| {
            (if i == j { 1.0 } else { 0.0 }) + 0.4 * (2.0 * unif() - 1.0)
        });
        let vinv = vm.clone().try_inverse().unwrap();
        // Every other trial with two or more forward variables plants a complex pair
        // r e^{+-i theta} among the unstable roots (a rotation-scaling block of D).
        let mut d = nalgebra::DMatrix::from_diagonal(&nalgebra::DVector::from_vec(lambda.clone()));
        let mut planted: Vec<(f64, f64)> = lambda.iter().map(|&l| (l, 0.0)).collect();
        if nf >= 2 && trial % 2 == 0 {
            let r = 1.3 + unif();
            let theta = 0.3 + 2.0 * unif();
            let (a, b) = (r * theta.cos(), r * theta.sin());
            d[(nb, nb)] = a;
            d[(nb + 1, nb + 1)] = a;
            d[(nb, nb + 1)] = -b;
            d[(nb + 1, nb)] = b;
            planted[nb] = (a, b);
            planted[nb + 1] = (a, -b);
        }
        let mm = &vm * &d * &vinv;
        // k_i = sum_j M_ij w_j[t-1] + e_i;  x_i[t+1] = sum_j M_(nb+i),j w_j
        let mut eqs = Vec::new();
        let mut params = Vec::new();
        let mut pi = 0;
        let mut param = |val: f64, params: &mut Vec<(String, f64)>| {
            params.push((format!("m{pi}"), val));
            pi += 1;
            p(pi - 1)
        };
        for i in 0..nn {
            let backward = i < nb;
            let mut rhs = if backward { e(i, 0) } else { n(0.0) };
            for j in 0..nn {
                let c = param(mm[(i, j)], &mut params);
                let w = if backward { v(j, -1) } else { v(j, 0) };
                rhs = add(rhs, mul(c, w));
            }
            let lhs = if backward { v(i, 0) } else { v(i, 1) };
            eqs.push((lhs, rhs));
        }
        let names: Vec<String> = (0..nn).map(|i| format!("w{i}")).collect();
        let vars: Vec<(&str, bool)> = names.iter().map(|s| (s.as_str(), false)).collect();
        let shock_names: Vec<String> = (0..nb).map(|i| format!("e{i}")).collect();
        let shocks: Vec<&str> = shock_names.iter().map(|s| s.as_str()).collect();
        let pr: Vec<(&str, f64)> = params.iter().map(|(a, b)| (a.as_str(), *b)).collect();
        let m = model(&vars, &shocks, &pr, eqs, vec![]);
        let d = solve_default(&m);
        assert_eq!(
            d.solved.status,
            Status::Determinate,
            "trial {trial}: {:?}",
            d.solved.diagnosis
        );
        let pb = check::plug_back_detailed(
            &d.linear,
            PreparedModel::new(&m).unwrap().layout(),
            d.solved.solution.as_ref().unwrap(),
        );
        assert!(
            pb.absolute < 1e-10,
            "trial {trial}: residual {}",
            pb.absolute
        );
        // The planted roots are among the pencil's roots (the rest are zeros from the lags of
        // the forward variables).
        let mut found: Vec<(f64, f64)> = d
            .solved
            .roots
            .iter()
            .filter(|r| r.modulus.unwrap_or(f64::INFINITY) > 1e-8)
            .map(|r| (r.re, r.im))
            .collect();
        assert_eq!(
            found.len(),
            planted.len(),
            "trial {trial}: {:?}",
            d.solved.roots
        );
        // Match each planted root to a distinct computed one.
        for b in &planted {
            let scale = b.0.hypot(b.1).max(1.0);
            let hit = found
                .iter()
                .position(|a| (a.0 - b.0).abs() < 1e-8 * scale && (a.1 - b.1).abs() < 1e-8 * scale);
            match hit {
                Some(i) => {
                    found.remove(i);
                }
                None => panic!("trial {trial}: planted root {b:?} not found in {found:?}"),
            }
        }
        // The policy of the forward block is x_t = F k_t with F = V_xs V_ks^{-1} (stable
        // eigenvectors), k_t = M_k. w_{t-1} + e_t.
        let s = d.solved.solution.as_ref().unwrap();
        let stable: Vec<usize> = (0..nn).filter(|&i| lambda[i].abs() < 1.0).collect();
        let vks = nalgebra::DMatrix::from_fn(nb, nb, |i, c| vm[(i, stable[c])]);
        let vxs = nalgebra::DMatrix::from_fn(nf, nb, |i, c| vm[(nb + i, stable[c])]);
        let f = &vxs * vks.try_inverse().unwrap();
        let mk = mm.rows(0, nb).into_owned();
        let expect_p = &f * &mk;
        for i in 0..nf {
            for j in 0..nn {
                let col = s
                    .states
                    .iter()
                    .position(|x| *x == format!("w{j}[t-1]"))
                    .unwrap();
                assert!(
                    (s.p[(nb + i, col)] - expect_p[(i, j)]).abs() < 1e-9,
                    "trial {trial}"
                );
            }
            for k in 0..nb {
                assert!((s.q[(nb + i, k)] - f[(i, k)]).abs() < 1e-9);
            }
        }
    }
}
