//! Plane rotations and Householder reflectors, the only transformations the QZ code uses.
//!
//! A rotation is `G = [[c, s], [-conj(s), c]]` with `c` real, `c >= 0` and `c^2 + |s|^2 = 1`, so
//! `G` is unitary. Applied to a pair of vectors `(x, y)` it overwrites
//! `x <- c x + s y`, `y <- c y - conj(s) x` (the same formula serves rows and columns).
//! [`Rotation::zeroing`] builds `G` with `G [f; g] = [r; 0]` (Golub and Van Loan, Matrix
//! Computations, 4th ed., §5.1.8, in the complex form with real cosine).
//!
//! Matrices are column-major slices with leading dimension `ld` (nalgebra's storage): column
//! kernels run over contiguous memory, row kernels touch two adjacent entries per column.

use super::C64;
use std::ops::{Add, Mul, Neg, Sub};

/// Scalar field the kernels run over: `f64` (real Hessenberg-triangular reduction of real input)
/// or [`C64`] (everything else).
pub(crate) trait Entry:
    Copy
    + PartialEq
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Neg<Output = Self>
    + std::fmt::Debug
    + 'static
{
    /// The additive identity.
    fn zero() -> Self;
    /// Embeds a real number.
    fn from_real(r: f64) -> Self;
    /// Complex conjugate (identity for reals).
    fn conj(self) -> Self;
    /// Modulus |x|, computed without overflow or harmful underflow.
    fn modulus(self) -> f64;
    /// |x|^2 (may underflow for tiny x; callers use it only on pre-scaled data).
    fn modulus_sqr(self) -> f64;
    /// Multiplication by a real number.
    fn scale(self, r: f64) -> Self;
    /// Division by a real number.
    fn unscale(self, r: f64) -> Self;
    /// Whether every component is finite.
    fn is_finite_entry(self) -> bool;
    /// `|re| + |im|` (the absolute value for reals), the cheap modulus of deflation tests.
    fn abs1(self) -> f64;
    /// The value as a complex number.
    fn to_c64(self) -> C64;
    /// Householder QR stage of the Hessenberg-triangular reduction (see
    /// [`super::hessenberg::householder_triangularize`]); real input overrides it with the
    /// blocked version.
    #[inline(always)]
    fn triangularize(
        a: &mut [Self],
        b: &mut [Self],
        q: &mut [Self],
        n: usize,
        ilo: usize,
        ihi: usize,
    ) {
        super::hessenberg::householder_triangularize(a, b, q, n, ilo, ihi);
    }
    /// Kernel behind [`rotate_pair`]; complex overrides it with a SIMD version.
    #[inline(always)]
    fn rot_pair(x: &mut [Self], y: &mut [Self], g: Rotation<Self>) {
        rotate_pair_scalar(x, y, g);
    }
    /// Kernel behind [`rotate_rows`]; complex overrides it with a SIMD version.
    #[inline(always)]
    fn rot_rows(
        m: &mut [Self],
        ld: usize,
        i: usize,
        cols: std::ops::Range<usize>,
        g: Rotation<Self>,
    ) {
        rotate_rows_scalar(m, ld, i, cols, g);
    }
}

impl Entry for f64 {
    #[inline(always)]
    fn zero() -> Self {
        0.0
    }
    #[inline(always)]
    fn from_real(r: f64) -> Self {
        r
    }
    #[inline(always)]
    fn conj(self) -> Self {
        self
    }
    #[inline(always)]
    fn modulus(self) -> f64 {
        self.abs()
    }
    #[inline(always)]
    fn modulus_sqr(self) -> f64 {
        self * self
    }
    #[inline(always)]
    fn scale(self, r: f64) -> Self {
        self * r
    }
    #[inline(always)]
    fn unscale(self, r: f64) -> Self {
        self / r
    }
    #[inline(always)]
    fn is_finite_entry(self) -> bool {
        self.is_finite()
    }
    #[inline(always)]
    fn abs1(self) -> f64 {
        self.abs()
    }
    #[inline(always)]
    fn triangularize(
        a: &mut [f64],
        b: &mut [f64],
        q: &mut [f64],
        n: usize,
        ilo: usize,
        ihi: usize,
    ) {
        super::hessenberg::householder_triangularize_blocked(a, b, q, n, ilo, ihi);
    }
    #[inline(always)]
    fn to_c64(self) -> C64 {
        C64::new(self, 0.0)
    }
}

