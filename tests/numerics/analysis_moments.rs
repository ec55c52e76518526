//! External checks of the moments: textbook closed forms for AR(1) and AR(2), a direct
//! Kronecker-product Lyapunov solve, share identities, and unit-root handling.

use nalgebra::DMatrix;
use saddle::analysis::moments::{covariance_factor, moments, CovarianceError, MomentsError};
use saddle::linalg::{relative_residual, solve_discrete_lyapunov, LyapunovError, LyapunovMethod};
use saddle::solution::{Counts, SolvedModel, StateSpace, Status};

fn solved(
    variables: &[&str],
    shocks: &[&str],
    p: DMatrix<f64>,
    q: DMatrix<f64>,
    g: DMatrix<f64>,
    h: DMatrix<f64>,
    cov: DMatrix<f64>,
) -> SolvedModel {
    let ns = g.nrows();
    SolvedModel {
        title: None,
        status: Status::Determinate,
        threshold: 1.0,
        counts: Counts {
            stable: ns,
            unstable: 0,
            forward_looking: 0,
            predetermined: ns,
        },
        roots: vec![],
        variables: variables.iter().map(|s| s.to_string()).collect(),
        log: vec![false; variables.len()],
        shocks: shocks.iter().map(|s| s.to_string()).collect(),
        steady_state: vec![0.0; variables.len()],
        covariance: cov,
        diagnosis: None,
        warnings: vec![],
        solution: Some(StateSpace {
            states: (0..ns).map(|i| format!("s{i}[t-1]")).collect(),
            p,
            q,
            g,
            h,
        }),
    }
}

/// A reproducible pseudo-random matrix with entries in [-scale/2, scale/2).
fn lcg(rows: usize, cols: usize, seed: u64, scale: f64) -> DMatrix<f64> {
    let mut s = seed.wrapping_mul(0x9E3779B97F4A7C15).wrapping_add(1);
    DMatrix::from_fn(rows, cols, |_, _| {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        scale * (((s >> 11) as f64) / (1u64 << 53) as f64 - 0.5)
    })
}

/// A random matrix rescaled to spectral radius `radius`.
fn stable(n: usize, seed: u64, radius: f64) -> DMatrix<f64> {
    let g = lcg(n, n, seed, 1.0);
    let r = g
        .clone()
        .complex_eigenvalues()
        .iter()
        .map(|z| z.norm())
        .fold(0.0, f64::max);
    g * (radius / r)
}

fn m(rows: usize, cols: usize, v: &[f64]) -> DMatrix<f64> {
    DMatrix::from_row_slice(rows, cols, v)
}

#[test]
fn ar1_variance_and_autocorrelations_match_hamilton() {
    // Hamilton (1994), Time Series Analysis, ch. 3, eq. 3.4.4 and 3.4.5: an AR(1)
    // y_t = phi y_{t-1} + e_t has gamma_0 = s^2/(1-phi^2) and rho_k = phi^k.
    for &(phi, s) in &[(0.9, 0.5), (-0.6, 2.0), (0.0, 1.0), (0.99, 0.1)] {
        let sm = solved(
            &["y"],
            &["e"],
            m(1, 1, &[phi]),
            m(1, 1, &[1.0]),
            m(1, 1, &[phi]),
            m(1, 1, &[1.0]),
            m(1, 1, &[s * s]),
        );
        let mo = moments(&sm, 6, &[]).unwrap();
        let var = s * s / (1.0 - phi * phi);
        let sd = mo.std[0].unwrap();
        assert!(
            (sd * sd - var).abs() <= 1e-12 * var,
            "phi {phi}: {} vs {var}",
            sd * sd
        );
        for k in 1..=6 {
            let want = phi.powi(k as i32);
            let got = mo.autocorrelation[0][k - 1];
            assert!(
                (got - want).abs() < 1e-12,
                "phi {phi} lag {k}: {got} vs {want}"
            );
        }
        assert_eq!(mo.variance_decomposition[0], vec![1.0]);
        assert!(mo.nonstationary.is_empty());
    }
}

