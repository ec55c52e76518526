//! The discounted discrete algebraic Riccati equation (DARE) with a cross term
//!
//! ```text
//!   X = Q + beta A'XA - (beta A'XB + S)(R + beta B'XB)^{-1}(beta B'XA + S'),
//! ```
//!
//! the value matrix of the linear-quadratic regulator: minimise
//! `sum_t beta^t (x_t'Q x_t + u_t'R u_t + 2 x_t'S u_t)` subject to `x_{t+1} = A x_t + B u_t`; the
//! optimal control is `u_t = -F x_t` with `F = (R + beta B'XB)^{-1}(beta B'XA + S')`, and the
//! stabilising solution makes every root of the closed loop `A - BF` smaller than `1/sqrt(beta)`
//! in modulus (so that `beta^{t/2} x_t` dies out).
//!
//! Method (Van Dooren 1981, "A generalized eigenvalue approach for solving Riccati equations",
//! SIAM J. Sci. Stat. Comput. 2; Laub 1979 for the Hamiltonian idea). With `a = sqrt(beta) A`,
//! `b = sqrt(beta) B` the discounted problem is an undiscounted one, and the extended pencil of
//! size 2n+m,
//!
//! ```text
//!        [ a   0   b ]         [ I   0    0 ]
//!    M = [ -Q  I  -S ],    L = [ 0   a'   0 ],
//!        [ S'  0   R ]         [ 0  -b'   0 ]
//! ```
//!
//! has the stable deflating subspace spanned by `[I; X; -F]`. Its m infinite roots are removed
//! first (an orthogonal compression by the QR factorisation of the last block column, as in Van
//! Dooren's paper), leaving a 2n pencil whose roots come in pairs `(lambda, 1/lambda)`; our QZ
//! ([`crate::qz`]) orders the n roots inside the unit circle first, and with the leading n
//! columns `[U1; U2]` of Z, `X = U2 U1^{-1}`. Nothing inverts A or R, so a singular transition
//! matrix or a singular control weight is fine as long as `R + beta B'XB` is invertible.
//!
//! Balancing: the state is rescaled by powers of two `x = D x~` chosen by Parlett-Reinsch
//! balancing of A, the controls by `u = E u~` bringing the diagonal of R near one, and Q, R, S
//! by one common power of two; all exact and undone at the end (`X = D^{-1} X~ D^{-1} / c`).
//!
//! Afterwards (never a silently wrong X): a root within [`DareParams::unit_circle_tol`] of the
//! unit circle is [`DareError::UnitCircleRoot`]; fewer or more than n stable roots is
//! [`DareError::StableCount`]; an ill-conditioned `U1` (the stable subspace is not a graph over
//! the state: the system is not stabilisable or not detectable) is [`DareError::NotStabilisable`];
//! the closed loop is checked by its own eigenvalues and the residual of the equation is
//! computed and reported ([`DareSolution::residual`]), an error above [`DareParams::max_residual`].

#[cfg(test)]
mod tests;

use nalgebra::DMatrix;

use crate::qz::{root_position, GeneralizedSchur, QzError, QzParams, RootPosition, C64};

/// Tuning of [`solve_dare`]. Defaults are stated per field.
#[derive(Debug, Clone, PartialEq)]
pub struct DareParams {
    /// Power-of-two balancing of the state and the controls (see the module doc). Default true.
    pub balance: bool,
    /// A root of the compressed pencil with `| |lambda| - 1 | <= unit_circle_tol` counts as on
    /// the unit circle, which leaves no stabilising solution. Default 1e-6: a double root on the
    /// circle (an uncontrollable, unobservable unit mode) splits by about sqrt(eps) = 1.5e-8
    /// under rounding, so the band must be wider than that.
    pub unit_circle_tol: f64,
    /// Smallest singular value of U1 (at most 1, Z being unitary) below which the stable
    /// subspace is not a graph over the state. Default 1e-10 (as the solution's rank test).
    pub rank_tol: f64,
    /// Largest accepted relative residual (see [`DareSolution::residual`]). Default 1e-8: a
    /// backward-stable solve of a well-conditioned problem leaves a few hundred eps; 1e-8 allows
    /// for conditioning while rejecting a wrong X, whose residual is of order one.
    pub max_residual: f64,
    /// Compute the closed-loop eigenvalues of `A - BF` and check them. Default true.
    pub check_closed_loop: bool,
    /// Parameters of the QZ. Default [`QzParams::default`] with real double-shift sweeps on
    /// (the extended pencil of a Riccati equation with a stabilising solution is regular) and
    /// without accumulating Q (only Z is used).
    pub qz: QzParams,
}