impl Entry for C64 {
    #[inline(always)]
    fn zero() -> Self {
        C64::new(0.0, 0.0)
    }
    #[inline(always)]
    fn from_real(r: f64) -> Self {
        C64::new(r, 0.0)
    }
    #[inline(always)]
    fn conj(self) -> Self {
        C64::new(self.re, -self.im)
    }
    #[inline(always)]
    fn modulus(self) -> f64 {
        // sqrt(re^2 + im^2) is correctly rounded to within an ulp when the sum of squares is
        // far from overflow and underflow; only outside that range pay for hypot.
        let m = self.re.abs().max(self.im.abs());
        if m > MODULUS_FAST_MIN && m < MODULUS_FAST_MAX {
            (self.re * self.re + self.im * self.im).sqrt()
        } else {
            self.re.hypot(self.im)
        }
    }
    #[inline(always)]
    fn modulus_sqr(self) -> f64 {
        self.re * self.re + self.im * self.im
    }
    #[inline(always)]
    fn scale(self, r: f64) -> Self {
        C64::new(self.re * r, self.im * r)
    }
    #[inline(always)]
    fn unscale(self, r: f64) -> Self {
        C64::new(self.re / r, self.im / r)
    }
    #[inline(always)]
    fn is_finite_entry(self) -> bool {
        self.re.is_finite() && self.im.is_finite()
    }
    #[inline(always)]
    fn abs1(self) -> f64 {
        abs1(self)
    }
    #[inline(always)]
    fn to_c64(self) -> C64 {
        self
    }
    #[inline(always)]
    fn rot_pair(x: &mut [Self], y: &mut [Self], g: Rotation<Self>) {
        #[cfg(target_arch = "x86_64")]
        {
            if simd::available() {
                let len = x.len().min(y.len());
                // SAFETY: the CPU supports AVX2 and FMA (checked above); both slices hold at
                // least `len` elements.
                unsafe { simd::rotate_pair_avx(&mut x[..len], &mut y[..len], g.c, g.s) };
                return;
            }
        }
        rotate_pair_scalar(x, y, g);
    }
    #[inline(always)]
    fn rot_rows(
        m: &mut [Self],
        ld: usize,
        i: usize,
        cols: std::ops::Range<usize>,
        g: Rotation<Self>,
    ) {
        #[cfg(target_arch = "x86_64")]
        {
            if simd::available() {
                if cols.start < cols.end {
                    // Bounds of the last pair touched (checked once, not per column).
                    assert!(i + 1 < ld && (cols.end - 1) * ld + i + 1 < m.len());
                    // SAFETY: AVX2 and FMA available; every accessed index
                    // `col * ld + i + {0, 1}` for col < cols.end lies in `m` (asserted).
                    unsafe { simd::rotate_rows_avx(m, ld, i, cols, g.c, g.s) };
                }
                return;
            }
        }
        rotate_rows_scalar(m, ld, i, cols, g);
    }
}

/// AVX2/FMA kernels for complex rotations on interleaved (re, im) storage (`Complex<f64>` is
/// `repr(C)`), selected at run time when the CPU supports them.
#[cfg(target_arch = "x86_64")]
mod simd {
    use super::C64;
    use std::arch::x86_64::*;

    /// Whether the AVX2 and FMA kernels may run (detected once, cached by std).
    #[inline(always)]
    pub fn available() -> bool {
        std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
    }

