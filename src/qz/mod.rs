//! Generalized Schur (QZ) decomposition of a square pencil, with eigenvalue reordering.
//!
//! For n x n matrices A and B (real or complex) it computes unitary Q, Z and upper-triangular
//! S, T with
//!
//! ```text
//!     Q^H A Z = S,    Q^H B Z = T,
//! ```
//!
//! so that `det(A - z B) = det(Q) det(Z^H) prod_i (S_ii - z T_ii)`: the generalized eigenvalues
//! are the pairs `(alpha_i, beta_i) = (S_ii, T_ii)`, finite `alpha_i / beta_i` when `beta_i != 0`
//! and infinite (exactly, `beta_i = 0`) otherwise. Every `beta_i` is real and non-negative.
//!
//! Pipeline (Moler and Stewart 1973; Golub and Van Loan, Matrix Computations, 4th ed., §7.7):
//! 1. [`balance`]: a global power-of-two scaling of A and of B when their entries are extreme
//!    (exact, undone at the end), and permutations isolating eigenvalues exposed by exact zeros
//!    (folded into Q and Z);
//! 2. [`hessenberg`]: Householder QR of B, then Givens rotations bring A to upper Hessenberg form
//!    keeping B triangular (in real arithmetic for real input);
//! 3. for real input and on request ([`QzParams::real_double_shift`]), [`real_iteration`]:
//!    real double-shift (Francis) sweeps to quasi-triangular
//!    form with 1x1 and 2x2 blocks, in real arithmetic;
//! 4. [`iteration`]: complex single-shift implicit QZ sweeps with element-wise deflation, exact
//!    deflation of zero diagonal entries of T, exceptional shifts and a sweep limit;
//! 5. [`reorder`] (on request): Van Dooren (1981) swaps of adjacent diagonal entries, each
//!    checked by a weak and a strong accuracy test, then a re-check of the whole order.
//!
//! A pencil is *singular* (det(A - zB) = 0 for all z) when some diagonal position has
//! `|alpha_i| <= n EPS ||A||_F` and `|beta_i| <= n EPS ||B||_F`; [`GeneralizedSchur::reorder`]
//! refuses such pencils with [`QzError::SingularPencil`], and
//! [`GeneralizedSchur::singular_index`] reports it without reordering.
//!
//! Selection for reordering never forms `alpha / beta`: the solver's test
//! `|alpha| < tau |beta|` is false for every infinite eigenvalue (`beta = 0`).
//!
//! Two consequences of working with norm-wise tolerances, which callers should know:
//! * a pencil whose equations (rows) differ in scale by a factor near 1/EPS is singular to
//!   working precision relative to its norm, and its small rows' eigenvalues are not determined
//!   by a norm-wise backward-stable method; scale the equations first (the power-of-two
//!   [`balance::row_equilibration_exponents`] does it, and the caller owns the mapping back);
//! * a root within rounding of the selection boundary (|alpha| = tau |beta| to about EPS, e.g.
//!   a unit root against tau = 1) can change side during the swaps, which the final check
//!   reports as `ReorderCheckFailed`; classify such roots with
//!   [`GeneralizedSchur::classify`] before reordering.

pub mod balance;
pub mod error;
pub mod hessenberg;
pub mod iteration;
pub(crate) mod real_iteration;
pub mod reorder;
pub(crate) mod rotation;

pub use error::QzError;

use nalgebra::DMatrix;
use rotation::Entry;

/// Complex double-precision scalar used for all factors (the crate's one, from `linalg`).
pub use crate::linalg::C64;

/// Machine epsilon 2^-52, the unit of every relative tolerance here (common practice).
const EPS: f64 = f64::EPSILON;

