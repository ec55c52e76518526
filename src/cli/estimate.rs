//! `saddle estimate FILE --data D.csv`: posterior mode (maximum likelihood when every prior is
//! flat), then random-walk Metropolis-Hastings chains in parallel; text or JSON (cli.md).
//! Exit status: 0 success (warnings included), 1 the model file is wrong or has no priors or
//! observables, 2 the command line or the data file is wrong, 3 no unique stable solution at
//! the calibration (diagnosis printed as by `solve`), 4 no starting point with positive density,
//! every chain with acceptance 0 (the report is still printed), or a numerical failure.

use std::io::{IsTerminal, Write};
use std::path::Path;
use std::sync::Mutex;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use super::args::{EstimateArgs, Format};
use super::config::SolveSettings;
use super::load::load_model;
use super::output::{emit, eprintln_quiet};
use super::solve::{apply_overrides, load_and_solve, options};
use super::{Failure, Outcome};
use saddle::estimation::{
    self, DiagnosticParams, DrawSink, EstimationError, McmcParams, ModeParams, Posterior,
};
use saddle::output::estimate::{self as render, Provenance, SamplerRecord};

use saddle::output::provenance::sha256_hex as hex_sha256;

/// The draws file: complete rows appended under a lock, each block in one write.
struct FileSink(Mutex<std::fs::File>);

impl DrawSink for FileSink {
    fn write_rows(&self, rows: &str) -> Result<(), String> {
        let mut f = self.0.lock().map_err(|_| "a writer panicked".to_string())?;
        f.write_all(rows.as_bytes()).map_err(|e| e.to_string())
    }
}

fn estimation_failure(e: EstimationError) -> Failure {
    let outcome = match &e {
        EstimationError::NoPriors
        | EstimationError::NoObservables
        | EstimationError::Prior { .. } => Outcome::ModelError,
        EstimationError::DataShape { .. }
        | EstimationError::TooFewObservations { .. }
        | EstimationError::Settings(_)
        | EstimationError::DrawsFile(_) => Outcome::UsageError,
        EstimationError::Solve(_)
        | EstimationError::NoFiniteStart { .. }
        | EstimationError::Optimizer(_) => Outcome::NumericalFailure,
    };
    Failure::new(outcome, e.to_string())
}

