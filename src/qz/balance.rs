//! Balancing of a pencil: permutations that isolate eigenvalues, and a global power-of-two
//! scaling of matrices with extreme entries.
//!
//! Permutation (Ward 1981, "Balancing the generalized eigenvalue problem", the permutation
//! step): permutation matrices P, R with `P A R`, `P B R` of the form
//! `[[T1, X, Y], [0, A22, W], [0, 0, T3]]` (T1, T3 upper triangular in both matrices) expose the
//! eigenvalues on the diagonals of T1 and T3 exactly; only the middle block `ilo..=ihi` needs
//! the QZ iteration. Permutations are unitary, so they are folded into Q and Z.
//!
//! `A = 2^ea A'`, `B = 2^eb B'`: the decomposition `Q^H A' Z = S'`, `Q^H B' Z = T'` gives
//! `Q^H A Z = 2^ea S'`, `Q^H B Z = 2^eb T'` with the same unitary Q and Z, and the scalings are
//! exact (powers of two) unless entries leave the normal range. Scaling each matrix so that its
//! largest entry lies in [1/2, 1) keeps squares of entries representable in the Householder and
//! norm computations, so entries of size 1e+-150 and beyond lose nothing. The eigenvalues
//! `alpha/beta` are multiplied by `2^(ea - eb)` only through the exact back-scaling.

use super::rotation::Entry;

/// Entries whose largest modulus lies in [2^-LOW_EXP, 2^HIGH_EXP] are left alone: all squares and
/// products of two such entries, summed over up to 2^40 terms, stay normal and finite, so the
/// unscaled computation is safe. Beyond that the matrix is scaled.
const HIGH_EXP: i32 = 200;
/// See [`HIGH_EXP`].
const LOW_EXP: i32 = 200;

/// Returns the exponent e such that `m * 2^-e` has its largest modulus in [1/2, 1), or 0 when the
/// entries are not extreme (or all zero).
pub(crate) fn scaling_exponent<E: Entry>(m: &[E]) -> i32 {
    let max = m.iter().map(|x| x.modulus()).fold(0.0f64, f64::max);
    if max == 0.0 || !max.is_finite() {
        return 0;
    }
    let e = max.log2().floor() as i32 + 1;
    if !(-LOW_EXP..=HIGH_EXP).contains(&e) {
        e
    } else {
        0
    }
}

/// Multiplies every entry of `m` by `2^e`, in steps that cannot overflow the factor itself.
/// Overwrites `m`.
pub(crate) fn scale_by_power_of_two<E: Entry>(m: &mut [E], e: i32) {
    let mut left = e;
    while left != 0 {
        let step = left.clamp(-1000, 1000);
        let f = 2f64.powi(step);
        for x in m.iter_mut() {
            *x = x.scale(f);
        }
        left -= step;
    }
}

/// Finds permutations isolating eigenvalues (see the module doc). Overwrites the n x n
/// column-major `a`, `b` with `P A R`, `P B R`, and `q`, `z` (identity on entry) with `P^T`, `R`,
/// so that `q^H A z`, `q^H B z` are the permuted matrices. Returns the active block
/// `(ilo, ihi)` (inclusive; n >= 1).
///
/// Rows whose entries in the active columns are all exactly zero except at one column are moved
/// to the bottom (with that column moved last); then columns whose entries in the active rows are
/// zero except at one row are moved to the top. Only exact zeros count, so the result is exact.
pub(crate) fn permute<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    z: &mut [E],
    n: usize,
) -> (usize, usize) {
    let nonzero = |a: &[E], b: &[E], i: usize, j: usize| {
        a[i + j * n] != E::zero() || b[i + j * n] != E::zero()
    };
    let swap_rows = |m: &mut [E], i: usize, k: usize| {
        if i != k {
            for col in m.chunks_exact_mut(n) {
                col.swap(i, k);
            }
        }
    };
    let swap_cols = |m: &mut [E], j: usize, k: usize| {
        // An empty `m` is a factor that is not accumulated.
        if j != k && !m.is_empty() {
            let (x, y) = super::rotation::two_columns(m, n, j, k);
            x.swap_with_slice(y);
        }
    };
    let (mut ilo, mut ihi) = (0usize, n - 1);
    // Rows with at most one nonzero in the active columns go to the bottom.
    while ilo < ihi {
        let mut found = None;
        for i in (ilo..=ihi).rev() {
            let mut count = 0;
            let mut jnz = ihi;
            for j in ilo..=ihi {
                if nonzero(a, b, i, j) {
                    count += 1;
                    jnz = j;
                    if count > 1 {
                        break;
                    }
                }
            }
            if count <= 1 {
                found = Some((i, jnz));
                break;
            }
        }
        let Some((i, j)) = found else { break };
        swap_rows(a, i, ihi);
        swap_rows(b, i, ihi);
        swap_cols(q, i, ihi);
        swap_cols(a, j, ihi);
        swap_cols(b, j, ihi);
        swap_cols(z, j, ihi);
        ihi -= 1;
    }
    // Columns with at most one nonzero in the active rows go to the top.
    while ilo < ihi {
        let mut found = None;
        for j in ilo..=ihi {
            let mut count = 0;
            let mut inz = ilo;
            for i in ilo..=ihi {
                if nonzero(a, b, i, j) {
                    count += 1;
                    inz = i;
                    if count > 1 {
                        break;
                    }
                }
            }
            if count <= 1 {
                found = Some((inz, j));
                break;
            }
        }
        let Some((i, j)) = found else { break };
        swap_cols(a, j, ilo);
        swap_cols(b, j, ilo);
        swap_cols(z, j, ilo);
        swap_rows(a, i, ilo);
        swap_rows(b, i, ilo);
        swap_cols(q, i, ilo);
        ilo += 1;
    }
    (ilo, ihi)
}