#[test]
fn ar2_variance_and_autocorrelations_match_hamilton() {
    // Hamilton (1994), Time Series Analysis, ch. 3, eq. 3.4.27-3.4.31: for
    // y_t = phi1 y_{t-1} + phi2 y_{t-2} + e_t, gamma_0 = (1-phi2) s^2 /
    // ((1+phi2)((1-phi2)^2 - phi1^2)), rho_1 = phi1/(1-phi2), and the Yule-Walker recursion
    // rho_k = phi1 rho_{k-1} + phi2 rho_{k-2}. Companion form: s_{t-1} = (y_{t-1}, y_{t-2}).
    for &(phi1, phi2, s) in &[
        (0.5, 0.3, 1.0),
        (1.2, -0.5, 0.7),
        (-0.4, 0.2, 2.0),
        (0.1, -0.9, 1.0),
    ] {
        let sm = solved(
            &["y"],
            &["e"],
            m(1, 2, &[phi1, phi2]),
            m(1, 1, &[1.0]),
            m(2, 2, &[phi1, phi2, 1.0, 0.0]),
            m(2, 1, &[1.0, 0.0]),
            m(1, 1, &[s * s]),
        );
        let lags = 8;
        let mo = moments(&sm, lags, &[]).unwrap();
        let gamma0 = (1.0 - phi2) * s * s / ((1.0 + phi2) * ((1.0 - phi2).powi(2) - phi1 * phi1));
        let sd = mo.std[0].unwrap();
        assert!(
            (sd * sd - gamma0).abs() <= 1e-11 * gamma0,
            "{phi1},{phi2}: {} vs {gamma0}",
            sd * sd
        );
        let mut rho = vec![1.0, phi1 / (1.0 - phi2)];
        for k in 2..=lags {
            rho.push(phi1 * rho[k - 1] + phi2 * rho[k - 2]);
        }
        for (k, (got, want)) in mo.autocorrelation[0].iter().zip(&rho[1..]).enumerate() {
            assert!((got - want).abs() < 1e-11, "lag {}: {got} vs {want}", k + 1);
        }
        assert_eq!(mo.autocorrelation[0].len(), lags);
    }
}

/// vec(X) = (I - G kron G)^{-1} vec(W): the defining linear system of the Lyapunov equation
/// (common practice; e.g. Hamilton 1994, eq. 10.2.18).
fn kronecker_solve(g: &DMatrix<f64>, w: &DMatrix<f64>) -> DMatrix<f64> {
    let n = g.nrows();
    let gg = g.kronecker(g);
    let a = DMatrix::<f64>::identity(n * n, n * n) - gg;
    let vecw = DMatrix::from_column_slice(n * n, 1, w.as_slice());
    let x = a.lu().solve(&vecw).unwrap();
    DMatrix::from_column_slice(n, n, x.as_slice())
}

#[test]
fn lyapunov_matches_kronecker_solve_on_small_systems() {
    for (k, n) in [1usize, 2, 3, 5, 8, 12].into_iter().enumerate() {
        for &radius in &[0.3, 0.9, 0.999] {
            let g = stable(n, 11 + k as u64, radius);
            let b = lcg(n, n, 100 + k as u64, 1.0);
            let w = &b * b.transpose();
            let sol = solve_discrete_lyapunov(&g, &w).unwrap();
            let xk = kronecker_solve(&g, &w);
            // Both are backward stable; the forward error is bounded by cond ~ 1/(1-radius^2)
            // times eps times the size (a generous 1e4 eps covers n = 12, radius 0.999).
            let cond = 1.0 / (1.0 - radius * radius);
            let err = (&sol.x - &xk).norm() / xk.norm();
            assert!(
                err < 1e4 * f64::EPSILON * cond * n as f64,
                "n {n} radius {radius}: {err:e}"
            );
            assert_eq!(sol.method, LyapunovMethod::Schur);
        }
    }
}

