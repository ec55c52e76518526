//! Integration tests of the front end: parsing, checking, diagnostics, hostile input.
//!
//! One test binary per area keeps link time down (each binary links the whole crate).

#[path = "../support/mod.rs"]
mod support;

mod check;
mod diagnostics;
mod hostile;
mod models;
mod mutations;
mod props;
