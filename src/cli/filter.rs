//! `saddle filter FILE --data D.csv`: the Kalman filter and smoother of the model's observables
//! (cli.md "Data commands"), and the glue shared by the three data commands: solve, read the
//! data, build the state-space form, word the errors with the exit codes of cli.md.
//!
//! Exit codes: 1 for a bad data file (every bad cell with its line and column) or a model
//! without usable observables, 2 for a data path that cannot be read or an unmeetable `--fix`,
//! 3 when the model has no unique stable solution (the solve diagnosis in the requested format),
//! 4 for a numerical failure. Nothing is written on failure.

use std::io::Read;
use std::path::Path;

use sha2::{Digest, Sha256};

use super::args::{DataCommandArgs, Format};
use super::config::SolveSettings;
use super::output::{emit, eprintln_quiet, write_atomic};
use super::solve::{load_and_solve, Solved};
use super::{Failure, Outcome};
use saddle::data::{read_data, DataError, DataSet, MAX_DATA_BYTES};
use saddle::kalman::{
    model_state_space, KalmanError, KalmanParams, ModelStateSpace, ObservationError,
};
use saddle::output::bands_elements as elements;
use saddle::output::data::{self as render, Names, Provenance};
use saddle::output::data_plot;
use saddle::output::solve as render_solve;

/// Fewest periods a data file must hold: a single row is no time series (and is most often a
/// file written the wrong way round, one column per period).
pub const MIN_PERIODS: usize = 2;

/// Everything a data command needs, read and checked.
pub struct DataRun {
    pub solved: Solved,
    pub ss: ModelStateSpace,
    pub data: DataSet,
    pub names: Names,
    pub prov: Provenance,
}

/// Lowercase hex sha256 of `bytes`.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let d = Sha256::digest(bytes);
    d.iter().map(|b| format!("{b:02x}")).collect()
}

fn read_bounded(path: &Path, what: &str) -> Result<Vec<u8>, Failure> {
    let shown = path.display();
    let f = std::fs::File::open(path)
        .map_err(|e| Failure::usage(format!("cannot read {what} {shown}: {e}")))?;
    let mut bytes = Vec::new();
    f.take(MAX_DATA_BYTES as u64 + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Failure::usage(format!("cannot read {what} {shown}: {e}")))?;
    Ok(bytes)
}

/// The words of a data-file error, naming the file (exit 1).
pub fn data_failure(path: &Path, e: DataError) -> Failure {
    let shown = path.display();
    let message = match &e {
        DataError::Cells { count, problems } => {
            let mut m = format!(
                "data file {shown}: {count} bad cell{}; nothing was written",
                if *count == 1 { "" } else { "s" }
            );
            for p in problems {
                let col = if p.header.is_empty() {
                    String::new()
                } else {
                    format!(" (column {})", p.header)
                };
                m.push_str(&format!(
                    "\n  {shown}:{}:{}{col}: {}",
                    p.line, p.column, p.what
                ));
            }
            if *count > problems.len() {
                m.push_str(&format!("\n  ... and {} more", count - problems.len()));
            }
            m
        }
        other => format!("data file {shown}: {other}; nothing was written"),
    };
    Failure::new(Outcome::ModelError, message)
}

/// Maps a filter, smoother or forecast failure to cli.md's exit codes, naming periods and
/// observables.
pub fn kalman_failure(e: KalmanError, run: &DataRun) -> Failure {
    match e {
        KalmanError::Contradiction {
            period,
            observable,
            residual,
        } => Failure::new(
            Outcome::ModelError,
            format!(
                "data file {}: {} in period {} is an exact combination of the other observations in the model (no measurement error), but the data differ from it by {residual:e}; give it a measurement error in `covariance` or correct the data",
                run.prov.data.as_ref().map_or("?", |d| d.0.as_str()),
                run.names
                    .observables
                    .get(observable)
                    .map_or("an observable", |s| s.as_str()),
                run.names
                    .periods
                    .get(period.saturating_sub(1))
                    .map_or("?", |s| s.as_str()),
            ),
        ),
        KalmanError::Condition { what } => Failure::usage(format!("--fix: {what}")),
        KalmanError::NotCovariance { .. } | KalmanError::TooLarge { .. } => {
            Failure::new(Outcome::ModelError, e.to_string())
        }
        other => Failure::numerical(other.to_string()),
    }
}

fn observation_failure(e: ObservationError, file: &Path) -> Failure {
    Failure::new(Outcome::ModelError, format!("{}: {e}", file.display()))
}

