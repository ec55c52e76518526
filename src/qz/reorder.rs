//! Reordering of a complex generalized Schur form (Van Dooren 1981, "A generalized eigenvalue
//! approach for solving Riccati equations"; Kagstrom 1993 for the accuracy tests).
//!
//! Swapping adjacent diagonal entries j, j+1 of the upper-triangular pair (S, T): with the 2x2
//! blocks `S_2 = [[a11, a12], [0, a22]]`, `T_2 = [[b11, b12], [0, b22]]`, the vector
//! `x = [g, -f]` with `f = a22 b11 - b22 a11`, `g = a22 b12 - b22 a12` spans the eigenvector of
//! the pair `(a22, b22)`. A column rotation `Z_2` with first column `x/|x|` and a row rotation
//! `Q_2` re-triangularising the better-conditioned of `S_2 Z_2`, `T_2 Z_2` give
//! `Q_2^H S_2 Z_2`, `Q_2^H T_2 Z_2` upper triangular with the two eigenvalues exchanged.
//! The full update is `S <- Q_j^H S Z_j`, `T <- Q_j^H T Z_j`, `Q <- Q Q_j`, `Z <- Z Z_j`, which
//! keeps `Q^H A Z = S`, `Q^H B Z = T` and Q, Z unitary.
//!
//! Before a swap is applied it must pass
//! * the weak test: the new entries below the diagonal are at most
//!   `swap_test_factor * EPS * ||S_2||_F` (and the same for T), and
//! * the strong test: undoing the rotations on the tentative 2x2 result restores `S_2`, `T_2`
//!   within the same tolerances.
//!
//! A rejected swap leaves the matrices untouched and is reported as `SwapRejected { index: j }`.

use super::iteration::frobenius;
use super::rotation::{rotate_columns, rotate_rows, Entry, Rotation};
use super::{QzError, C64};

/// Unit roundoff spacing for the swap tolerances (common practice).
const EPS: f64 = f64::EPSILON;
/// Absolute floor of the swap tolerances: smallest normal number divided by EPS, so that swaps
/// of blocks that are entirely tiny are judged against a non-zero tolerance.
const SMALL: f64 = f64::MIN_POSITIVE / f64::EPSILON;

/// The four n x n column-major factors of the decomposition being reordered.
pub(crate) struct Factors<'a> {
    pub s: &'a mut [C64],
    pub t: &'a mut [C64],
    /// Empty when Q is not accumulated.
    pub q: &'a mut [C64],
    pub z: &'a mut [C64],
    pub n: usize,
}

/// Undoes, on a 2x2 block pair held column-major as `[m11, m21, m12, m22]`, the column
/// rotation `gz` followed by the row rotation `gq` (overwrites `m`).
fn undo_2x2(m: &mut [C64; 4], gz: Rotation<C64>, gq: Rotation<C64>) {
    rotate_rows(m, 2, 0, 0..2, gq.inverse());
    let (x, y) = m.split_at_mut(2);
    super::rotation::rotate_pair(x, y, gz.inverse());
}

/// Makes `T[j, j]` real and non-negative by a unimodular scaling of column j of the upper
/// triangular S (rows 0..=j), T (rows 0..=j) and of Z (all rows), all n x n column-major: an
/// exact-in-exact-arithmetic unitary equivalence. A `T[j, j]` of modulus at most the smallest
/// normal number becomes an exact zero (an infinite eigenvalue); one already real and
/// non-negative is left alone. The one definition, for the reordering and the QZ iteration.
pub(crate) fn normalize_beta(s: &mut [C64], t: &mut [C64], z: &mut [C64], n: usize, j: usize) {
    let tjj = t[j * n + j];
    let absb = tjj.modulus();
    if absb > f64::MIN_POSITIVE && (tjj.im != 0.0 || tjj.re < 0.0) {
        let sign = tjj.conj().unscale(absb);
        for x in &mut t[j * n..j * n + j] {
            *x *= sign;
        }
        t[j * n + j] = C64::new(absb, 0.0);
        for x in &mut s[j * n..j * n + j + 1] {
            *x *= sign;
        }
        for x in &mut z[j * n..(j + 1) * n] {
            *x *= sign;
        }
    } else if absb <= f64::MIN_POSITIVE {
        t[j * n + j] = C64::new(0.0, 0.0);
    }
}

