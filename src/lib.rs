//! saddle: linear rational-expectations models from text to solution.
//!
//! The modules follow the data's path and never reach back up it:
//!
//! ```text
//! linalg (shared dense linear algebra: Schur forms, Stein/Sylvester, Cholesky; used below)
//!
//! language (text -> syntax tree + diagnostics)
//!   -> model (checked model: resolved expression trees, calibrated parameters)
//!   -> symbolic (exact derivatives, compiled evaluation)
//!   -> steady (deterministic steady state)
//!   -> linear (first-order system in leads, current values, lags, innovations)
//!   -> canonical (pencil A E z' = B z + C e, auxiliary leads and lags)
//!   -> qz (generalized Schur decomposition with reordering)
//!   -> solution (counting and rank conditions, decision rule)
//!   -> analysis (impulse responses, moments, simulation, sweeps)
//!   -> output (text, JSON, CSV, SVG, HTML)
//! ```
//!
//! See `docs/architecture.md` for the code map and the invariants.

// Numerical kernels: `!(x > 0.0)` is deliberate (it is true for NaN, which must be refused), and
// index loops over several matrices at once read closer to the formulas than iterator chains.
#![allow(clippy::neg_cmp_op_on_partial_ord, clippy::needless_range_loop)]

pub mod analysis;
pub mod canonical;
pub mod data;
pub mod estimation;
pub mod kalman;
pub mod language;
pub mod linalg;
pub mod linear;
pub mod model;
pub mod output;
pub mod policy;
pub mod qz;
pub mod riccati;
pub mod solution;
pub mod stats;
pub mod steady;
pub mod symbolic;