/// Row equilibration of a pencil by powers of two, for callers that own the mapping back.
///
/// Returns exponents `e_i` such that row i of `[A B]` times `2^-e_i` has its largest modulus in
/// [1/2, 1) (0 for an all-zero row). With `D = diag(2^-e_i)` the pencil `(D A, D B)` has the
/// same eigenvalues (det(D (A - zB)) = det(D) det(A - zB)) and the same right deflating
/// subspaces, but its left factor is `Q' = Q^H D` rather than unitary: the caller must apply D
/// to anything it later multiplies by Q^H (the decomposition itself always keeps Q unitary).
/// Useful when rows differ in scale by a factor near 1/EPS, where norm-wise tolerances would
/// call the small rows negligible.
pub fn row_equilibration_exponents(
    a: &nalgebra::DMatrix<f64>,
    b: &nalgebra::DMatrix<f64>,
) -> Vec<i32> {
    let n = a.nrows().min(b.nrows());
    (0..n)
        .map(|i| {
            let m = a
                .row(i)
                .iter()
                .chain(b.row(i).iter())
                .map(|x| x.abs())
                .fold(0.0f64, f64::max);
            if m == 0.0 || !m.is_finite() {
                0
            } else {
                m.log2().floor() as i32 + 1
            }
        })
        .collect()
}

/// Multiplies row i of `m` by `2^-e_i` (overwrites `m`; exact for normal numbers).
pub fn scale_rows(m: &mut nalgebra::DMatrix<f64>, exponents: &[i32]) {
    for (i, &e) in exponents.iter().enumerate().take(m.nrows()) {
        let mut row = m.row(i).iter().copied().collect::<Vec<f64>>();
        scale_by_power_of_two(&mut row, -e);
        for (j, x) in row.into_iter().enumerate() {
            m[(i, j)] = x;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::qz::C64;
    use nalgebra::DMatrix;

    /// The permuted pencil is `q^H A z`, `q^H B z` exactly, triangular outside the active block.
    #[test]
    fn permutation_isolates_and_rebuilds() {
        let n = 6;
        // Row 4 of (A, B) has a single nonzero (column 1); column 3 a single nonzero (row 0).
        let mut a =
            DMatrix::<C64>::from_fn(n, n, |i, j| C64::new(1.0 + (i * n + j) as f64 * 0.1, 0.0));
        let mut b = a.map(|x| x * 0.5);
        for j in 0..n {
            a[(4, j)] = C64::new(0.0, 0.0);
            b[(4, j)] = C64::new(0.0, 0.0);
        }
        a[(4, 1)] = C64::new(2.0, 0.0);
        for i in 0..n {
            a[(i, 3)] = C64::new(0.0, 0.0);
            b[(i, 3)] = C64::new(0.0, 0.0);
        }
        a[(0, 3)] = C64::new(3.0, 0.0);
        b[(0, 3)] = C64::new(1.0, 0.0);
        let (mut pa, mut pb) = (a.clone(), b.clone());
        let mut q = DMatrix::<C64>::identity(n, n);
        let mut z = DMatrix::<C64>::identity(n, n);
        let (ilo, ihi) = permute(
            pa.as_mut_slice(),
            pb.as_mut_slice(),
            q.as_mut_slice(),
            z.as_mut_slice(),
            n,
        );
        assert!(ilo >= 1 && ihi <= n - 2, "{ilo} {ihi}");
        assert_eq!(q.adjoint() * &a * &z, pa);
        assert_eq!(q.adjoint() * &b * &z, pb);
        for j in 0..n {
            for i in j + 1..n {
                if j < ilo || i > ihi {
                    assert_eq!(pa[(i, j)], C64::new(0.0, 0.0));
                    assert_eq!(pb[(i, j)], C64::new(0.0, 0.0));
                }
            }
        }
    }

    #[test]
    fn exponent_only_for_extremes() {
        assert_eq!(scaling_exponent(&[1e8f64, -1e-8]), 0);
        assert_eq!(scaling_exponent(&[0.0f64; 4]), 0);
        let e = scaling_exponent(&[1e300f64, 3.0]);
        assert!(e > 0);
        let mut v = [1e300f64, 3.0];
        scale_by_power_of_two(&mut v, -e);
        assert!(v[0] >= 0.5 && v[0] < 1.0);
        let e = scaling_exponent(&[4e-320f64]);
        let mut v = [4e-320f64];
        scale_by_power_of_two(&mut v, -e);
        assert!(v[0] >= 0.5 && v[0] < 1.0, "{}", v[0]);
    }
}