impl Factors<'_> {
    #[inline]
    fn at(m: &[C64], n: usize, i: usize, j: usize) -> C64 {
        m[i + j * n]
    }

    /// Makes `T[j, j]` real and non-negative (see [`normalize_beta`]).
    pub fn normalize_beta(&mut self, j: usize) {
        normalize_beta(self.s, self.t, self.z, self.n, j);
    }

    /// Swaps the diagonal entries j and j+1 (see the module doc). Overwrites S, T, Q, Z on
    /// success (the new `T[j, j]`, `T[j+1, j+1]` may be complex: [`reorder_selected`] makes them
    /// real again at the end); on rejection leaves them unchanged and returns
    /// `SwapRejected { index: j }`.
    pub fn swap(&mut self, j: usize, test_factor: f64) -> Result<(), QzError> {
        let n = self.n;
        let s0 = [
            Self::at(self.s, n, j, j),
            C64::new(0.0, 0.0),
            Self::at(self.s, n, j, j + 1),
            Self::at(self.s, n, j + 1, j + 1),
        ];
        let t0 = [
            Self::at(self.t, n, j, j),
            C64::new(0.0, 0.0),
            Self::at(self.t, n, j, j + 1),
            Self::at(self.t, n, j + 1, j + 1),
        ];
        let thresh_a = (test_factor * EPS * frobenius(&s0)).max(SMALL);
        let thresh_b = (test_factor * EPS * frobenius(&t0)).max(SMALL);
        let (a11, a12, a22) = (s0[0], s0[2], s0[3]);
        let (b11, b12, b22) = (t0[0], t0[2], t0[3]);
        let f = a22 * b11 - b22 * a11;
        let g = a22 * b12 - b22 * a12;
        let weight_s = a22.modulus() * b11.modulus();
        let weight_t = a11.modulus() * b22.modulus();
        // Column rotation whose first column is proportional to [g, -f].
        let (gz, _) = Rotation::zeroing(g, f);
        let gz = Rotation {
            c: gz.c,
            s: -gz.s.conj(),
        };
        let (mut s2, mut t2) = (s0, t0);
        {
            let (x, y) = s2.split_at_mut(2);
            super::rotation::rotate_pair(x, y, gz);
            let (x, y) = t2.split_at_mut(2);
            super::rotation::rotate_pair(x, y, gz);
        }
        let (gq, _) = if weight_s >= weight_t {
            Rotation::zeroing(s2[0], s2[1])
        } else {
            Rotation::zeroing(t2[0], t2[1])
        };
        rotate_rows(&mut s2, 2, 0, 0..2, gq);
        rotate_rows(&mut t2, 2, 0, 0..2, gq);
        let weak = s2[1].modulus() <= thresh_a && t2[1].modulus() <= thresh_b;
        if !weak {
            return Err(QzError::SwapRejected { index: j });
        }
        let (mut s3, mut t3) = (s2, t2);
        undo_2x2(&mut s3, gz, gq);
        undo_2x2(&mut t3, gz, gq);
        let ds: [C64; 4] = std::array::from_fn(|k| s3[k] - s0[k]);
        let dt: [C64; 4] = std::array::from_fn(|k| t3[k] - t0[k]);
        let strong = frobenius(&ds) <= thresh_a && frobenius(&dt) <= thresh_b;
        if !strong {
            return Err(QzError::SwapRejected { index: j });
        }
        // Accepted: apply to the whole decomposition.
        rotate_columns(self.s, n, j, j + 1, 0..j + 2, gz);
        rotate_columns(self.t, n, j, j + 1, 0..j + 2, gz);
        rotate_rows(self.s, n, j, j..n, gq);
        rotate_rows(self.t, n, j, j..n, gq);
        self.s[j * n + j + 1] = C64::new(0.0, 0.0);
        self.t[j * n + j + 1] = C64::new(0.0, 0.0);
        // An exactly infinite eigenvalue stays exactly infinite: its new beta is rounding of
        // size EPS ||T_2|| (within the weak-test tolerance, so zeroing it is a perturbation the
        // tests already accept).
        if b11 == C64::new(0.0, 0.0) && self.t[(j + 1) * n + j + 1].modulus() <= thresh_b {
            self.t[(j + 1) * n + j + 1] = C64::new(0.0, 0.0);
        }
        if b22 == C64::new(0.0, 0.0) && self.t[j * n + j].modulus() <= thresh_b {
            self.t[j * n + j] = C64::new(0.0, 0.0);
        }
        rotate_columns(self.z, n, j, j + 1, 0..n, gz);
        if !self.q.is_empty() {
            rotate_columns(self.q, n, j, j + 1, 0..n, gq.for_left_accumulation());
        }
        Ok(())
    }
}

