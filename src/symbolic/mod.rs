//! Exact derivatives and compiled evaluation.
//!
//! Contract: for every equation residual r_i = lhs_i - rhs_i of the checked model and every leaf
//! v it contains (a dated variable `x[t+k]`, an innovation `e[t-l]`, a steady-state value
//! `x[ss]`), [`Graph::diff`] builds the exact partial derivative dr_i/dv as a node of a hash-consed
//! expression graph, simplified as it is built (constant folding, `x*0`, `x*1`, `x^1`, `x-x`...).
//! Kinked functions (`abs`, `min`, `max`, `sign`) get their right-hand (one-sided) derivative.
//!
//! [`Tape`] compiles a set of graph nodes into a flat instruction list over numbered slots
//! (straight-line code, each instruction reading earlier slots), so that residuals and sparse
//! Jacobians are evaluated by one loop over an array, never by walking trees. Every evaluation in
//! saddle happens at a steady state (all dates of a variable equal, innovations zero), so a tape
//! reads only two inputs: the parameter values and one value per endogenous variable.

pub mod blocks;
mod compiled;
mod graph;
mod tape;

pub use compiled::{Coefficient, CompiledModel, SteadyBlock};
pub use graph::{Graph, Leaf, Node, NodeId};
pub use tape::{Instr, Tape};

#[cfg(test)]
pub(crate) mod testing;
