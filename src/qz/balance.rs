//! Global power-of-two scaling of a pencil with extreme entries.
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
    if e > HIGH_EXP || e < -LOW_EXP {
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

#[cfg(test)]
mod tests {
    use super::*;

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