/// Solves, checks the observables and reads the data. `Ok(Err(outcome))` means the model has
/// no unique stable solution and the diagnosis has been written (exit 3).
pub fn prepare(a: &DataCommandArgs) -> Result<Result<DataRun, Outcome>, Failure> {
    let settings = SolveSettings::from_args(&a.solve)?;
    let solved = load_and_solve(&a.file, &settings)?;
    let model_bytes = read_bounded(&a.file, "model file")?;
    let prov_of =
        |data_sha: String| provenance(&a.file, &model_bytes, &settings, &solved, &a.data, data_sha);
    if solved.solved.solution.is_none() {
        let data_sha = read_bounded(&a.data, "data file")
            .map(|b| sha256_hex(&b))
            .unwrap_or_default();
        let prov = prov_of(data_sha);
        match a.format {
            Format::Text => {
                let mut t = render_solve::text(&solved.solved);
                t.push_str(&render::provenance_line(&prov));
                t.push('\n');
                emit(a.out.output.as_deref(), t.as_bytes())?;
            }
            Format::Json => {
                let j = with_provenance(&render_solve::json(&solved.solved), &prov);
                emit(a.out.output.as_deref(), j.as_bytes())?;
            }
            Format::Csv => {}
        }
        if a.format == Format::Csv || a.plot.is_some() {
            eprintln_quiet(&format!(
                "no results{}: {}",
                if a.plot.is_some() { " and no plot" } else { "" },
                solved
                    .solved
                    .diagnosis
                    .as_deref()
                    .unwrap_or("no unique stable solution")
            ));
        }
        return Ok(Err(Outcome::NoUniqueSolution));
    }
    let ss = state_space(&a.file, &solved)?;
    let (data, data_sha) = load_data(&ss, &a.data)?;
    let names = Names {
        title: solved.solved.title.clone(),
        periods: data.periods.clone(),
        variables: ss.variables.clone(),
        shocks: ss.shocks.clone(),
        observables: ss.observables.clone(),
        log: solved.solved.log.clone(),
    };
    let prov = prov_of(data_sha);
    Ok(Ok(DataRun {
        solved,
        ss,
        data,
        names,
        prov,
    }))
}

/// The provenance of a data command (cli.md): model file and hash, overrides, parameters,
/// threshold, regime, data file and hash.
pub fn provenance(
    file: &Path,
    model_bytes: &[u8],
    settings: &SolveSettings,
    solved: &Solved,
    data: &Path,
    data_sha: String,
) -> Provenance {
    let mut p = Provenance::new(
        &file.display().to_string(),
        model_bytes,
        &solved.model,
        &settings.overrides,
        Some(solved.solved.threshold),
        settings.regime.as_str(),
    );
    p.data = Some((data.display().to_string(), data_sha));
    p
}

/// Reads and checks the data file at `path` for the observables of `ss`; returns the data set
/// and the file's sha256, or exit 2 (cannot read) / exit 1 (bad file). Notes go to stderr.
pub fn load_data(ss: &ModelStateSpace, path: &Path) -> Result<(DataSet, String), Failure> {
    let bytes = read_bounded(path, "data file")?;
    let sha = sha256_hex(&bytes);
    let data =
        read_data(&bytes, &ss.observables, MIN_PERIODS).map_err(|e| data_failure(path, e))?;
    for n in &data.notes {
        eprintln_quiet(&format!("note: data file {}: {n}", path.display()));
    }
    Ok((data, sha))
}

/// The state-space form of a solved model with observables, or exit 1 naming the model file.
pub fn state_space(file: &Path, s: &Solved) -> Result<ModelStateSpace, Failure> {
    if s.model.observables.is_empty() {
        return Err(observation_failure(ObservationError::NoObservables, file));
    }
    model_state_space(&s.model, &s.solved).map_err(|e| observation_failure(e, file))
}

/// The solve JSON (an object ending in `}`) with a `provenance` member appended.
pub fn with_provenance(json: &str, prov: &Provenance) -> String {
    let body = json.trim_end();
    let p = render::provenance_json(prov).to_pretty_string();
    match body.strip_suffix('}') {
        Some(head) => format!("{},\n\"provenance\": {}}}\n", head.trim_end(), p.trim_end()),
        None => json.to_string(),
    }
}

/// Labels of the observables and variables for chart subtitles (the model's labels).
pub fn labels(run: &DataRun) -> (Vec<Option<String>>, Vec<Option<String>>) {
    let obs = run
        .solved
        .model
        .observables
        .iter()
        .map(|o| o.label.clone())
        .collect();
    let vars = run
        .ss
        .variables
        .iter()
        .map(|v| {
            run.solved
                .model
                .endogenous
                .iter()
                .find(|e| &e.name == v)
                .and_then(|e| e.label.clone())
        })
        .collect();
    (obs, vars)
}

