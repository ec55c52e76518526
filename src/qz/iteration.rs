//! Complex single-shift implicit QZ iteration (Moler and Stewart 1973; Golub and Van Loan,
//! Matrix Computations, 4th ed., §7.7.5-7.7.6): from a Hessenberg-triangular pair
//! `Q^H A Z = H`, `Q^H B Z = T` it drives H to upper triangular form S by unitary equivalences,
//! keeping T upper triangular, so that on exit `Q^H A Z = S`, `Q^H B Z = T` and the eigenvalues
//! are the pairs `(alpha_i, beta_i) = (S_ii, T_ii)` with `beta_i` real and non-negative.
//!
//! Tests and tolerances (names as in the code):
//! * A subdiagonal `h(j, j-1)` is negligible when `abs1(h(j,j-1)) <= max(SAFE_MIN,
//!   EPS * (abs1(h(j,j)) + abs1(h(j-1,j-1))))` (element-wise; `abs1 = |re| + |im|`); it is then
//!   set to exact zero and the problem splits.
//! * A diagonal `t(j, j)` is negligible when `|t(j,j)| < btol = max(SAFE_MIN, EPS * ||T||_F)`
//!   (norm-wise: an infinite eigenvalue is a zero pivot relative to the whole of B). It is set to
//!   exact zero and chased to the bottom of the active block by rotations (or, if the
//!   subdiagonal above it is small, to the position where it splits off), where it deflates as
//!   `beta = 0` exactly. A 1x1 block that splits off with `|t(j,j)| <= m EPS ||T||_F`
//!   (m the active size) is likewise set to `beta = 0` exactly.
//! * Shifts: the eigenvalue of the trailing 2x2 of `H T^{-1}` closest to its last diagonal
//!   entry, computed with the half-difference and sign choice that avoids cancellation; every
//!   `exceptional_shift_period`-th sweep without deflation an exceptional shift instead.
//! * The total number of sweeps is capped at `max_sweeps_per_eigenvalue * n`; exceeding it is
//!   `QzError::NoConvergence`.

use super::rotation::{abs1, cdiv, rotate_columns, rotate_rows, Entry, Rotation};
use super::{QzError, QzParams, C64};

/// Unit roundoff spacing used in the negligibility tests: `f64::EPSILON` (2^-52), the relative
/// error bound of one rounded operation, as in backward-stable QZ codes (common practice).
const EPS: f64 = f64::EPSILON;
/// Smallest positive normal number: floor of every absolute tolerance, so that all-zero blocks
/// still deflate and no tolerance is exactly zero.
const SAFE_MIN: f64 = f64::MIN_POSITIVE;

/// What the iteration does next at the current bottom `ilast` of the active block.
pub(crate) enum Action {
    /// `ilast` is a 1x1 block: record it and shrink the block.
    Deflate,
    /// `t(ilast, ilast)` is zero: clear `h(ilast, ilast-1)` by a column rotation, then deflate.
    ZeroTAtLast,
    /// Run a QZ sweep on rows/columns `ifirst..=ilast`.
    Sweep(usize),
}

/// Working state: the four column-major n x n matrices (`q` may be empty: Q not accumulated)
/// and the fixed tolerances. Generic over
/// the scalar so that the real double-shift stage ([`super::real_iteration`]) shares the
/// deflation logic with the complex iteration.
pub(crate) struct Work<'a, E> {
    pub(crate) h: &'a mut [E],
    pub(crate) t: &'a mut [E],
    pub(crate) q: &'a mut [E],
    pub(crate) z: &'a mut [E],
    pub(crate) n: usize,
    pub(crate) atol: f64,
    pub(crate) btol: f64,
    /// `max(SAFE_MIN, m EPS ||T||_F)` with m the active size: a deflated beta this small is set
    /// to exact zero.
    beta_zero_tol: f64,
    pub(crate) ascale: f64,
    pub(crate) bscale: f64,
}

