//! Hessenberg-triangular reduction: unitary Q, Z with `Q^H A Z = H` upper Hessenberg and
//! `Q^H B Z = T` upper triangular (Golub and Van Loan, Matrix Computations, 4th ed., §7.7.4;
//! Moler and Stewart 1973, §3).
//!
//! First a Householder QR factorisation `B = Q_1 R` (Q_1 applied to A), then for each column of
//! A from the left, Givens rotations on adjacent rows annihilate its entries below the
//! subdiagonal from the bottom up; each such row rotation puts one entry below T's diagonal,
//! which a column rotation on the same two columns removes at once.
//!
//! Generic over the scalar (`Entry`: f64 or C64): real input is reduced in real arithmetic (about a
//! quarter of the complex work) and converted to complex afterwards.

use super::rotation::{rotate_columns, rotate_rows, Entry, Rotation};

/// Overwrites the n x n column-major `a`, `b` with `H = Q^H A Z` (upper Hessenberg) and
/// `T = Q^H B Z` (upper triangular, entries below the diagonal set to exact zero), and
/// overwrites `q`, `z` (which must hold the identity or any unitary matrices on entry) with
/// `q Q`, `z Z` (`q` may be empty: then Q is not accumulated). Only the active block `ilo..=ihi` is reduced: on entry the rows and columns
/// outside it must already be in triangular form (as left by [`super::balance::permute`]:
/// `a`, `b` zero below the diagonal in columns `< ilo` and in rows `> ihi`); the rotations are
/// applied to whole rows and columns so that the equivalence holds for the full matrices.
pub(crate) fn reduce<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    z: &mut [E],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports the features the clone is compiled for.
            unsafe { reduce_avx2(a, b, q, z, n, ilo, ihi) };
            return;
        }
    }
    reduce_portable(a, b, q, z, n, ilo, ihi);
}

/// [`reduce`] compiled for AVX2/FMA: the portable loops (inlined) are auto-vectorised with
/// 256-bit registers, which matters for the real (`f64`) kernels that have no hand-written
/// SIMD version.
///
/// # Safety
/// The CPU must support AVX2 and FMA.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn reduce_avx2<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    z: &mut [E],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    E::triangularize(a, b, q, n, ilo, ihi);
    givens_hessenberg(a, b, q, z, n, ilo, ihi);
}

fn reduce_portable<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    z: &mut [E],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    E::triangularize(a, b, q, n, ilo, ihi);
    givens_hessenberg(a, b, q, z, n, ilo, ihi);
}

