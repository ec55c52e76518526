//! The `saddle` command line: parses arguments, validates them into a typed configuration, runs
//! one command of the library and turns the outcome into an exit status (cli.md). All the work is
//! in the library crate; the printing policy (miette reports, broken pipes) is decided here.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::args::Cli::parse();
    cli::output::install_interrupt_cleanup();
    cli::run(args)
}
