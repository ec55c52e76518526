//! The binary's glue: typed configuration, one runner per command, output and exit policy.
//!
//! Exit status (cli.md): 0 success; 1 the model file is wrong; 2 the command line is wrong;
//! 3 no unique stable solution (diagnosis printed in full); 4 a numerical failure.

pub mod args;
pub mod config;
pub mod output;

mod bands;
mod check;
mod decompose;
mod estimate;
mod filter;
mod forecast;
mod irf;
mod load;
mod moments;
mod optimize;
mod report;
mod simulate;
mod solve;
mod sweep;

use std::fmt;
use std::process::ExitCode;

use args::{Cli, Command};

/// How a command ended, as the exit statuses of cli.md.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Success = 0,
    ModelError = 1,
    UsageError = 2,
    NoUniqueSolution = 3,
    NumericalFailure = 4,
}

/// A failure the binary reports on stderr: the message is already a sentence for a person.
#[derive(Debug)]
pub struct Failure {
    pub outcome: Outcome,
    pub message: String,
}

impl Failure {
    pub fn new(outcome: Outcome, message: impl Into<String>) -> Self {
        Failure {
            outcome,
            message: message.into(),
        }
    }
    pub fn usage(message: impl Into<String>) -> Self {
        Self::new(Outcome::UsageError, message)
    }
    pub fn numerical(message: impl Into<String>) -> Self {
        Self::new(Outcome::NumericalFailure, message)
    }
    /// The model file is wrong; its diagnostics have already been printed.
    pub fn model_reported() -> Self {
        Self::new(Outcome::ModelError, String::new())
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

/// Runs one command and maps its outcome to the process exit status.
pub fn run(cli: Cli) -> ExitCode {
    let result = match cli.command {
        Command::Check(a) => check::run(a),
        Command::Solve(a) => solve::run(a),
        Command::Irf(a) => irf::run(a),
        Command::Moments(a) => moments::run(a),
        Command::Simulate(a) => simulate::run(a),
        Command::Report(a) => report::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Optimize(a) => optimize::run(a),
        Command::Filter(a) => filter::run(a),
        Command::Decompose(a) => decompose::run(a),
        Command::Forecast(a) => forecast::run(a),
        Command::Estimate(a) => estimate::run(a),
    };
    let outcome = match result {
        Ok(outcome) => outcome,
        Err(failure) => {
            if !failure.message.is_empty() {
                output::eprintln_quiet(&format!("error: {}", failure.message));
            }
            failure.outcome
        }
    };
    ExitCode::from(outcome as u8)
}