    /// `x <- c x + s y`, `y <- c y - conj(s) x` on equal-length slices. With `i v` the swap
    /// `(re, im) -> (-im, re)`: `x' = c x + Re(s) y + Im(s) (i y)`,
    /// `y' = c y - Re(s) x + Im(s) (i x)`; the sign of `i v` is folded into `addsub`.
    ///
    /// # Safety
    /// The CPU must support AVX2 and FMA; `x.len() == y.len()`.
    #[target_feature(enable = "avx2,fma")]
    pub unsafe fn rotate_pair_avx(x: &mut [C64], y: &mut [C64], c: f64, s: C64) {
        let len = x.len();
        let xp = x.as_mut_ptr() as *mut f64;
        let yp = y.as_mut_ptr() as *mut f64;
        let vc = _mm256_set1_pd(c);
        let vsr = _mm256_set1_pd(s.re);
        let vsi = _mm256_set1_pd(s.im);
        let mut k = 0;
        while k + 2 <= len {
            let xv = _mm256_loadu_pd(xp.add(2 * k));
            let yv = _mm256_loadu_pd(yp.add(2 * k));
            let xs = _mm256_permute_pd(xv, 0b0101);
            let ys = _mm256_permute_pd(yv, 0b0101);
            let t = _mm256_fmadd_pd(vc, xv, _mm256_mul_pd(vsr, yv));
            let xn = _mm256_addsub_pd(t, _mm256_mul_pd(vsi, ys));
            let u = _mm256_fnmadd_pd(vsr, xv, _mm256_mul_pd(vc, yv));
            let yn = _mm256_addsub_pd(u, _mm256_mul_pd(vsi, xs));
            _mm256_storeu_pd(xp.add(2 * k), xn);
            _mm256_storeu_pd(yp.add(2 * k), yn);
            k += 2;
        }
        if k < len {
            let a = x[k];
            let b = y[k];
            x[k] = C64::new(c * a.re, c * a.im) + s * b;
            y[k] = C64::new(c * b.re, c * b.im) - C64::new(s.re, -s.im) * a;
        }
    }

    /// Rows `(i, i+1)` over `cols` of the column-major `m`: each column's pair is one 256-bit
    /// vector `[x, y]`; with `w = [y, x]` and `p = [s, -conj(s)]`, `[x', y'] = c [x, y] + p w`.
    ///
    /// # Safety
    /// The CPU must support AVX2 and FMA; `col * ld + i + 1 < m.len()` for every col in `cols`.
    #[target_feature(enable = "avx2,fma")]
    pub unsafe fn rotate_rows_avx(
        m: &mut [C64],
        ld: usize,
        i: usize,
        cols: std::ops::Range<usize>,
        c: f64,
        s: C64,
    ) {
        let p = m.as_mut_ptr() as *mut f64;
        let vc = _mm256_set1_pd(c);
        let pr = _mm256_setr_pd(s.re, s.re, -s.re, -s.re);
        let pi = _mm256_set1_pd(s.im);
        for col in cols {
            let q = p.add(2 * (col * ld + i));
            let v = _mm256_loadu_pd(q);
            let w = _mm256_permute2f128_pd(v, v, 0x01);
            let ws = _mm256_permute_pd(w, 0b0101);
            let t = _mm256_fmadd_pd(vc, v, _mm256_mul_pd(pr, w));
            let r = _mm256_addsub_pd(t, _mm256_mul_pd(pi, ws));
            _mm256_storeu_pd(q, r);
        }
    }
}

/// Below this magnitude (2^-500) squares of components could lose accuracy to underflow, so the
/// complex modulus falls back to `hypot`.
const MODULUS_FAST_MIN: f64 = 3.054936363499605e-151;
/// Above this magnitude (2^500) squares could overflow; `hypot` is used instead.
const MODULUS_FAST_MAX: f64 = 3.273390607896142e150;

/// `|re| + |im|`, the cheap modulus LAPACK-style codes use in deflation tests (within a factor
/// sqrt(2) of |x|).
#[inline(always)]
pub(crate) fn abs1(x: C64) -> f64 {
    x.re.abs() + x.im.abs()
}

/// Complex division `a / b` by Smith's algorithm (Smith 1962, "Algorithm 116: Complex
/// division"), which avoids the overflow of forming |b|^2.
#[inline]
pub(crate) fn cdiv(a: C64, b: C64) -> C64 {
    if b.re.abs() >= b.im.abs() {
        let r = b.im / b.re;
        let d = b.re + b.im * r;
        C64::new((a.re + a.im * r) / d, (a.im - a.re * r) / d)
    } else {
        let r = b.re / b.im;
        let d = b.re * r + b.im;
        C64::new((a.re * r + a.im) / d, (a.im * r - a.re) / d)
    }
}

/// The unitary plane rotation `[[c, s], [-conj(s), c]]`.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Rotation<E> {
    /// Real cosine, in [0, 1].
    pub c: f64,
    /// Sine, with `c^2 + |s|^2 = 1`.
    pub s: E,
}

impl<E: Entry> Rotation<E> {
    /// The identity rotation.
    #[inline]
    pub fn identity() -> Self {
        Rotation {
            c: 1.0,
            s: E::zero(),
        }
    }