/// Householder QR of the active block of `b`: overwrites `b <- H_{m}...H_1 b` (upper triangular
/// on `ilo..=ihi`, exact zeros below the diagonal), `a <- H_{m}...H_1 a` and
/// `q <- q H_1...H_{m}`. Each reflector is the
/// Hermitian `H = I - tau v v^H` with real `tau = 1 / (v^H x)` mapping the column `x` to
/// `-(x_0/|x_0|) ||x|| e_1`.
#[inline(always)]
pub(crate) fn householder_triangularize<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    let mut v: Vec<E> = vec![E::zero(); n];
    let mut w: Vec<E> = vec![E::zero(); n];
    let end = ihi + 1;
    for k in ilo..ihi {
        let col = &b[k * n + k..k * n + end];
        let tail: f64 = col[1..].iter().map(|x| x.modulus_sqr()).sum();
        if tail == 0.0 {
            continue;
        }
        let alpha = col[0];
        let aalpha = alpha.modulus();
        let xnorm = (aalpha * aalpha + tail).sqrt();
        let phase = if aalpha == 0.0 {
            E::from_real(1.0)
        } else {
            alpha.unscale(aalpha)
        };
        let beta = -phase.scale(xnorm);
        let m = end - k;
        let v = &mut v[..m];
        v.copy_from_slice(col);
        v[0] = alpha - beta;
        // v^H x = ||x||^2 + ||x|| |x_0| > 0.
        let tau = 1.0 / (xnorm * (xnorm + aalpha));
        // Columns k+1.. of b, all columns of a: x <- x - tau v (v^H x).
        let reflect = |m_: &mut [E], cols: std::ops::Range<usize>| {
            for j in cols {
                let c = &mut m_[j * n + k..j * n + end];
                let mut dot = E::zero();
                for (vi, ci) in v.iter().zip(c.iter()) {
                    dot = dot + vi.conj() * *ci;
                }
                let f = dot.scale(tau);
                for (vi, ci) in v.iter().zip(c.iter_mut()) {
                    *ci = *ci - *vi * f;
                }
            }
        };
        reflect(b, k + 1..n);
        // Columns of `a` left of ilo are zero in the active rows.
        reflect(a, ilo..n);
        b[k * n + k] = beta;
        for x in &mut b[k * n + k + 1..k * n + end] {
            *x = E::zero();
        }
        // q <- q - tau (q v) v^H on columns k..n (skipped when q is empty: not accumulated).
        if q.is_empty() {
            continue;
        }
        let w = &mut w[..n];
        w.iter_mut().for_each(|x| *x = E::zero());
        for (i, vi) in v.iter().enumerate() {
            let c = &q[(k + i) * n..(k + i + 1) * n];
            for (wr, cr) in w.iter_mut().zip(c.iter()) {
                *wr = *wr + *cr * *vi;
            }
        }
        for (i, vi) in v.iter().enumerate() {
            let f = vi.conj().scale(tau);
            let c = &mut q[(k + i) * n..(k + i + 1) * n];
            for (cr, wr) in c.iter_mut().zip(w.iter()) {
                *cr = *cr - *wr * f;
            }
        }
    }
}

/// Panel width of [`householder_triangularize_blocked`]: 32 reflectors per block (common
/// practice for compact-WY blocking; the products are then large enough for a tuned GEMM).
const QR_PANEL: usize = 32;
/// Below this active size the unblocked QR is used (blocking does not pay).
const QR_BLOCKED_MIN: usize = 96;

