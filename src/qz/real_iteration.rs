//! Real double-shift (Francis) implicit QZ sweeps on a real Hessenberg-triangular pair
//! (Moler and Stewart 1973, §4; Golub and Van Loan, Matrix Computations, 4th ed., Algorithm
//! 7.7.3): orthogonal Q, Z with
//!
//! ```text
//!     Q^T H Z = S (upper quasi-triangular: 1x1 and 2x2 diagonal blocks),   Q^T T Z = T',
//! ```
//!
//! T' upper triangular. Each sweep is an orthogonal equivalence whose first column is that of
//! `(M - a1 I)(M - a2 I) e_1`, `M = H T^{-1}`, with the shifts a1, a2 the roots of the trailing
//! 2x2 pencil (a complex-conjugate pair or two reals), so all arithmetic stays real: 3x3
//! Householder reflectors from the left chase the bulge down H; from the right, a 3x3 reflector
//! and a plane rotation (an RQ step on the 3x3 bulge of T, backward stable for any T) restore T
//! to triangular form.
//!
//! This stage does the O(n^3) work for real input in real arithmetic (about a quarter of the
//! work and half the memory traffic of complex sweeps). It shares the deflation tests and the
//! chasing of zero pivots of T with the complex iteration ([`super::iteration::Work`]), so every
//! split it makes is one the complex iteration would make. It stops at 2x2 blocks (and early, if
//! the sweep budget runs out or a block stalls), leaving a valid Hessenberg-triangular pair in
//! which [`super::iteration::qz_iterate`] then splits the 2x2 blocks in complex arithmetic (a few
//! O(n) sweeps each), normalises every beta and finishes whatever is left.

use super::iteration::{Action, Work};
use super::rotation::Rotation;
use super::QzParams;

/// Sweeps on one active block without a deflation after which the stage hands the rest to the
/// complex iteration (which has its own exceptional shifts and budget): 30, three exceptional
/// shifts' worth at the default period.
const STALL_SWEEPS: usize = 30;

/// A 3x3 Householder reflector `P = I - tau u u^T` (symmetric orthogonal).
#[derive(Clone, Copy, Debug)]
struct Reflector3 {
    u: [f64; 3],
    tau: f64,
}

impl Reflector3 {
    /// The reflector with `P x = beta e_k` (k = `pivot`, 0 or 2), and beta. `tau = 0` (the
    /// identity) when the other two entries are zero. Norms are formed after scaling by the
    /// largest entry, so no overflow or harmful underflow for finite input.
    #[inline]
    fn zeroing(x: [f64; 3], pivot: usize) -> (Self, f64) {
        let (o1, o2) = if pivot == 0 { (1, 2) } else { (0, 1) };
        let alpha = x[pivot];
        if x[o1] == 0.0 && x[o2] == 0.0 {
            let mut u = [0.0; 3];
            u[pivot] = 1.0;
            return (Reflector3 { u, tau: 0.0 }, alpha);
        }
        let big = x[0].abs().max(x[1].abs()).max(x[2].abs());
        let (a, b, c) = (x[0] / big, x[1] / big, x[2] / big);
        let norm = big * (a * a + b * b + c * c).sqrt();
        let beta = if alpha >= 0.0 { -norm } else { norm };
        let tau = (beta - alpha) / beta;
        let d = alpha - beta;
        let mut u = [x[0] / d, x[1] / d, x[2] / d];
        u[pivot] = 1.0;
        (Reflector3 { u, tau }, beta)
    }

    /// Applies P from the left to rows `i..i+3` of the column-major `m` (leading dimension
    /// `ld`) over columns `cols`. Overwrites those entries.
    #[inline(always)]
    fn rows(self, m: &mut [f64], ld: usize, i: usize, cols: std::ops::Range<usize>) {
        if self.tau == 0.0 || cols.start >= cols.end {
            return;
        }
        let [u0, u1, u2] = self.u;
        let (t0, t1, t2) = (self.tau * u0, self.tau * u1, self.tau * u2);
        for col in m[cols.start * ld..cols.end * ld].chunks_exact_mut(ld) {
            let x = &mut col[i..i + 3];
            let s = u0 * x[0] + u1 * x[1] + u2 * x[2];
            x[0] -= t0 * s;
            x[1] -= t1 * s;
            x[2] -= t2 * s;
        }
    }

