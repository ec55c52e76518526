//! Shared helpers for the QZ integration tests: reproducible random pencils, residual checks
//! and multiset matching of eigenvalues.
#![allow(dead_code)]

use nalgebra::DMatrix;
use saddle::qz::{GeneralizedSchur, C64};

/// SplitMix64 generator (Steele, Lea and Flood 2014, "Fast splittable pseudorandom number
/// generators"): reproducible without external crates.
pub struct Rng(pub u64);

impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E3779B97F4A7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
        z ^ (z >> 31)
    }
    /// Uniform in (0, 1).
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal by Box-Muller (Box and Muller 1958).
    pub fn normal(&mut self) -> f64 {
        let u = self.uniform();
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
    pub fn real_matrix(&mut self, n: usize) -> DMatrix<f64> {
        DMatrix::from_fn(n, n, |_, _| self.normal())
    }
    pub fn complex_matrix(&mut self, n: usize) -> DMatrix<C64> {
        DMatrix::from_fn(n, n, |_, _| C64::new(self.normal(), self.normal()))
    }
    /// Indices of `k` distinct rows out of n.
    pub fn rows(&mut self, n: usize, k: usize) -> Vec<usize> {
        let mut idx: Vec<usize> = (0..n).collect();
        for i in 0..k.min(n) {
            let j = i + (self.next_u64() as usize) % (n - i);
            idx.swap(i, j);
        }
        idx.truncate(k.min(n));
        idx
    }
}

pub fn to_c(m: &DMatrix<f64>) -> DMatrix<C64> {
    m.map(|x| C64::new(x, 0.0))
}

/// Asserts the invariants of the issue: Q, Z unitary and both backward errors below `tol`;
/// S and T exactly upper triangular; beta real and non-negative.
pub fn assert_invariants(g: &GeneralizedSchur, a: &DMatrix<C64>, b: &DMatrix<C64>, tol: f64) {
    let n = a.nrows();
    let id = DMatrix::<C64>::identity(n, n);
    let eq = (g.q().adjoint() * g.q() - &id).norm();
    let ez = (g.z().adjoint() * g.z() - &id).norm();
    let be = g.backward_error(a, b).unwrap();
    assert!(eq <= tol, "n={n}: ||Q^H Q - I|| = {eq:e} > {tol:e}");
    assert!(ez <= tol, "n={n}: ||Z^H Z - I|| = {ez:e} > {tol:e}");
    assert!(be <= tol, "n={n}: backward error {be:e} > {tol:e}");
    for j in 0..n {
        for i in j + 1..n {
            assert_eq!(g.s()[(i, j)], C64::new(0.0, 0.0), "S({i},{j}) not zero");
            assert_eq!(g.t()[(i, j)], C64::new(0.0, 0.0), "T({i},{j}) not zero");
        }
        let beta = g.t()[(j, j)];
        assert!(
            beta.im == 0.0 && beta.re >= 0.0,
            "beta_{j} = {beta} not real >= 0"
        );
    }
}

/// The issue's bound on the invariants: 1e-13 * max(1, n/10).
pub fn issue_tol(n: usize) -> f64 {
    1e-13 * (n as f64 / 10.0).max(1.0)
}

/// Chordal distance between the eigenvalues (a1, b1) and (a2, b2) of a pencil:
/// |a1 b2 - a2 b1| / (|(a1, b1)| |(a2, b2)|) (Stewart and Sun 1990, Matrix Perturbation Theory,
/// §VI.1); infinite eigenvalues are ordinary points.
pub fn chordal(a1: C64, b1: C64, a2: C64, b2: C64) -> f64 {
    let n1 = a1.norm().hypot(b1.norm());
    let n2 = a2.norm().hypot(b2.norm());
    (a1 * b2 - a2 * b1).norm() / (n1 * n2)
}

/// Matches two multisets of eigenvalue pairs greedily by chordal distance; returns the largest
/// distance among matched pairs (the sets must have equal sizes).
pub fn multiset_distance(ours: &[(C64, C64)], reference: &[(C64, C64)]) -> f64 {
    assert_eq!(ours.len(), reference.len());
    let mut used = vec![false; reference.len()];
    let mut worst = 0.0f64;
    for &(a, b) in ours {
        let mut best = (f64::INFINITY, usize::MAX);
        for (k, &(ra, rb)) in reference.iter().enumerate() {
            if !used[k] {
                let d = chordal(a, b, ra, rb);
                if d < best.0 {
                    best = (d, k);
                }
            }
        }
        used[best.1] = true;
        worst = worst.max(best.0);
    }
    worst
}

/// faer's generalized eigenvalues (alpha, beta) = (S_a, S_b) of a real pencil (faer 0.24,
/// `Mat::generalized_eigen`, an independent QZ implementation). For n = 1 faer's eigenvector
/// step panics, so the reference there is the pencil's only entry pair itself; faer's
/// eigenvalue-only low-level path returned zeros at n = 40 when probed, so it is not used.
pub fn faer_eigenvalues_real(a: &DMatrix<f64>, b: &DMatrix<f64>) -> Vec<(C64, C64)> {
    faer_real_inner(a, b)
}

fn faer_real_inner(a: &DMatrix<f64>, b: &DMatrix<f64>) -> Vec<(C64, C64)> {
    let n = a.nrows();
    if n < 2 {
        return (0..n)
            .map(|i| (C64::new(a[(i, i)], 0.0), C64::new(b[(i, i)], 0.0)))
            .collect();
    }
    let fa = faer::Mat::<f64>::from_fn(n, n, |i, j| a[(i, j)]);
    let fb = faer::Mat::<f64>::from_fn(n, n, |i, j| b[(i, j)]);
    let ge = fa.generalized_eigen(&fb).expect("faer generalized eigen");
    let sa: Vec<C64> = ge.S_a().column_vector().iter().copied().collect();
    let sb: Vec<C64> = ge.S_b().column_vector().iter().copied().collect();
    sa.into_iter().zip(sb).collect()
}

/// faer's generalized eigenvalues of a complex pencil (as [`faer_eigenvalues_real`]).
pub fn faer_eigenvalues_complex(a: &DMatrix<C64>, b: &DMatrix<C64>) -> Vec<(C64, C64)> {
    let n = a.nrows();
    if n < 2 {
        return (0..n).map(|i| (a[(i, i)], b[(i, i)])).collect();
    }
    let fa = faer::Mat::<C64>::from_fn(n, n, |i, j| a[(i, j)]);
    let fb = faer::Mat::<C64>::from_fn(n, n, |i, j| b[(i, j)]);
    let ge = fa.generalized_eigen(&fb).expect("faer generalized eigen");
    let sa: Vec<C64> = ge.S_a().column_vector().iter().copied().collect();
    let sb: Vec<C64> = ge.S_b().column_vector().iter().copied().collect();
    sa.into_iter().zip(sb).collect()
}
