//! The discrete Lyapunov (Stein) equation
//!
//! ```text
//!     X = G X G' + W,        G: n x n with every |eigenvalue| < 1,  W = W' (positive semidefinite)
//! ```
//!
//! whose solution X = sum_{k>=0} G^k W G'^k is the unconditional covariance of a stable VAR(1)
//! s_t = G s_{t-1} + u_t with Var(u_t) = W.
//!
//! Primary method (Barraud 1977, "A numerical algorithm to solve A'XA - X = Q", IEEE Trans.
//! Automatic Control 22; Kitagawa 1977, Int. J. Control 25): bring G to real Schur form
//! G = Q T Q' (T quasi-upper-triangular: 1 x 1 blocks for real eigenvalues, 2 x 2 for complex
//! pairs), solve Y = T Y T' + Q' W Q by block columns from the last, each block column a shifted
//! quasi-triangular solve whose diagonal blocks are Kronecker systems of size at most 4, and
//! return X = Q Y Q'. The whole solve is O(n^3) in real arithmetic.
//!
//! A complex variant ([`ComplexSchur`], [`solve_triangular_stein`]) works on a triangular T: the
//! moments use it when unit roots must be reordered out of the way, which the real form with its
//! 2 x 2 blocks makes awkward.
//!
//! Every solution is checked by its residual ||X - G X G' - W||_F relative to
//! ||W||_F + ||G||_F^2 ||X||_F; if the Schur route fails (no convergence of the QR iteration within
//! [`LyapunovParams::schur_sweeps_per_dim`], a numerically singular triangular solve, or a
//! residual above [`LyapunovParams::residual_tol`]) the solver falls back to doubling (Smith 1968, "Matrix
//! equation XA + BX = C", SIAM J. Appl. Math. 16: X_{k+1} = X_k + A_k X_k A_k', A_{k+1} = A_k^2,
//! which after k steps has summed 2^k terms of the series), with its own convergence test.

use nalgebra::DMatrix;
use thiserror::Error;

use super::complex::{cmul, to_complex};
use super::schur::{ComplexSchur, RealSchur};
use super::C64;

/// Largest accepted relative residual of a Lyapunov solution. A backward-stable solve of a
/// well-conditioned problem leaves about n * eps (1e-14 for n = 50); 1e-9 leaves room for the
/// conditioning that spectral radii near 1 bring (the condition number grows like 1/(1-rho^2))
/// while still rejecting a wrong answer, which has a residual of order one.
pub const RESIDUAL_TOL: f64 = 1e-9;

/// Relative deflation tolerance of the QR iteration (machine epsilon: the usual choice).
pub const SCHUR_EPS: f64 = f64::EPSILON;

/// QR sweeps allowed per eigenvalue before the Schur route gives up (LAPACK allows 30 per
/// eigenvalue; nalgebra counts sweeps over the whole matrix, so a generous 100 per dimension).
pub const SCHUR_MAX_SWEEPS_PER_DIM: usize = 100;

/// Smallest accepted |1 - lambda_i conj(lambda_j)|: below it the equation is numerically singular
/// (a pair of eigenvalues with product on the unit circle). 1e-13 is about 500 eps.
pub const SINGULARITY_TOL: f64 = 1e-13;

/// Largest number of doubling steps: 2^64 terms of the series; a spectral radius of 1 - 1e-12
/// still converges after about 45 steps.
pub const MAX_DOUBLING_STEPS: usize = 64;

/// Largest dimension accepted (a dense n x n complex Schur form; 5000 is 400 MB of workspace).
pub const MAX_DIMENSION: usize = 5000;

/// Tuning of [`solve_discrete_lyapunov_with`] (and of the moments, which solve the same equation
/// innovation by innovation). The defaults are the constants above.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub struct LyapunovParams {
    /// Largest accepted relative residual of a solution. Default [`RESIDUAL_TOL`] (1e-9).
    pub residual_tol: f64,
    /// QR sweeps per dimension allowed to the real Schur form before the Schur route gives up
    /// and doubling takes over. Default [`SCHUR_MAX_SWEEPS_PER_DIM`] (100). At least 1.
    pub schur_sweeps_per_dim: usize,
    /// Largest number of doubling steps. Default [`MAX_DOUBLING_STEPS`] (64). At least 1.
    pub max_doubling_steps: usize,
}