    /// Applies P from the right to columns `j..j+3` of the column-major `m` over `rows`.
    /// Overwrites those entries.
    #[inline(always)]
    fn columns(self, m: &mut [f64], ld: usize, j: usize, rows: std::ops::Range<usize>) {
        if self.tau == 0.0 || rows.start >= rows.end {
            return;
        }
        let [u0, u1, u2] = self.u;
        let (t0, t1, t2) = (self.tau * u0, self.tau * u1, self.tau * u2);
        let (c0, rest) = m[j * ld..(j + 3) * ld].split_at_mut(ld);
        let (c1, c2) = rest.split_at_mut(ld);
        let (c0, c1, c2) = (&mut c0[rows.clone()], &mut c1[rows.clone()], &mut c2[rows]);
        for ((x, y), z) in c0.iter_mut().zip(c1.iter_mut()).zip(c2.iter_mut()) {
            let s = u0 * *x + u1 * *y + u2 * *z;
            *x -= t0 * s;
            *y -= t1 * s;
            *z -= t2 * s;
        }
    }
}

impl Work<'_, f64> {
    /// Scaled entries `ascale * h(i, j)` and `bscale * t(i, j)`.
    #[inline(always)]
    fn hs(&self, i: usize, j: usize) -> f64 {
        self.ascale * self.h(i, j)
    }
    #[inline(always)]
    fn ts(&self, i: usize, j: usize) -> f64 {
        self.bscale * self.t(i, j)
    }

    /// Direction of the first column of `(M - a1 I)(M - a2 I) e_1` (`M = H T^{-1}` on the
    /// block starting at f), with a1, a2 the eigenvalues of the trailing 2x2 pencil at l, in
    /// the arrangement of LAPACK-style codes that keeps cancellation small.
    fn francis_column(&self, f: usize, l: usize) -> [f64; 3] {
        let ad11 = self.hs(l - 1, l - 1) / self.ts(l - 1, l - 1);
        let ad21 = self.hs(l, l - 1) / self.ts(l - 1, l - 1);
        let ad12 = self.hs(l - 1, l) / self.ts(l, l);
        let ad22 = self.hs(l, l) / self.ts(l, l);
        let u12 = self.ts(l - 1, l) / self.ts(l, l);
        let ad11l = self.hs(f, f) / self.ts(f, f);
        let ad21l = self.hs(f + 1, f) / self.ts(f, f);
        let ad12l = self.hs(f, f + 1) / self.ts(f + 1, f + 1);
        let ad22l = self.hs(f + 1, f + 1) / self.ts(f + 1, f + 1);
        let ad32l = self.hs(f + 2, f + 1) / self.ts(f + 1, f + 1);
        let u12l = self.ts(f, f + 1) / self.ts(f + 1, f + 1);
        [
            (ad11 - ad11l) * (ad22 - ad11l) - ad12 * ad21
                + ad21 * u12 * ad11l
                + (ad12l - ad11l * u12l) * ad21l,
            ((ad22l - ad11l) - ad21l * u12l - (ad11 - ad11l) - (ad22 - ad11l) + ad21 * u12) * ad21l,
            ad32l * ad21l,
        ]
    }

    /// First column of `M^2 - s M + p I` for given real `s`, `p` (the exceptional shifts):
    /// with `x = M e_1 = [a1, a2, 0]` and `y = T^{-1} x`, it is `H y - s x + p e_1`.
    fn shifted_column(&self, f: usize, s: f64, p: f64) -> [f64; 3] {
        let a1 = self.hs(f, f) / self.ts(f, f);
        let a2 = self.hs(f + 1, f) / self.ts(f, f);
        let y2 = a2 / self.ts(f + 1, f + 1);
        let y1 = (a1 - self.ts(f, f + 1) * y2) / self.ts(f, f);
        [
            self.hs(f, f) * y1 + self.hs(f, f + 1) * y2 - s * a1 + p,
            self.hs(f + 1, f) * y1 + self.hs(f + 1, f + 1) * y2 - s * a2,
            self.hs(f + 2, f + 1) * y2,
        ]
    }

    /// Exceptional shifts (a real double root pushed off the trailing entries, as in
    /// Francis-QR codes): `a = m22 + 0.75 w`, `w = |m(l,l-1)| + |m(l-1,l-2)|`, polynomial
    /// `z^2 - 2a z + a^2 + 0.4375 w^2`. Returns `(s, p)`.
    fn exceptional_shifts(&self, f: usize, l: usize) -> (f64, f64) {
        let m22 = self.hs(l, l) / self.ts(l, l);
        let mut w = (self.hs(l, l - 1) / self.ts(l - 1, l - 1)).abs();
        if l >= f + 2 {
            w += (self.hs(l - 1, l - 2) / self.ts(l - 2, l - 2)).abs();
        }
        let a = m22 + 0.75 * w;
        (2.0 * a, a * a + 0.4375 * w * w)
    }

    /// Left reflector on rows `j..j+3` of H (columns `h_from..n`) and T (columns `j..n`),
    /// accumulated into Q (columns `j..j+3`).
    #[inline(always)]
    fn left3(&mut self, j: usize, h_from: usize, p: Reflector3) {
        let n = self.n;
        p.rows(self.h, n, j, h_from..n);
        p.rows(self.t, n, j, j..n);
        if !self.q.is_empty() {
            p.columns(self.q, n, j, 0..n);
        }
    }

    /// Right reflector on columns `j..j+3` of H (rows `..h_to`), T (rows `..t_to`) and Z.
    #[inline(always)]
    fn right3(&mut self, j: usize, h_to: usize, t_to: usize, p: Reflector3) {
        let n = self.n;
        p.columns(self.h, n, j, 0..h_to);
        p.columns(self.t, n, j, 0..t_to);
        p.columns(self.z, n, j, 0..n);
    }

    /// One implicit double-shift sweep on the active block `f..=l` (l >= f + 2), started from
    /// the direction `v` (see [`Self::francis_column`]). Overwrites H, T, Q, Z; leaves H upper
    /// Hessenberg and T upper triangular with exact zeros where entries were annihilated.
    fn double_sweep(&mut self, f: usize, l: usize, v: [f64; 3]) {
        let (mut p, _) = Reflector3::zeroing(v, 0);
        for j in f..l - 1 {
            if j > f {
                let x = [self.h(j, j - 1), self.h(j + 1, j - 1), self.h(j + 2, j - 1)];
                let (pj, beta) = Reflector3::zeroing(x, 0);
                self.set_h(j, j - 1, beta);
                self.set_h(j + 1, j - 1, 0.0);
                self.set_h(j + 2, j - 1, 0.0);
                p = pj;
            }
            self.left3(j, j, p);
            // RQ step on the bulge of T: a reflector on columns j..j+2 maps row j+2 onto its
            // last entry, then a rotation of columns (j+1, j) kills t(j+1, j).
            let x = [self.t(j + 2, j), self.t(j + 2, j + 1), self.t(j + 2, j + 2)];
            let (r, beta) = Reflector3::zeroing(x, 2);
            let h_to = (j + 3).min(l) + 1;
            self.right3(j, h_to, j + 2, r);
            self.set_t(j + 2, j + 2, beta);
            self.set_t(j + 2, j, 0.0);
            self.set_t(j + 2, j + 1, 0.0);
            let (g, rr) = Rotation::zeroing(self.t(j + 1, j + 1), self.t(j + 1, j));
            self.set_t(j + 1, j + 1, rr);
            self.set_t(j + 1, j, 0.0);
            self.right(j + 1, j, h_to, j + 1, g);
        }
        // Last step: rotations on rows (l-1, l) and columns (l, l-1).
        let j = l - 1;
        let (g, r) = Rotation::zeroing(self.h(j, j - 1), self.h(j + 1, j - 1));
        self.set_h(j, j - 1, r);
        self.set_h(j + 1, j - 1, 0.0);
        self.left(j, j, j, g);
        let (g, r) = Rotation::zeroing(self.t(j + 1, j + 1), self.t(j + 1, j));
        self.set_t(j + 1, j + 1, r);
        self.set_t(j + 1, j, 0.0);
        self.right(j + 1, j, l + 1, j + 1, g);
    }
}