#[test]
fn lyapunov_residual_is_small_on_large_systems() {
    for &(n, radius) in &[(120usize, 0.95), (200, 0.7)] {
        let g = stable(n, 5, radius);
        let b = lcg(n, 7, 9, 1.0);
        let w = &b * b.transpose();
        let sol = solve_discrete_lyapunov(&g, &w).unwrap();
        let res = relative_residual(&g, &w, &sol.x);
        // A backward-stable solve leaves O(n eps); allow 10 n eps.
        assert!(
            res < 10.0 * n as f64 * f64::EPSILON,
            "n {n}: residual {res:e}"
        );
        assert_eq!(res, sol.relative_residual);
        // X is a covariance: symmetric positive semidefinite.
        let eig = sol.x.clone().symmetric_eigenvalues();
        let top = eig.iter().cloned().fold(0.0, f64::max);
        assert!(eig.iter().all(|&e| e > -1e-10 * top));
    }
}

#[test]
fn lyapunov_refuses_bad_input() {
    let w = DMatrix::identity(2, 2);
    let g = m(2, 2, &[0.5, 1.0, 0.0, -1.2]);
    match solve_discrete_lyapunov(&g, &w) {
        Err(LyapunovError::NotStable { spectral_radius }) => {
            assert!((spectral_radius - 1.2).abs() < 1e-12)
        }
        other => panic!("{other:?}"),
    }
    let g = m(2, 2, &[0.5, f64::NAN, 0.0, 0.2]);
    assert_eq!(
        solve_discrete_lyapunov(&g, &w),
        Err(LyapunovError::NonFinite)
    );
    let g = DMatrix::identity(3, 3) * 0.5;
    assert!(matches!(
        solve_discrete_lyapunov(&g, &w),
        Err(LyapunovError::Shape { .. })
    ));
}

/// A random stable system with `ny` variables, `ns` states, `ne` correlated innovations.
fn random_system(ny: usize, ns: usize, ne: usize, seed: u64, radius: f64) -> SolvedModel {
    let a = lcg(ne, ne, seed + 3, 1.0);
    let cov = &a * a.transpose() + DMatrix::identity(ne, ne) * 0.1;
    let vars: Vec<String> = (0..ny).map(|i| format!("y{i}")).collect();
    let shocks: Vec<String> = (0..ne).map(|i| format!("e{i}")).collect();
    let vr: Vec<&str> = vars.iter().map(|s| s.as_str()).collect();
    let sr: Vec<&str> = shocks.iter().map(|s| s.as_str()).collect();
    solved(
        &vr,
        &sr,
        lcg(ny, ns, seed, 2.0),
        lcg(ny, ne, seed + 1, 2.0),
        stable(ns, seed + 2, radius),
        lcg(ns, ne, seed + 4, 2.0),
        cov,
    )
}