impl<'a, E: Entry> Work<'a, E> {
    /// The working state for the active block `ilo..=ihi` (n > 0): tolerances from the Frobenius
    /// norms of the active blocks of `h` and `t`.
    pub(crate) fn new(
        h: &'a mut [E],
        t: &'a mut [E],
        q: &'a mut [E],
        z: &'a mut [E],
        n: usize,
        ilo: usize,
        ihi: usize,
    ) -> Self {
        let block_norm = |m: &[E]| {
            let cols: Vec<f64> = (ilo..=ihi)
                .map(|j| frobenius(&m[j * n + ilo..j * n + ihi + 1]))
                .collect();
            frobenius(&cols)
        };
        let anorm = block_norm(h);
        let bnorm = block_norm(t);
        Work {
            h,
            t,
            q,
            z,
            n,
            atol: SAFE_MIN.max(EPS * anorm),
            btol: SAFE_MIN.max(EPS * bnorm),
            beta_zero_tol: SAFE_MIN.max((ihi - ilo + 1) as f64 * EPS * bnorm),
            ascale: 1.0 / SAFE_MIN.max(anorm),
            bscale: 1.0 / SAFE_MIN.max(bnorm),
        }
    }

    #[inline(always)]
    pub(crate) fn h(&self, i: usize, j: usize) -> E {
        self.h[i + j * self.n]
    }
    #[inline(always)]
    pub(crate) fn t(&self, i: usize, j: usize) -> E {
        self.t[i + j * self.n]
    }
    #[inline(always)]
    pub(crate) fn set_h(&mut self, i: usize, j: usize, v: E) {
        self.h[i + j * self.n] = v;
    }
    #[inline(always)]
    pub(crate) fn set_t(&mut self, i: usize, j: usize, v: E) {
        self.t[i + j * self.n] = v;
    }

    /// Element-wise negligibility of `h(j, j-1)` (j >= 1).
    #[inline]
    pub(crate) fn subdiagonal_negligible(&self, j: usize) -> bool {
        self.h(j, j - 1).abs1()
            <= SAFE_MIN.max(EPS * (self.h(j, j).abs1() + self.h(j - 1, j - 1).abs1()))
    }

    /// Left rotation on rows (i, i+1) of H and T over columns `from..n`, accumulated into Q.
    #[inline]
    pub(crate) fn left(&mut self, i: usize, h_from: usize, t_from: usize, g: Rotation<E>) {
        let n = self.n;
        rotate_rows(self.h, n, i, h_from..n, g);
        rotate_rows(self.t, n, i, t_from..n, g);
        if !self.q.is_empty() {
            rotate_columns(self.q, n, i, i + 1, 0..n, g.for_left_accumulation());
        }
    }

    /// Right rotation on columns (keep, kill) of H (rows `..h_to`) and T (rows `..t_to`),
    /// accumulated into Z.
    #[inline]
    pub(crate) fn right(
        &mut self,
        keep: usize,
        kill: usize,
        h_to: usize,
        t_to: usize,
        g: Rotation<E>,
    ) {
        let n = self.n;
        rotate_columns(self.h, n, keep, kill, 0..h_to, g);
        rotate_columns(self.t, n, keep, kill, 0..t_to, g);
        rotate_columns(self.z, n, keep, kill, 0..n, g);
    }

    /// Looks for the top of the active block above `ilast`, handling a negligible `t(j, j)` by
    /// chasing it down. Returns the next action.
    pub(crate) fn locate(&mut self, ilo: usize, ilast: usize) -> Action {
        for j in (ilo..ilast).rev() {
            let ilazro = if j == ilo {
                true
            } else if self.subdiagonal_negligible(j) {
                self.set_h(j, j - 1, E::zero());
                true
            } else {
                false
            };
            if self.t(j, j).modulus() < self.btol {
                self.set_t(j, j, E::zero());
                // Two consecutive small subdiagonals: h(j,j-1) * h(j+1,j) negligible against
                // h(j,j) allows the zero of T to be pushed down through rows only.
                let mut ilazr2 = !ilazro
                    && self.h(j, j - 1).abs1() * (self.ascale * self.h(j + 1, j).abs1())
                        <= self.h(j, j).abs1() * (self.ascale * self.atol);
                if ilazro || ilazr2 {
                    for jch in j..ilast {
                        let (g, r) = Rotation::zeroing(self.h(jch, jch), self.h(jch + 1, jch));
                        self.set_h(jch, jch, r);
                        self.set_h(jch + 1, jch, E::zero());
                        self.left(jch, jch + 1, jch + 1, g);
                        if ilazr2 {
                            let v = self.h(jch, jch - 1).scale(g.c);
                            self.set_h(jch, jch - 1, v);
                        }
                        ilazr2 = false;
                        if self.t(jch + 1, jch + 1).abs1() >= self.btol {
                            return if jch + 1 >= ilast {
                                Action::Deflate
                            } else {
                                Action::Sweep(jch + 1)
                            };
                        }
                        self.set_t(jch + 1, jch + 1, E::zero());
                    }
                    return Action::ZeroTAtLast;
                }
                // Chase the zero of T down to ilast with row rotations on T, each followed by a
                // column rotation restoring H's Hessenberg form.
                for jch in j..ilast {
                    let (g, r) = Rotation::zeroing(self.t(jch, jch + 1), self.t(jch + 1, jch + 1));
                    self.set_t(jch, jch + 1, r);
                    self.set_t(jch + 1, jch + 1, E::zero());
                    self.left(jch, jch - 1, jch + 2, g);
                    let (g, r) = Rotation::zeroing(self.h(jch + 1, jch), self.h(jch + 1, jch - 1));
                    self.set_h(jch + 1, jch, r);
                    self.set_h(jch + 1, jch - 1, E::zero());
                    self.right(jch, jch - 1, jch + 1, jch, g);
                }
                return Action::ZeroTAtLast;
            } else if ilazro {
                return Action::Sweep(j);
            }
        }
        // Not reached: j == ilo always returns above.
        Action::Sweep(ilo)
    }
}

