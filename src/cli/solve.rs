//! `saddle solve FILE`: steady state, linearization, canonical form, QZ, counting and rank
//! conditions and the solution, printed as text, JSON (cli.md) or CSV (the roots table).
//! Also the shared path of every solving command: load, apply `--set`, solve, report timings.

use std::path::Path;
use std::time::{Duration, Instant};

use super::args::{Format, SolveArgs};
use super::config::{SolveSettings, ThresholdChoice};
use super::load::load_model;
use super::output::{emit, eprintln_quiet};
use super::{Failure, Outcome};
use saddle::model::Model;
use saddle::output::solve as render;
use saddle::solution::{
    PreparedModel, SolveError, SolveOptions, SolvedModel, ThresholdSetting, Timings,
};

/// A model read, overridden and solved, with the time each step took.
pub struct Solved {
    pub model: Model,
    pub solved: SolvedModel,
    pub timings: Timings,
    pub load_time: Duration,
}

/// The library's options for validated command-line settings.
pub fn options(settings: &SolveSettings) -> SolveOptions {
    SolveOptions {
        threshold: match settings.threshold {
            ThresholdChoice::FromFile => ThresholdSetting::FromModel,
            ThresholdChoice::Discount(b) => ThresholdSetting::Discount(b),
            ThresholdChoice::Explicit(x) => ThresholdSetting::Explicit(x),
        },
        boundary_stable: settings.boundary_stable,
    }
}

/// Applies `--set` overrides; an unknown name or a parameter that becomes NaN or infinite is a
/// command-line error (exit 2).
pub fn apply_overrides(model: Model, overrides: &[(String, f64)]) -> Result<Model, Failure> {
    if overrides.is_empty() {
        return Ok(model);
    }
    let m = model
        .with_overrides(overrides)
        .map_err(|e| Failure::usage(format!("--set: {e}")))?;
    if let Some(p) = m.parameters.iter().find(|p| !p.value.is_finite()) {
        return Err(Failure::usage(format!(
            "--set: with these values parameter {} becomes {} (it must stay a finite number)",
            p.name, p.value
        )));
    }
    Ok(m)
}

/// Maps a library failure to the exit statuses of cli.md.
pub fn failure(e: SolveError) -> Failure {
    match e {
        SolveError::BadThreshold { .. } => Failure::new(Outcome::ModelError, e.to_string()),
        other => Failure::numerical(other.to_string()),
    }
}

/// Reads `file`, applies the settings' overrides and solves.
pub fn load_and_solve(file: &Path, settings: &SolveSettings) -> Result<Solved, Failure> {
    let t0 = Instant::now();
    let (model, _source) = load_model(file)?;
    let model = apply_overrides(model, &settings.overrides)?;
    let load_time = t0.elapsed();
    let prepared = PreparedModel::new(&model).map_err(failure)?;
    let (solved, timings) = prepared
        .solve(&model, &options(settings))
        .map_err(failure)?;
    Ok(Solved {
        model,
        solved,
        timings,
        load_time,
    })
}

/// Prints per-phase times to stderr.
pub fn print_timings(s: &Solved, output_time: Duration) {
    eprintln_quiet("timings:");
    eprintln_quiet(&format!(
        "{:<15} {:>10.3} ms",
        "read and check",
        s.load_time.as_secs_f64() * 1e3
    ));
    for line in s.timings.report().lines() {
        eprintln_quiet(line);
    }
    eprintln_quiet(&format!(
        "{:<15} {:>10.3} ms",
        "output",
        output_time.as_secs_f64() * 1e3
    ));
}

pub fn run(args: SolveArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let s = load_and_solve(&args.file, &settings)?;
    let t0 = Instant::now();
    let text = match args.format {
        Format::Text => render::text(&s.solved),
        Format::Json => render::json(&s.solved),
        Format::Csv => render::csv(&s.solved),
    };
    emit(args.out.output.as_deref(), text.as_bytes())?;
    if settings.timings {
        print_timings(&s, t0.elapsed());
    }
    Ok(outcome(&s.solved))
}

/// Exit status for a solved model: 0 when determinate, else 3.
pub fn outcome(s: &SolvedModel) -> Outcome {
    if s.solution.is_some() {
        Outcome::Success
    } else {
        Outcome::NoUniqueSolution
    }
}
