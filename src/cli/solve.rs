//! `saddle solve FILE`: steady state, linearization, canonical form, QZ, counting and rank
//! conditions and the solution, printed as text, JSON (cli.md) or CSV (the roots table).
//! Also the shared path of every solving command: load, apply `--set`, solve, report timings.

use std::path::Path;
use std::time::{Duration, Instant};

use super::args::{Format, SolveArgs};
use super::config::{SolveSettings, ThresholdChoice};
use super::load::load_model;
use super::output::eprintln_quiet;
use super::{Failure, Outcome};
use saddle::model::Model;
use saddle::output::provenance::Provenance;
use saddle::output::solve as render;
use saddle::policy::{rule_expected_loss, solve_regime, PolicyError, PolicyParams, Regime};
use saddle::solution::{
    PreparedModel, SolveError, SolveOptions, SolvedModel, ThresholdSetting, Timings,
};

/// A model read, overridden and solved, with the time each step took.
pub struct Solved {
    pub model: Model,
    pub solved: SolvedModel,
    pub timings: Timings,
    pub load_time: Duration,
    /// Regime, expected loss and multipliers (`None` for a model without objective solved by
    /// its rules).
    pub policy: Option<PolicyInfo>,
    /// File, its hash, overrides, parameters, threshold and regime.
    pub provenance: Provenance,
}

/// What an optimal-policy regime adds to a solve.
pub struct PolicyInfo {
    pub regime: Regime,
    pub expected_loss: Option<f64>,
    pub multipliers: Vec<String>,
}

/// Maps a policy failure to the exit statuses of cli.md: a problem of the objective is a model
/// error (1), an explosive discretionary equilibrium is no stable solution (3), the rest
/// numerical (4).
pub fn policy_failure(e: PolicyError) -> Failure {
    match e {
        PolicyError::Solve(e) => failure(e),
        PolicyError::DiscretionUnstable { .. } => {
            Failure::new(Outcome::NoUniqueSolution, e.to_string())
        }
        PolicyError::DiscretionNoConvergence { .. } | PolicyError::DiscretionSingular(_) => {
            Failure::numerical(e.to_string())
        }
        other => Failure::new(Outcome::ModelError, other.to_string()),
    }
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
        // A calibration that puts a parameter-only expression outside its domain is a problem
        // of the model file, whichever command meets it.
        SolveError::SteadyState(saddle::steady::SteadyError::ParameterDomain { .. }) => {
            Failure::new(Outcome::ModelError, e.to_string())
        }
        other => Failure::numerical(other.to_string()),
    }
}

/// The provenance of an output made from `model` (overrides applied) read from `file` with text
/// `source`; the threshold is filled in once solved.
pub fn provenance(
    file: &Path,
    source: &str,
    model: &Model,
    settings: &SolveSettings,
    threshold: Option<f64>,
) -> Provenance {
    Provenance::new(
        &file.display().to_string(),
        source.as_bytes(),
        model,
        &settings.overrides,
        threshold,
        settings.regime.as_str(),
    )
}

/// The command-line wording the library leaves out: when some root lies on the threshold, the
/// flag that counts it the other way. Appends to `solved.warnings`.
fn add_boundary_hint(solved: &mut saddle::solution::SolvedModel, settings: &SolveSettings) {
    if solved.roots.iter().any(|r| r.boundary) {
        solved.warnings.push(if settings.boundary_stable {
            "to count roots on the threshold as unstable, use --boundary-unstable".to_string()
        } else {
            "to count roots on the threshold as stable, drop --boundary-unstable".to_string()
        });
    }
}

/// Reads `file`, applies the settings' overrides and solves.
pub fn load_and_solve(file: &Path, settings: &SolveSettings) -> Result<Solved, Failure> {
    let t0 = Instant::now();
    let (model, source) = load_model(file)?;
    let model = apply_overrides(model, &settings.overrides)?;
    let mut provenance = provenance(file, &source, &model, settings, None);
    let load_time = t0.elapsed();
    if settings.regime != Regime::Rule {
        let t1 = Instant::now();
        let r = solve_regime(
            &model,
            settings.regime,
            &options(settings),
            &PolicyParams::default(),
        )
        .map_err(policy_failure)?;
        let mut r = r;
        add_boundary_hint(&mut r.solved, settings);
        // The optimal regimes run their own pipeline; its whole time is reported as `solution`.
        let timings = Timings {
            solution: t1.elapsed(),
            ..Timings::default()
        };
        provenance.threshold = Some(r.solved.threshold);
        return Ok(Solved {
            model: r.model,
            solved: r.solved,
            timings,
            load_time,
            policy: Some(PolicyInfo {
                regime: r.regime,
                expected_loss: r.expected_loss,
                multipliers: r.multipliers,
            }),
            provenance,
        });
    }
    let prepared = PreparedModel::new(&model).map_err(failure)?;
    let (mut solved, timings) = prepared
        .solve(&model, &options(settings))
        .map_err(failure)?;
    add_boundary_hint(&mut solved, settings);
    let policy = if model.objective.is_some() {
        Some(PolicyInfo {
            regime: Regime::Rule,
            expected_loss: rule_expected_loss(&model, &solved).map_err(policy_failure)?,
            multipliers: vec![],
        })
    } else {
        None
    };
    provenance.threshold = Some(solved.threshold);
    Ok(Solved {
        model,
        solved,
        timings,
        load_time,
        policy,
        provenance,
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
        Format::Text => {
            let mut t = render::text(&s.solved);
            if let Some(p) = &s.policy {
                t.push_str(&saddle::output::policy::solve_text_note(
                    p.regime,
                    p.expected_loss,
                    &p.multipliers,
                ));
            }
            t
        }
        Format::Json => match &s.policy {
            Some(p) => saddle::output::policy::solve_json(
                &s.solved,
                p.regime,
                p.expected_loss,
                &p.multipliers,
                Some(&s.provenance),
            ),
            None => render::json(&s.solved),
        },
        Format::Csv => render::csv(&s.solved),
    };
    super::output::emit_traced(
        args.out.output.as_deref(),
        args.format,
        &text,
        &s.provenance,
    )?;
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

/// The output of a solving command with what a regime adds: for a model with an objective,
/// JSON gains `regime`, `expected_loss` and `provenance` (unless it has one) as last fields and
/// text a line with the regime, the expected loss and the file; CSV stays a plain table.
pub fn with_regime(text: String, format: Format, s: &Solved) -> String {
    let Some(p) = &s.policy else {
        return text;
    };
    match format {
        Format::Csv => text,
        Format::Json => {
            let mut fields = vec![
                (
                    "regime",
                    saddle::output::policy::json_string(p.regime.as_str()),
                ),
                (
                    "expected_loss",
                    saddle::output::policy::json_number(p.expected_loss),
                ),
            ];
            if !text.contains("\"provenance\"") {
                fields.push(("provenance", s.provenance.json_text()));
            }
            saddle::output::policy::append_fields(&text, &fields)
        }
        // The provenance line follows (`output::emit_traced`).
        Format::Text => format!(
            "{text}\npolicy regime: {}; expected loss {}\n",
            p.regime.as_str(),
            p.expected_loss
                .map_or("none".to_string(), saddle::output::policy::fmt_num),
        ),
    }
}
