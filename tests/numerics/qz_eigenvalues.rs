//! Eigenvalues against independent references, matched as multisets in the chordal metric:
//! * for pencils with invertible B, the eigenvalues of B^{-1} A from nalgebra's real Schur
//!   decomposition (`Schur::complex_eigenvalues`; an unrelated algorithm: LU solve + Francis QR);
//! * for all pencils, faer 0.24's generalized eigenvalues (dev-dependency; its own QZ);
//! * pencils with known spectra: diagonal, triangular (hidden by unitary equivalences),
//!   companion matrices of polynomials with known roots, and block pencils with a known number
//!   of infinite eigenvalues.

use super::qz_support::*;
use nalgebra::DMatrix;
use saddle::qz::{GeneralizedSchur, C64};

const EPS: f64 = f64::EPSILON;

fn c(x: f64) -> C64 {
    C64::new(x, 0.0)
}

fn random_unitary(rng: &mut Rng, n: usize) -> DMatrix<C64> {
    rng.complex_matrix(n).qr().q()
}

/// Tolerance for comparing two backward-stable computations on random Gaussian pencils: the
/// chordal error is about eps times the eigenvalue condition number, which for these sizes is
/// below 1e5 in practice (common practice; the tests print nothing, they fail above it).
const RANDOM_TOL: f64 = 1e-9;

#[test]
fn against_inverse_b_times_a() {
    let mut rng = Rng(201);
    for n in [1usize, 2, 3, 8, 20, 50, 120] {
        let a = rng.real_matrix(n);
        let b = rng.real_matrix(n);
        let Some(binv_a) = b.clone().lu().solve(&a) else {
            panic!("B singular")
        };
        let reference: Vec<(C64, C64)> = binv_a
            .schur()
            .complex_eigenvalues()
            .iter()
            .map(|z| (*z, c(1.0)))
            .collect();
        let g = GeneralizedSchur::new(a.clone(), b.clone()).unwrap();
        let d = multiset_distance(&g.eigenvalues(), &reference);
        assert!(d < RANDOM_TOL, "n={n}: {d:e}");
    }
}

#[test]
fn against_faer_real_and_complex() {
    let mut rng = Rng(202);
    // faer 0.24's generalized_eigen took about 20 s per call at n = 75 here (5-25 ms at
    // n = 30), so the faer comparison stops at 30; the B^{-1}A test goes to 120.
    for n in [1usize, 2, 3, 9, 20, 30] {
        for zero_rows in [false, true] {
            let a = rng.real_matrix(n);
            let mut b = rng.real_matrix(n);
            if zero_rows {
                for i in rng.rows(n, (n / 10).max(1)) {
                    for j in 0..n {
                        b[(i, j)] = 0.0;
                    }
                }
            }
            let g = GeneralizedSchur::new(a.clone(), b.clone()).unwrap();
            let d = multiset_distance(&g.eigenvalues(), &faer_eigenvalues_real(&a, &b));
            assert!(d < RANDOM_TOL, "real n={n} zero_rows={zero_rows}: {d:e}");

            let ac = rng.complex_matrix(n);
            let mut bc = rng.complex_matrix(n);
            if zero_rows {
                for i in rng.rows(n, (n / 10).max(1)) {
                    for j in 0..n {
                        bc[(i, j)] = c(0.0);
                    }
                }
            }
            let g = GeneralizedSchur::new_complex(ac.clone(), bc.clone()).unwrap();
            let d = multiset_distance(&g.eigenvalues(), &faer_eigenvalues_complex(&ac, &bc));
            assert!(d < RANDOM_TOL, "complex n={n} zero_rows={zero_rows}: {d:e}");
        }
    }
}

