//! `saddle moments FILE`: standard deviations, correlations, autocorrelations to `--lags`, the
//! variance decomposition by innovation and, with `--horizons`, forecast-error decompositions.
//! Without a unique stable solution the solve diagnosis is printed in the requested format and
//! the exit status is 3.

use std::time::Instant;

use super::args::{Format, MomentsArgs};
use super::config::SolveSettings;
use super::output::{emit, eprintln_quiet};
use super::solve::{load_and_solve, print_timings, Solved};
use super::{Failure, Outcome};
use saddle::analysis::moments::{moments, MomentsError, MAX_HORIZON, MAX_LAGS};
use saddle::output::moments as render;

/// Exit status and message for a library failure.
pub(super) fn moments_failure(e: MomentsError) -> Failure {
    match e {
        MomentsError::NotDeterminate { .. } => {
            Failure::new(Outcome::NoUniqueSolution, e.to_string())
        }
        MomentsError::Covariance(_) => Failure::new(Outcome::ModelError, e.to_string()),
        MomentsError::TooManyLags(_) | MomentsError::BadHorizon(_) => Failure::usage(e.to_string()),
        other => Failure::numerical(other.to_string()),
    }
}

/// Prints the solve report (with its diagnosis) in the requested format for a model without a
/// unique stable solution, says on stderr why nothing more follows, and returns exit status 3.
pub(super) fn not_determinate(
    s: &Solved,
    format: Format,
    out: Option<&std::path::Path>,
    what: &str,
) -> Result<Outcome, Failure> {
    let text = match format {
        Format::Text => saddle::output::solve::text(&s.solved),
        Format::Json => saddle::output::solve::json(&s.solved),
        Format::Csv => saddle::output::solve::csv(&s.solved),
    };
    emit(out, text.as_bytes())?;
    eprintln_quiet(&format!(
        "error: {what} need a unique stable solution; this model's status is {} (diagnosis above)",
        s.solved.status.as_str()
    ));
    Ok(Outcome::NoUniqueSolution)
}

pub fn run(args: MomentsArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let lags = args.lags as usize;
    if lags > MAX_LAGS {
        return Err(Failure::usage(format!(
            "--lags must be at most {MAX_LAGS}, got {lags}"
        )));
    }
    let horizons: Vec<usize> = args.horizons.iter().map(|&h| h as usize).collect();
    if let Some(h) = horizons.iter().find(|&&h| h == 0 || h > MAX_HORIZON) {
        return Err(Failure::usage(format!(
            "--horizons: each horizon must be between 1 and {MAX_HORIZON}, got {h}"
        )));
    }
    let s = load_and_solve(&args.file, &settings)?;
    if s.solved.solution.is_none() {
        return not_determinate(&s, args.format, args.out.output.as_deref(), "moments");
    }
    let t0 = Instant::now();
    let m = moments(&s.solved, lags, &horizons).map_err(moments_failure)?;
    let text = match args.format {
        Format::Text => render::to_text(&m, s.solved.title.as_deref()),
        Format::Json => render::to_json(&m).to_pretty_string(),
        Format::Csv => render::to_csv(&m),
    };
    let text = super::solve::with_regime(text, args.format, &s);
    emit(args.out.output.as_deref(), text.as_bytes())?;
    if settings.timings {
        print_timings(&s, t0.elapsed());
    }
    Ok(Outcome::Success)
}
