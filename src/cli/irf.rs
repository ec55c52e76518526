//! `saddle irf FILE`: impulse responses of every variable to each innovation (or the `--shock`
//! ones), as an aligned table, JSON or tidy CSV (cli.md).

use std::time::Instant;

use super::args::{Format, ImpulseSize as SizeArg, IrfArgs};
use super::config::SolveSettings;
use super::output::{eprintln_quiet, write_atomic};
use super::solve::{load_and_solve, outcome, print_timings};
use super::{Failure, Outcome};
use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::estimation::bands::Bands;
use saddle::output::bands::{quantile_name, summary_line, DrawsRecord, Element};
use saddle::output::bands_elements as elements;
use saddle::output::bands_plot::{self, BandPanel};
use saddle::output::irf as render;
use saddle::output::svg::charts;

/// Default horizon when neither `--horizon` nor the file's options give one (cli.md).
pub const DEFAULT_HORIZON: u32 = 40;

pub fn run(args: IrfArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let s = load_and_solve(&args.file, &settings)?;
    // A bad draws file stops the run before anything is written.
    let draws = super::bands::load(&args.bands, &args.file, &settings)?;
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
    let rows = super::config::select_variables(&args.vars, &r.variables)?;
    let r = match &rows {
        Some(rows) => r.select(rows),
        None => r,
    };
    let text = match args.format {
        Format::Text => render::text(&r, s.solved.title.as_deref(), &s.solved.log),
        Format::Json => render::json_with_warnings(&r, &s.solved.warnings),
        Format::Csv => render::csv(&r),
    };
    let text = super::solve::with_regime(text, args.format, &s);
    let mut prov = s.provenance.clone();
    let banded = match &draws {
        Some(d) => {
            let point = elements::irf(&r);
            let b = super::bands::compute(d, &settings, &point, |_, solved| {
                let r =
                    impulse_responses(solved, &shocks, size, horizon).map_err(|e| e.to_string())?;
                let r = match &rows {
                    Some(rows) => r.select(rows),
                    None => r,
                };
                Ok(super::bands::values(&elements::irf(&r)))
            })?;
            prov.draws = d.record.files.clone();
            Some((point, b))
        }
        None => None,
    };
    let text = match (&banded, &draws) {
        (Some((point, b)), Some(d)) => super::bands::attach(
            text,
            args.format,
            &elements::IRF_COLUMNS,
            point,
            b,
            &d.record,
        ),
        _ => text,
    };
    super::output::emit_traced(args.out.output.as_deref(), args.format, &text, &prov)?;
    if let Some(path) = &args.plot {
        let svg = match (&banded, &draws) {
            (Some((point, b)), Some(d)) => band_chart(&r, point, b, &d.record, &s, &prov),
            _ => {
                let grids = charts::impulse_response_grids(
                    &r.shocks,
                    &charts::shock_labels(&s.model, &r.shocks),
                    &r.variables,
                    &charts::variable_subtitles(&s.model, &r.variables, true),
                    &r.responses,
                    r.size.as_str(),
                );
                charts::impulse_response_chart(&grids, &prov.text_line())
            }
        };
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

/// `irf --plot` with `--draws`: one panel per (innovation, variable) with the shaded band.
pub(super) fn band_chart(
    r: &saddle::analysis::irf::ImpulseResponses,
    point: &[Element],
    b: &Bands,
    rec: &DrawsRecord,
    s: &super::solve::Solved,
    prov: &saddle::output::provenance::Provenance,
) -> String {
    let periods = r.horizon + 1;
    let subtitles = charts::variable_subtitles(&s.model, &r.variables, true);
    let mut panels = Vec::new();
    for (k, shock) in r.shocks.iter().enumerate() {
        for (i, v) in r.variables.iter().enumerate() {
            let first = (k * r.variables.len() + i) * periods;
            let span = first..first + periods;
            panels.push(BandPanel {
                title: format!("{v} after {shock}"),
                subtitle: subtitles.get(i).cloned().flatten(),
                point: point[span.clone()].iter().map(|e| e.value).collect(),
                quantiles: (0..b.quantiles.len())
                    .map(|q| b.values[span.clone()].iter().map(|v| v[q]).collect())
                    .collect(),
            });
        }
    }
    let labels: Vec<String> = (0..periods).map(|h| h.to_string()).collect();
    let names: Vec<String> = b.quantiles.iter().map(|&q| quantile_name(q)).collect();
    bands_plot::band_chart(
        &format!(
            "{}: impulse responses with posterior bands",
            s.solved.title.as_deref().unwrap_or("Model")
        ),
        &labels,
        &panels,
        &names,
        &[
            format!(
                "Impulse: {}. {}",
                charts::impulse_words(r.size.as_str()),
                summary_line(b, rec)
            ),
            prov.text_line(),
        ],
    )
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
