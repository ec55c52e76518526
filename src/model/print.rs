//! Canonical pretty-printer: [`super::Model`] -> model-file text.