impl Default for DareParams {
    fn default() -> Self {
        DareParams {
            balance: true,
            unit_circle_tol: 1e-6,
            rank_tol: 1e-10,
            max_residual: 1e-8,
            check_closed_loop: true,
            qz: QzParams {
                real_double_shift: true,
                accumulate_q: false,
                ..QzParams::default()
            },
        }
    }
}

/// The stabilising solution and what was checked.
#[derive(Debug, Clone)]
pub struct DareSolution {
    /// The symmetric solution X (n x n).
    pub x: DMatrix<f64>,
    /// The optimal feedback F (m x n): `u_t = -F x_t`.
    pub gain: DMatrix<f64>,
    /// Eigenvalues of the closed loop `A - BF` (undiscounted), when computed.
    pub closed_loop_roots: Vec<C64>,
    /// Roots of the compressed 2n pencil (of the discounted problem), in the order of the
    /// reordered Schur form: n stable first. They pair as `(lambda, 1/lambda)`.
    pub pencil_roots: Vec<(C64, C64)>,
    /// `||X - Q - beta A'XA + (beta A'XB + S)(R + beta B'XB)^{-1}(beta B'XA + S')||_F` divided by
    /// `||X||_F + ||Q||_F + beta ||A'XA||_F + ||correction||_F`.
    pub residual: f64,
    /// Largest relative imaginary part of X before it was made real.
    pub imaginary: f64,
}

/// Why the DARE was not solved.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DareError {
    #[error("the Riccati matrices do not fit together: {0}")]
    Dimensions(String),
    #[error("a Riccati matrix has a NaN or infinite entry")]
    NonFinite,
    #[error("the discount factor must be in (0, 1], got {0}")]
    Discount(f64),
    #[error("invalid Riccati parameter: {0}")]
    InvalidParams(String),
    #[error("the generalized Schur decomposition failed: {0}")]
    Qz(#[from] QzError),
    #[error("the Riccati pencil has a root on the unit circle (modulus {modulus}): there is no stabilising solution (a mode that can be neither steered nor ignored sits on the stability boundary)")]
    UnitCircleRoot { modulus: f64 },
    #[error("the Riccati pencil has {stable} roots inside the unit circle where {needed} are needed: there is no stabilising solution")]
    StableCount { stable: usize, needed: usize },
    #[error("the stable subspace of the Riccati pencil is not a graph over the state (smallest singular value {sigma_min:e}): the system is not stabilisable or not detectable")]
    NotStabilisable { sigma_min: f64 },
    #[error("R + beta B'XB is singular: the optimal control is not unique")]
    SingularGain,
    #[error("the closed loop A - BF has a root of modulus {modulus}, not below 1/sqrt(beta) = {bound}: the Riccati solution is not stabilising")]
    ClosedLoopUnstable { modulus: f64, bound: f64 },
    #[error("the eigenvalues of the closed loop A - BF did not converge within the sweep limit")]
    ClosedLoopNoConvergence,
    #[error("the Riccati solution leaves a relative residual of {residual:e}, above the accepted {tol:e}")]
    Residual { residual: f64, tol: f64 },
}

fn check_finite(m: &DMatrix<f64>) -> Result<(), DareError> {
    if m.iter().all(|x| x.is_finite()) {
        Ok(())
    } else {
        Err(DareError::NonFinite)
    }
}