#[test]
fn shares_are_nonnegative_sum_to_one_and_fevd_converges() {
    for seed in 0..6u64 {
        let sm = random_system(7, 5, 3, 40 + seed, 0.85);
        let mo = moments(&sm, 3, &[1, 4, 8, 400]).unwrap();
        assert!(
            !mo.warnings.is_empty(),
            "correlated innovations must be flagged"
        );
        let ss = sm.solution.as_ref().unwrap();
        for i in 0..7 {
            let row = &mo.variance_decomposition[i];
            assert!(row.iter().all(|&s| s >= 0.0));
            let sum: f64 = row.iter().sum();
            assert!((sum - 1.0).abs() < 1e-12, "sum {sum}");
            for (_, f) in &mo.fevd {
                assert!(f[i].iter().all(|&s| s >= 0.0));
                assert!((f[i].iter().sum::<f64>() - 1.0).abs() < 1e-12);
            }
            // Horizon 1: only the impact matrix Q L counts.
            let l = covariance_factor(&sm.covariance, &sm.shocks).unwrap();
            let ql = &ss.q * &l;
            let tot: f64 = (0..3).map(|j| ql[(i, j)].powi(2)).sum();
            for j in 0..3 {
                assert!((mo.fevd[0].1[i][j] - ql[(i, j)].powi(2) / tot).abs() < 1e-12);
            }
            // Radius 0.85: the tail after 400 periods is below 0.85^800 ~ 1e-56 of the total.
            let far = &mo.fevd[3].1[i];
            for j in 0..3 {
                assert!((far[j] - row[j]).abs() < 1e-10, "{} vs {}", far[j], row[j]);
            }
        }
        // Variances against a direct Lyapunov solve in the original basis.
        let w = &ss.h * &sm.covariance * ss.h.transpose();
        let x = solve_discrete_lyapunov(&ss.g, &w).unwrap().x;
        let v = &ss.p * x * ss.p.transpose() + &ss.q * &sm.covariance * ss.q.transpose();
        for i in 0..7 {
            let sd = mo.std[i].unwrap();
            assert!((sd * sd - v[(i, i)]).abs() < 1e-10 * v[(i, i)]);
            for k in 0..7 {
                let c = v[(i, k)] / (v[(i, i)] * v[(k, k)]).sqrt();
                assert!((mo.correlation[(i, k)] - c).abs() < 1e-10);
            }
        }
        // Lag-1 autocovariance P G X P' + P H Sigma Q' (diagonal).
        let ac1 = &ss.p * &ss.g * solve_discrete_lyapunov(&ss.g, &w).unwrap().x * ss.p.transpose()
            + &ss.p * &ss.h * &sm.covariance * ss.q.transpose();
        for i in 0..7 {
            let want = ac1[(i, i)] / v[(i, i)];
            assert!((mo.autocorrelation[i][0] - want).abs() < 1e-10);
        }
    }
}

#[test]
fn uncorrelated_shares_are_the_plain_split() {
    // Two independent AR(1) blocks feeding one sum: y = a + b with Var a = 1/(1-0.25),
    // Var b = 4/(1-0.81); the shares are those variances over their sum (common practice).
    let sm = solved(
        &["a", "b", "y"],
        &["ea", "eb"],
        m(3, 2, &[0.5, 0.0, 0.0, 0.9, 0.5, 0.9]),
        m(3, 2, &[1.0, 0.0, 0.0, 1.0, 1.0, 1.0]),
        m(2, 2, &[0.5, 0.0, 0.0, 0.9]),
        DMatrix::identity(2, 2),
        m(2, 2, &[1.0, 0.0, 0.0, 4.0]),
    );
    let mo = moments(&sm, 1, &[]).unwrap();
    let va = 1.0 / 0.75;
    let vb = 4.0 / 0.19;
    let s = &mo.variance_decomposition[2];
    assert!((s[0] - va / (va + vb)).abs() < 1e-12);
    assert!((s[1] - vb / (va + vb)).abs() < 1e-12);
    assert!(mo.warnings.is_empty());
    assert!(mo.correlation[(0, 1)].abs() < 1e-12);
}

