//! Cholesky factorizations of symmetric matrices
//!
//! ```text
//!     A = L L',        L lower triangular,  l_jj = sqrt(a_jj - sum_{k<j} l_jk^2)
//! ```
//!
//! Two variants: [`cholesky_in_place`] for a matrix that must be positive definite (a Kalman
//! innovation variance: it returns log det A as well), and [`semidefinite_factor`] for a
//! covariance that may be only semidefinite (a degenerate innovation gets a zero column), which
//! reports where the matrix stops being semidefinite.

use nalgebra::DMatrix;

/// Why a symmetric matrix has no semidefinite factor; indices are rows and columns of the input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FactorError {
    /// The matrix is not square.
    Shape { rows: usize, cols: usize },
    /// Row `row` has a NaN or infinite entry.
    NonFinite { row: usize },
    /// Entries (first, second) and (second, first) differ by more than the pivot tolerance
    /// times the largest diagonal entry (first < second).
    NotSymmetric { first: usize, second: usize },
    /// Given the rows before it, row `index` would have variance `pivot` (negative beyond the
    /// tolerance, or zero with a nonzero remainder of its column).
    NotPositiveSemidefinite { index: usize, pivot: f64 },
}

/// The lower-triangular L with L L' = `a` for a symmetric positive semidefinite `a` (reads only),
/// allowing zero pivots: a pivot of magnitude at most `pivot_tol` times the largest diagonal
/// entry counts as zero and gives a zero column (the rest of that column must vanish too, to
/// about the square root of the tolerance, or the matrix is indefinite). Returns L or the first
/// failure in row order.
pub fn semidefinite_factor(a: &DMatrix<f64>, pivot_tol: f64) -> Result<DMatrix<f64>, FactorError> {
    let n = a.nrows();
    if a.ncols() != n {
        return Err(FactorError::Shape {
            rows: n,
            cols: a.ncols(),
        });
    }
    for i in 0..n {
        if (0..n).any(|j| !a[(i, j)].is_finite()) {
            return Err(FactorError::NonFinite { row: i });
        }
    }
    let scale = (0..n).map(|i| a[(i, i)].abs()).fold(0.0, f64::max);
    for i in 0..n {
        for j in 0..i {
            if (a[(i, j)] - a[(j, i)]).abs() > pivot_tol * scale.max(f64::MIN_POSITIVE) {
                return Err(FactorError::NotSymmetric {
                    first: j,
                    second: i,
                });
            }
        }
    }
    let zero = pivot_tol * scale;
    let mut l = DMatrix::<f64>::zeros(n, n);
    for j in 0..n {
        let mut d = a[(j, j)];
        for k in 0..j {
            d -= l[(j, k)] * l[(j, k)];
        }
        if d < -zero {
            return Err(FactorError::NotPositiveSemidefinite { index: j, pivot: d });
        }
        if d <= zero {
            // Degenerate: the rest of the column must vanish too, or the matrix is indefinite.
            for i in (j + 1)..n {
                let mut s = a[(i, j)];
                for k in 0..j {
                    s -= l[(i, k)] * l[(j, k)];
                }
                if s.abs() > zero.sqrt() * scale.sqrt() + zero {
                    return Err(FactorError::NotPositiveSemidefinite { index: j, pivot: d });
                }
            }
            continue;
        }
        let r = d.sqrt();
        l[(j, j)] = r;
        for i in (j + 1)..n {
            let mut s = a[(i, j)];
            for k in 0..j {
                s -= l[(i, k)] * l[(j, k)];
            }
            l[(i, j)] = s / r;
        }
    }
    Ok(l)
}

/// In-place Cholesky of the symmetric `a` (lower triangle read and overwritten with L; the strict
/// upper triangle is left as it was). Returns log det a, or `None` when a pivot is not above
/// `rel_tol` times the largest diagonal entry (the Kalman filter passes 1e-13: below it the
/// matrix is singular to working precision).
pub fn cholesky_in_place(a: &mut DMatrix<f64>, rel_tol: f64) -> Option<f64> {
    let n = a.nrows();
    let scale = (0..n).map(|i| a[(i, i)].abs()).fold(0.0, f64::max);
    let mut logdet = 0.0;
    for j in 0..n {
        let mut d = a[(j, j)];
        for k in 0..j {
            d -= a[(j, k)] * a[(j, k)];
        }
        if !(d > rel_tol * scale) {
            return None;
        }
        let l = d.sqrt();
        a[(j, j)] = l;
        logdet += 2.0 * l.ln();
        for i in (j + 1)..n {
            let mut s = a[(i, j)];
            for k in 0..j {
                s -= a[(i, k)] * a[(j, k)];
            }
            a[(i, j)] = s / l;
        }
    }
    Some(logdet)
}

/// Overwrites each column of `b` with L^{-T} L^{-1} column (solves (L L') x = b), L the lower
/// triangle of `l` (from [`cholesky_in_place`]; read only).
pub fn cholesky_solve(l: &DMatrix<f64>, b: &mut DMatrix<f64>) {
    let n = l.nrows();
    for c in 0..b.ncols() {
        for i in 0..n {
            let mut s = b[(i, c)];
            for k in 0..i {
                s -= l[(i, k)] * b[(k, c)];
            }
            b[(i, c)] = s / l[(i, i)];
        }
        for i in (0..n).rev() {
            let mut s = b[(i, c)];
            for k in (i + 1)..n {
                s -= l[(k, i)] * b[(k, c)];
            }
            b[(i, c)] = s / l[(i, i)];
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn factors_rebuild_and_failures_are_located() {
        // [4 2; 2 2] = L L' with L = [2 0; 1 1] (by hand).
        let a = DMatrix::from_row_slice(2, 2, &[4.0, 2.0, 2.0, 2.0]);
        let l = semidefinite_factor(&a, 1e-12).unwrap();
        assert_eq!(l, DMatrix::from_row_slice(2, 2, &[2.0, 0.0, 1.0, 1.0]));
        let mut b = a.clone();
        let logdet = cholesky_in_place(&mut b, 1e-13).unwrap();
        assert!((logdet - 4.0f64.ln()).abs() < 1e-14);
        let mut x = DMatrix::from_column_slice(2, 1, &[6.0, 4.0]);
        cholesky_solve(&b, &mut x);
        // [4 2; 2 2] [1; 1] = [6; 4].
        assert!((x[(0, 0)] - 1.0).abs() < 1e-14 && (x[(1, 0)] - 1.0).abs() < 1e-14);
        // A degenerate second row is a zero column; an indefinite one is located.
        let singular = DMatrix::from_row_slice(2, 2, &[1.0, 1.0, 1.0, 1.0]);
        assert_eq!(semidefinite_factor(&singular, 1e-12).unwrap()[(1, 1)], 0.0);
        assert!(cholesky_in_place(&mut singular.clone(), 1e-13).is_none());
        let indefinite = DMatrix::from_row_slice(2, 2, &[1.0, 2.0, 2.0, 1.0]);
        assert!(matches!(
            semidefinite_factor(&indefinite, 1e-12),
            Err(FactorError::NotPositiveSemidefinite { index: 1, .. })
        ));
        let asymmetric = DMatrix::from_row_slice(2, 2, &[1.0, 0.5, 0.0, 1.0]);
        assert_eq!(
            semidefinite_factor(&asymmetric, 1e-12),
            Err(FactorError::NotSymmetric {
                first: 0,
                second: 1
            })
        );
    }
}
