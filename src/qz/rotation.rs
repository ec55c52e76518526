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
    /// The value as a complex number.
    fn to_c64(self) -> C64;
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
        self.re.hypot(self.im)
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
    fn to_c64(self) -> C64 {
        self
    }
}

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
        let norm = af.hypot(ag);
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

/// Overwrites `x <- c x + s y`, `y <- c y - conj(s) x` elementwise.
#[inline(always)]
pub(crate) fn rotate_pair<E: Entry>(x: &mut [E], y: &mut [E], g: Rotation<E>) {
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