#[test]
fn unit_root_names_the_variables_and_keeps_the_cointegrating_spread() {
    // x_t = x_{t-1} + e_x (random walk), z_t = 0.5 z_{t-1} + 0.5 x_{t-1} + e_z: both wander, but
    // d = z - x follows d_t = 0.5 d_{t-1} + e_z - e_x, an AR(1) with innovation variance 2, so
    // Var d = 2/(1-0.25) = 8/3 and rho_k = 0.5^k (Hamilton 1994, eq. 3.4.4; the spread is the
    // textbook cointegrating combination, ch. 19). q_t = e_q loads on no state.
    let sm = solved(
        &["x", "z", "d", "q"],
        &["e_x", "e_z", "e_q"],
        m(4, 2, &[1.0, 0.0, 0.5, 0.5, -0.5, 0.5, 0.0, 0.0]),
        m(
            4,
            3,
            &[1.0, 0.0, 0.0, 0.0, 1.0, 0.0, -1.0, 1.0, 0.0, 0.0, 0.0, 1.0],
        ),
        m(2, 2, &[1.0, 0.0, 0.5, 0.5]),
        m(2, 3, &[1.0, 0.0, 0.0, 0.0, 1.0, 0.0]),
        DMatrix::identity(3, 3),
    );
    let mo = moments(&sm, 3, &[1, 10]).unwrap();
    assert_eq!(mo.nonstationary, vec!["x".to_string(), "z".to_string()]);
    assert!(mo.std[0].is_none() && mo.std[1].is_none());
    let vd = mo.std[2].unwrap().powi(2);
    assert!((vd - 8.0 / 3.0).abs() < 1e-9, "{vd}");
    for k in 1..=3 {
        assert!((mo.autocorrelation[2][k - 1] - 0.5f64.powi(k as i32)).abs() < 1e-9);
    }
    assert!((mo.std[3].unwrap() - 1.0).abs() < 1e-12);
    assert!(mo.correlation[(0, 2)].is_nan() && mo.correlation[(2, 3)].abs() < 1e-12);
    assert!(mo.variance_decomposition[0].iter().all(|s| s.is_nan()));
    // d's shares: e_x and e_z each give half, e_q none.
    let s = &mo.variance_decomposition[2];
    assert!((s[0] - 0.5).abs() < 1e-9 && (s[1] - 0.5).abs() < 1e-9 && s[2].abs() < 1e-12);
    // Finite-horizon decompositions exist for every variable.
    assert!(mo.fevd[1].1[0].iter().all(|s| s.is_finite()));
    assert!(mo.warnings.iter().any(|w| w.contains("x, z")));
}

#[test]
fn unreachable_unit_root_leaves_every_variance() {
    // A unit-root state no innovation reaches stays at its steady state: u_t = u_{t-1}.
    let sm = solved(
        &["u", "y"],
        &["e"],
        m(2, 2, &[1.0, 0.0, 0.0, 0.8]),
        m(2, 1, &[0.0, 1.0]),
        m(2, 2, &[1.0, 0.0, 0.0, 0.8]),
        m(2, 1, &[0.0, 1.0]),
        DMatrix::identity(1, 1),
    );
    let mo = moments(&sm, 1, &[]).unwrap();
    assert!(mo.nonstationary.is_empty());
    assert_eq!(mo.std[0], Some(0.0));
    assert!((mo.std[1].unwrap().powi(2) - 1.0 / 0.36).abs() < 1e-12);
    assert!(mo.correlation[(0, 1)].is_nan());
}

#[test]
fn bad_covariances_name_the_innovation() {
    let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
    // corr(a, b) = 1 and corr(b, c) = 1 but corr(a, c) = -1: indefinite at c.
    let cov = m(3, 3, &[1.0, 1.0, -1.0, 1.0, 1.0, 1.0, -1.0, 1.0, 1.0]);
    match covariance_factor(&cov, &names) {
        Err(CovarianceError::NotPositiveSemidefinite { shock, .. }) => assert_eq!(shock, "b"),
        other => panic!("{other:?}"),
    }
    let cov = m(2, 2, &[1.0, 2.0, 2.0, 1.0]);
    match covariance_factor(&cov, &names[..2]) {
        Err(CovarianceError::NotPositiveSemidefinite { shock, pivot }) => {
            assert_eq!(shock, "b");
            assert!((pivot + 3.0).abs() < 1e-12);
        }
        other => panic!("{other:?}"),
    }
    // Perfect correlation is semidefinite: accepted with a zero column.
    let cov = m(2, 2, &[1.0, 1.0, 1.0, 1.0]);
    let l = covariance_factor(&cov, &names[..2]).unwrap();
    assert!((&l * l.transpose() - &cov).norm() < 1e-15);
    assert_eq!(l[(1, 1)], 0.0);
}

