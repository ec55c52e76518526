//! Integration tests of what users see: every renderer, and the commands run through the binary.
//!
//! One test binary per area keeps link time down (each binary links the whole crate).

#[path = "../support/mod.rs"]
mod support;

mod analysis_cli;
mod analysis_output;
mod bands_cli;
mod data_cli;
mod estimate_cli;
mod output_contract;
mod policy_cli;
mod solve_cli;
mod visual_charts;
mod visual_cli;
mod visual_report;