/// Runs real double-shift sweeps on the real Hessenberg-triangular pair `(h, t)` (n x n,
/// column-major, active block `ilo..=ihi`), post-multiplying `q` and `z` by the orthogonal
/// transformations used, so `Q^T A Z = H`, `Q^T B Z = T` keep holding. On return `h` is upper
/// Hessenberg with exact zeros at every split found, and every remaining unreduced block is
/// either 1x1, 2x2, or (only after the budget of `max_sweeps_per_eigenvalue * size / 2` sweeps,
/// or [`STALL_SWEEPS`] sweeps without a deflation) larger; `t` stays upper triangular. Never
/// fails: whatever is left is finished by the complex iteration.
#[allow(clippy::too_many_arguments)]
pub(crate) fn real_qz_reduce(
    h: &mut [f64],
    t: &mut [f64],
    q: &mut [f64],
    z: &mut [f64],
    n: usize,
    ilo: usize,
    ihi: usize,
    params: &QzParams,
) {
    if n < 3 || ihi < ilo + 2 {
        return;
    }
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports the features the clone is compiled for.
            unsafe { reduce_avx2(h, t, q, z, n, ilo, ihi, params) };
            return;
        }
    }
    reduce_impl(h, t, q, z, n, ilo, ihi, params);
}

