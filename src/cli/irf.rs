//! `saddle irf FILE`: impulse responses of every variable to each innovation (or the `--shock`
//! ones), as an aligned table, JSON or tidy CSV (cli.md).

use std::time::Instant;

use super::args::{Format, ImpulseSize as SizeArg, IrfArgs};
use super::config::SolveSettings;
use super::output::{eprintln_quiet, write_atomic};
use super::solve::{load_and_solve, outcome, print_timings};
use super::{Failure, Outcome};
use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::output::irf as render;
use saddle::output::svg::charts;

/// Default horizon when neither `--horizon` nor the file's options give one (cli.md).
pub const DEFAULT_HORIZON: u32 = 40;

pub fn run(args: IrfArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let s = load_and_solve(&args.file, &settings)?;
    let names = s.model.shock_names();
    let mut shocks = Vec::new();
    for name in &args.shock {
        match names.iter().position(|n| n == name) {
            Some(i) => {
                if !shocks.contains(&i) {
                    shocks.push(i);
                }
            }
            None => {
                let hint = match closest(name, &names) {
                    Some(c) => format!("; did you mean `{c}`?"),
                    None => String::new(),
                };
                return Err(Failure::usage(format!(
                    "--shock: the model has no innovation `{name}`{hint} (innovations: {})",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                )));
            }
        }
    }
    if names.is_empty() {
        // Not an error: the model is fine and has no impulse to respond to (moments of such a
        // model are zero too); the same input gets the same exit status from every command.
        eprintln_quiet("note: the model declares no innovations, so there is nothing to shock");
    }
    let horizon = args
        .horizon
        .or(s.model.options.horizon)
        .unwrap_or(DEFAULT_HORIZON) as usize;
    let size = match args.size {
        SizeArg::OneSd => ImpulseSize::OneSd,
        SizeArg::OneSdAlone => ImpulseSize::OneSdAlone,
        SizeArg::Unit => ImpulseSize::Unit,
    };
    let t0 = Instant::now();
    if s.solved.solution.is_none() {
        // No unique stable solution: the one shape of cli.md, in the requested format.
        let what = if args.plot.is_some() {
            "impulse responses (and so no plot)"
        } else {
            "impulse responses"
        };
        let outcome =
            super::moments::not_determinate(&s, args.format, args.out.output.as_deref(), what)?;
        if settings.timings {
            print_timings(&s, t0.elapsed());
        }
        return Ok(outcome);
    }
    let r = impulse_responses(&s.solved, &shocks, size, horizon)
        .map_err(|e| Failure::usage(e.to_string()))?;
    let r = match super::config::select_variables(&args.vars, &r.variables)? {
        Some(rows) => r.select(&rows),
        None => r,
    };
    let text = match args.format {
        Format::Text => render::text(&r, s.solved.title.as_deref(), &s.solved.log),
        Format::Json => render::json_with_warnings(&r, &s.solved.warnings),
        Format::Csv => render::csv(&r),
    };
    let text = super::solve::with_regime(text, args.format, &s);
    super::output::emit_traced(
        args.out.output.as_deref(),
        args.format,
        &text,
        &s.provenance,
    )?;
    if let Some(path) = &args.plot {
        let grids = charts::impulse_response_grids(
            &r.shocks,
            &charts::shock_labels(&s.model, &r.shocks),
            &r.variables,
            &charts::variable_subtitles(&s.model, &r.variables, true),
            &r.responses,
            r.size.as_str(),
        );
        let svg = charts::impulse_response_chart(&grids, &s.provenance.text_line());
        write_atomic(path, svg.as_bytes())?;
    }
    for w in &s.solved.warnings {
        if args.format == Format::Text {
            eprintln_quiet(&format!("warning: {w}"));
        }
    }
    if settings.timings {
        print_timings(&s, t0.elapsed());
    }
    Ok(outcome(&s.solved))
}

/// The name in `names` nearest to `name` by edit distance, if close enough to be a likely typo
/// (at most a third of the name's length, and at least one edit allowed).
pub fn closest<'a>(name: &str, names: &'a [String]) -> Option<&'a str> {
    let limit = (name.chars().count() / 3).max(1);
    names
        .iter()
        .map(|n| (edit_distance(name, n), n))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, n)| n.as_str())
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggestions_catch_typos_only() {
        let names = vec!["e_rate".to_string(), "e_cost".to_string()];
        assert_eq!(closest("e_rte", &names), Some("e_rate"));
        assert_eq!(closest("zzz", &names), None);
    }
}