impl Default for LyapunovParams {
    fn default() -> Self {
        LyapunovParams {
            residual_tol: RESIDUAL_TOL,
            schur_sweeps_per_dim: SCHUR_MAX_SWEEPS_PER_DIM,
            max_doubling_steps: MAX_DOUBLING_STEPS,
        }
    }
}

impl LyapunovParams {
    /// The defaults with a different sweep budget for the Schur form (at least 1).
    pub fn with_schur_sweeps_per_dim(mut self, sweeps: usize) -> Self {
        self.schur_sweeps_per_dim = sweeps.max(1);
        self
    }

    /// Checks the documented ranges; returns `InvalidParams` naming the offending field.
    pub fn validate(&self) -> Result<(), LyapunovError> {
        if !(self.residual_tol.is_finite() && self.residual_tol > 0.0) {
            return Err(LyapunovError::InvalidParams {
                field: "residual_tol",
            });
        }
        if self.schur_sweeps_per_dim == 0 {
            return Err(LyapunovError::InvalidParams {
                field: "schur_sweeps_per_dim",
            });
        }
        if self.max_doubling_steps == 0 {
            return Err(LyapunovError::InvalidParams {
                field: "max_doubling_steps",
            });
        }
        Ok(())
    }
}

/// Why a Lyapunov equation was not solved.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum LyapunovError {
    #[error("the Lyapunov equation needs a square G and a W of the same size, got G {g_rows}x{g_cols} and W {w_rows}x{w_cols}")]
    Shape {
        g_rows: usize,
        g_cols: usize,
        w_rows: usize,
        w_cols: usize,
    },
    #[error("the Lyapunov equation is too large ({n} states; at most {MAX_DIMENSION})")]
    TooLarge { n: usize },
    #[error("the Lyapunov equation has a non-finite entry (NaN or infinity)")]
    NonFinite,
    #[error("the transition matrix has an eigenvalue of modulus {spectral_radius} (at least 1): the unconditional covariance does not exist")]
    NotStable { spectral_radius: f64 },
    #[error("the Lyapunov equation is numerically singular: two eigenvalues have product {product} on the unit circle")]
    Singular { product: f64 },
    #[error("the Schur decomposition of the transition matrix did not converge")]
    SchurNoConvergence,
    #[error("neither the Schur solver (residual {schur_residual:e}) nor doubling (residual {doubling_residual:e} after {steps} steps) reached the residual tolerance {tolerance:e}")]
    NoConvergence {
        /// Infinite when the Schur route failed before producing a solution.
        schur_residual: f64,
        doubling_residual: f64,
        steps: usize,
        tolerance: f64,
    },
    #[error("the Lyapunov solver's parameter `{field}` is out of range")]
    InvalidParams { field: &'static str },
}

/// Which algorithm produced a solution.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LyapunovMethod {
    Schur,
    Doubling,
}