pub fn run(a: DataCommandArgs) -> Result<Outcome, Failure> {
    let mut run = match prepare(&a)? {
        Ok(r) => r,
        Err(outcome) => return Ok(outcome),
    };
    // A bad draws file stops the run before anything is written.
    let settings = SolveSettings::from_args(&a.solve)?;
    let draws = super::bands::load(&a.bands, &a.file, &settings)?;
    let params = KalmanParams::default();
    let r = saddle::data::run::run_filter(&run.ss, &run.data, &params)
        .map_err(|e| kalman_failure(e, &run))?;
    let mut banded = None;
    if let Some(d) = &draws {
        let point = elements::filter(&run.names.periods, &run.ss.variables, &run.ss.shocks, &r);
        let data = &run.data;
        let names = &run.names;
        let b = super::bands::compute(d, &settings, &point, |model, solved| {
            let ss = model_state_space(model, solved).map_err(|e| e.to_string())?;
            let f = saddle::data::run::run_filter(&ss, data, &params).map_err(|e| e.to_string())?;
            Ok(super::bands::values(&elements::filter(
                &names.periods,
                &ss.variables,
                &ss.shocks,
                &f,
            )))
        })?;
        run.prov.draws = d.record.files.clone();
        banded = Some((point, b, d));
    }
    let mut text = match a.format {
        Format::Text => render::filter_text(&run.names, &r, &run.prov),
        Format::Json => render::filter_json(&run.names, &r, &run.prov),
        Format::Csv => render::filter_csv(&run.names, &r),
    };
    if let Some((point, b, d)) = &banded {
        text = super::bands::attach(text, a.format, &elements::DATA_COLUMNS, point, b, &d.record);
    }
    let svg = a.plot.as_ref().map(|_| {
        let (obs_labels, var_labels) = labels(&run);
        match &banded {
            Some((point, b, d)) => {
                let sub = |n: &str| {
                    run.ss
                        .variables
                        .iter()
                        .position(|v| v == n)
                        .and_then(|i| var_labels.get(i).cloned().flatten())
                };
                let panels = super::bands::data_panels(point, b, "smoothed", &sub);
                super::bands::chart(
                    &format!(
                        "{}: smoothed variables with posterior bands",
                        run.names.title.as_deref().unwrap_or("Model")
                    ),
                    &run.names.periods,
                    &panels,
                    b,
                    &d.record,
                    &render::provenance_line(&run.prov),
                )
            }
            None => data_plot::fit_chart(
                &run.names,
                &obs_labels,
                &run.data.values,
                &r.smoothed_observables,
                &render::provenance_line(&run.prov),
            ),
        }
    });
    emit(a.out.output.as_deref(), text.as_bytes())?;
    if let (Some(path), Some(svg)) = (&a.plot, svg) {
        write_atomic(path, svg.as_bytes())?;
    }
    Ok(Outcome::Success)
}

/// The data section of `saddle report --data` for the solved model `s`: filter, decomposition
/// and unconditional forecasts with their charts. A bad data file is exit 1 (no page written);
/// a decomposition or forecast that cannot be computed is noted in the section.
pub fn report_section(
    file: &Path,
    data_path: &Path,
    settings: &SolveSettings,
    s: &Solved,
) -> Result<String, Failure> {
    use saddle::data::run::{future_labels, run_decomposition, run_filter, run_forecast};
    use saddle::output::data_report::{section, DataSection};
    let ss = state_space(file, s)?;
    let (data, data_sha) = load_data(&ss, data_path)?;
    let model_bytes = read_bounded(file, "model file")?;
    let prov = provenance(file, &model_bytes, settings, s, data_path, data_sha);
    let params = KalmanParams::default();
    let names = Names {
        title: s.solved.title.clone(),
        periods: data.periods.clone(),
        variables: ss.variables.clone(),
        shocks: ss.shocks.clone(),
        observables: ss.observables.clone(),
        log: s.solved.log.clone(),
    };
    let run = DataRun {
        solved: Solved {
            model: s.model.clone(),
            solved: s.solved.clone(),
            timings: s.timings,
            load_time: s.load_time,
            policy: None,
            provenance: s.provenance.clone(),
        },
        ss,
        data,
        names,
        prov,
    };
    let f = run_filter(&run.ss, &run.data, &params).map_err(|e| kalman_failure(e, &run))?;
    let (obs_labels, var_labels) = labels(&run);
    let line = render::provenance_line(&run.prov);
    let fit_svg = data_plot::fit_chart(
        &run.names,
        &obs_labels,
        &run.data.values,
        &f.smoothed_observables,
        &line,
    );
    let mut notes = Vec::new();
    let decomposition_svg = match run_decomposition(&run.ss, &run.data, &params) {
        Ok(d) => Some(data_plot::decomposition_chart(
            &run.names,
            &var_labels,
            &d.smoothed,
            &d.contributions,
            &line,
        )),
        Err(e) => {
            notes.push(format!("No historical decomposition: {e}"));
            None
        }
    };
    let horizon = super::forecast::DEFAULT_HORIZON as usize;
    let free = nalgebra::DMatrix::from_element(horizon, run.ss.observables.len(), f64::NAN);
    let forecast_svg = match run_forecast(&run.ss, &run.data, horizon, &free, &params) {
        Ok(r) => {
            let last = run.data.periods.last().map_or("0", |s| s.as_str());
            Some(data_plot::fan_chart(
                &run.names,
                &obs_labels,
                &var_labels,
                &run.data.values,
                &future_labels(last, horizon),
                &r,
                &[],
                &line,
            ))
        }
        Err(e) => {
            notes.push(format!("No forecasts: {e}"));
            None
        }
    };
    Ok(section(
        &DataSection {
            prov: &run.prov,
            periods: &run.data.periods,
            filter: &f,
            fit_svg,
            decomposition_svg,
            forecast_svg,
            notes,
        },
        // After the report's seven sections and, when the model has an objective, its policy
        // section.
        if s.policy.is_some() { 9 } else { 8 },
    ))
}