/// Diagonal pencils: eigenvalues (a_i, b_i) exactly (nothing to do but normalise beta).
#[test]
fn diagonal_pencils_exact() {
    let a_diag = [3.0, -1.0, 0.5, 7.0, 0.0, 2.0];
    let b_diag = [1.0, 2.0, 0.0, -4.0, 1.0, 0.0];
    let n = a_diag.len();
    let a = DMatrix::from_fn(n, n, |i, j| if i == j { a_diag[i] } else { 0.0 });
    let b = DMatrix::from_fn(n, n, |i, j| if i == j { b_diag[i] } else { 0.0 });
    let g = GeneralizedSchur::new(a, b).unwrap();
    let expect: Vec<(C64, C64)> = a_diag
        .iter()
        .zip(b_diag.iter())
        .map(|(&x, &y)| (c(x), c(y)))
        .collect();
    assert!(multiset_distance(&g.eigenvalues(), &expect) <= 2.0 * EPS);
    // Two zero betas: exactly infinite.
    assert_eq!(
        g.eigenvalues()
            .iter()
            .filter(|(_, be)| *be == c(0.0))
            .count(),
        2
    );
}

/// Upper-triangular pencils (S0, T0) hidden as (U S0 V, U T0 V) with random unitary U, V: the
/// eigenvalues are (S0_ii, T0_ii) (generalized Schur theorem, Golub and Van Loan, Matrix
/// Computations, 4th ed., Theorem 7.7.1). Diagonals well separated and off-diagonal entries of
/// size 0.1 keep the departure from normality, hence the eigenvalue condition numbers, modest
/// (random triangular matrices with O(1) off-diagonals are exponentially ill conditioned:
/// Viswanath and Trefethen 1998, "Condition numbers of random triangular matrices").
#[test]
fn triangular_pencils_hidden_by_unitary_equivalence() {
    let mut rng = Rng(203);
    for n in [2usize, 5, 12, 40] {
        // Finite roots k - n/2 + i (k mod 3), spaced at least 1 apart; position 1 infinite. (A
        // repeated zero on T's diagonal would generically be one defective infinite eigenvalue,
        // perturbed by eps^(1/m); a single one is simple.)
        let alphas: Vec<C64> = (0..n)
            .map(|k| C64::new(k as f64 - (n / 2) as f64, (k % 3) as f64 + 0.5))
            .collect();
        let betas: Vec<C64> = (0..n).map(|k| c(if k == 1 { 0.0 } else { 1.0 })).collect();
        let s0 = DMatrix::from_fn(n, n, |i, j| {
            if i == j {
                alphas[i]
            } else if i < j {
                C64::new(0.1 * rng.normal(), 0.1 * rng.normal())
            } else {
                c(0.0)
            }
        });
        let t0 = DMatrix::from_fn(n, n, |i, j| {
            if i == j {
                betas[i]
            } else if i < j {
                C64::new(0.1 * rng.normal(), 0.1 * rng.normal())
            } else {
                c(0.0)
            }
        });
        let u = random_unitary(&mut rng, n);
        let v = random_unitary(&mut rng, n);
        let a = &u * &s0 * &v;
        let b = &u * &t0 * &v;
        let g = GeneralizedSchur::new_complex(a.clone(), b.clone()).unwrap();
        assert_invariants(&g, &a, &b, issue_tol(n));
        let expect: Vec<(C64, C64)> = alphas.into_iter().zip(betas).collect();
        let d = multiset_distance(&g.eigenvalues(), &expect);
        assert!(d < 1e-11, "n={n}: {d:e}");
    }
}