/// Power of two nearest to `x > 0` (as its exponent).
fn pow2_exponent(x: f64) -> i32 {
    if x > 0.0 && x.is_finite() {
        x.log2().round().clamp(-500.0, 500.0) as i32
    } else {
        0
    }
}

/// Parlett-Reinsch balancing of A by powers of two (radix 2, 1-norms of off-diagonal rows and
/// columns, at most 20 passes). Returns the exponents d with `D = diag(2^d)` such that
/// `D^{-1} A D` is balanced.
fn balance_exponents(a: &DMatrix<f64>) -> Vec<i32> {
    let n = a.nrows();
    let mut d = vec![0i32; n];
    let mut m = a.abs();
    for _ in 0..20 {
        let mut changed = false;
        for i in 0..n {
            let mut c = 0.0;
            let mut r = 0.0;
            for k in 0..n {
                if k != i {
                    c += m[(k, i)];
                    r += m[(i, k)];
                }
            }
            if c == 0.0 || r == 0.0 {
                continue;
            }
            // Scaling x_i by f multiplies column i by f and row i by 1/f: balance c f = r / f.
            let e = pow2_exponent((r / c).sqrt());
            if e != 0 && (c * 2f64.powi(e) + r * 2f64.powi(-e)) < 0.95 * (c + r) {
                let f = 2f64.powi(e);
                for k in 0..n {
                    m[(k, i)] *= f;
                    m[(i, k)] /= f;
                }
                d[i] += e;
                changed = true;
            }
        }
        if !changed {
            break;
        }
    }
    d
}