/// Reorders so that the eigenvalues with `selected[i] == true` lead, keeping the relative order
/// within both groups; each selected entry moves up only past unselected ones. Overwrites the
/// factors and `selected` (permuted alongside), and leaves every `T[i, i]` real non-negative.
/// Returns the number selected. On a rejected swap returns the error with the decomposition
/// valid (partly reordered).
pub(crate) fn reorder_selected(
    f: &mut Factors<'_>,
    selected: &mut [bool],
    test_factor: f64,
) -> Result<usize, QzError> {
    let mut leading = 0usize;
    let mut result = Ok(());
    // Positions from `touched_from` on may hold a complex beta after swaps.
    let mut touched_from = f.n;
    'outer: for k in 0..f.n {
        if selected[k] {
            let mut pos = k;
            while pos > leading {
                if let Err(e) = f.swap(pos - 1, test_factor) {
                    result = Err(e);
                    break 'outer;
                }
                touched_from = touched_from.min(pos - 1);
                selected.swap(pos - 1, pos);
                pos -= 1;
            }
            leading += 1;
        }
    }
    for j in touched_from..f.n {
        f.normalize_beta(j);
    }
    result.map(|()| leading)
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::DMatrix;

    /// A single swap of a 2x2 triangular pair exchanges the eigenvalues and rebuilds the input
    /// within 20 eps (the weak-test tolerance; Kagstrom 1993).
    #[test]
    fn swap_exchanges_a_2x2_pair() {
        let n = 2;
        let s0 = DMatrix::from_row_slice(
            2,
            2,
            &[
                C64::new(1.0, 0.5),
                C64::new(0.3, -2.0),
                C64::new(0.0, 0.0),
                C64::new(-4.0, 1.0),
            ],
        );
        let t0 = DMatrix::from_row_slice(
            2,
            2,
            &[
                C64::new(2.0, 0.0),
                C64::new(1.0, 1.0),
                C64::new(0.0, 0.0),
                C64::new(0.5, 0.0),
            ],
        );
        let (mut s, mut t) = (s0.clone(), t0.clone());
        let mut q = DMatrix::<C64>::identity(n, n);
        let mut z = DMatrix::<C64>::identity(n, n);
        let mut f = Factors {
            s: s.as_mut_slice(),
            t: t.as_mut_slice(),
            q: q.as_mut_slice(),
            z: z.as_mut_slice(),
            n,
        };
        f.swap(0, 20.0).unwrap();
        f.normalize_beta(0);
        f.normalize_beta(1);
        let lam = |s: &DMatrix<C64>, t: &DMatrix<C64>, i: usize| s[(i, i)] / t[(i, i)];
        assert!((lam(&s, &t, 0) - lam(&s0, &t0, 1)).norm() < 1e-14);
        assert!((lam(&s, &t, 1) - lam(&s0, &t0, 0)).norm() < 1e-14);
        assert_eq!(s[(1, 0)], C64::new(0.0, 0.0));
        assert!(t[(0, 0)].im == 0.0 && t[(0, 0)].re >= 0.0);
        let tol = 20.0 * EPS;
        assert!((&q * &s * z.adjoint() - &s0).norm() <= tol * s0.norm());
        assert!((&q * &t * z.adjoint() - &t0).norm() <= tol * t0.norm());
    }

    /// Swapping two equal eigenvalues (here a Jordan-like 2x2 pair with root 2 twice) passes
    /// both tests and changes nothing: f = 0 makes both rotations the identity.
    #[test]
    fn swapping_equal_eigenvalues_is_an_accepted_no_op() {
        let n = 2;
        let c = |x: f64| C64::new(x, 0.0);
        let s0 = DMatrix::from_row_slice(2, 2, &[c(2.0), c(0.7), c(0.0), c(2.0)]);
        let t0 = DMatrix::from_row_slice(2, 2, &[c(1.0), c(-0.3), c(0.0), c(1.0)]);
        let (mut s, mut t) = (s0.clone(), t0.clone());
        let mut q = DMatrix::<C64>::identity(n, n);
        let mut z = DMatrix::<C64>::identity(n, n);
        let mut f = Factors {
            s: s.as_mut_slice(),
            t: t.as_mut_slice(),
            q: q.as_mut_slice(),
            z: z.as_mut_slice(),
            n,
        };
        assert_eq!(f.swap(0, 20.0), Ok(()));
        assert_eq!(s, s0);
        assert_eq!(t, t0);
        assert_eq!(q, DMatrix::<C64>::identity(n, n));
    }
}
