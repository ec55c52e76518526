//! `saddle simulate FILE`: paths from seeded innovations (`--seed`, `--periods`, `--burn-in`,
//! `--levels`), as wide or tidy CSV (`--layout`), JSON or a text table.

use std::time::Instant;

use super::args::{Format, Layout, SimulateArgs};
use super::config::SolveSettings;
use super::moments::not_determinate;
use super::solve::{load_and_solve, print_timings};
use super::{Failure, Outcome};
use saddle::analysis::simulate::{
    simulate, SimulateError, SimulationSettings, MAX_BURN_IN, MAX_STORED_VALUES,
};
use saddle::output::simulate as render;
use saddle::output::svg::charts;

fn simulate_failure(e: SimulateError) -> Failure {
    match e {
        SimulateError::NotDeterminate { .. } => {
            Failure::new(Outcome::NoUniqueSolution, e.to_string())
        }
        SimulateError::Covariance(_) => Failure::new(Outcome::ModelError, e.to_string()),
        SimulateError::TooLarge { .. } | SimulateError::BurnInTooLong(_) => {
            Failure::usage(e.to_string())
        }
        other => Failure::numerical(other.to_string()),
    }
}

pub fn run(args: SimulateArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let periods = usize::try_from(args.periods)
        .ok()
        .filter(|&p| p <= MAX_STORED_VALUES)
        .ok_or_else(|| {
            Failure::usage(format!(
                "--periods must be at most {MAX_STORED_VALUES}, got {}",
                args.periods
            ))
        })?;
    let burn_in = usize::try_from(args.burn_in)
        .ok()
        .filter(|&b| b <= MAX_BURN_IN)
        .ok_or_else(|| {
            Failure::usage(format!(
                "--burn-in must be at most {MAX_BURN_IN}, got {}",
                args.burn_in
            ))
        })?;
    let s = load_and_solve(&args.file, &settings)?;
    if s.solved.solution.is_none() {
        return not_determinate(&s, args.format, args.out.output.as_deref(), "simulations");
    }
    let t0 = Instant::now();
    let sim = simulate(
        &s.solved,
        &SimulationSettings {
            seed: args.seed,
            periods,
            burn_in,
            levels: args.levels,
        },
    )
    .map_err(simulate_failure)?;
    // The solver's warnings: on stderr whatever the format, and in the JSON as `warnings`.
    for w in &s.solved.warnings {
        super::output::eprintln_quiet(&format!("warning: {w}"));
    }
    let sim = match super::config::select_variables(&args.vars, &sim.variables)? {
        Some(cols) => sim.select(&cols),
        None => sim,
    };
    let text = match (args.format, args.layout) {
        (Format::Csv, Layout::Wide) => render::to_csv_wide(&sim),
        (Format::Csv, Layout::Tidy) => render::to_csv_tidy(&sim),
        (Format::Json, _) => with_warnings(
            &render::to_json(&sim).to_pretty_string(),
            &s.solved.warnings,
        ),
        (Format::Text, _) => render::to_text(&sim),
    };
    let text = super::solve::with_regime(text, args.format, &s);
    super::output::emit_traced(
        args.out.output.as_deref(),
        args.format,
        &text,
        &s.provenance,
    )?;
    if let Some(path) = &args.plot {
        let title = match &s.solved.title {
            Some(t) => format!("Simulated paths: {t}"),
            None => "Simulated paths".to_string(),
        };
        let note = format!(
            "{}\nSeed {}, {} periods kept after a burn-in of {}.",
            s.provenance.text_line(),
            args.seed,
            periods,
            burn_in
        );
        let svg = charts::simulation_chart(
            &title,
            &sim.variables,
            &charts::variable_subtitles(&s.model, &sim.variables, !sim.levels),
            &sim.paths,
            sim.levels,
            &note,
        );
        super::output::write_atomic(path, svg.as_bytes())?;
    }
    if settings.timings {
        print_timings(&s, t0.elapsed());
    }
    Ok(Outcome::Success)
}

/// The JSON object `json` with a `warnings` list added (the solver's).
fn with_warnings(json: &str, warnings: &[String]) -> String {
    match serde_json::from_str::<serde_json::Value>(json) {
        Ok(serde_json::Value::Object(mut o)) => {
            o.insert("warnings".into(), serde_json::json!(warnings));
            let mut out = serde_json::to_string_pretty(&serde_json::Value::Object(o))
                .unwrap_or_else(|_| json.to_string());
            out.push('\n');
            out
        }
        _ => json.to_string(),
    }
}