/// Frobenius norm.
fn fro(m: &DMatrix<f64>) -> f64 {
    m.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// The relative residual of X (see [`DareSolution::residual`]) and the gain F; `None` when
/// `R + beta B'XB` is singular. Reads only its arguments.
pub fn residual_and_gain(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    q: &DMatrix<f64>,
    r: &DMatrix<f64>,
    s: &DMatrix<f64>,
    beta: f64,
    x: &DMatrix<f64>,
) -> Option<(f64, DMatrix<f64>)> {
    let xa = x * a;
    let xb = x * b;
    let axa = a.transpose() * &xa * beta;
    let g = r + b.transpose() * &xb * beta;
    let h = b.transpose() * &xa * beta + s.transpose();
    let f = g.clone().lu().solve(&h)?;
    if !f.iter().all(|v| v.is_finite()) {
        return None;
    }
    let corr = h.transpose() * &f;
    let res = x - q - &axa + &corr;
    let scale = fro(x) + fro(q) + fro(&axa) + fro(&corr);
    let rel = if scale > 0.0 { fro(&res) / scale } else { 0.0 };
    Some((rel, f))
}

/// Solves the DARE of the module doc for the stabilising X. `s = None` means no cross term.
/// Reads its arguments only; returns the solution with its checks, or the first check failed.
pub fn solve_dare(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    q: &DMatrix<f64>,
    r: &DMatrix<f64>,
    s: Option<&DMatrix<f64>>,
    beta: f64,
    params: &DareParams,
) -> Result<DareSolution, DareError> {
    let n = a.nrows();
    let m = b.ncols();
    if a.ncols() != n || b.nrows() != n || q.shape() != (n, n) || r.shape() != (m, m) {
        return Err(DareError::Dimensions(format!(
            "A {}x{}, B {}x{}, Q {}x{}, R {}x{}",
            a.nrows(),
            a.ncols(),
            b.nrows(),
            b.ncols(),
            q.nrows(),
            q.ncols(),
            r.nrows(),
            r.ncols()
        )));
    }
    let zero_s;
    let s = match s {
        Some(s) => {
            if s.shape() != (n, m) {
                return Err(DareError::Dimensions(format!(
                    "S is {}x{}, expected {n}x{m}",
                    s.nrows(),
                    s.ncols()
                )));
            }
            s
        }
        None => {
            zero_s = DMatrix::zeros(n, m);
            &zero_s
        }
    };
    for mat in [a, b, q, r, s] {
        check_finite(mat)?;
    }
    if !(beta > 0.0 && beta <= 1.0) {
        return Err(DareError::Discount(beta));
    }
    if !(params.unit_circle_tol >= 0.0 && params.unit_circle_tol < 1.0) {
        return Err(DareError::InvalidParams(format!(
            "unit_circle_tol must be in [0, 1), got {}",
            params.unit_circle_tol
        )));
    }
    if n == 0 {
        return Ok(DareSolution {
            x: DMatrix::zeros(0, 0),
            gain: DMatrix::zeros(m, 0),
            closed_loop_roots: vec![],
            pencil_roots: vec![],
            residual: 0.0,
            imaginary: 0.0,
        });
    }

    // Balancing: x = D x~, u = E u~, (Q, R, S) scaled by 2^c.
    let (d, e) = if params.balance {
        let d = balance_exponents(a);
        let e: Vec<i32> = (0..m)
            .map(|j| {
                let rjj = r[(j, j)].abs();
                if rjj > 0.0 {
                    -pow2_exponent(rjj) / 2
                } else {
                    0
                }
            })
            .collect();
        (d, e)
    } else {
        (vec![0; n], vec![0; m])
    };
    let df: Vec<f64> = d.iter().map(|&k| 2f64.powi(k)).collect();
    let ef: Vec<f64> = e.iter().map(|&k| 2f64.powi(k)).collect();
    let sb = beta.sqrt();
    let at = DMatrix::from_fn(n, n, |i, j| sb * a[(i, j)] * df[j] / df[i]);
    let bt = DMatrix::from_fn(n, m, |i, j| sb * b[(i, j)] * ef[j] / df[i]);
    let mut qt = DMatrix::from_fn(n, n, |i, j| q[(i, j)] * df[i] * df[j]);
    let mut rt = DMatrix::from_fn(m, m, |i, j| r[(i, j)] * ef[i] * ef[j]);
    let mut st = DMatrix::from_fn(n, m, |i, j| s[(i, j)] * df[i] * ef[j]);
    let wmax = qt
        .iter()
        .chain(rt.iter())
        .chain(st.iter())
        .fold(0.0f64, |acc, v| acc.max(v.abs()));
    let c = if params.balance {
        -pow2_exponent(wmax)
    } else {
        0
    };
    let cf = 2f64.powi(c);
    qt *= cf;
    rt *= cf;
    st *= cf;

    // Extended pencil (2n+m), compressed to 2n by the QR factorisation of its last block column.
    let k = 2 * n + m;
    let mut mm = DMatrix::<f64>::zeros(k, k);
    let mut ll = DMatrix::<f64>::zeros(k, k);
    mm.view_mut((0, 0), (n, n)).copy_from(&at);
    mm.view_mut((0, 2 * n), (n, m)).copy_from(&bt);
    mm.view_mut((n, 0), (n, n)).copy_from(&(-&qt));
    mm.view_mut((n, 2 * n), (n, m)).copy_from(&(-&st));
    mm.view_mut((2 * n, 0), (m, n)).copy_from(&st.transpose());
    mm.view_mut((2 * n, 2 * n), (m, m)).copy_from(&rt);
    for i in 0..n {
        mm[(n + i, n + i)] = 1.0;
        ll[(i, i)] = 1.0;
    }
    ll.view_mut((n, n), (n, n)).copy_from(&at.transpose());
    ll.view_mut((2 * n, n), (m, n))
        .copy_from(&(-bt.transpose()));
    let (mc, lc) = if m > 0 {
        let last = mm.columns(2 * n, m).into_owned();
        let qr = last.qr();
        let mut m2 = mm.columns(0, 2 * n).into_owned();
        let mut l2 = ll.columns(0, 2 * n).into_owned();
        qr.q_tr_mul(&mut m2);
        qr.q_tr_mul(&mut l2);
        (
            m2.rows(m, 2 * n).into_owned(),
            l2.rows(m, 2 * n).into_owned(),
        )
    } else {
        (mm, ll)
    };

    let mut schur = GeneralizedSchur::with_params_real(mc, lc, &params.qz)?;
    for (al, be) in schur.eigenvalues() {
        if root_position(al, be, 1.0, params.unit_circle_tol) == RootPosition::Boundary {
            return Err(DareError::UnitCircleRoot {
                modulus: al.norm() / be.norm(),
            });
        }
    }
    let stable = schur.reorder(|al, be| al.norm() < be.norm())?;
    if stable != n {
        return Err(DareError::StableCount { stable, needed: n });
    }
    let pencil_roots = schur.eigenvalues();
    let z = schur.z();
    let u1 = z.view((0, 0), (n, n)).into_owned();
    let u2 = z.view((n, 0), (n, n)).into_owned();
    // X~ U1 = U2  <=>  U1^T X~^T = U2^T.
    let solved = u1
        .transpose()
        .lu()
        .solve(&u2.transpose())
        .map(|m| m.transpose());
    // Rank test of U1 without a singular value decomposition in the common case: [U1; U2] has
    // orthonormal columns, so U1^{-H} U1^{-1} = I + X~^H X~ and
    // sigma_min(U1) = 1 / sqrt(1 + ||X~||_2^2) >= 1 / sqrt(1 + ||X~||_F^2). When that lower
    // bound clears rank_tol the test passes; otherwise (or when the solve failed) the singular
    // values of U1 decide, as before.
    let xnorm = solved
        .as_ref()
        .map(|xc| xc.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt())
        .unwrap_or(f64::INFINITY);
    let sigma_lower = 1.0 / (1.0 + xnorm * xnorm).sqrt();
    let xc = match solved {
        Some(xc) if xnorm.is_finite() && sigma_lower > params.rank_tol => xc,
        other => {
            let sv = u1.clone().singular_values();
            let sigma_min = sv.iter().cloned().fold(f64::INFINITY, f64::min);
            match other {
                Some(xc) if sigma_min > params.rank_tol && xnorm.is_finite() => xc,
                _ => return Err(DareError::NotStabilisable { sigma_min }),
            }
        }
    };
    let inorm = xc.iter().map(|v| v.im * v.im).sum::<f64>().sqrt();
    let imaginary = if xnorm > 0.0 { inorm / xnorm } else { 0.0 };
    // Undo the balancing: X = D^{-1} X~ D^{-1} / 2^c, symmetrised.
    let mut x = DMatrix::from_fn(n, n, |i, j| xc[(i, j)].re / (df[i] * df[j] * cf));
    x = (&x + x.transpose()) * 0.5;

    let (residual, gain) =
        residual_and_gain(a, b, q, r, s, beta, &x).ok_or(DareError::SingularGain)?;
    let mut closed_loop_roots = Vec::new();
    if params.check_closed_loop {
        let acl = a - b * &gain;
        // Bounded QR iteration (nalgebra's convenience call has no sweep limit).
        let schur = nalgebra::linalg::Schur::try_new(acl, f64::EPSILON, 100 * n.max(1))
            .ok_or(DareError::ClosedLoopNoConvergence)?;
        closed_loop_roots = schur.complex_eigenvalues().iter().cloned().collect();
        let bound = 1.0 / sb;
        let rho = closed_loop_roots
            .iter()
            .map(|z| z.norm())
            .fold(0.0f64, f64::max);
        if !(rho < bound) {
            return Err(DareError::ClosedLoopUnstable {
                modulus: rho,
                bound,
            });
        }
    }
    if !(residual <= params.max_residual) {
        return Err(DareError::Residual {
            residual,
            tol: params.max_residual,
        });
    }
    Ok(DareSolution {
        x,
        gain,
        closed_loop_roots,
        pencil_roots,
        residual,
        imaginary,
    })
}
