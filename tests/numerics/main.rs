//! Integration tests of the numerics: QZ, the solver and the analysis of solved models, against
//! closed forms and reference libraries (each test names its source).
//!
//! One test binary per area keeps link time down (each binary links the whole crate).

#[path = "../support/mod.rs"]
mod support;

mod qz_support;

mod analysis_correlated_irf;
mod analysis_models;
mod analysis_moments;
mod analysis_simulate;
mod analysis_sweep;
mod estimation_reference;
mod kalman_reference;
mod qz_eigenvalues;
mod qz_hard_cases;
mod qz_invariants;
mod qz_reorder;
mod qz_stress;
mod solve_external;
mod solve_props;
mod solve_scaling;
mod solve_stocks;