/// A checked solution of X = G X G' + W.
#[derive(Debug, Clone, PartialEq)]
pub struct LyapunovSolution {
    pub x: DMatrix<f64>,
    pub method: LyapunovMethod,
    /// ||X - G X G' - W||_F / (||W||_F + ||G||_F^2 ||X||_F).
    pub relative_residual: f64,
}
/// Solves the small Stein equation X - A X B' = F for X (q x p, q, p in {1, 2}) through its
/// Kronecker form (I - B kron A) vec X = vec F, Gaussian elimination with partial pivoting.
/// `a` is q x q and `b` p x p, both column-major slices; `f` is vec F, overwritten by vec X.
fn small_stein(
    a: &[f64],
    q: usize,
    b: &[f64],
    p: usize,
    f: &mut [f64],
) -> Result<(), LyapunovError> {
    let m = q * p;
    let mut mat = [[0.0f64; 4]; 4];
    for bj in 0..p {
        for ai in 0..q {
            let row = ai + q * bj;
            for bl in 0..p {
                for ak in 0..q {
                    let col = ak + q * bl;
                    let kron = b[bj + p * bl] * a[ai + q * ak];
                    mat[row][col] = if row == col { 1.0 } else { 0.0 } - kron;
                }
            }
        }
    }
    for col in 0..m {
        let piv = (col..m)
            .max_by(|&x, &y| mat[x][col].abs().total_cmp(&mat[y][col].abs()))
            .unwrap_or(col);
        if mat[piv][col].abs() < SINGULARITY_TOL {
            return Err(LyapunovError::Singular {
                product: 1.0 - mat[piv][col].abs(),
            });
        }
        mat.swap(col, piv);
        f.swap(col, piv);
        for r in (col + 1)..m {
            let factor = mat[r][col] / mat[col][col];
            if factor != 0.0 {
                let pivot_row = mat[col];
                for (x, p) in mat[r][col..m].iter_mut().zip(&pivot_row[col..m]) {
                    *x -= factor * p;
                }
                f[r] -= factor * f[col];
            }
        }
    }
    for col in (0..m).rev() {
        let mut v = f[col];
        for c in (col + 1)..m {
            v -= mat[col][c] * f[c];
        }
        f[col] = v / mat[col][col];
    }
    Ok(())
}

/// Solves Y = T Y T' + C for a real quasi-upper-triangular `t` with diagonal blocks `blocks`
/// (from [`RealSchur`]) and any real `c` (n x n), by column blocks from the last (Barraud 1977 in
/// real arithmetic): with R_J = sum_{L>J} Y[:, L] T[J, L]', the block column solves
/// Y_J - T Y_J T_JJ' = C[:, J] + T R_J, itself by row blocks from the last with 1 x 1 to 4 x 4
/// Kronecker systems. Reads `t` and `c`, overwrites nothing, returns Y (not symmetrized), or
/// [`LyapunovError::Singular`].
pub fn solve_quasi_triangular_stein(
    t: &DMatrix<f64>,
    blocks: &[(usize, usize)],
    c: &DMatrix<f64>,
) -> Result<DMatrix<f64>, LyapunovError> {
    let n = t.nrows();
    let ts = t.as_slice();
    let mut y = vec![0.0; n * n];
    let mut r = vec![0.0; 2 * n];
    let mut b = vec![0.0; 2 * n];
    for &(j0, p) in blocks.iter().rev() {
        // R[:, jj] = sum_{l >= j0 + p} T[j0 + jj, l] Y[:, l]
        r[..p * n].iter_mut().for_each(|v| *v = 0.0);
        for l in (j0 + p)..n {
            let col = &y[l * n..(l + 1) * n];
            for jj in 0..p {
                let w = ts[(j0 + jj) + l * n];
                if w != 0.0 {
                    let rc = &mut r[jj * n..(jj + 1) * n];
                    for (ri, yi) in rc.iter_mut().zip(col) {
                        *ri += w * yi;
                    }
                }
            }
        }
        // B = C[:, J] + T R  (column k of T reaches rows 0..=k+1)
        for jj in 0..p {
            let bc = &mut b[jj * n..(jj + 1) * n];
            bc.copy_from_slice(&c.as_slice()[(j0 + jj) * n..(j0 + jj + 1) * n]);
            let rc = &r[jj * n..(jj + 1) * n];
            for (k, &rk) in rc.iter().enumerate() {
                if rk != 0.0 {
                    let top = (k + 2).min(n);
                    let tc = &ts[k * n..k * n + top];
                    for (bi, ti) in bc[..top].iter_mut().zip(tc) {
                        *bi += ti * rk;
                    }
                }
            }
        }
        // T_JJ, column-major p x p.
        let mut tjj = [0.0; 4];
        for u in 0..p {
            for v in 0..p {
                tjj[u + p * v] = ts[(j0 + u) + (j0 + v) * n];
            }
        }
        // Row blocks from the last: Y_IJ - T_II Y_IJ T_JJ' = B_I, then
        // B[rows < i0] += T[rows < i0, I] (Y_IJ T_JJ').
        for &(i0, q) in blocks.iter().rev() {
            let mut tii = [0.0; 4];
            for u in 0..q {
                for v in 0..q {
                    tii[u + q * v] = ts[(i0 + u) + (i0 + v) * n];
                }
            }
            let mut f = [0.0; 4];
            for jj in 0..p {
                for ii in 0..q {
                    f[ii + q * jj] = b[jj * n + i0 + ii];
                }
            }
            small_stein(&tii[..q * q], q, &tjj[..p * p], p, &mut f[..q * p])?;
            // Z = Y_IJ T_JJ' (q x p)
            let mut z = [0.0; 4];
            for ii in 0..q {
                for jj in 0..p {
                    let mut s = 0.0;
                    for kk in 0..p {
                        s += f[ii + q * kk] * tjj[jj + p * kk];
                    }
                    z[ii + q * jj] = s;
                }
            }
            for jj in 0..p {
                for ii in 0..q {
                    b[jj * n + i0 + ii] = f[ii + q * jj];
                }
                for ii in 0..q {
                    let zv = z[ii + q * jj];
                    if zv != 0.0 {
                        let tc = &ts[(i0 + ii) * n..(i0 + ii) * n + i0];
                        let bc = &mut b[jj * n..jj * n + i0];
                        for (bl, tl) in bc.iter_mut().zip(tc) {
                            *bl += tl * zv;
                        }
                    }
                }
            }
        }
        for jj in 0..p {
            y[(j0 + jj) * n..(j0 + jj + 1) * n].copy_from_slice(&b[jj * n..(jj + 1) * n]);
        }
    }
    Ok(DMatrix::from_vec(n, n, y))
}