pub fn run(args: EstimateArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    if args.format == Format::Csv {
        return Err(Failure::usage(
            "estimate writes text or json (--draws-out PATH.csv writes the draws as CSV)",
        ));
    }
    if args.chains == 0 || args.chains > estimation::mcmc::MAX_CHAINS {
        return Err(Failure::usage(format!(
            "--chains must be between 1 and {}",
            estimation::mcmc::MAX_CHAINS
        )));
    }
    if args.starts == 0 || args.starts > 4 {
        return Err(Failure::usage(format!(
            "--starts must be between 1 and 4, got {}",
            args.starts
        )));
    }
    if !(args.step.is_finite() && args.step > 0.0) {
        return Err(Failure::usage(format!(
            "--step must be a positive number, got {}",
            args.step
        )));
    }
    // The calibration must solve; otherwise print the diagnosis like `solve` and exit 3.
    let s = load_and_solve(&args.file, &settings)?;
    if s.solved.solution.is_none() {
        let text = match args.format {
            Format::Json => saddle::output::solve::json(&s.solved),
            _ => saddle::output::solve::text(&s.solved),
        };
        emit(args.out.output.as_deref(), text.as_bytes())?;
        return Ok(Outcome::NoUniqueSolution);
    }
    let (model, source) = load_model(&args.file)?;
    let model = apply_overrides(model, &settings.overrides)?;
    if model.priors.is_empty() {
        return Err(estimation_failure(EstimationError::NoPriors));
    }
    if model.observables.is_empty() {
        return Err(estimation_failure(EstimationError::NoObservables));
    }
    let data_bytes = std::fs::read(&args.data)
        .map_err(|e| Failure::usage(format!("cannot read {}: {e}", args.data.display())))?;
    let names: Vec<String> = model.observables.iter().map(|o| o.name.clone()).collect();
    let data = saddle::data::read_data(&data_bytes, &names, 1)
        .map_err(|e| Failure::usage(format!("{}: {}", args.data.display(), data_error(&e))))?;
    for n in &data.notes {
        eprintln_quiet(&format!("note: {n}"));
    }
    let post = Posterior::new(&model, &data.values, options(&settings), settings.regime)
        .map_err(estimation_failure)?;
    let prov = Provenance {
        file: args.file.display().to_string(),
        sha256: hex_sha256(source.as_bytes()),
        data_file: args.data.display().to_string(),
        data_sha256: hex_sha256(&data_bytes),
        version: env!("CARGO_PKG_VERSION").to_string(),
        overrides: settings.overrides.clone(),
        parameters: model
            .parameters
            .iter()
            .map(|p| (p.name.clone(), p.value))
            .collect(),
        threshold: s.solved.threshold,
        regime: settings.regime.as_str().to_string(),
    };
    let mcmc = McmcParams {
        chains: args.chains,
        draws: args.draws,
        burn_in: args.burn_in,
        seed: args.seed,
        step: args.step,
        ..McmcParams::default()
    };
    let sink = match &args.draws_out {
        Some(p) => Some(open_draws(p, &post)?),
        None => None,
    };
    let total = (args.chains as u64) * (args.draws as u64 + args.burn_in as u64);
    let bar = if std::io::stderr().is_terminal() && args.draws > 0 {
        let b = ProgressBar::with_draw_target(Some(total), ProgressDrawTarget::stderr());
        if let Ok(style) = ProgressStyle::with_template("{bar:40} {pos}/{len} draws ({eta} left)") {
            b.set_style(style);
        }
        Some(b)
    } else {
        None
    };
    let tick = |n: u64| {
        if let Some(b) = &bar {
            b.inc(n);
        }
    };
    let mode_params = ModeParams {
        starts: args.starts,
        ..ModeParams::default()
    };
    let mut files = Vec::new();
    let est = if args.diagnose.is_empty() {
        estimation::estimate(
            &post,
            &mode_params,
            (args.draws > 0).then_some(&mcmc),
            &DiagnosticParams::default(),
            sink.as_ref().map(|s| s as &dyn DrawSink),
            Some(&tick),
        )
        .map_err(estimation_failure)?
    } else {
        let draws = read_draws_files(&args.diagnose, &mut files)?;
        let chains = estimation::chains_from_draws(&post, &draws).map_err(|e| {
            Failure::new(
                Outcome::ModelError,
                format!("--diagnose: {e}; nothing was written"),
            )
        })?;
        let mode = estimation::find_mode(&post, &mode_params).map_err(estimation_failure)?;
        let mut est = estimation::diagnose(&post, mode, Some(chains), &DiagnosticParams::default());
        let longest = draws
            .chains()
            .iter()
            .map(|(_, r)| r.len())
            .max()
            .unwrap_or(0);
        let kept = est.chains.first().map_or(0, |c| c.x.nrows());
        if longest > kept {
            est.warnings.push(format!(
                "the chains in the draws files have unequal lengths; each was cut to the shortest ({kept} draws, the longest has {longest})"
            ));
        }
        est
    };
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let record = if files.is_empty() {
        SamplerRecord {
            chains: if args.draws > 0 { args.chains } else { 0 },
            draws: args.draws,
            burn_in: args.burn_in,
            seed: args.seed,
            step: args.step,
            files,
        }
    } else {
        SamplerRecord {
            chains: est.chains.len(),
            draws: est.chains.first().map_or(0, |c| c.x.nrows()),
            burn_in: 0,
            seed: args.seed,
            step: args.step,
            files,
        }
    };
    let text = match args.format {
        Format::Json => render::json(&est, &post.quantities, &record, &prov),
        _ => render::text(&est, &post.quantities, &record, &prov),
    };
    emit(args.out.output.as_deref(), text.as_bytes())?;
    if let Some(p) = &args.plot {
        if est.chains.is_empty() {
            eprintln_quiet(
                "warning: --plot draws the chains' traces; with --draws 0 there are none",
            );
        } else {
            let svg = render::stack_svg(&[
                render::trace_chart(&est, &prov),
                render::density_chart(&est, &post.quantities, &prov),
            ]);
            super::output::write_atomic(p, svg.as_bytes())?;
        }
    }
    if args.format == Format::Json || args.out.output.is_some() {
        for w in &est.warnings {
            eprintln_quiet(&format!("warning: {w}"));
        }
    }
    // Chains that all stayed where they started give no posterior: the report is printed (it
    // says so and suggests a smaller step) and the run counts as a numerical failure.
    if !est.chains.is_empty() && est.chains.iter().all(|c| c.acceptance == 0.0) {
        return Ok(Outcome::NumericalFailure);
    }
    Ok(Outcome::Success)
}

/// Creates the draws file with its header `seed,chain,draw,NAME...,logpost` (written at once).
fn open_draws(path: &Path, post: &Posterior) -> Result<FileSink, Failure> {
    let mut f = std::fs::File::create(path)
        .map_err(|e| Failure::usage(format!("cannot create {}: {e}", path.display())))?;
    let names: Vec<String> = post.quantities.iter().map(|q| q.name.clone()).collect();
    f.write_all(estimation::draws::header(&names).as_bytes())
        .map_err(|e| Failure::usage(format!("cannot write {}: {e}", path.display())))?;
    Ok(FileSink(Mutex::new(f)))
}

/// Reads and merges the draws files of `--diagnose`; pushes each file's name and SHA-256 to
/// `files`. A bad file is exit 1 with `PATH:line:column`.
fn read_draws_files(
    paths: &[std::path::PathBuf],
    files: &mut Vec<(String, String)>,
) -> Result<estimation::draws::Draws, Failure> {
    let mut merged: Option<estimation::draws::Draws> = None;
    for p in paths {
        let bytes = super::bands::read_bounded(p)?;
        let bad = |e: String| {
            Failure::new(
                Outcome::ModelError,
                format!("draws file {}:{e}; nothing was written", p.display()),
            )
        };
        let d = estimation::draws::read_draws(&bytes).map_err(|e| bad(e.to_string()))?;
        files.push((p.display().to_string(), hex_sha256(&bytes)));
        match &mut merged {
            None => merged = Some(d),
            Some(m) => m.merge(d).map_err(|e| bad(format!(" {e}")))?,
        }
    }
    merged.ok_or_else(|| Failure::usage("--diagnose needs at least one draws file"))
}

/// A data error in words, with the bad cells listed.
fn data_error(e: &saddle::data::DataError) -> String {
    match e {
        saddle::data::DataError::Cells { count, problems } => {
            let mut s = format!("{count} bad cell(s):");
            for p in problems {
                s.push_str(&format!(
                    "\n  line {}, column {} ({}): {}",
                    p.line, p.column, p.header, p.what
                ));
            }
            s
        }
        other => other.to_string(),
    }
}