/// Companion matrix of p(z) = prod (z - r_k) with known roots (Golub and Van Loan, §7.4.6: the
/// companion matrix's characteristic polynomial is p), as the pencil (C, I) and hidden as
/// (U C V, U V). Roots: 1, -2, 0.5, 3, -0.25 and the pair 1 +- 2i (real coefficients).
#[test]
fn companion_pencils_with_known_roots() {
    let roots = [
        c(1.0),
        c(-2.0),
        c(0.5),
        c(3.0),
        c(-0.25),
        C64::new(1.0, 2.0),
        C64::new(1.0, -2.0),
    ];
    let n = roots.len();
    // Coefficients of prod (z - r_k), highest degree first (monic).
    let mut coef = vec![c(1.0)];
    for r in roots {
        let mut next = vec![c(0.0); coef.len() + 1];
        for (k, &a) in coef.iter().enumerate() {
            next[k] += a;
            next[k + 1] -= a * r;
        }
        coef = next;
    }
    // Companion: first row -coef[1..], ones on the subdiagonal.
    let comp = DMatrix::from_fn(n, n, |i, j| {
        if i == 0 {
            -coef[j + 1].re
        } else if i == j + 1 {
            1.0
        } else {
            0.0
        }
    });
    let expect: Vec<(C64, C64)> = roots.iter().map(|&r| (r, c(1.0))).collect();
    let g = GeneralizedSchur::new(comp.clone(), DMatrix::identity(n, n)).unwrap();
    let d = multiset_distance(&g.eigenvalues(), &expect);
    // Companion eigenvalues are less well conditioned than random ones: 1e-10 (common practice).
    assert!(d < 1e-10, "{d:e}");
    let mut rng = Rng(204);
    let u = random_unitary(&mut rng, n);
    let v = random_unitary(&mut rng, n);
    let a = &u * to_c(&comp) * &v;
    let b = &u * &v;
    let g = GeneralizedSchur::new_complex(a.clone(), b.clone()).unwrap();
    assert_invariants(&g, &a, &b, issue_tol(n));
    let d = multiset_distance(&g.eigenvalues(), &expect);
    assert!(d < 1e-10, "hidden: {d:e}");
}

/// Block pencil A = [[A11, A12], [0, A22]], B = [[B11, B12], [0, 0]] with A22 (k x k)
/// invertible: det(A - zB) = det(A11 - z B11) det(A22), so exactly k eigenvalues are infinite
/// and the finite ones are those of (A11, B11) (Gantmacher 1959, The Theory of Matrices,
/// vol. 2, ch. XII). Hidden by orthogonal equivalences of real Gaussian QR factors.
#[test]
fn block_pencils_with_known_infinite_count() {
    let mut rng = Rng(205);
    for (n1, k) in [(5usize, 3usize), (20, 20), (1, 9), (30, 2)] {
        let n = n1 + k;
        let a11 = rng.real_matrix(n1);
        let b11 = rng.real_matrix(n1);
        let a22 = rng.real_matrix(k) + DMatrix::identity(k, k) * 5.0;
        let mut a = rng.real_matrix(n);
        let mut b = rng.real_matrix(n);
        for i in n1..n {
            for j in 0..n {
                b[(i, j)] = 0.0;
                if j < n1 {
                    a[(i, j)] = 0.0;
                }
            }
        }
        a.view_mut((0, 0), (n1, n1)).copy_from(&a11);
        b.view_mut((0, 0), (n1, n1)).copy_from(&b11);
        a.view_mut((n1, n1), (k, k)).copy_from(&a22);
        let u = rng.real_matrix(n).qr().q();
        let v = rng.real_matrix(n).qr().q();
        let ah = &u * &a * &v;
        let bh = &u * &b * &v;
        let g = GeneralizedSchur::new(ah.clone(), bh.clone()).unwrap();
        assert_invariants(&g, &to_c(&ah), &to_c(&bh), issue_tol(n));
        let tol_b = n as f64 * EPS * bh.norm();
        let inf = g
            .eigenvalues()
            .iter()
            .filter(|(_, be)| be.norm() <= tol_b)
            .count();
        assert_eq!(inf, k, "n1={n1} k={k}");
        let finite: Vec<(C64, C64)> = g
            .eigenvalues()
            .into_iter()
            .filter(|(_, be)| be.norm() > tol_b)
            .collect();
        let d = multiset_distance(&finite, &faer_eigenvalues_real(&a11, &b11));
        assert!(d < RANDOM_TOL, "n1={n1} k={k}: {d:e}");
    }
}