impl Work<'_, C64> {
    /// Makes `t(j, j)` real and non-negative by scaling column j of S, T and Z by a unimodular
    /// number (the one definition, [`super::reorder::normalize_beta`]).
    fn normalize_beta(&mut self, j: usize) {
        super::reorder::normalize_beta(self.h, self.t, self.z, self.n, j);
    }

    /// Wilkinson-type shift: the eigenvalue of the trailing 2x2 block of `H T^{-1}` (scaled by
    /// `ascale`, `bscale`) closest to the last diagonal entry. With `T = U D` (U unit upper
    /// triangular) it solves the 2x2 eigenproblem of `(H D^{-1}) U^{-1}` through
    /// `shift = abi22 - c^2 / (x + y)`, `x = (ad11 - abi22)/2`, `y = sqrt(x^2 + c^2)` with the
    /// sign of y chosen so that `x + y` does not cancel.
    fn wilkinson_shift(&self, ilast: usize) -> C64 {
        let (a, b) = (self.ascale, self.bscale);
        let t11 = self.t(ilast - 1, ilast - 1).scale(b);
        let t22 = self.t(ilast, ilast).scale(b);
        let u12 = cdiv(self.t(ilast - 1, ilast).scale(b), t22);
        let ad11 = cdiv(self.h(ilast - 1, ilast - 1).scale(a), t11);
        let ad21 = cdiv(self.h(ilast, ilast - 1).scale(a), t11);
        let ad12 = cdiv(self.h(ilast - 1, ilast).scale(a), t22);
        let ad22 = cdiv(self.h(ilast, ilast).scale(a), t22);
        let abi22 = ad22 - u12 * ad21;
        let abi12 = ad12 - u12 * ad11;
        let mut shift = abi22;
        let ctemp = abi12.sqrt() * ad21.sqrt();
        if ctemp != C64::new(0.0, 0.0) {
            let x = (ad11 - shift).scale(0.5);
            let temp2 = abs1(x);
            let temp = abs1(ctemp).max(temp2);
            let xs = x.unscale(temp);
            let cs = ctemp.unscale(temp);
            let mut y = (xs * xs + cs * cs).sqrt().scale(temp);
            if temp2 > 0.0 {
                let xu = x.unscale(temp2);
                if xu.re * y.re + xu.im * y.im < 0.0 {
                    y = -y;
                }
            }
            shift -= ctemp * cdiv(ctemp, x + y);
        }
        shift
    }

    /// One implicit single-shift QZ sweep on the active block `ifirst..=ilast` (ilast > ifirst):
    /// chooses where to start (a later row if two consecutive subdiagonals are small enough),
    /// introduces the bulge from the shifted first column and chases it to the bottom.
    fn sweep(&mut self, ifirst: usize, ilast: usize, shift: C64) {
        let (a, b) = (self.ascale, self.bscale);
        let mut istart = ifirst;
        let mut ctemp = self.h(ifirst, ifirst).scale(a) - shift * self.t(ifirst, ifirst).scale(b);
        for j in (ifirst + 1..ilast).rev() {
            let c = self.h(j, j).scale(a) - shift * self.t(j, j).scale(b);
            let mut temp = abs1(c);
            let mut temp2 = a * abs1(self.h(j + 1, j));
            let tempr = temp.max(temp2);
            if tempr < 1.0 && tempr != 0.0 {
                temp /= tempr;
                temp2 /= tempr;
            }
            if abs1(self.h(j, j - 1)) * temp2 <= temp * self.atol {
                istart = j;
                ctemp = c;
                break;
            }
        }
        let ctemp2 = self.h(istart + 1, istart).scale(a);
        let (mut g, _) = Rotation::zeroing(ctemp, ctemp2);
        for j in istart..ilast {
            if j > istart {
                let (g2, r) = Rotation::zeroing(self.h(j, j - 1), self.h(j + 1, j - 1));
                self.set_h(j, j - 1, r);
                self.set_h(j + 1, j - 1, C64::new(0.0, 0.0));
                g = g2;
            }
            self.left(j, j, j, g);
            let (g3, r) = Rotation::zeroing(self.t(j + 1, j + 1), self.t(j + 1, j));
            self.set_t(j + 1, j + 1, r);
            self.set_t(j + 1, j, C64::new(0.0, 0.0));
            let h_to = ilast.min(j + 2) + 1;
            self.right(j + 1, j, h_to, j + 1, g3);
        }
    }
}