    /// Returns `(G, r)` with `G [f; g] = [r; 0]`; `r = (f/|f|) sqrt(|f|^2 + |g|^2)` (and `r = |g|`
    /// when `f = 0`). Moduli are formed with `hypot`, so no overflow or underflow for any finite
    /// input. Used from the right as well: to annihilate `g` in a row `(.., f, .., g, ..)` apply
    /// `G` to the column pair `(col_f, col_g)`; the row entries become `(r, 0)`.
    #[inline]
    pub fn zeroing(f: E, g: E) -> (Self, E) {
        if g == E::zero() {
            return (Self::identity(), f);
        }
        let ag = g.modulus();
        if f == E::zero() {
            return (
                Rotation {
                    c: 0.0,
                    s: g.conj().unscale(ag),
                },
                E::from_real(ag),
            );
        }
        let af = f.modulus();
        let big = af.max(ag);
        let norm =
            if big > MODULUS_FAST_MIN && big < MODULUS_FAST_MAX && af.min(ag) > MODULUS_FAST_MIN {
                (af * af + ag * ag).sqrt()
            } else {
                af.hypot(ag)
            };
        let phase = f.unscale(af);
        let c = af / norm;
        let s = phase * g.conj().unscale(norm);
        (Rotation { c, s }, phase.scale(norm))
    }

    /// The inverse rotation `G^H` in this module's parametrisation (same `c`, negated `s`).
    #[inline]
    pub fn inverse(self) -> Self {
        Rotation {
            c: self.c,
            s: -self.s,
        }
    }

    /// The rotation that, applied to the column pair `(q_i, q_{i+1})` of an accumulated unitary
    /// factor, realises `Q <- Q G^H` for a left rotation `G` on rows `(i, i+1)`.
    #[inline]
    pub fn for_left_accumulation(self) -> Self {
        Rotation {
            c: self.c,
            s: self.s.conj(),
        }
    }
}

/// Overwrites `x <- c x + s y`, `y <- c y - conj(s) x` elementwise (over the shorter length).
#[inline(always)]
pub(crate) fn rotate_pair<E: Entry>(x: &mut [E], y: &mut [E], g: Rotation<E>) {
    E::rot_pair(x, y, g);
}

/// Portable version of [`rotate_pair`].
#[inline(always)]
fn rotate_pair_scalar<E: Entry>(x: &mut [E], y: &mut [E], g: Rotation<E>) {
    let c = g.c;
    let s = g.s;
    let sc = s.conj();
    let len = x.len().min(y.len());
    let (x, y) = (&mut x[..len], &mut y[..len]);
    for (xi, yi) in x.iter_mut().zip(y.iter_mut()) {
        let a = *xi;
        let b = *yi;
        *xi = a.scale(c) + s * b;
        *yi = b.scale(c) - sc * a;
    }
}

/// Applies `G` to rows `(i, i+1)` of the column-major matrix `m` (leading dimension `ld`) over
/// columns `cols`. Overwrites those entries only.
#[inline]
pub(crate) fn rotate_rows<E: Entry>(
    m: &mut [E],
    ld: usize,
    i: usize,
    cols: std::ops::Range<usize>,
    g: Rotation<E>,
) {
    E::rot_rows(m, ld, i, cols, g);
}

/// Portable version of [`rotate_rows`].
#[inline(always)]
fn rotate_rows_scalar<E: Entry>(
    m: &mut [E],
    ld: usize,
    i: usize,
    cols: std::ops::Range<usize>,
    g: Rotation<E>,
) {
    if cols.start >= cols.end {
        return;
    }
    let c = g.c;
    let s = g.s;
    let sc = s.conj();
    for col in m[cols.start * ld..cols.end * ld].chunks_exact_mut(ld) {
        let pair = &mut col[i..i + 2];
        let a = pair[0];
        let b = pair[1];
        pair[0] = a.scale(c) + s * b;
        pair[1] = b.scale(c) - sc * a;
    }
}

/// Two distinct columns `j != k` of the column-major matrix `m`, as mutable slices.
#[inline]
pub(crate) fn two_columns<E>(m: &mut [E], ld: usize, j: usize, k: usize) -> (&mut [E], &mut [E]) {
    debug_assert!(j != k);
    if j < k {
        let (lo, hi) = m.split_at_mut(k * ld);
        (&mut lo[j * ld..(j + 1) * ld], &mut hi[..ld])
    } else {
        let (lo, hi) = m.split_at_mut(j * ld);
        let y = &mut lo[k * ld..(k + 1) * ld];
        (&mut hi[..ld], y)
    }
}