#[test]
fn non_determinate_and_bad_options_are_errors() {
    let mut sm = solved(
        &["y"],
        &["e"],
        m(1, 1, &[0.5]),
        m(1, 1, &[1.0]),
        m(1, 1, &[0.5]),
        m(1, 1, &[1.0]),
        m(1, 1, &[1.0]),
    );
    assert!(matches!(
        moments(&sm, 1, &[0]),
        Err(MomentsError::BadHorizon(0))
    ));
    assert!(matches!(
        moments(&sm, 1_000_000, &[]),
        Err(MomentsError::TooManyLags(_))
    ));
    sm.solution.as_mut().unwrap().p = m(1, 2, &[0.5, 0.1]);
    assert!(matches!(moments(&sm, 1, &[]), Err(MomentsError::Shape(_))));
    sm.status = Status::Indeterminate;
    sm.solution = None;
    assert!(matches!(
        moments(&sm, 1, &[]),
        Err(MomentsError::NotDeterminate { .. })
    ));
}

#[test]
fn static_model_without_states() {
    // No states: Var y = Q Sigma Q', no autocorrelation.
    let sm = solved(
        &["y"],
        &["e1", "e2"],
        DMatrix::zeros(1, 0),
        m(1, 2, &[1.0, 2.0]),
        DMatrix::zeros(0, 0),
        DMatrix::zeros(0, 2),
        DMatrix::identity(2, 2),
    );
    let mo = moments(&sm, 2, &[3]).unwrap();
    assert!((mo.std[0].unwrap() - 5f64.sqrt()).abs() < 1e-12);
    assert_eq!(mo.autocorrelation[0], vec![0.0, 0.0]);
    assert!((mo.variance_decomposition[0][1] - 0.8).abs() < 1e-12);
}

#[test]
fn unit_root_path_agrees_with_the_stationary_path() {
    // Appending a unit-root state that no innovation reaches (but that the variables load on)
    // must leave every moment unchanged; the augmented system goes through the complex, reordered
    // Schur path and the original through the real one.
    for seed in 0..4u64 {
        let base = random_system(5, 4, 2, 70 + seed, 0.9);
        let ss = base.solution.as_ref().unwrap();
        let mut g = DMatrix::zeros(5, 5);
        g.view_mut((0, 0), (4, 4)).copy_from(&ss.g);
        g[(4, 4)] = 1.0;
        // The unit-root state feeds the stable ones (a coupling the Sylvester step must remove)
        // but depends on nothing.
        for k in 0..4 {
            g[(4, k)] = 0.0;
            g[(k, 4)] = 0.3;
        }
        // Row 4 of G is [0 0 0 0 1] and row 4 of H is zero: the state never moves from 0.
        let mut h = DMatrix::zeros(5, 2);
        h.view_mut((0, 0), (4, 2)).copy_from(&ss.h);
        let mut p = DMatrix::zeros(5, 5);
        p.view_mut((0, 0), (5, 4)).copy_from(&ss.p);
        for i in 0..5 {
            p[(i, 4)] = 0.7;
        }
        let mut aug = base.clone();
        aug.solution = Some(StateSpace {
            states: (0..5).map(|i| format!("s{i}[t-1]")).collect(),
            p,
            q: ss.q.clone(),
            g,
            h,
        });
        let a = moments(&base, 4, &[2, 9]).unwrap();
        let b = moments(&aug, 4, &[2, 9]).unwrap();
        assert!(b.nonstationary.is_empty());
        assert!(b.warnings.iter().any(|w| w.contains("no variable loads")));
        for i in 0..5 {
            let (x, y) = (a.std[i].unwrap(), b.std[i].unwrap());
            assert!((x - y).abs() < 1e-10 * x, "std {x} vs {y}");
            for k in 0..4 {
                assert!((a.autocorrelation[i][k] - b.autocorrelation[i][k]).abs() < 1e-10);
            }
            for j in 0..2 {
                assert!(
                    (a.variance_decomposition[i][j] - b.variance_decomposition[i][j]).abs() < 1e-10
                );
                for f in 0..2 {
                    assert!((a.fevd[f].1[i][j] - b.fevd[f].1[i][j]).abs() < 1e-12);
                }
            }
            for k in 0..5 {
                assert!((a.correlation[(i, k)] - b.correlation[(i, k)]).abs() < 1e-10);
            }
        }
    }
}

