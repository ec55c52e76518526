//! Impulses with correlated innovations: one standard deviation of e_a together with the
//! co-movement of e_g it predicts, E[e_g | e_a = sd_a] = rho sd_g (the conditional mean of a
//! bivariate normal; Pesaran and Shin 1998, Economics Letters 58, generalized impulses), which for
//! the first-declared innovation is the Cholesky impulse, as in the variance decomposition.

use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::model::check_source;
use saddle::solution::{solve, SolveOptions};

const MODEL: &str = "endogenous\n  x\n  y\nexogenous\n  e_a\n  e_g\nequations\n  x = 0.5 * x[t-1] + e_a\n  y = e_g\ncovariance\n  sd(e_a) = 1\n  sd(e_g) = 2\n  corr(e_a, e_g) = 0.3\n";

fn impact(size: ImpulseSize) -> Vec<Vec<f64>> {
    let model = check_source(MODEL).unwrap();
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    let r = impulse_responses(&solved, &[], size, 3).unwrap();
    // [shock][variable] at h = 0, then x at h = 1 for the persistence check.
    r.responses
        .iter()
        .map(|m| vec![m[(0, 0)], m[(1, 0)], m[(0, 1)]])
        .collect()
}

#[test]
fn one_sd_impulses_carry_the_predicted_comovement() {
    let r = impact(ImpulseSize::OneSd);
    let close = |a: f64, b: f64| (a - b).abs() < 1e-12;
    // Shock e_a: x = 1, y = rho sd_g / sd_a * sd_a = 0.6; x then decays at 0.5.
    assert!(
        close(r[0][0], 1.0) && close(r[0][1], 0.6) && close(r[0][2], 0.5),
        "{r:?}"
    );
    // Shock e_g: y = 2, x = rho sd_a = 0.3.
    assert!(close(r[1][0], 0.3) && close(r[1][1], 2.0), "{r:?}");
}

#[test]
fn alone_and_unit_impulses_move_one_innovation() {
    let r = impact(ImpulseSize::OneSdAlone);
    assert_eq!((r[0][0], r[0][1]), (1.0, 0.0));
    assert_eq!((r[1][0], r[1][1]), (0.0, 2.0));
    let r = impact(ImpulseSize::Unit);
    assert_eq!((r[0][0], r[0][1]), (1.0, 0.0));
    assert_eq!((r[1][0], r[1][1]), (0.0, 1.0));
}