/// Applies `G` to the column pair `(x, y) = (col j, col k)` of `m` over `rows`: overwrites
/// `x <- c x + s y`, `y <- c y - conj(s) x` there.
#[inline]
pub(crate) fn rotate_columns<E: Entry>(
    m: &mut [E],
    ld: usize,
    j: usize,
    k: usize,
    rows: std::ops::Range<usize>,
    g: Rotation<E>,
) {
    if rows.start >= rows.end {
        return;
    }
    let (x, y) = two_columns(m, ld, j, k);
    rotate_pair(&mut x[rows.clone()], &mut y[rows], g);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rotation from `zeroing` annihilates g and is unitary, to a few eps (common practice).
    #[test]
    fn zeroing_annihilates_and_is_unitary() {
        let cases = [
            (C64::new(3.0, -1.0), C64::new(-2.0, 0.5)),
            (C64::new(0.0, 0.0), C64::new(1e-300, 1e-300)),
            (C64::new(1e300, 0.0), C64::new(1e300, -1e300)),
            (C64::new(1e-200, 0.0), C64::new(1e200, 0.0)),
            (C64::new(2.0, 0.0), C64::new(0.0, 0.0)),
        ];
        for (f, g) in cases {
            let (rot, r) = Rotation::zeroing(f, g);
            let scale = f.modulus().max(g.modulus());
            let top = f.scale(rot.c) + rot.s * g;
            let bottom = g.scale(rot.c) - rot.s.conj() * f;
            assert!((top - r).modulus() <= 4.0 * f64::EPSILON * scale, "{f} {g}");
            assert!(bottom.modulus() <= 4.0 * f64::EPSILON * scale, "{f} {g}");
            assert!((rot.c * rot.c + rot.s.modulus_sqr() - 1.0).abs() <= 4.0 * f64::EPSILON);
        }
    }

    /// The dispatched (SIMD where available) kernels agree with the portable ones to a few eps
    /// (the same formula, evaluated with fused multiply-adds).
    #[test]
    fn simd_kernels_match_scalar() {
        let mut seed = 3u64;
        let mut r = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((seed >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
        };
        let (g, _) = Rotation::zeroing(C64::new(0.3, -0.7), C64::new(-1.1, 0.4));
        for len in [0usize, 1, 2, 3, 7, 16] {
            let x0: Vec<C64> = (0..len).map(|_| C64::new(r(), r())).collect();
            let y0: Vec<C64> = (0..len).map(|_| C64::new(r(), r())).collect();
            let (mut x1, mut y1) = (x0.clone(), y0.clone());
            let (mut x2, mut y2) = (x0.clone(), y0.clone());
            rotate_pair(&mut x1, &mut y1, g);
            rotate_pair_scalar(&mut x2, &mut y2, g);
            for k in 0..len {
                assert!((x1[k] - x2[k]).modulus() <= 4.0 * f64::EPSILON);
                assert!((y1[k] - y2[k]).modulus() <= 4.0 * f64::EPSILON);
            }
        }
        let ld = 5;
        let m0: Vec<C64> = (0..ld * 6).map(|_| C64::new(r(), r())).collect();
        let (mut m1, mut m2) = (m0.clone(), m0.clone());
        rotate_rows(&mut m1, ld, 3, 1..6, g);
        rotate_rows_scalar(&mut m2, ld, 3, 1..6, g);
        for k in 0..m0.len() {
            assert!((m1[k] - m2[k]).modulus() <= 4.0 * f64::EPSILON);
        }
        assert_eq!(m1[0], m0[0]);
        assert_eq!(m1[ld + 2], m0[ld + 2]);
    }

    /// Smith division agrees with the naive formula on tame data and survives huge divisors.
    #[test]
    fn smith_division() {
        let a = C64::new(1.0, 2.0);
        let b = C64::new(-3.0, 0.5);
        let d = cdiv(a, b);
        assert!((d * b - a).modulus() <= 8.0 * f64::EPSILON);
        let big = C64::new(1e300, 1e300);
        let d = cdiv(big, big);
        assert!((d - C64::new(1.0, 0.0)).modulus() <= 8.0 * f64::EPSILON);
    }
}
