//! `saddle report FILE -o PATH.html`: one self-contained HTML page with the model summary,
//! calibration, steady state, roots and diagnosis, solution equations, impulse-response charts,
//! moments and variance decompositions (cli.md). The page is written atomically. A model without a
//! unique stable solution still gets its page (roots and diagnosis) and exit status 3.

use super::args::ReportArgs;
use super::config::{SolveSettings, ThresholdChoice};
use super::output::write_atomic;
use super::solve::{load_and_solve, outcome};
use super::{Failure, Outcome};
use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::analysis::moments::moments;
use saddle::model::print::{equation_text, expr_text, Names};
use saddle::output::report::{render, IrfView, MomentsView, ReportInput};

/// Impulse-response horizon when neither `--horizon` nor the file's options give one (cli.md).
const DEFAULT_HORIZON: u32 = 40;
/// Autocorrelation lags shown in the report (the `moments` command's default).
const REPORT_LAGS: usize = 5;
/// Forecast-error variance decomposition horizons shown in the report: a quarter, a year, two
/// years and ten years for quarterly models (common practice in policy briefings).
const REPORT_HORIZONS: [usize; 4] = [1, 4, 8, 40];

pub fn run(args: ReportArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    let s = load_and_solve(&args.file, &settings)?;
    let (model, solved) = (&s.model, &s.solved);
    let data_section = match &args.data {
        Some(path) if solved.solution.is_some() => Some(super::filter::report_section(
            &args.file, path, &settings, &s,
        )?),
        _ => None,
    };
    // A bad draws file stops the run before the page is written.
    let draws = super::bands::load(&args.bands, &args.file, &settings)?;
    let horizon = args
        .horizon
        .or(model.options.horizon)
        .unwrap_or(DEFAULT_HORIZON) as usize;

    let (irf, irf_error) = if solved.solution.is_some() {
        match impulse_responses(solved, &[], ImpulseSize::OneSd, horizon) {
            Ok(r) => (Some(r), None),
            Err(e) => (None, Some(e.to_string())),
        }
    } else {
        (None, None)
    };
    let (mom, moments_error) = if solved.solution.is_some() {
        match moments(solved, REPORT_LAGS, &REPORT_HORIZONS) {
            Ok(m) => (Some(m), None),
            Err(e) => (None, Some(e.to_string())),
        }
    } else {
        (None, None)
    };

    let names = Names::of(model);
    let equations = (0..model.equations.len())
        .map(|i| {
            let text = equation_text(model, i);
            match model.equations[i].label.as_deref() {
                Some(l) => format!("{l}: {text}"),
                None => text,
            }
        })
        .collect();
    let definitions = model
        .parameters
        .iter()
        .map(|p| match p.expr {
            saddle::model::Expr::Number(_) => None,
            ref e => Some(expr_text(e, &names)),
        })
        .collect();
    let threshold = match settings.threshold {
        ThresholdChoice::FromFile => format!(
            "{} (from the model file, or the default 1)",
            solved.threshold
        ),
        ThresholdChoice::Discount(b) => {
            format!("{} (1/sqrt({b}) from --discount)", solved.threshold)
        }
        ThresholdChoice::Explicit(x) => format!("{x} (from --threshold)"),
    };
    let mut run_settings = vec![
        ("stable-root threshold".to_string(), threshold),
        (
            "roots on the threshold".to_string(),
            if settings.boundary_stable {
                "count as stable"
            } else {
                "count as unstable"
            }
            .to_string(),
        ),
        (
            "impulse size".to_string(),
            "one standard deviation of each innovation".to_string(),
        ),
        (
            "impulse-response horizon".to_string(),
            format!("{horizon} periods"),
        ),
    ];
    if let Some(p) = &s.policy {
        run_settings.push((
            "policy regime".to_string(),
            saddle::output::policy::regime_words(p.regime).to_string(),
        ));
        run_settings.push((
            "expected loss".to_string(),
            p.expected_loss.map_or(
                "none (no stationary distribution)".to_string(),
                saddle::output::policy::fmt_num,
            ),
        ));
    }
    if !settings.overrides.is_empty() {
        run_settings.push((
            "command-line overrides".to_string(),
            settings
                .overrides
                .iter()
                .map(|(n, v)| format!("{n} = {v}"))
                .collect::<Vec<_>>()
                .join(", "),
        ));
    }
    let source = args.file.display().to_string();
    let policy_html = match &s.policy {
        Some(_) => Some(policy_section(&args.file, &settings)?),
        None => None,
    };
    let estimation_section = match (&draws, &irf) {
        (Some(d), Some(r)) => {
            let point = saddle::output::bands_elements::irf(r);
            let b = super::bands::compute(d, &settings, &point, |_, solved| {
                let r = impulse_responses(solved, &[], ImpulseSize::OneSd, horizon)
                    .map_err(|e| e.to_string())?;
                Ok(super::bands::values(&saddle::output::bands_elements::irf(
                    &r,
                )))
            })?;
            let mut prov = s.provenance.clone();
            prov.draws = d.record.files.clone();
            let svg = super::irf::band_chart(r, &point, &b, &d.record, &s, &prov);
            let number = 8 + usize::from(s.policy.is_some()) + usize::from(data_section.is_some());
            Some(saddle::output::estimate_report::section(
                &d.draws,
                number,
                &saddle::output::bands::summary_line(&b, &d.record),
                Some(&svg),
                &prov.text_line(),
            ))
        }
        (Some(_), None) => {
            super::output::eprintln_quiet(
                "note: no estimation section: the model has no impulse responses to band",
            );
            None
        }
        _ => None,
    };
    let html = render(&ReportInput {
        policy_html,
        source: &source,
        model,
        solved,
        equations,
        definitions,
        overrides: settings.overrides.iter().map(|(n, _)| n.clone()).collect(),
        settings: run_settings,
        irf: irf.as_ref().map(|r| IrfView {
            size: r.size.as_str(),
            horizon: r.horizon,
            shocks: &r.shocks,
            variables: &r.variables,
            responses: &r.responses,
        }),
        moments: mom.as_ref().map(|m| MomentsView {
            variables: &m.variables,
            shocks: &m.shocks,
            std: &m.std,
            correlation: &m.correlation,
            autocorrelation: &m.autocorrelation,
            variance_decomposition: &m.variance_decomposition,
            fevd: &m.fevd,
            nonstationary: &m.nonstationary,
            warnings: &m.warnings,
        }),
        irf_error,
        moments_error,
        version: env!("CARGO_PKG_VERSION"),
        data_section,
        estimation_section,
    });
    write_atomic(&args.output, html.as_bytes())?;
    Ok(outcome(solved))
}

/// The report's optimal-policy section: the model as written (overrides applied) solved under
/// each regime; a regime that fails shows why.
fn policy_section(file: &std::path::Path, settings: &SolveSettings) -> Result<String, Failure> {
    use saddle::output::policy::report_section;
    use saddle::policy::{solve_regime, PolicyParams, Regime};
    let (model, _) = super::load::load_model(file)?;
    let model = super::solve::apply_overrides(model, &settings.overrides)?;
    let controls: Vec<usize> = model
        .objective
        .as_ref()
        .map(|o| o.controls.iter().map(|c| c.variable).collect())
        .unwrap_or_default();
    let opts = super::solve::options(settings);
    let results: Vec<(Regime, Result<_, String>)> =
        [Regime::Rule, Regime::Commitment, Regime::Discretion]
            .into_iter()
            .map(|r| {
                (
                    r,
                    solve_regime(&model, r, &opts, &PolicyParams::default())
                        .map_err(|e| super::solve::policy_failure(e).message),
                )
            })
            .collect();
    let views = super::optimize::regime_views(&results, &controls);
    Ok(report_section(&views))
}