/// The real Householder stage of [`householder_triangularize`] (same result up to rounding), in
/// panels of [`QR_PANEL`] columns: each panel of `b` is factored with unblocked reflectors
/// `H_i = I - tau_i v_i v_i^T`, whose product is `H = I - V T V^T` (compact WY form, Schreiber
/// and Van Loan 1989; T upper triangular by `T[..i, i] = -tau_i T[..i, ..i] V[:, ..i]^T v_i`);
/// then `H^T` is applied to the rest of `b` and to `a`, and `q <- q H`, by matrix products.
/// Overwrites `a`, `b`, `q` (`q` may be empty: not accumulated).
pub(crate) fn householder_triangularize_blocked(
    a: &mut [f64],
    b: &mut [f64],
    q: &mut [f64],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    use nalgebra::{DMatrix, DMatrixViewMut};
    if ihi + 1 - ilo < QR_BLOCKED_MIN {
        householder_triangularize(a, b, q, n, ilo, ihi);
        return;
    }
    let end = ihi + 1;
    let mut k0 = ilo;
    while k0 < ihi {
        let nb = QR_PANEL.min(ihi - k0);
        let m = end - k0;
        let mut v = DMatrix::<f64>::zeros(m, nb);
        let mut taus = vec![0.0; nb];
        for p in 0..nb {
            let k = k0 + p;
            let col = &b[k * n + k..k * n + end];
            let tail: f64 = col[1..].iter().map(|x| x * x).sum();
            if tail == 0.0 {
                continue;
            }
            let alpha = col[0];
            let aalpha = alpha.abs();
            let xnorm = (aalpha * aalpha + tail).sqrt();
            let beta = if alpha >= 0.0 { -xnorm } else { xnorm };
            let tau = 1.0 / (xnorm * (xnorm + aalpha));
            {
                let vc = &mut v.as_mut_slice()[p * m + p..(p + 1) * m];
                vc.copy_from_slice(col);
                vc[0] = alpha - beta;
            }
            taus[p] = tau;
            let vc = &v.as_slice()[p * m + p..(p + 1) * m];
            for j in k + 1..k0 + nb {
                let c = &mut b[j * n + k..j * n + end];
                let dot: f64 = vc.iter().zip(c.iter()).map(|(x, y)| x * y).sum();
                let f = dot * tau;
                for (vi, ci) in vc.iter().zip(c.iter_mut()) {
                    *ci -= vi * f;
                }
            }
            b[k * n + k] = beta;
            for x in &mut b[k * n + k + 1..k * n + end] {
                *x = 0.0;
            }
        }
        let mut t = DMatrix::<f64>::zeros(nb, nb);
        for p in 0..nb {
            t[(p, p)] = taus[p];
            if p > 0 && taus[p] != 0.0 {
                let w = v.columns(0, p).transpose() * v.column(p);
                let z = t.view((0, 0), (p, p)) * w * (-taus[p]);
                t.view_mut((0, p), (p, 1)).copy_from(&z);
            }
        }
        // C <- H^T C = C - V T^T (V^T C) on rows k0..end of the given columns.
        let apply_left = |mat: &mut [f64], cols: std::ops::Range<usize>| {
            if cols.start >= cols.end {
                return;
            }
            let mut c = DMatrixViewMut::from_slice_with_strides_mut(
                &mut mat[cols.start * n + k0..],
                m,
                cols.end - cols.start,
                1,
                n,
            );
            let w = t.transpose() * (v.transpose() * &c);
            c.gemm(-1.0, &v, &w, 1.0);
        };
        apply_left(b, k0 + nb..n);
        // Columns of `a` left of ilo are zero in the active rows.
        apply_left(a, ilo..n);
        if !q.is_empty() {
            // q <- q H = q - (q V) T V^T on columns k0..end.
            let mut c = DMatrixViewMut::from_slice_with_strides_mut(&mut q[k0 * n..], n, m, 1, n);
            let w = (&c * &v) * &t;
            c.gemm(-1.0, &w, &v.transpose(), 1.0);
        }
        k0 += nb;
    }
}

