//! What a solved model implies: impulse responses, moments and variance decompositions,
//! simulation and determinacy sweeps. Everything here works from a [`crate::solution::SolvedModel`]
//! (or, for sweeps, re-solves a [`crate::model::Model`]); nothing reads source text.

pub mod irf;
pub mod moments;
pub mod simulate;
pub mod sweep;
