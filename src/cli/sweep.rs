//! `saddle sweep FILE --vary NAME=LO:HI:N [--vary ...]`: the solution status over a grid of one or
//! two parameters, solved in parallel; CSV or JSON rows per cli.md, or a text summary. A progress
//! bar appears on stderr when it is a terminal and the sweep runs longer than a moment.

use std::io::IsTerminal;
use std::sync::OnceLock;
use std::time::{Duration, Instant};

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use super::args::{Format, Measure, SweepArgs};
use super::config::{parse_vary, SolveSettings};
use super::load::load_model;
use super::output::{emit, eprintln_quiet};
use super::solve::{apply_overrides, failure, options};
use super::{Failure, Outcome};
use saddle::analysis::sweep::{
    error_point, point_from_solved, run_sweep, sweep_model, SweepAxis, SweepError, SweepStatus,
};
use saddle::output::svg::charts;
use saddle::output::sweep as render;
use saddle::policy::{rule_expected_loss, solve_regime, PolicyError, PolicyParams, Regime};
use saddle::solution::{PreparedModel, Status};

/// The bar appears only once a sweep has run this long (a short sweep stays silent).
const PROGRESS_DELAY: Duration = Duration::from_millis(400);

pub fn run(args: SweepArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let axes = args
        .vary
        .iter()
        .map(|v| parse_vary(v))
        .collect::<Result<Vec<_>, _>>()?;
    if axes.len() > 2 {
        return Err(Failure::usage(format!(
            "--vary may be given once or twice, got {} times",
            axes.len()
        )));
    }
    let t_load = Instant::now();
    let (model, _source) = load_model(&args.file)?;
    let model = apply_overrides(model, &settings.overrides)?;
    for a in &axes {
        if model.parameter_index(&a.name).is_none() {
            let names: Vec<&str> = model.parameters.iter().map(|p| p.name.as_str()).collect();
            return Err(Failure::usage(format!(
                "--vary: the model has no parameter `{}` (its parameters: {})",
                a.name,
                names.join(", ")
            )));
        }
    }
    let sweep_axes: Vec<SweepAxis> = axes
        .iter()
        .map(|a| SweepAxis {
            name: a.name.clone(),
            values: a.values(),
        })
        .collect();
    let prepared = PreparedModel::new(&model).map_err(failure)?;
    let load_time = t_load.elapsed();

    let start = Instant::now();
    let on_terminal = std::io::stderr().is_terminal();
    let bar: OnceLock<ProgressBar> = OnceLock::new();
    let progress = |done: usize, total: usize| {
        if !on_terminal {
            return;
        }
        match bar.get() {
            Some(b) => b.set_position(done as u64),
            None if start.elapsed() >= PROGRESS_DELAY && done < total => {
                let b = bar.get_or_init(|| {
                    let b = ProgressBar::with_draw_target(
                        Some(total as u64),
                        ProgressDrawTarget::stderr(),
                    );
                    if let Ok(style) = ProgressStyle::with_template(
                        "sweep {bar:40} {pos}/{len} points, {eta} left",
                    ) {
                        b.set_style(style);
                    }
                    b
                });
                b.set_position(done as u64);
            }
            None => {}
        }
    };
    let measure_loss = args.measure == Measure::Loss;
    if measure_loss && model.objective.is_none() {
        return Err(Failure::new(
            Outcome::ModelError,
            "--measure loss needs an objective section in the model (the loss to measure)",
        ));
    }
    let opts = options(&settings);
    let policy_params = PolicyParams::default();
    let result = if settings.regime == Regime::Rule && !measure_loss {
        sweep_model(&model, &prepared, &opts, &sweep_axes, &progress)
    } else {
        // Each point: the overrides, then the regime's solution and (if asked) its loss.
        run_sweep(
            &sweep_axes,
            |values| {
                let overrides: Vec<(String, f64)> = sweep_axes
                    .iter()
                    .zip(values)
                    .map(|(a, v)| (a.name.clone(), *v))
                    .collect();
                let m = match model.with_overrides(&overrides) {
                    Ok(m) => m,
                    Err(e) => return error_point(values.to_vec(), e.to_string()),
                };
                if settings.regime == Regime::Rule {
                    return match prepared.solve(&m, &opts) {
                        Ok((solved, _)) => {
                            let mut p = point_from_solved(values.to_vec(), &solved);
                            p.expected_loss = rule_expected_loss(&m, &solved).ok().flatten();
                            p
                        }
                        Err(e) => error_point(values.to_vec(), e.to_string()),
                    };
                }
                match solve_regime(&m, settings.regime, &opts, &policy_params) {
                    Ok(r) => {
                        let mut p = point_from_solved(values.to_vec(), &r.solved);
                        if measure_loss && r.solved.solution.is_some() {
                            p.expected_loss = r.expected_loss;
                        }
                        p
                    }
                    Err(e @ PolicyError::DiscretionUnstable { .. }) => {
                        let mut p = error_point(values.to_vec(), e.to_string());
                        p.status = SweepStatus::Solved(Status::NoStableSolution);
                        p
                    }
                    Err(e) => error_point(values.to_vec(), e.to_string()),
                }
            },
            &progress,
        )
    }
    .map_err(|e| match e {
        SweepError::UnknownParameter(_)
        | SweepError::AxisCount(_)
        | SweepError::Duplicate(_)
        | SweepError::EmptyAxis(_)
        | SweepError::NonFinite { .. }
        | SweepError::TooManyPoints(_) => Failure::usage(e.to_string()),
    })?;
    if let Some(b) = bar.get() {
        b.finish_and_clear();
    }
    let sweep_time = start.elapsed();
    let t0 = Instant::now();
    let text = match args.format {
        Format::Csv => render::to_csv_with(&result, measure_loss),
        Format::Json => render::to_json_with(&result, measure_loss).to_pretty_string(),
        Format::Text => {
            let mut t = render::to_text(&result);
            if measure_loss || settings.regime != Regime::Rule {
                t.push_str(&saddle::output::policy::sweep_loss_note(
                    &result,
                    settings.regime,
                    measure_loss,
                ));
            }
            t
        }
    };
    // The plot is built before anything is written, so a failure leaves no half of the pair.
    let svg = args.plot.as_ref().map(|_| {
        let source = args.file.display().to_string();
        if measure_loss {
            let title = match &model.title {
                Some(t) => format!("Expected loss ({}): {t}", settings.regime.as_str()),
                None => format!(
                    "Expected loss over the parameter grid ({})",
                    settings.regime.as_str()
                ),
            };
            saddle::output::svg::loss_map(&title, &result, &source)
        } else {
            let title = match &model.title {
                Some(t) => format!("Solution status: {t}"),
                None => "Solution status over the parameter grid".to_string(),
            };
            charts::sweep_chart(
                &title,
                &result.parameters,
                &result.axes,
                result
                    .points
                    .iter()
                    .map(|p| p.status.as_str().to_string())
                    .collect(),
                &source,
            )
        }
    });
    emit(args.out.output.as_deref(), text.as_bytes())?;
    if let (Some(path), Some(svg)) = (&args.plot, svg) {
        super::output::write_atomic(path, svg.as_bytes())?;
    }
    if settings.timings {
        eprintln_quiet("timings:");
        eprintln_quiet(&format!(
            "{:<15} {:>10.3} ms",
            "read, prepare",
            load_time.as_secs_f64() * 1e3
        ));
        eprintln_quiet(&format!(
            "{:<15} {:>10.3} ms ({} points, {:.1} us per point per core)",
            "sweep",
            sweep_time.as_secs_f64() * 1e3,
            result.points.len(),
            sweep_time.as_secs_f64() * 1e6 * rayon::current_num_threads() as f64
                / result.points.len().max(1) as f64
        ));
        eprintln_quiet(&format!(
            "{:<15} {:>10.3} ms",
            "output",
            t0.elapsed().as_secs_f64() * 1e3
        ));
    }
    Ok(Outcome::Success)
}
