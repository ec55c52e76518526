//! Real and complex Schur forms of a real square matrix, and reordering of the complex one.
//!
//! ```text
//!     G = Q T Q'     (Q orthogonal, T quasi-upper-triangular: 1 x 1 and 2 x 2 diagonal blocks)
//!     G = U T U^H    (U unitary, T upper triangular)
//! ```
//!
//! The real form comes from nalgebra's Francis QR iteration; the complex form triangularizes each
//! 2 x 2 block of the real one by one unitary similarity, and [`ComplexSchur::reorder_front`]
//! moves selected eigenvalues to the front by plane rotations (the `qz` rotation type,
//! re-exported as `linalg::Rotation` within the crate).

use nalgebra::DMatrix;

use super::lyapunov::{LyapunovError, MAX_DIMENSION, SCHUR_EPS, SCHUR_MAX_SWEEPS_PER_DIM};
use super::{Rotation, C64};

/// A complex Schur decomposition G = U T U^H: U unitary, T upper triangular.
#[derive(Debug, Clone, PartialEq)]
pub struct ComplexSchur {
    pub u: DMatrix<C64>,
    pub t: DMatrix<C64>,
}

impl ComplexSchur {
    /// Decomposes the real square matrix `g` (not overwritten) with the default sweep budget
    /// [`SCHUR_MAX_SWEEPS_PER_DIM`]. Returns the factors with the strictly lower part of T set to
    /// exact zeros, or an error if the QR iteration does not converge or `g` has a non-finite
    /// entry.
    pub fn new(g: &DMatrix<f64>) -> Result<Self, LyapunovError> {
        Self::with_sweeps(g, SCHUR_MAX_SWEEPS_PER_DIM)
    }

    /// As [`Self::new`], with at most `sweeps_per_dim * n` QR sweeps (at least one per
    /// dimension).
    pub fn with_sweeps(g: &DMatrix<f64>, sweeps_per_dim: usize) -> Result<Self, LyapunovError> {
        let n = g.nrows();
        // Real Schur form first (a real QR iteration is about four times cheaper than a complex
        // one), then each 2 x 2 block of a complex pair is triangularized by one unitary rotation.
        let (q, tr) = francis_qr(g, sweeps_per_dim)?;
        let scale = tr.norm().max(f64::MIN_POSITIVE);
        let negligible = 1e3 * SCHUR_EPS * scale;
        let mut t = tr.map(|v| C64::new(v, 0.0));
        let mut u = q.map(|v| C64::new(v, 0.0));
        // Below the subdiagonal the form is zero; a subdiagonal entry marks a 2 x 2 block, and two
        // in a row would mean the iteration did not finish.
        for j in 0..n {
            for i in (j + 2)..n {
                if t[(i, j)].norm() > negligible {
                    return Err(LyapunovError::SchurNoConvergence);
                }
                t[(i, j)] = C64::new(0.0, 0.0);
            }
        }
        let mut k = 0;
        while k + 1 < n {
            if t[(k + 1, k)].norm() <= negligible {
                t[(k + 1, k)] = C64::new(0.0, 0.0);
                k += 1;
                continue;
            }
            if k + 2 < n && t[(k + 2, k + 1)].norm() > negligible {
                return Err(LyapunovError::SchurNoConvergence);
            }
            triangularize_block(&mut t, &mut u, k);
            k += 2;
        }
        Ok(ComplexSchur { u, t })
    }

    /// The eigenvalues: the diagonal of T, in its current order.
    pub fn eigenvalues(&self) -> Vec<C64> {
        (0..self.t.nrows()).map(|i| self.t[(i, i)]).collect()
    }

    /// Reorders the decomposition so that the eigenvalues for which `front` is true come first
    /// (stably: their relative order is kept), by swapping adjacent diagonal entries with plane
    /// rotations (the method of LAPACK's complex `trexc`; Golub and Van Loan, Matrix Computations,
    /// 4th ed., section 7.6.2). Overwrites `self.u` and `self.t`; G = U T U^H still holds. Returns
    /// how many eigenvalues were selected.
    pub fn reorder_front(&mut self, front: impl Fn(C64) -> bool) -> usize {
        let n = self.t.nrows();
        let mut placed = 0;
        for k in 0..n {
            if front(self.t[(k, k)]) {
                // Bubble the eigenvalue at k up to position `placed`.
                let mut pos = k;
                while pos > placed {
                    self.swap_adjacent(pos - 1);
                    pos -= 1;
                }
                placed += 1;
            }
        }
        placed
    }