/// Tuning of the QZ iteration and the reordering. The defaults are those of robust published
/// implementations and need no change for saddle's use.
#[derive(Debug, Clone, PartialEq)]
pub struct QzParams {
    /// Sweep budget per eigenvalue: the iteration stops with `NoConvergence` after
    /// `max_sweeps_per_eigenvalue * n` sweeps in total. Default 30 (convergence typically takes
    /// 1-3 sweeps per eigenvalue; 30 leaves room for exceptional shifts). Must be at least 1.
    pub max_sweeps_per_eigenvalue: usize,
    /// Every this many sweeps without a deflation an exceptional shift replaces the Wilkinson
    /// shift, breaking cycles of the shift strategy. Default 10; 0 disables exceptional shifts.
    pub exceptional_shift_period: usize,
    /// Factor c of the swap accuracy tests: a swap is accepted when the entries it creates below
    /// the diagonal, and the residual of undoing it, are at most `c * EPS` times the Frobenius
    /// norms of the local 2x2 blocks. Default 20 (the value robust reordering codes settled on;
    /// 10 rejected well-conditioned swaps now and then). Must be finite and positive.
    pub swap_test_factor: f64,
    /// Scale A and B by powers of two when their largest entries are outside [2^-200, 2^200]
    /// (exact; undone afterwards). Default true.
    pub scale_extremes: bool,
    /// Permute rows and columns first to isolate eigenvalues exposed by exact zeros (rows or
    /// columns with a single nonzero in both matrices), which are then exact and skip the
    /// iteration. The permutations are folded into Q and Z. Default true.
    pub permute: bool,
    /// For real input, run real double-shift sweeps ([`real_iteration`]) before the complex
    /// iteration, which then only splits the 2x2 blocks they leave. Default false: the real
    /// sweeps take about 40% less time than complex ones but reach a numerically singular
    /// pencil's 0/0 root by a different path, and on one of the stress pencils (a repeated
    /// equation, n = 9) the pair came out at 2.4 n EPS times the norms, just above the
    /// singular-pencil threshold, where the complex iteration leaves 0.23 n EPS. Callers whose
    /// pencils are regular by construction (the Riccati solver) switch it on.
    pub real_double_shift: bool,
    /// Accumulate the left factor Q. Default true; false saves about a fifth of the work when
    /// only Z is needed (the Riccati solver): then [`GeneralizedSchur::q`] is an empty 0 x 0
    /// matrix and [`GeneralizedSchur::backward_error`] returns `NoLeftFactor`.
    pub accumulate_q: bool,
}

impl Default for QzParams {
    fn default() -> Self {
        QzParams {
            max_sweeps_per_eigenvalue: 30,
            exceptional_shift_period: 10,
            swap_test_factor: 20.0,
            scale_extremes: true,
            permute: true,
            real_double_shift: false,
            accumulate_q: true,
        }
    }
}

impl QzParams {
    /// Checks the documented ranges; returns `InvalidParams` naming the offending field.
    pub fn validate(&self) -> Result<(), QzError> {
        if self.max_sweeps_per_eigenvalue == 0 {
            return Err(QzError::InvalidParams(
                "max_sweeps_per_eigenvalue must be at least 1".into(),
            ));
        }
        if !(self.swap_test_factor.is_finite() && self.swap_test_factor > 0.0) {
            return Err(QzError::InvalidParams(format!(
                "swap_test_factor must be finite and positive, got {}",
                self.swap_test_factor
            )));
        }
        Ok(())
    }
}

/// Where a root `alpha/beta` lies relative to the circle of radius `tau`, judged without
/// dividing (see [`root_position`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RootPosition {
    /// `|alpha| < tau |beta|` clearly (outside the boundary band).
    Inside,
    /// `|alpha|` within the relative band of `tau |beta|` (includes the undetermined 0/0).
    Boundary,
    /// `|alpha| > tau |beta|` clearly; every infinite root (`beta = 0`, `alpha != 0`).
    Outside,
}

/// Classifies the root `(alpha, beta)` against radius `tau`: `Boundary` when
/// `| |alpha| - tau |beta| | <= rel_tol * max(|alpha|, tau |beta|)`, else `Inside` or `Outside`
/// by the sign of the difference. Never divides by beta, so infinite roots are exact.
pub fn root_position(alpha: C64, beta: C64, tau: f64, rel_tol: f64) -> RootPosition {
    let a = alpha.modulus();
    let b = tau * beta.modulus();
    if (a - b).abs() <= rel_tol * a.max(b) {
        RootPosition::Boundary
    } else if a < b {
        RootPosition::Inside
    } else {
        RootPosition::Outside
    }
}

