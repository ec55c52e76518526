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
                assert!(d.contains("loads most on"), "{d}");
            }
        }
    }
}