/// Solves Y = T Y T^H + C for upper-triangular `t` (n x n) and any `c` (n x n), column by
/// column from the last (Barraud 1977): with r_j = sum_{l>j} conj(t_jl) Y[:, l],
/// (I - conj(t_jj) T) Y[:, j] = C[:, j] + T r_j. Reads `t` and `c`, overwrites nothing, returns
/// Y, or [`LyapunovError::Singular`] when some |1 - t_ii conj(t_jj)| is below
/// [`SINGULARITY_TOL`]. The inner loops run on separate real and imaginary arrays so that they
/// vectorize.
pub fn solve_triangular_stein(
    t: &DMatrix<C64>,
    c: &DMatrix<C64>,
) -> Result<DMatrix<C64>, LyapunovError> {
    let n = t.nrows();
    // Column-major split copies: t[(i, k)] = (tr + i ti)[i + k n].
    let tr: Vec<f64> = t.iter().map(|z| z.re).collect();
    let ti: Vec<f64> = t.iter().map(|z| z.im).collect();
    let mut yr = vec![0.0; n * n];
    let mut yi = vec![0.0; n * n];
    let mut rr = vec![0.0; n];
    let mut ri = vec![0.0; n];
    let mut br = vec![0.0; n];
    let mut bi = vec![0.0; n];
    for j in (0..n).rev() {
        // r = sum_{l > j} conj(t[j, l]) Y[:, l]
        rr.iter_mut().for_each(|v| *v = 0.0);
        ri.iter_mut().for_each(|v| *v = 0.0);
        for l in (j + 1)..n {
            let (wr, wi) = (tr[j + l * n], -ti[j + l * n]);
            if wr == 0.0 && wi == 0.0 {
                continue;
            }
            let (cr, ci) = (&yr[l * n..(l + 1) * n], &yi[l * n..(l + 1) * n]);
            for k in 0..n {
                rr[k] += wr * cr[k] - wi * ci[k];
                ri[k] += wr * ci[k] + wi * cr[k];
            }
        }
        // b = C[:, j] + T r   (T upper triangular: column k reaches rows 0..=k)
        for (i, z) in c.column(j).iter().enumerate() {
            br[i] = z.re;
            bi[i] = z.im;
        }
        for k in 0..n {
            let (xr, xi) = (rr[k], ri[k]);
            if xr == 0.0 && xi == 0.0 {
                continue;
            }
            let (cr, ci) = (&tr[k * n..k * n + k + 1], &ti[k * n..k * n + k + 1]);
            for i in 0..=k {
                br[i] += cr[i] * xr - ci[i] * xi;
                bi[i] += cr[i] * xi + ci[i] * xr;
            }
        }
        // (I - conj(t_jj) T) y = b by back substitution over columns of T.
        let (sr, si) = (tr[j + j * n], -ti[j + j * n]); // conj(t_jj)
        for i in (0..n).rev() {
            let (dr0, di0) = (tr[i + i * n], ti[i + i * n]);
            // d = 1 - conj(t_jj) t_ii
            let dr = 1.0 - (sr * dr0 - si * di0);
            let di = -(sr * di0 + si * dr0);
            let dn = dr * dr + di * di;
            if dn.sqrt() < SINGULARITY_TOL {
                return Err(LyapunovError::Singular {
                    product: ((sr * sr + si * si) * (dr0 * dr0 + di0 * di0)).sqrt(),
                });
            }
            // y_i = b_i / d
            let yre = (br[i] * dr + bi[i] * di) / dn;
            let yim = (bi[i] * dr - br[i] * di) / dn;
            br[i] = yre;
            bi[i] = yim;
            // f = conj(t_jj) y_i; b[0..i] += T[0..i, i] f
            let fr = sr * yre - si * yim;
            let fi = sr * yim + si * yre;
            if fr != 0.0 || fi != 0.0 {
                let (cr, ci) = (&tr[i * n..i * n + i], &ti[i * n..i * n + i]);
                for l in 0..i {
                    br[l] += cr[l] * fr - ci[l] * fi;
                    bi[l] += cr[l] * fi + ci[l] * fr;
                }
            }
        }
        yr[j * n..(j + 1) * n].copy_from_slice(&br);
        yi[j * n..(j + 1) * n].copy_from_slice(&bi);
    }
    Ok(DMatrix::from_fn(n, n, |i, k| {
        C64::new(yr[i + k * n], yi[i + k * n])
    }))
}

