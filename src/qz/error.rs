//! Typed failures of the generalized Schur decomposition and its reordering.
//!
//! Every way the decomposition `Q^H A Z = S`, `Q^H B Z = T` can fail to be produced or reordered
//! is one variant here, each with a one-sentence `Display` text the solver can pass to the user.

/// Failure of [`GeneralizedSchur`](super::GeneralizedSchur) construction or reordering.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum QzError {
    /// An entry of A or B is NaN or infinite; nothing was computed.
    #[error("the pencil contains a NaN or infinite entry, so no decomposition was attempted")]
    NonFinite,
    /// A and B are not square matrices of one common size.
    #[error(
        "the pencil matrices must be square and of equal size, but A is {a_rows}x{a_cols} \
         and B is {b_rows}x{b_cols}"
    )]
    DimensionMismatch {
        /// Rows of A.
        a_rows: usize,
        /// Columns of A.
        a_cols: usize,
        /// Rows of B.
        b_rows: usize,
        /// Columns of B.
        b_cols: usize,
    },
    /// The QZ iteration used its whole sweep budget before the eigenvalue at `index` split off.
    #[error(
        "the QZ iteration did not converge: the eigenvalue at position {index} had not split off \
         when the sweep limit was reached"
    )]
    NoConvergence {
        /// Diagonal position (0-based) still undeflated when the limit was hit.
        index: usize,
    },
    /// Both `alpha_i` and `beta_i` are negligible: det(A - zB) vanishes for every z.
    #[error(
        "the pencil is singular: diagonal entry {index} has both alpha and beta negligible, so \
         det(A - zB) vanishes for every z and its roots are not determined"
    )]
    SingularPencil {
        /// Diagonal position (0-based) of the first negligible (alpha, beta) pair.
        index: usize,
    },
    /// The swap of the diagonal entries at `index` and `index + 1` failed its accuracy tests;
    /// the decomposition was left as it was before that swap (still valid, partly reordered).
    #[error(
        "reordering stopped: swapping the eigenvalues at positions {index} and {} would have \
         lost accuracy (the two are too close or too ill-conditioned to separate)",
        index + 1
    )]
    SwapRejected {
        /// Upper-left position (0-based) of the rejected adjacent pair.
        index: usize,
    },
    /// After reordering, the selection re-evaluated on the new diagonal does not put exactly the
    /// selected eigenvalues first (an eigenvalue moved across the selection boundary by rounding).
    #[error(
        "reordering check failed: after reordering, the eigenvalue at position {position} is \
         {} the leading block of {leading} selected eigenvalues although the selection says otherwise",
        if *position < *leading { "inside" } else { "outside" }
    )]
    ReorderCheckFailed {
        /// First diagonal position (0-based) whose re-evaluated selection disagrees.
        position: usize,
        /// Number of eigenvalues selected before the reordering started.
        leading: usize,
    },
    /// A [`QzParams`](super::QzParams) field is outside its documented range.
    #[error("the left factor Q was not accumulated (QzParams::accumulate_q is false), so the backward error cannot be formed")]
    NoLeftFactor,
    #[error("invalid QZ parameter: {0}")]
    InvalidParams(String),
}
