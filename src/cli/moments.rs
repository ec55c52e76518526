//! `saddle moments FILE`: standard deviations, correlations, autocorrelations to `--lags`, the
//! variance decomposition by innovation and, with `--horizons`, forecast-error decompositions.
//! Without a unique stable solution the solve diagnosis is printed in the requested format and
//! the exit status is 3.

use std::time::Instant;

use super::args::{Format, MomentsArgs};
use super::config::SolveSettings;
use super::output::{eprintln_quiet, write_stdout};
use super::solve::{load_and_solve, print_timings, Solved};
use super::{Failure, Outcome};
use saddle::analysis::moments::{moments, MomentsError, MAX_HORIZON, MAX_LAGS};
use saddle::output::bands_elements as elements;
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

/// The one shape of every command that needs a solution when there is none (cli.md, "When there
/// is no unique stable solution"): text prints the solve report with its diagnosis, JSON the
/// `solve` shape, both on stdout; CSV prints nothing on stdout and the diagnosis on stderr. `-o`
/// (`out`) leaves no file: the diagnosis goes to stdout instead, and stderr says so. Returns exit
/// status 3.
pub(super) fn not_determinate(
    s: &Solved,
    format: Format,
    out: Option<&std::path::Path>,
    what: &str,
) -> Result<Outcome, Failure> {
    let text = match format {
        Format::Text => Some(format!(
            "{}\n\n{}\n",
            saddle::output::solve::text(&s.solved).trim_end(),
            s.provenance.text_line()
        )),
        Format::Json => Some(
            s.provenance
                .add_to_json(&saddle::output::solve::json(&s.solved)),
        ),
        Format::Csv => None,
    };
    match text {
        Some(t) => write_stdout(t.as_bytes())?,
        None => eprintln_quiet(
            s.solved
                .diagnosis
                .as_deref()
                .unwrap_or("the model has no unique stable solution"),
        ),
    }
    let file = out
        .map(|p| format!("; nothing was written to {}", p.display()))
        .unwrap_or_default();
    eprintln_quiet(&format!(
        "error: {what} need a unique stable solution; this model's status is {}{file}",
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
    // A bad draws file stops the run before anything is written.
    let draws = super::bands::load(&args.bands, &args.file, &settings)?;
    if s.solved.solution.is_none() {
        return not_determinate(&s, args.format, args.out.output.as_deref(), "moments");
    }
    let t0 = Instant::now();
    let m = moments(&s.solved, lags, &horizons).map_err(moments_failure)?;
    // The solver's warnings travel with the moments (text notes and JSON `warnings`).
    let mut m = m;
    m.warnings.splice(0..0, s.solved.warnings.iter().cloned());
    let rows = super::config::select_variables(&args.vars, &m.variables)?;
    let m = match &rows {
        Some(rows) => m.select(rows),
        None => m,
    };
    let text = match args.format {
        Format::Text => render::to_text(&m, s.solved.title.as_deref()),
        Format::Json => render::to_json(&m).to_pretty_string(),
        Format::Csv => render::to_csv(&m),
    };
    let mut text = super::solve::with_regime(text, args.format, &s);
    let mut prov = s.provenance.clone();
    if let Some(d) = &draws {
        let point = elements::moments(&m);
        let b = super::bands::compute(d, &settings, &point, |_, solved| {
            let m = moments(solved, lags, &horizons).map_err(|e| e.to_string())?;
            let m = match &rows {
                Some(rows) => m.select(rows),
                None => m,
            };
            Ok(super::bands::values(&elements::moments(&m)))
        })?;
        prov.draws = d.record.files.clone();
        text = super::bands::attach(
            text,
            args.format,
            &elements::MOMENTS_COLUMNS,
            &point,
            &b,
            &d.record,
        );
    }
    super::output::emit_traced(args.out.output.as_deref(), args.format, &text, &prov)?;
    if settings.timings {
        print_timings(&s, t0.elapsed());
    }
    Ok(Outcome::Success)
}