/// ||X - G X G' - W||_F / (||W||_F + ||G||_F^2 ||X||_F) (0 when everything is zero). Reads only.
pub fn relative_residual(g: &DMatrix<f64>, w: &DMatrix<f64>, x: &DMatrix<f64>) -> f64 {
    let r = x - g * x * g.transpose() - w;
    let denom = w.norm() + g.norm().powi(2) * x.norm();
    if denom == 0.0 {
        if r.norm() == 0.0 {
            0.0
        } else {
            f64::INFINITY
        }
    } else {
        r.norm() / denom
    }
}

/// Solves X = G X G' + W for real `g` and symmetric `w` (neither overwritten) with the default
/// [`LyapunovParams`]; see [`solve_discrete_lyapunov_with`].
pub fn solve_discrete_lyapunov(
    g: &DMatrix<f64>,
    w: &DMatrix<f64>,
) -> Result<LyapunovSolution, LyapunovError> {
    solve_discrete_lyapunov_with(g, w, &LyapunovParams::default())
}

/// Solves X = G X G' + W for real `g` and symmetric `w` (neither overwritten) and returns the
/// checked solution: Schur first, doubling if the Schur route fails or leaves a residual above
/// `params.residual_tol`. An eigenvalue of modulus at least one is
/// [`LyapunovError::NotStable`]; out-of-range parameters are `InvalidParams`.
pub fn solve_discrete_lyapunov_with(
    g: &DMatrix<f64>,
    w: &DMatrix<f64>,
    params: &LyapunovParams,
) -> Result<LyapunovSolution, LyapunovError> {
    params.validate()?;
    let n = g.nrows();
    if g.ncols() != n || w.nrows() != n || w.ncols() != n {
        return Err(LyapunovError::Shape {
            g_rows: g.nrows(),
            g_cols: g.ncols(),
            w_rows: w.nrows(),
            w_cols: w.ncols(),
        });
    }
    if w.iter().any(|v| !v.is_finite()) || g.iter().any(|v| !v.is_finite()) {
        return Err(LyapunovError::NonFinite);
    }
    if n == 0 {
        return Ok(LyapunovSolution {
            x: DMatrix::zeros(0, 0),
            method: LyapunovMethod::Schur,
            relative_residual: 0.0,
        });
    }
    let schur_residual = match RealSchur::with_sweeps(g, params.schur_sweeps_per_dim) {
        Ok(schur) => {
            let radius = schur.spectral_radius();
            if radius >= 1.0 {
                return Err(LyapunovError::NotStable {
                    spectral_radius: radius,
                });
            }
            match solve_with_real_schur(&schur, w) {
                Ok(x) => {
                    let res = relative_residual(g, w, &x);
                    if res <= params.residual_tol {
                        return Ok(LyapunovSolution {
                            x,
                            method: LyapunovMethod::Schur,
                            relative_residual: res,
                        });
                    }
                    res
                }
                Err(LyapunovError::Singular { .. }) => f64::INFINITY,
                Err(e) => return Err(e),
            }
        }
        Err(LyapunovError::SchurNoConvergence) => f64::INFINITY,
        Err(e) => return Err(e),
    };
    let (x, steps) = doubling(g, w, params.max_doubling_steps);
    let res = relative_residual(g, w, &x);
    if res <= params.residual_tol && x.iter().all(|v| v.is_finite()) {
        Ok(LyapunovSolution {
            x,
            method: LyapunovMethod::Doubling,
            relative_residual: res,
        })
    } else {
        Err(LyapunovError::NoConvergence {
            schur_residual,
            doubling_residual: res,
            steps,
            tolerance: params.residual_tol,
        })
    }
}

