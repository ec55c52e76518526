//! The model language: source text -> syntax tree + diagnostics.
//!
//! Contract: [`parse`] reads a whole model file and returns its syntax tree ([`ast::File`],
//! a span on every node) together with every syntax diagnostic, all at once; it never panics on
//! any input. Name resolution and the semantic checks are the next stage (`model::check`).

pub mod ast;
pub mod diagnostics;
pub mod lexer;
pub mod parser;
pub mod span;

pub use diagnostics::{Diagnostic, Severity};
pub use parser::parse;
pub use span::{line_col, Span};