/// The generalized Schur form `Q^H A Z = S`, `Q^H B Z = T` of a pencil (see the module doc).
#[derive(Debug, Clone)]
pub struct GeneralizedSchur {
    q: DMatrix<C64>,
    z: DMatrix<C64>,
    s: DMatrix<C64>,
    t: DMatrix<C64>,
    norm_a: f64,
    norm_b: f64,
    params: QzParams,
}

/// Checks sizes and finiteness of the input pair.
fn check_input<E: Entry>(a: &DMatrix<E>, b: &DMatrix<E>) -> Result<usize, QzError> {
    let (ar, ac) = a.shape();
    let (br, bc) = b.shape();
    if ar != ac || br != bc || ar != br {
        return Err(QzError::DimensionMismatch {
            a_rows: ar,
            a_cols: ac,
            b_rows: br,
            b_cols: bc,
        });
    }
    if !a.iter().chain(b.iter()).all(|x| x.is_finite_entry()) {
        return Err(QzError::NonFinite);
    }
    Ok(ar)
}

/// Scales `m` by a power of two if extreme (when enabled); returns the exponent to undo it and
/// the Frobenius norm of the unscaled matrix.
fn prescale<E: Entry>(m: &mut DMatrix<E>, enabled: bool) -> (i32, f64) {
    let e = if enabled {
        balance::scaling_exponent(m.as_slice())
    } else {
        0
    };
    if e != 0 {
        balance::scale_by_power_of_two(m.as_mut_slice(), -e);
    }
    let norm = iteration::frobenius(m.as_slice());
    let mut norm_unscaled = [norm];
    balance::scale_by_power_of_two(&mut norm_unscaled, e);
    (e, norm_unscaled[0])
}

/// For real input (`E = f64`), runs the real double-shift sweeps
/// ([`real_iteration::real_qz_reduce`]) on the Hessenberg-triangular pair, overwriting the four
/// matrices; for complex input does nothing.
#[allow(clippy::too_many_arguments)]
fn real_stage<E: Entry>(
    a: &mut DMatrix<E>,
    b: &mut DMatrix<E>,
    q: &mut DMatrix<E>,
    z: &mut DMatrix<E>,
    n: usize,
    ilo: usize,
    ihi: usize,
    params: &QzParams,
) {
    use std::any::Any;
    let a = (a as &mut dyn Any).downcast_mut::<DMatrix<f64>>();
    let b = (b as &mut dyn Any).downcast_mut::<DMatrix<f64>>();
    let q = (q as &mut dyn Any).downcast_mut::<DMatrix<f64>>();
    let z = (z as &mut dyn Any).downcast_mut::<DMatrix<f64>>();
    if let (Some(a), Some(b), Some(q), Some(z)) = (a, b, q, z) {
        if params.real_double_shift {
            real_iteration::real_qz_reduce(
                a.as_mut_slice(),
                b.as_mut_slice(),
                q.as_mut_slice(),
                z.as_mut_slice(),
                n,
                ilo,
                ihi,
                params,
            );
        }
    }
}

fn to_complex<E: Entry>(m: &DMatrix<E>) -> DMatrix<C64> {
    m.map(|x| x.to_c64())
}

impl GeneralizedSchur {
    /// Decomposes the real pencil (A, B) (consumed). The Hessenberg-triangular reduction runs in
    /// real arithmetic; the QZ iteration in complex. Returns the factors, or `DimensionMismatch`,
    /// `NonFinite`, `NoConvergence`.
    pub fn new(a: DMatrix<f64>, b: DMatrix<f64>) -> Result<Self, QzError> {
        Self::with_params_real(a, b, &QzParams::default())
    }

    /// Decomposes the complex pencil (A, B) (consumed) with default parameters.
    pub fn new_complex(a: DMatrix<C64>, b: DMatrix<C64>) -> Result<Self, QzError> {
        Self::with_params(a, b, &QzParams::default())
    }