#[test]
fn complex_schur_route_matches_kronecker() {
    use saddle::linalg::{solve_with_schur, ComplexSchur};
    for n in [2usize, 4, 7] {
        let g = stable(n, 300 + n as u64, 0.95);
        let b = lcg(n, n, 400 + n as u64, 1.0);
        let w = &b * b.transpose();
        let s = ComplexSchur::new(&g).unwrap();
        let x = solve_with_schur(&s, &w).unwrap();
        let xk = kronecker_solve(&g, &w);
        assert!((&x - &xk).norm() / xk.norm() < 1e4 * f64::EPSILON * 10.3 * n as f64);
    }
}

#[test]
fn moments_fall_back_to_doubling_when_the_schur_form_fails() {
    // A stable VAR(1) in 10 states with a dense transition matrix: with a budget of one QR sweep
    // per dimension the real Schur form cannot converge, so the moments must come from doubling,
    // and agree with the Schur route (both check their residual against 1e-9).
    use saddle::analysis::moments::moments_with;
    use saddle::linalg::LyapunovParams;
    let ns = 10;
    let mut seed = 11u64;
    let mut next = || {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((seed >> 11) as f64) / (1u64 << 53) as f64 - 0.5
    };
    let g = DMatrix::from_fn(ns, ns, |_, _| next());
    let radius = saddle::linalg::RealSchur::new(&g)
        .unwrap()
        .spectral_radius();
    let g = g * (0.8 / radius);
    let h = DMatrix::from_fn(ns, 2, |_, _| next());
    let p = DMatrix::from_fn(3, ns, |_, _| next());
    let q = DMatrix::from_fn(3, 2, |_, _| next());
    let cov = DMatrix::from_row_slice(2, 2, &[1.0, 0.3, 0.3, 0.5]);
    let sm = solved(&["a", "b", "c"], &["u", "v"], p, q, g, h, cov);
    let schur = moments(&sm, 3, &[1, 4]).unwrap();
    assert_eq!(schur.lyapunov_method, LyapunovMethod::Schur);
    let tight = LyapunovParams::default().with_schur_sweeps_per_dim(1);
    let fallback = moments_with(&sm, 3, &[1, 4], &tight).unwrap();
    assert_eq!(fallback.lyapunov_method, LyapunovMethod::Doubling);
    assert!(fallback.lyapunov_residual <= 1e-9);
    // Radius 0.8: the condition number is about 1/(1 - 0.64) < 3, so the two routes agree to
    // far better than 1e-9 relative.
    let scale = schur.covariance.norm();
    assert!((&fallback.covariance - &schur.covariance).norm() <= 1e-9 * scale);
    for (a, b) in fallback.std.iter().zip(&schur.std) {
        assert!((a.unwrap() - b.unwrap()).abs() <= 1e-9 * b.unwrap());
    }
    for (ra, rb) in fallback.autocorrelation.iter().zip(&schur.autocorrelation) {
        for (a, b) in ra.iter().zip(rb) {
            assert!((a - b).abs() <= 1e-9);
        }
    }
    for (ra, rb) in fallback
        .variance_decomposition
        .iter()
        .zip(&schur.variance_decomposition)
    {
        for (a, b) in ra.iter().zip(rb) {
            assert!((a - b).abs() <= 1e-9);
        }
    }
}
