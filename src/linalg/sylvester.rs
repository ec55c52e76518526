//! The Sylvester equation with triangular coefficients
//!
//! ```text
//!     T11 Z - Z T22 = F,        T11: n1 x n1 and T22: n2 x n2 upper triangular
//! ```
//!
//! solved column by column (Bartels and Stewart 1972, Comm. ACM 15): it decouples the two
//! diagonal blocks of a reordered Schur form, [T11 T12; 0 T22] = V diag(T11, T22) V^-1 with
//! V = [I -Z; 0 I] when T11 Z - Z T22 = -T12.

use nalgebra::DMatrix;

use super::complex::frobenius_c;
use super::C64;

/// Two eigenvalues, one of each block, are too close for the blocks to be separated: the
/// smallest |t11_ii - t22_jj| met, relative to nothing (an absolute gap).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Inseparable {
    pub gap: f64,
}

/// Solves T11 Z - Z T22 = F for upper-triangular `t11` (n1 x n1) and `t22` (n2 x n2). Reads
/// only; returns Z (n1 x n2), or [`Inseparable`] when an eigenvalue of T11 is within
/// 1e3 eps max(||T11||_F, ||T22||_F, 1) of one of T22 (about 2e-13 for matrices of norm one: the
/// solution would be amplified by more than 1e12).
pub fn solve_sylvester_upper(
    t11: &DMatrix<C64>,
    t22: &DMatrix<C64>,
    f: &DMatrix<C64>,
) -> Result<DMatrix<C64>, Inseparable> {
    let n1 = t11.nrows();
    let n2 = t22.nrows();
    let mut z = DMatrix::<C64>::zeros(n1, n2);
    let scale = frobenius_c(t11).max(frobenius_c(t22)).max(1.0);
    for j in 0..n2 {
        let mut b: Vec<C64> = (0..n1).map(|i| f[(i, j)]).collect();
        for l in 0..j {
            let w = t22[(l, j)];
            for (i, bi) in b.iter_mut().enumerate() {
                *bi += z[(i, l)] * w;
            }
        }
        let mu = t22[(j, j)];
        for i in (0..n1).rev() {
            let d = t11[(i, i)] - mu;
            if d.norm() < 1e3 * f64::EPSILON * scale {
                return Err(Inseparable { gap: d.norm() });
            }
            let zi = b[i] / d;
            z[(i, j)] = zi;
            for (k, bk) in b[..i].iter_mut().enumerate() {
                *bk -= t11[(k, i)] * zi;
            }
        }
    }
    Ok(z)
}
