//! Invariants of the decomposition on random pencils, n = 1..300, real and complex, with and
//! without zero rows in B (static equations): Q, Z unitary, backward errors below
//! 1e-13 * max(1, n/10) (issue 3), S and T exactly upper triangular, beta real >= 0; the same
//! after reordering by |alpha| < |beta|.

use super::qz_support::*;
use saddle::qz::GeneralizedSchur;

const SIZES: [usize; 14] = [1, 2, 3, 4, 5, 7, 10, 16, 31, 50, 64, 100, 180, 300];

fn zero_rows(rng: &mut Rng, b: &mut nalgebra::DMatrix<f64>) {
    let n = b.nrows();
    for i in rng.rows(n, (n / 10).max(1)) {
        for j in 0..n {
            b[(i, j)] = 0.0;
        }
    }
}

#[test]
fn real_pencils() {
    let mut rng = Rng(101);
    for n in SIZES {
        for with_zero_rows in [false, true] {
            let a = rng.real_matrix(n);
            let mut b = rng.real_matrix(n);
            if with_zero_rows {
                zero_rows(&mut rng, &mut b);
            }
            let (ac, bc) = (to_c(&a), to_c(&b));
            let mut g = GeneralizedSchur::new(a, b).unwrap();
            assert_invariants(&g, &ac, &bc, issue_tol(n));
            g.reorder(|al, be| al.norm() < be.norm()).unwrap();
            assert_invariants(&g, &ac, &bc, issue_tol(n));
        }
    }
}

#[test]
fn complex_pencils() {
    let mut rng = Rng(102);
    for n in SIZES {
        for with_zero_rows in [false, true] {
            let a = rng.complex_matrix(n);
            let mut b = rng.complex_matrix(n);
            if with_zero_rows {
                for i in rng.rows(n, (n / 10).max(1)) {
                    for j in 0..n {
                        b[(i, j)] = saddle::qz::C64::new(0.0, 0.0);
                    }
                }
            }
            let mut g = GeneralizedSchur::new_complex(a.clone(), b.clone()).unwrap();
            assert_invariants(&g, &a, &b, issue_tol(n));
            g.reorder(|al, be| al.norm() < be.norm()).unwrap();
            assert_invariants(&g, &a, &b, issue_tol(n));
        }
    }
}
