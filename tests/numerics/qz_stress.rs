//! Stress: many reproducible random pencils of varied structure (dense, sparse with exact zeros,
//! B = 0, B = I, rank-deficient B, integer entries, repeated rows, huge dynamic range), each
//! decomposed and reordered; every run must succeed (or report a singular pencil where the
//! structure makes one likely) and satisfy the invariants of issue 3.

use super::qz_support::*;
use nalgebra::DMatrix;
use saddle::qz::{GeneralizedSchur, QzError};

fn structured(rng: &mut Rng, n: usize, kind: u64) -> (DMatrix<f64>, DMatrix<f64>) {
    let mut a = rng.real_matrix(n);
    let mut b = rng.real_matrix(n);
    match kind {
        0 => {}
        1 => {
            // Sparse: about 70% exact zeros in both.
            for x in a.iter_mut().chain(b.iter_mut()) {
                if rng.uniform() < 0.7 {
                    *x = 0.0;
                }
            }
        }
        2 => b.fill(0.0),
        3 => b = DMatrix::identity(n, n),
        4 => {
            let r = n / 2;
            let u = rng.real_matrix(n);
            let v = rng.real_matrix(n);
            let d = DMatrix::from_fn(n, n, |i, j| if i == j && i < r { 1.0 } else { 0.0 });
            b = &u * d * &v;
        }
        5 => {
            for x in a.iter_mut().chain(b.iter_mut()) {
                *x = (*x * 3.0).round();
            }
        }
        6 => {
            // Repeated rows in A and B (an equation written twice: singular pencil).
            if n > 1 {
                let ra = a.row(0).clone_owned();
                let rb = b.row(0).clone_owned();
                a.set_row(n - 1, &ra);
                b.set_row(n - 1, &rb);
            }
        }
        _ => {
            // Entries spread over 1e-12..1e12.
            for x in a.iter_mut().chain(b.iter_mut()) {
                *x *= 10f64.powf(24.0 * rng.uniform() - 12.0);
            }
        }
    }
    (a, b)
}

#[test]
fn many_structured_pencils() {
    let mut rng = Rng(401);
    let mut singular = 0;
    let mut runs = 0;
    for n in [1usize, 2, 3, 4, 6, 9, 13, 20, 33] {
        for kind in 0..8u64 {
            for _ in 0..4 {
                let (a, b) = structured(&mut rng, n, kind);
                let (ac, bc) = (to_c(&a), to_c(&b));
                let mut g = GeneralizedSchur::new(a, b).unwrap();
                assert_invariants(&g, &ac, &bc, issue_tol(n));
                runs += 1;
                // A repeated equation makes det(A - zB) vanish identically: must be reported.
                // Sparse pencils may be singular by structure (a zero column in both, say), and
                // entries spread over 24 decades are singular to working precision norm-wise.
                // Dense, B = 0, B = I, rank-deficient-B and integer pencils are regular.
                match g.reorder(|al, be| al.norm() < be.norm()) {
                    Ok(_) => assert!(kind != 6 || n == 1, "repeated row not reported, n={n}"),
                    Err(QzError::SingularPencil { .. }) => {
                        assert!(matches!(kind, 1 | 6 | 7), "kind {kind} n {n}");
                        singular += 1;
                    }
                    Err(e) => panic!("n={n} kind={kind}: {e}"),
                }
                assert_invariants(&g, &ac, &bc, issue_tol(n));
            }
        }
    }
    println!("{runs} runs, {singular} singular");
}
