//! Complex matrices on the real kernels: the product, the split into real and imaginary parts,
//! the Frobenius norm and an estimate of the spectral norm.
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

/// An estimate (from below) of the spectral norm ||W||_2 by `steps` steps of power iteration on
/// W^H W, started from the normalised vector of ones (convergence is geometric in the ratio of
/// the two largest singular values). Reads only; returns the estimate (0 for a zero matrix,
/// infinity when an iterate overflows).
pub fn spectral_norm_estimate(w: &DMatrix<C64>, steps: usize) -> f64 {
    let n = w.ncols();
    let mut v = nalgebra::DVector::<C64>::from_element(n, C64::new(1.0 / (n as f64).sqrt(), 0.0));
    let wh = w.adjoint();
    let mut est = 0.0;
    for _ in 0..steps {
        let u = w * &v;
        let z = &wh * &u;
        let nz = z.norm();
        if !(nz.is_finite()) || nz == 0.0 {
            return if nz == 0.0 { est } else { f64::INFINITY };
        }
        est = nz.sqrt();
        v = z / C64::new(nz, 0.0);
    }
    est
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn products_and_norms_agree_with_hand_values() {
        // (1 + 2i)(3 - i) = 5 + 5i; [[1, i]] [[i], [1]] = 2i.
        let a = DMatrix::from_row_slice(1, 1, &[C64::new(1.0, 2.0)]);
        let b = DMatrix::from_row_slice(1, 1, &[C64::new(3.0, -1.0)]);
        assert_eq!(cmul(&a, &b)[(0, 0)], C64::new(5.0, 5.0));
        let r = DMatrix::from_row_slice(1, 2, &[C64::new(1.0, 0.0), C64::new(0.0, 1.0)]);
        let c = DMatrix::from_row_slice(2, 1, &[C64::new(0.0, 1.0), C64::new(1.0, 0.0)]);
        assert_eq!(cmul(&r, &c)[(0, 0)], C64::new(0.0, 2.0));
        // ||diag(3, 1)||_2 = 3, ||.||_F = sqrt(10); power iteration from (1, 1)/sqrt(2) converges
        // like (1/3)^(2k) to 3 from below.
        let d = to_complex(&DMatrix::from_row_slice(2, 2, &[3.0, 0.0, 0.0, 1.0]));
        assert!((frobenius_c(&d) - 10f64.sqrt()).abs() < 1e-15);
        let est = spectral_norm_estimate(&d, 30);
        assert!(est <= 3.0 + 1e-12 && est > 3.0 - 1e-12, "{est}");
        assert_eq!(spectral_norm_estimate(&DMatrix::zeros(2, 2), 30), 0.0);
    }
}