    /// Decomposes the complex pencil (A, B) with the given parameters. Errors as [`Self::new`],
    /// plus `InvalidParams`.
    pub fn with_params(
        a: DMatrix<C64>,
        b: DMatrix<C64>,
        params: &QzParams,
    ) -> Result<Self, QzError> {
        Self::decompose(a, b, params)
    }

    /// Decomposes the real pencil (A, B) with the given parameters.
    pub fn with_params_real(
        a: DMatrix<f64>,
        b: DMatrix<f64>,
        params: &QzParams,
    ) -> Result<Self, QzError> {
        Self::decompose(a, b, params)
    }

    fn decompose<E: Entry>(
        mut a: DMatrix<E>,
        mut b: DMatrix<E>,
        params: &QzParams,
    ) -> Result<Self, QzError> {
        params.validate()?;
        let n = check_input(&a, &b)?;
        let (ea, norm_a) = prescale(&mut a, params.scale_extremes);
        let (eb, norm_b) = prescale(&mut b, params.scale_extremes);
        let mut qr =
            DMatrix::<E>::from_fn(n, n, |i, j| E::from_real(if i == j { 1.0 } else { 0.0 }));
        let zr_init = qr.clone();
        if !params.accumulate_q {
            qr = DMatrix::<E>::from_fn(0, 0, |_, _| E::zero());
        }
        let mut zr = zr_init;
        let (ilo, ihi) = if n == 0 {
            (0, 0)
        } else if params.permute {
            balance::permute(
                a.as_mut_slice(),
                b.as_mut_slice(),
                qr.as_mut_slice(),
                zr.as_mut_slice(),
                n,
            )
        } else {
            (0, n - 1)
        };
        if n > 0 {
            hessenberg::reduce(
                a.as_mut_slice(),
                b.as_mut_slice(),
                qr.as_mut_slice(),
                zr.as_mut_slice(),
                n,
                ilo,
                ihi,
            );
            real_stage(&mut a, &mut b, &mut qr, &mut zr, n, ilo, ihi, params);
        }
        let mut s = to_complex(&a);
        let mut t = to_complex(&b);
        let mut q = to_complex(&qr);
        let mut z = to_complex(&zr);
        drop((a, b, qr, zr));
        iteration::qz_iterate(
            s.as_mut_slice(),
            t.as_mut_slice(),
            q.as_mut_slice(),
            z.as_mut_slice(),
            n,
            ilo..=ihi,
            params,
        )?;
        balance::scale_by_power_of_two(s.as_mut_slice(), ea);
        balance::scale_by_power_of_two(t.as_mut_slice(), eb);
        Ok(GeneralizedSchur {
            q,
            z,
            s,
            t,
            norm_a,
            norm_b,
            params: params.clone(),
        })
    }

    /// Dimension n.
    pub fn dim(&self) -> usize {
        self.s.nrows()
    }

    /// The eigenvalue pairs `(alpha_i, beta_i) = (S_ii, T_ii)` in diagonal order; each `beta_i`
    /// is real and non-negative, `beta_i = 0` exactly for an infinite eigenvalue.
    pub fn eigenvalues(&self) -> Vec<(C64, C64)> {
        (0..self.dim())
            .map(|i| (self.s[(i, i)], self.t[(i, i)]))
            .collect()
    }

    /// First diagonal position with `|alpha_i| <= n EPS ||A||_F` and `|beta_i| <= n EPS ||B||_F`
    /// (a singular pencil: both negligible means det(A - zB) vanishes identically up to
    /// rounding of size EPS times the norms, accumulated over n steps), or `None`.
    pub fn singular_index(&self) -> Option<usize> {
        let n = self.dim() as f64;
        let tol_a = n * EPS * self.norm_a;
        let tol_b = n * EPS * self.norm_b;
        (0..self.dim())
            .find(|&i| self.s[(i, i)].modulus() <= tol_a && self.t[(i, i)].modulus() <= tol_b)
    }

    /// Frobenius norms of the input A and B (before any scaling).
    pub fn input_norms(&self) -> (f64, f64) {
        (self.norm_a, self.norm_b)
    }