/// [`real_qz_reduce`] compiled for AVX2/FMA (the reflector loops auto-vectorise).
///
/// # Safety
/// The CPU must support AVX2 and FMA.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[allow(clippy::too_many_arguments)]
unsafe fn reduce_avx2(
    h: &mut [f64],
    t: &mut [f64],
    q: &mut [f64],
    z: &mut [f64],
    n: usize,
    ilo: usize,
    ihi: usize,
    params: &QzParams,
) {
    reduce_impl(h, t, q, z, n, ilo, ihi, params);
}

#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn reduce_impl(
    h: &mut [f64],
    t: &mut [f64],
    q: &mut [f64],
    z: &mut [f64],
    n: usize,
    ilo: usize,
    ihi: usize,
    params: &QzParams,
) {
    let mut w = Work::new(h, t, q, z, n, ilo, ihi);
    let budget = (params
        .max_sweeps_per_eigenvalue
        .saturating_mul(ihi - ilo + 1)
        / 2)
    .max(1);
    let period = params.exceptional_shift_period;
    let mut sweeps = 0usize;
    let mut iiter = 0usize;
    let mut ilast = ihi;
    while ilast >= ilo + 2 {
        let action = if w.subdiagonal_negligible(ilast) {
            w.set_h(ilast, ilast - 1, 0.0);
            Action::Deflate
        } else if w.t(ilast, ilast).abs() <= w.btol {
            w.set_t(ilast, ilast, 0.0);
            Action::ZeroTAtLast
        } else {
            w.locate(ilo, ilast)
        };
        match action {
            Action::Deflate => {}
            Action::ZeroTAtLast => {
                let (g, r) = Rotation::zeroing(w.h(ilast, ilast), w.h(ilast, ilast - 1));
                w.set_h(ilast, ilast, r);
                w.set_h(ilast, ilast - 1, 0.0);
                w.right(ilast, ilast - 1, ilast, ilast, g);
            }
            Action::Sweep(ifirst) if ifirst + 1 == ilast => {
                // A 2x2 block: left to the complex iteration.
                if ifirst <= ilo + 1 {
                    return;
                }
                ilast = ifirst - 1;
                iiter = 0;
                continue;
            }
            Action::Sweep(ifirst) => {
                if sweeps >= budget || iiter >= STALL_SWEEPS {
                    return;
                }
                sweeps += 1;
                iiter += 1;
                let v = if period > 0 && iiter.is_multiple_of(period) {
                    let (s, p) = w.exceptional_shifts(ifirst, ilast);
                    w.shifted_column(ifirst, s, p)
                } else {
                    w.francis_column(ifirst, ilast)
                };
                if !v.iter().all(|x| x.is_finite()) {
                    return;
                }
                w.double_sweep(ifirst, ilast, v);
                continue;
            }
        }
        ilast -= 1;
        iiter = 0;
    }
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

    /// The reflector maps x onto its pivot axis and is orthogonal, to a few eps.
    #[test]
    fn reflector_zeroes_and_is_orthogonal() {
        for (x, pivot) in [
            ([3.0, -1.0, 2.0], 0),
            ([3.0, -1.0, 2.0], 2),
            ([1e-300, 1e-300, -1e-301], 0),
            ([1e300, -1e300, 1e299], 2),
            ([0.0, 0.0, 5.0], 2),
        ] {
            let (p, beta) = Reflector3::zeroing(x, pivot);
            let mut m = x.to_vec();
            p.rows(&mut m, 3, 0, 0..1);
            let scale = x.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            for (k, v) in m.iter().enumerate() {
                let want = if k == pivot { beta } else { 0.0 };
                assert!(
                    (v - want).abs() <= 8.0 * f64::EPSILON * scale,
                    "{x:?}: {m:?}"
                );
            }
            let mut id = vec![0.0; 9];
            for k in 0..3 {
                id[4 * k] = 1.0;
            }
            p.columns(&mut id, 3, 0, 0..3);
            p.columns(&mut id, 3, 0, 0..3);
            for (k, v) in id.iter().enumerate() {
                let want = if k % 4 == 0 { 1.0 } else { 0.0 };
                assert!((v - want).abs() <= 8.0 * f64::EPSILON, "P^2 != I for {x:?}");
            }
        }
    }

    /// Reduction + real sweeps rebuild A and B within 10 n eps of their norms (the bound of the
    /// complex iteration's test), H ends upper quasi-triangular with blocks of at most 2x2
    /// (exact zeros below the subdiagonal and at every split), T exactly upper triangular; with
    /// zero rows in B (zero pivots of T chased and deflated) and without; with the default
    /// exceptional-shift period and with an exceptional shift every 2nd or 3rd sweep.
    #[test]
    fn real_sweeps_rebuild_pencil() {
        for period in [10usize, 2, 3] {
            rebuild_with_period(period);
        }
    }

    fn rebuild_with_period(period: usize) {
        let params = QzParams {
            exceptional_shift_period: period,
            ..QzParams::default()
        };
        for (n, zero_rows) in [
            (3usize, false),
            (4, true),
            (9, false),
            (25, true),
            (60, true),
            (80, false),
        ] {
            let mut seed = 17 + n as u64;
            let a0 = DMatrix::from_fn(n, n, |_, _| lcg(&mut seed));
            let mut b0 = DMatrix::from_fn(n, n, |_, _| lcg(&mut seed));
            if zero_rows {
                for i in (0..n).step_by(4) {
                    b0.row_mut(i).fill(0.0);
                }
            }
            let (mut h, mut t) = (a0.clone(), b0.clone());
            let mut q = DMatrix::<f64>::identity(n, n);
            let mut z = DMatrix::<f64>::identity(n, n);
            let (hs, ts, qs, zs) = (
                h.as_mut_slice(),
                t.as_mut_slice(),
                q.as_mut_slice(),
                z.as_mut_slice(),
            );
            reduce(hs, ts, qs, zs, n, 0, n - 1);
            real_qz_reduce(hs, ts, qs, zs, n, 0, n - 1, &params);
            for j in 0..n {
                for i in j + 1..n {
                    assert_eq!(t[(i, j)], 0.0, "n={n}: t({i},{j})");
                    if i > j + 1 {
                        assert_eq!(h[(i, j)], 0.0, "n={n}: h({i},{j})");
                    }
                }
            }
            for j in 1..n - 1 {
                assert!(
                    h[(j, j - 1)] == 0.0 || h[(j + 1, j)] == 0.0,
                    "n={n}, period {period}: unreduced block larger than 2x2 at {j}"
                );
            }
            let tol = 10.0 * n as f64 * f64::EPSILON;
            let ra = (&q * &h * z.transpose() - &a0).norm() / a0.norm();
            let rb = (&q * &t * z.transpose() - &b0).norm() / b0.norm();
            assert!(ra <= tol && rb <= tol, "n={n}: {ra:e} {rb:e}");
            let id = DMatrix::<f64>::identity(n, n);
            assert!((q.transpose() * &q - &id).norm() <= tol);
            assert!((z.transpose() * &z - &id).norm() <= tol);
        }
    }
}