    /// Swaps the diagonal entries k and k+1 of T by one rotation applied to rows and columns k,
    /// k+1 of T and to columns k, k+1 of U. Overwrites both.
    fn swap_adjacent(&mut self, k: usize) {
        let n = self.t.nrows();
        let t11 = self.t[(k, k)];
        let t22 = self.t[(k + 1, k + 1)];
        let (Rotation { c: cs, s: sn }, _) = Rotation::zeroing(self.t[(k, k + 1)], t22 - t11);
        // Rows k, k+1 from column k+2 on.
        for j in (k + 2)..n {
            let x = self.t[(k, j)];
            let y = self.t[(k + 1, j)];
            self.t[(k, j)] = x * cs + sn * y;
            self.t[(k + 1, j)] = y * cs - sn.conj() * x;
        }
        // Columns k, k+1 above row k, with the conjugate rotation.
        let snc = sn.conj();
        for i in 0..k {
            let x = self.t[(i, k)];
            let y = self.t[(i, k + 1)];
            self.t[(i, k)] = x * cs + snc * y;
            self.t[(i, k + 1)] = y * cs - snc.conj() * x;
        }
        self.t[(k, k)] = t22;
        self.t[(k + 1, k + 1)] = t11;
        for i in 0..n {
            let x = self.u[(i, k)];
            let y = self.u[(i, k + 1)];
            self.u[(i, k)] = x * cs + snc * y;
            self.u[(i, k + 1)] = y * cs - snc.conj() * x;
        }
    }
}

/// A real Schur decomposition G = Q T Q': Q orthogonal, T quasi-upper-triangular with 1 x 1
/// blocks (real eigenvalues) and 2 x 2 blocks (complex pairs) on the diagonal.
#[derive(Debug, Clone, PartialEq)]
pub struct RealSchur {
    pub q: DMatrix<f64>,
    pub t: DMatrix<f64>,
    /// The diagonal blocks as (first index, size 1 or 2), in order.
    pub blocks: Vec<(usize, usize)>,
}

impl RealSchur {
    /// Decomposes the real square matrix `g` (not overwritten) with the default sweep budget
    /// [`SCHUR_MAX_SWEEPS_PER_DIM`]: entries of T below the subdiagonal and negligible
    /// subdiagonal entries are set to exact zeros. Errors if the QR iteration does not converge
    /// or `g` has a non-finite entry.
    pub fn new(g: &DMatrix<f64>) -> Result<Self, LyapunovError> {
        Self::with_sweeps(g, SCHUR_MAX_SWEEPS_PER_DIM)
    }

    /// As [`Self::new`], with at most `sweeps_per_dim * n` QR sweeps (at least one per
    /// dimension).
    pub fn with_sweeps(g: &DMatrix<f64>, sweeps_per_dim: usize) -> Result<Self, LyapunovError> {
        let n = g.nrows();
        let (q, mut t) = francis_qr(g, sweeps_per_dim)?;
        let negligible = 1e3 * SCHUR_EPS * t.norm().max(f64::MIN_POSITIVE);
        for j in 0..n {
            for i in (j + 2)..n {
                if t[(i, j)].abs() > negligible {
                    return Err(LyapunovError::SchurNoConvergence);
                }
                t[(i, j)] = 0.0;
            }
        }
        let mut blocks = Vec::new();
        let mut k = 0;
        while k < n {
            if k + 1 < n && t[(k + 1, k)].abs() > negligible {
                if k + 2 < n && t[(k + 2, k + 1)].abs() > negligible {
                    return Err(LyapunovError::SchurNoConvergence);
                }
                blocks.push((k, 2));
                k += 2;
            } else {
                if k + 1 < n {
                    t[(k + 1, k)] = 0.0;
                }
                blocks.push((k, 1));
                k += 1;
            }
        }
        Ok(RealSchur { q, t, blocks })
    }

    /// The eigenvalues, block by block (a 2 x 2 block gives its pair).
    pub fn eigenvalues(&self) -> Vec<C64> {
        let mut out = Vec::with_capacity(self.t.nrows());
        for &(k, size) in &self.blocks {
            if size == 1 {
                out.push(C64::new(self.t[(k, k)], 0.0));
            } else {
                let (a, b, c, d) = (
                    self.t[(k, k)],
                    self.t[(k, k + 1)],
                    self.t[(k + 1, k)],
                    self.t[(k + 1, k + 1)],
                );
                let half = C64::new((a + d) * 0.5, 0.0);
                let disc = C64::new(((a - d) * 0.5).powi(2) + b * c, 0.0).sqrt();
                out.push(half + disc);
                out.push(half - disc);
            }
        }
        out
    }