    /// Classifies every root against radius `tau` with relative band `rel_tol`
    /// (see [`root_position`]), in diagonal order.
    pub fn classify(&self, tau: f64, rel_tol: f64) -> Vec<RootPosition> {
        self.eigenvalues()
            .into_iter()
            .map(|(a, b)| root_position(a, b, tau, rel_tol))
            .collect()
    }

    /// Moves the eigenvalues with `select(alpha, beta) == true` (evaluated once on the current
    /// diagonal) to the leading block, keeping the order within the selected and the unselected
    /// groups; overwrites Q, Z, S, T. Returns how many were selected.
    ///
    /// Errors: `SingularPencil` (checked first; nothing is changed), `SwapRejected` (the
    /// decomposition stays valid but only partly reordered), `ReorderCheckFailed` (the selection
    /// re-evaluated on the final diagonal disagrees with the order achieved: an eigenvalue
    /// within rounding of the selection boundary changed side; classify boundary roots with
    /// [`Self::classify`] before reordering).
    pub fn reorder(&mut self, select: impl Fn(C64, C64) -> bool) -> Result<usize, QzError> {
        if let Some(index) = self.singular_index() {
            return Err(QzError::SingularPencil { index });
        }
        let n = self.dim();
        let mut selected: Vec<bool> = (0..n)
            .map(|i| select(self.s[(i, i)], self.t[(i, i)]))
            .collect();
        let mut f = reorder::Factors {
            s: self.s.as_mut_slice(),
            t: self.t.as_mut_slice(),
            q: self.q.as_mut_slice(),
            z: self.z.as_mut_slice(),
            n,
        };
        let leading =
            reorder::reorder_selected(&mut f, &mut selected, self.params.swap_test_factor)?;
        for i in 0..n {
            if select(self.s[(i, i)], self.t[(i, i)]) != (i < leading) {
                return Err(QzError::ReorderCheckFailed {
                    position: i,
                    leading,
                });
            }
        }
        Ok(leading)
    }

    /// The backward error of the factors against a pencil: the larger of
    /// `||Q S Z^H - A||_F / ||A||_F` and `||Q T Z^H - B||_F / ||B||_F` (a zero matrix counts
    /// its residual absolutely). Returns `DimensionMismatch` if A or B is not n x n.
    pub fn backward_error(&self, a: &DMatrix<C64>, b: &DMatrix<C64>) -> Result<f64, QzError> {
        let n = self.dim();
        if self.q.shape() != (n, n) {
            return Err(QzError::NoLeftFactor);
        }
        if a.shape() != (n, n) || b.shape() != (n, n) {
            return Err(QzError::DimensionMismatch {
                a_rows: a.nrows(),
                a_cols: a.ncols(),
                b_rows: b.nrows(),
                b_cols: b.ncols(),
            });
        }
        let rel = |m: &DMatrix<C64>, f: &DMatrix<C64>| {
            let r = iteration::frobenius((&self.q * f * self.z.adjoint() - m).as_slice());
            let nm = iteration::frobenius(m.as_slice());
            if nm > 0.0 {
                r / nm
            } else {
                r
            }
        };
        Ok(rel(a, &self.s).max(rel(b, &self.t)))
    }

    /// Left unitary factor Q (0 x 0 when [`QzParams::accumulate_q`] is false).
    pub fn q(&self) -> &DMatrix<C64> {
        &self.q
    }
    /// Right unitary factor Z.
    pub fn z(&self) -> &DMatrix<C64> {
        &self.z
    }
    /// Upper-triangular S = Q^H A Z.
    pub fn s(&self) -> &DMatrix<C64> {
        &self.s
    }
    /// Upper-triangular T = Q^H B Z (real non-negative diagonal).
    pub fn t(&self) -> &DMatrix<C64> {
        &self.t
    }
    /// Consumes the decomposition, returning `(q, z, s, t)`.
    pub fn unpack(self) -> (DMatrix<C64>, DMatrix<C64>, DMatrix<C64>, DMatrix<C64>) {
        (self.q, self.z, self.s, self.t)
    }
}
