//! Complex matrices on the real kernels: the product, the split into real and imaginary parts,
//! the Frobenius norm.
//!
//! ```text
//!     (Ar + i Ai)(Br + i Bi) = (Ar Br - Ai Bi) + i (Ar Bi + Ai Br)
//! ```
//!
//! nalgebra's real matrix product is blocked and much faster than its generic complex one, so a
//! complex product is four real ones.

use nalgebra::DMatrix;

use super::C64;

/// Real and imaginary parts of a complex matrix (new matrices).
pub fn split(m: &DMatrix<C64>) -> (DMatrix<f64>, DMatrix<f64>) {
    (m.map(|z| z.re), m.map(|z| z.im))
}

/// The real matrix `m` as a complex one (a new matrix).
pub fn to_complex(m: &DMatrix<f64>) -> DMatrix<C64> {
    m.map(|x| C64::new(x, 0.0))
}

/// The complex product a b through four real products (see the module doc). Reads only; returns
/// a new matrix. Panics only on mismatched shapes, which callers rule out.
pub fn cmul(a: &DMatrix<C64>, b: &DMatrix<C64>) -> DMatrix<C64> {
    let (ar, ai) = split(a);
    let (br, bi) = split(b);
    let re = &ar * &br - &ai * &bi;
    let im = &ar * &bi + &ai * &br;
    re.zip_map(&im, C64::new)
}

/// Frobenius norm of a complex matrix.
pub fn frobenius_c(m: &DMatrix<C64>) -> f64 {
    m.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt()
}