/// Givens stage on an upper-triangular `b`: overwrites `a` with upper Hessenberg form (exact
/// zeros below the subdiagonal), keeps `b` upper triangular (exact zeros below the diagonal),
/// and accumulates the row rotations into `q` and the column rotations into `z`.
#[inline(always)]
fn givens_hessenberg<E: Entry>(
    a: &mut [E],
    b: &mut [E],
    q: &mut [E],
    z: &mut [E],
    n: usize,
    ilo: usize,
    ihi: usize,
) {
    if ihi < ilo + 2 {
        return;
    }
    for jcol in ilo..ihi - 1 {
        for jrow in (jcol + 2..=ihi).rev() {
            // Row rotation on (jrow-1, jrow) kills a[jrow, jcol].
            let (g, r) = Rotation::zeroing(a[jcol * n + jrow - 1], a[jcol * n + jrow]);
            a[jcol * n + jrow - 1] = r;
            a[jcol * n + jrow] = E::zero();
            rotate_rows(a, n, jrow - 1, jcol + 1..n, g);
            rotate_rows(b, n, jrow - 1, jrow - 1..n, g);
            if !q.is_empty() {
                rotate_columns(q, n, jrow - 1, jrow, 0..n, g.for_left_accumulation());
            }
            // Column rotation on (jrow, jrow-1) kills the fill b[jrow, jrow-1].
            let (g, r) = Rotation::zeroing(b[jrow * n + jrow], b[(jrow - 1) * n + jrow]);
            b[jrow * n + jrow] = r;
            b[(jrow - 1) * n + jrow] = E::zero();
            // Rows below ihi are zero in the active columns.
            rotate_columns(a, n, jrow, jrow - 1, 0..ihi + 1, g);
            rotate_columns(b, n, jrow, jrow - 1, 0..jrow, g);
            rotate_columns(z, n, jrow, jrow - 1, 0..n, g);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::qz::C64;
    use nalgebra::DMatrix;

    /// Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, common practice).
    fn lcg(seed: &mut u64) -> f64 {
        *seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((*seed >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }

    fn check<E: Entry>(n: usize, make: impl Fn(f64, f64) -> E, to_c: impl Fn(E) -> C64) {
        let mut seed = 7 + n as u64;
        let a0: Vec<E> = (0..n * n)
            .map(|_| make(lcg(&mut seed), lcg(&mut seed)))
            .collect();
        let mut b0: Vec<E> = (0..n * n)
            .map(|_| make(lcg(&mut seed), lcg(&mut seed)))
            .collect();
        // Zero one row of B: a static equation.
        if n > 2 {
            for j in 0..n {
                b0[j * n + 1] = E::zero();
            }
        }
        let (mut a, mut b) = (a0.clone(), b0.clone());
        let mut q = vec![E::zero(); n * n];
        let mut z = vec![E::zero(); n * n];
        for i in 0..n {
            q[i * n + i] = E::from_real(1.0);
            z[i * n + i] = E::from_real(1.0);
        }
        if n > 0 {
            // The portable build of the reduction (used on CPUs without AVX2/FMA) must agree
            // with the dispatched one to rounding.
            let (mut a2, mut b2, mut q2, mut z2) = (a.clone(), b.clone(), q.clone(), z.clone());
            reduce_portable(&mut a2, &mut b2, &mut q2, &mut z2, n, 0, n - 1);
            reduce(&mut a, &mut b, &mut q, &mut z, n, 0, n - 1);
            let diff = a
                .iter()
                .zip(a2.iter())
                .map(|(x, y)| (*x - *y).modulus())
                .fold(0.0, f64::max);
            assert!(
                diff <= 1e3 * n as f64 * f64::EPSILON,
                "portable differs by {diff:e}"
            );
        }
        let m = |v: &[E]| DMatrix::from_iterator(n, n, v.iter().map(|x| to_c(*x)));
        let (ac, bc, hc, tc, qc, zc) = (m(&a0), m(&b0), m(&a), m(&b), m(&q), m(&z));
        for j in 0..n {
            for i in j + 1..n {
                assert_eq!(tc[(i, j)], C64::new(0.0, 0.0));
                if i > j + 1 {
                    assert_eq!(hc[(i, j)], C64::new(0.0, 0.0));
                }
            }
        }
        // Rebuild A and B from the factors: within 20 n eps of their norms (common practice
        // bound for a sequence of O(n^2) unitary rotations and reflectors).
        let tol = 20.0 * n as f64 * f64::EPSILON;
        let ra = (&qc * &hc * zc.adjoint() - &ac).norm() / ac.norm();
        let rb = (&qc * &tc * zc.adjoint() - &bc).norm() / bc.norm();
        let id = DMatrix::<C64>::identity(n, n);
        assert!(ra <= tol, "n={n} ra={ra}");
        assert!(rb <= tol, "n={n} rb={rb}");
        assert!((qc.adjoint() * &qc - &id).norm() <= tol);
        assert!((zc.adjoint() * &zc - &id).norm() <= tol);
    }

    #[test]
    fn reduction_rebuilds_complex_input() {
        for n in [1, 2, 3, 5, 17, 40] {
            check(n, C64::new, |x| x);
        }
    }

    #[test]
    fn reduction_rebuilds_real_input() {
        // 100 and 130 take the blocked QR (a partial last panel at 130).
        for n in [1, 2, 3, 6, 31, 100, 130] {
            check(n, |x, _| x, |x: f64| C64::new(x, 0.0));
        }
    }
}