/// Frobenius norm of a column-major block, with scaling against overflow and underflow.
pub(crate) fn frobenius<E: Entry>(m: &[E]) -> f64 {
    let mut scale = 0.0f64;
    let mut sum = 1.0f64;
    for x in m {
        let x = x.to_c64();
        for v in [x.re.abs(), x.im.abs()] {
            if v > 0.0 {
                if scale < v {
                    sum = 1.0 + sum * (scale / v) * (scale / v);
                    scale = v;
                } else {
                    sum += (v / scale) * (v / scale);
                }
            }
        }
    }
    scale * sum.sqrt()
}

/// Runs the QZ iteration on the Hessenberg-triangular pair `(h, t)` (n x n, column-major) whose
/// active block is `active = ilo..=ihi` (outside it `h` is already upper triangular).
/// Overwrites `h` with the upper-triangular S (exact zeros below the diagonal), `t` with T
/// (upper triangular, real non-negative diagonal), and post-multiplies the accumulated `q`, `z`
/// by the rotations used, so `Q^H A Z = S`, `Q^H B Z = T` continue to hold. The tolerances use
/// the Frobenius norms of the active blocks (which are at most ||A||_F, ||B||_F).
///
/// Errors: `NoConvergence { index }` when more than `max_sweeps_per_eigenvalue * n` sweeps are
/// needed; `index` is the bottom of the block still active.
pub(crate) fn qz_iterate(
    h: &mut [C64],
    t: &mut [C64],
    q: &mut [C64],
    z: &mut [C64],
    n: usize,
    active: std::ops::RangeInclusive<usize>,
    params: &QzParams,
) -> Result<(), QzError> {
    if n == 0 {
        return Ok(());
    }
    let (ilo, ihi) = (*active.start(), *active.end());
    let mut w = Work::new(h, t, q, z, n, ilo, ihi);
    // Eigenvalues isolated by the permutation: only make beta real non-negative.
    for j in (0..ilo).chain(ihi + 1..n) {
        w.normalize_beta(j);
    }
    let mut ilast = ihi;
    let mut iiter = 0usize;
    let mut eshift = C64::new(0.0, 0.0);
    let maxit = params
        .max_sweeps_per_eigenvalue
        .saturating_mul(ihi - ilo + 1);
    let mut sweeps = 0usize;
    loop {
        let action = if ilast == ilo {
            Action::Deflate
        } else if w.subdiagonal_negligible(ilast) {
            w.set_h(ilast, ilast - 1, C64::new(0.0, 0.0));
            Action::Deflate
        } else if w.t(ilast, ilast).modulus() <= w.btol {
            w.set_t(ilast, ilast, C64::new(0.0, 0.0));
            Action::ZeroTAtLast
        } else {
            w.locate(ilo, ilast)
        };
        match action {
            Action::Sweep(ifirst) => {
                if sweeps >= maxit {
                    return Err(QzError::NoConvergence { index: ilast });
                }
                sweeps += 1;
                iiter += 1;
                let period = params.exceptional_shift_period;
                let shift = if period > 0 && iiter.is_multiple_of(period) {
                    // Exceptional shift (perturbs a stalled iteration out of a cycle): add the
                    // last diagonal ratio or the last subdiagonal ratio to the running shift.
                    let tl = w.t(ilast, ilast).scale(w.bscale);
                    if iiter.is_multiple_of(2 * period) && abs1(tl) > SAFE_MIN {
                        eshift += cdiv(w.h(ilast, ilast).scale(w.ascale), tl);
                    } else {
                        eshift += cdiv(
                            w.h(ilast, ilast - 1).scale(w.ascale),
                            w.t(ilast - 1, ilast - 1).scale(w.bscale),
                        );
                    }
                    eshift
                } else {
                    w.wilkinson_shift(ilast)
                };
                w.sweep(ifirst, ilast, shift);
                continue;
            }
            Action::ZeroTAtLast => {
                let (g, r) = Rotation::zeroing(w.h(ilast, ilast), w.h(ilast, ilast - 1));
                w.set_h(ilast, ilast, r);
                w.set_h(ilast, ilast - 1, C64::new(0.0, 0.0));
                w.right(ilast, ilast - 1, ilast, ilast, g);
            }
            Action::Deflate => {
                // A split-off 1x1 block whose beta is negligible is an infinite eigenvalue:
                // make it exactly so. The bound n EPS ||B|| (the rounding a zero pivot of B
                // picks up in the reduction: a few EPS ||B|| per row operation) is the one the
                // singular-pencil test uses, so "negligible beta" means one thing throughout.
                if w.t(ilast, ilast).modulus() <= w.beta_zero_tol {
                    w.set_t(ilast, ilast, C64::new(0.0, 0.0));
                }
            }
        }
        w.normalize_beta(ilast);
        if ilast == ilo {
            break;
        }
        ilast -= 1;
        iiter = 0;
        eshift = C64::new(0.0, 0.0);
    }
    // The sweeps leave exact zeros below the subdiagonal; the deflations zeroed the subdiagonal.
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::qz::hessenberg::reduce;
    use nalgebra::DMatrix;

    fn lcg(seed: &mut u64) -> f64 {
        *seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((*seed >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }

    /// Reduction + iteration rebuild A and B within 10 n eps of their norms (the observed
    /// backward errors are a few tens of eps at n = 400; common-practice bound for O(n^3)
    /// rotations), S and T come out exactly triangular, beta real >= 0; with B having zero rows
    /// (so zero pivots of T must be chased and deflated) and without.
    #[test]
    fn iteration_rebuilds_pencil() {
        for (n, zero_rows) in [
            (1usize, false),
            (2, true),
            (7, false),
            (24, true),
            (60, true),
            (60, false),
        ] {
            let mut seed = 99 + n as u64;
            let a0 = DMatrix::from_fn(n, n, |_, _| C64::new(lcg(&mut seed), lcg(&mut seed)));
            let mut b0 = DMatrix::from_fn(n, n, |_, _| C64::new(lcg(&mut seed), lcg(&mut seed)));
            if zero_rows {
                for i in (0..n).step_by(5) {
                    b0.row_mut(i).fill(C64::new(0.0, 0.0));
                }
            }
            let (mut h, mut t) = (a0.clone(), b0.clone());
            let mut q = DMatrix::<C64>::identity(n, n);
            let mut z = DMatrix::<C64>::identity(n, n);
            reduce(
                h.as_mut_slice(),
                t.as_mut_slice(),
                q.as_mut_slice(),
                z.as_mut_slice(),
                n,
                0,
                n - 1,
            );
            qz_iterate(
                h.as_mut_slice(),
                t.as_mut_slice(),
                q.as_mut_slice(),
                z.as_mut_slice(),
                n,
                0..=n - 1,
                &QzParams::default(),
            )
            .unwrap();
            for j in 0..n {
                for i in j + 1..n {
                    assert_eq!(h[(i, j)], C64::new(0.0, 0.0));
                    assert_eq!(t[(i, j)], C64::new(0.0, 0.0));
                }
                assert!(t[(j, j)].im == 0.0 && t[(j, j)].re >= 0.0);
            }
            let tol = 10.0 * n as f64 * EPS;
            let ra = (&q * &h * z.adjoint() - &a0).norm() / a0.norm();
            let rb = (&q * &t * z.adjoint() - &b0).norm() / b0.norm();
            assert!(ra <= tol && rb <= tol, "n={n}: {ra:e} {rb:e}");
            let id = DMatrix::<C64>::identity(n, n);
            assert!((q.adjoint() * &q - &id).norm() <= tol);
            assert!((z.adjoint() * &z - &id).norm() <= tol);
            if zero_rows {
                let zeros = (0..n).filter(|&j| t[(j, j)] == C64::new(0.0, 0.0)).count();
                assert_eq!(zeros, n.div_ceil(5), "n={n}: exact infinite eigenvalues");
            }
        }
    }
}