/// X = Q Y Q' with Y = T Y T' + Q' W Q in the real Schur basis, symmetrized. Reads only.
pub fn solve_with_real_schur(
    schur: &RealSchur,
    w: &DMatrix<f64>,
) -> Result<DMatrix<f64>, LyapunovError> {
    let c = schur.q.transpose() * w * &schur.q;
    let y = solve_quasi_triangular_stein(&schur.t, &schur.blocks, &c)?;
    let x = &schur.q * y * schur.q.transpose();
    Ok((&x + x.transpose()) * 0.5)
}

/// X = U Y U^H with Y = T Y T^H + U^H W U, real part, symmetrized. Reads only.
pub fn solve_with_schur(
    schur: &ComplexSchur,
    w: &DMatrix<f64>,
) -> Result<DMatrix<f64>, LyapunovError> {
    let wc = to_complex(w);
    let c = cmul(&cmul(&schur.u.adjoint(), &wc), &schur.u);
    let y = solve_triangular_stein(&schur.t, &c)?;
    let xc = cmul(&cmul(&schur.u, &y), &schur.u.adjoint());
    let x = xc.map(|z| z.re);
    Ok((&x + x.transpose()) * 0.5)
}

/// Doubling (Smith 1968): X_0 = W, A_0 = G; X_{k+1} = X_k + A_k X_k A_k', A_{k+1} = A_k A_k. Stops
/// when the increment is below eps ||X|| or after `max_steps` (the default is
/// [`MAX_DOUBLING_STEPS`]). Reads only; returns X (unchecked: the caller tests its residual) and
/// the steps taken.
pub fn doubling(g: &DMatrix<f64>, w: &DMatrix<f64>, max_steps: usize) -> (DMatrix<f64>, usize) {
    let mut x = w.clone();
    let mut a = g.clone();
    for step in 1..=max_steps {
        let inc = &a * &x * a.transpose();
        x += &inc;
        let inc_norm = inc.norm();
        if !inc_norm.is_finite() {
            return (x, step);
        }
        if inc_norm <= f64::EPSILON * x.norm() {
            return (x, step);
        }
        a = &a * &a;
    }
    (x, max_steps)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::complex::frobenius_c;

    fn lcg_matrix(n: usize, seed: u64, scale: f64) -> DMatrix<f64> {
        let mut s = seed;
        DMatrix::from_fn(n, n, |_, _| {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            scale * (((s >> 11) as f64) / (1u64 << 53) as f64 - 0.5)
        })
    }

    #[test]
    fn schur_rebuilds_and_reorders() {
        let g = lcg_matrix(12, 3, 1.0);
        let mut s = ComplexSchur::new(&g).unwrap();
        let gc = g.map(|v| C64::new(v, 0.0));
        let back = &s.u * &s.t * s.u.adjoint();
        // Backward-stable QR: reconstruction within a small multiple of n eps ||G||.
        let tol = 100.0 * 12.0 * f64::EPSILON * g.norm();
        assert!(frobenius_c(&(back - &gc)) < tol);
        let m = s.reorder_front(|z| z.norm() > 0.5);
        let ev = s.eigenvalues();
        assert!(ev[..m].iter().all(|z| z.norm() > 0.5));
        assert!(ev[m..].iter().all(|z| z.norm() <= 0.5));
        let back = &s.u * &s.t * s.u.adjoint();
        assert!(frobenius_c(&(back - &gc)) < tol);
        let ortho = s.u.adjoint() * &s.u - DMatrix::<C64>::identity(12, 12);
        assert!(frobenius_c(&ortho) < 100.0 * 12.0 * f64::EPSILON);
        for j in 0..12 {
            for i in (j + 1)..12 {
                assert_eq!(s.t[(i, j)], C64::new(0.0, 0.0));
            }
        }
    }

    #[test]
    fn unstable_is_refused_and_doubling_agrees() {
        let g = DMatrix::from_row_slice(2, 2, &[1.0, 0.0, 0.0, 0.5]);
        let w = DMatrix::identity(2, 2);
        assert!(matches!(
            solve_discrete_lyapunov(&g, &w),
            Err(LyapunovError::NotStable { .. })
        ));
        let g = DMatrix::from_row_slice(2, 2, &[0.5, 0.3, -0.2, 0.4]);
        let a = solve_discrete_lyapunov(&g, &w).unwrap();
        let (b, _) = doubling(&g, &w, MAX_DOUBLING_STEPS);
        assert!((a.x - b).norm() < 1e-12);
    }

    #[test]
    fn doubling_takes_over_when_the_schur_form_does_not_converge() {
        // A 12 x 12 dense matrix needs a few QR sweeps per eigenvalue; a budget of one sweep per
        // dimension is not enough, so the Schur route fails and doubling must answer.
        let g = lcg_matrix(12, 7, 1.0);
        let radius = RealSchur::new(&g).unwrap().spectral_radius();
        let g = g * (0.9 / radius);
        let w = DMatrix::identity(12, 12);
        let tight = LyapunovParams::default().with_schur_sweeps_per_dim(1);
        assert!(matches!(
            RealSchur::with_sweeps(&g, 1),
            Err(LyapunovError::SchurNoConvergence)
        ));
        let fallback = solve_discrete_lyapunov_with(&g, &w, &tight).unwrap();
        assert_eq!(fallback.method, LyapunovMethod::Doubling);
        assert!(fallback.relative_residual <= RESIDUAL_TOL);
        let schur = solve_discrete_lyapunov(&g, &w).unwrap();
        assert_eq!(schur.method, LyapunovMethod::Schur);
        // Both backward stable to about 1e-14 relative; the condition number of a radius-0.9
        // problem is about 1/(1 - 0.81) = 5, so agreement to 1e-10 relative is a real check.
        assert!((&fallback.x - &schur.x).norm() <= 1e-10 * schur.x.norm());
        // Too few doubling steps to sum the series: an honest NoConvergence with both residuals.
        let mut starved = tight.clone();
        starved.max_doubling_steps = 2;
        assert!(matches!(
            solve_discrete_lyapunov_with(&g, &w, &starved),
            Err(LyapunovError::NoConvergence { steps: 2, .. })
        ));
    }
}