    /// Largest eigenvalue modulus.
    pub fn spectral_radius(&self) -> f64 {
        self.eigenvalues()
            .iter()
            .map(|z| z.norm())
            .fold(0.0, f64::max)
    }
}

/// The raw real Schur factors (Q, T) of the square `g` (read only) by nalgebra's Francis QR
/// iteration with at most `sweeps_per_dim * n` sweeps (at least one per dimension; nalgebra
/// reads a budget of zero as unlimited, which is never passed). Errors: `Shape`, `TooLarge`,
/// `NonFinite` on the input; `SchurNoConvergence` when the budget runs out or a factor is not
/// finite. T is not cleaned below the subdiagonal.
fn francis_qr(
    g: &DMatrix<f64>,
    sweeps_per_dim: usize,
) -> Result<(DMatrix<f64>, DMatrix<f64>), LyapunovError> {
    let n = g.nrows();
    if g.ncols() != n {
        return Err(LyapunovError::Shape {
            g_rows: n,
            g_cols: g.ncols(),
            w_rows: n,
            w_cols: n,
        });
    }
    if n > MAX_DIMENSION {
        return Err(LyapunovError::TooLarge { n });
    }
    if g.iter().any(|v| !v.is_finite()) {
        return Err(LyapunovError::NonFinite);
    }
    let schur = nalgebra::Schur::try_new(g.clone(), SCHUR_EPS, sweeps_per_dim.max(1) * n.max(1))
        .ok_or(LyapunovError::SchurNoConvergence)?;
    let (q, t) = schur.unpack();
    if q.iter().chain(t.iter()).any(|v| !v.is_finite()) {
        return Err(LyapunovError::SchurNoConvergence);
    }
    Ok((q, t))
}

/// Triangularizes the 2 x 2 diagonal block of `t` at rows and columns k, k+1: with lambda an
/// eigenvalue of the block [a b; c d] (c != 0) and v = (lambda - d, c)/norm its eigenvector, the
/// unitary V = [v, (-conj v2, conj v1)] gives V^H B V = [lambda *; 0 mu]. Overwrites rows and
/// columns k, k+1 of `t` (T <- V^H T V restricted to them) and columns k, k+1 of `u` (U <- U V).
fn triangularize_block(t: &mut DMatrix<C64>, u: &mut DMatrix<C64>, k: usize) {
    let n = t.nrows();
    let a = t[(k, k)];
    let b = t[(k, k + 1)];
    let c = t[(k + 1, k)];
    let d = t[(k + 1, k + 1)];
    let half_trace = (a + d) * 0.5;
    let disc = ((a - d) * 0.5) * ((a - d) * 0.5) + b * c;
    let lambda = half_trace + disc.sqrt();
    let (mut v1, mut v2) = (lambda - d, c);
    let norm = (v1.norm_sqr() + v2.norm_sqr()).sqrt();
    if norm == 0.0 || !norm.is_finite() {
        return;
    }
    v1 /= norm;
    v2 /= norm;
    let (w1, w2) = (-v2.conj(), v1.conj());
    // Rows k, k+1: [r1; r2] <- V^H [r1; r2] for every column from k on.
    for j in k..n {
        let x = t[(k, j)];
        let y = t[(k + 1, j)];
        t[(k, j)] = v1.conj() * x + v2.conj() * y;
        t[(k + 1, j)] = w1.conj() * x + w2.conj() * y;
    }
    // Columns k, k+1: [c1 c2] <- [c1 c2] V for every row up to k+1.
    for i in 0..(k + 2) {
        let x = t[(i, k)];
        let y = t[(i, k + 1)];
        t[(i, k)] = x * v1 + y * v2;
        t[(i, k + 1)] = x * w1 + y * w2;
    }
    t[(k + 1, k)] = C64::new(0.0, 0.0);
    for i in 0..n {
        let x = u[(i, k)];
        let y = u[(i, k + 1)];
        u[(i, k)] = x * v1 + y * v2;
        u[(i, k + 1)] = x * w1 + y * w2;
    }
}
