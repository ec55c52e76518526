//! Dense linear algebra shared by the numerics: complex products and norms, real and complex
//! Schur forms with reordering, plane rotations, the Stein (discrete Lyapunov) and triangular
//! Sylvester equations, Cholesky factorizations.
//!
//! ```text
//!     G = Q T Q' = U T_c U^H,    X = G X G' + W,    T11 Z - Z T22 = F,    A = L L'
//! ```
//!
//! Everything here works on nalgebra matrices and knows nothing of models. It sits below
//! [`crate::qz`] (which takes its complex scalar from here), [`crate::analysis`],
//! [`crate::kalman`] and [`crate::policy`]. The generalized Schur (QZ) decomposition itself stays in
//! [`crate::qz`], with the classification of its roots ([`crate::qz::root_position`]); the plane
//! rotation type lives in `qz::rotation` with its vectorised kernels and is re-exported here for
//! the crate.

pub mod cholesky;
pub mod complex;
pub mod lyapunov;
pub mod schur;
pub mod sylvester;

/// Complex double-precision scalar of every complex matrix in the crate.
pub type C64 = nalgebra::Complex<f64>;

/// The unitary plane rotation `[[c, s], [-conj(s), c]]` (defined in `qz::rotation`, where its
/// vectorised kernels live; re-exported rather than moved while that module is being tuned).
pub(crate) use crate::qz::rotation::Rotation;

pub use cholesky::{cholesky_in_place, cholesky_solve, semidefinite_factor, FactorError};
pub use complex::{cmul, frobenius_c, spectral_norm_estimate, split, to_complex};
pub use lyapunov::{
    doubling, relative_residual, solve_discrete_lyapunov, solve_discrete_lyapunov_with,
    solve_quasi_triangular_stein, solve_triangular_stein, solve_with_real_schur, solve_with_schur,
    LyapunovError, LyapunovMethod, LyapunovParams, LyapunovSolution, RESIDUAL_TOL,
};
pub use schur::{ComplexSchur, RealSchur};
pub use sylvester::{solve_sylvester_upper, Inseparable};
