//! `saddle forecast FILE --data D.csv --horizon H [--fix OBS=v1,v2,...]`: the distribution of
//! every variable (deviations) and observable (data units) H periods past the data,
//!
//! ```text
//!   mean_h = E[x_{N+h} | data, fixed values],   sd_h = sqrt Var[x_{N+h} | data, fixed values]
//! ```
//!
//! unconditional, or conditional on future observables after Waggoner and Zha (1999) hard
//! conditions (exact Gaussian conditioning, measurement error included); `--plot` fan charts.

use nalgebra::DMatrix;

use super::args::{ForecastArgs, Format};
use super::filter::{kalman_failure, labels, prepare};
use super::output::{emit, write_atomic};
use super::{Failure, Outcome};
use saddle::data::run::{future_labels, run_forecast};
use saddle::kalman::{model_state_space, KalmanParams};
use saddle::output::bands_elements as elements;
use saddle::output::data::{self as render};
use saddle::output::data_plot;

/// Periods forecast when `--horizon` is not given (three years of quarters).
pub const DEFAULT_HORIZON: u32 = 12;

/// Longest horizon accepted (the conditional forecast runs the smoother over data + horizon).
pub const MAX_HORIZON: u32 = 10_000;

/// Parses `OBS=v1,v2,...` (finite values); the name is checked against the observables later.
pub fn parse_fix(s: &str) -> Result<(String, Vec<f64>), Failure> {
    let bad = || Failure::usage(format!("--fix expects OBS=v1,v2,..., got `{s}`"));
    let (name, rest) = s.split_once('=').ok_or_else(bad)?;
    let name = name.trim().to_string();
    if name.is_empty() {
        return Err(bad());
    }
    let mut values = Vec::new();
    for v in rest.split(',') {
        let x: f64 = v
            .trim()
            .parse()
            .map_err(|_| Failure::usage(format!("--fix {name}: `{}` is not a number", v.trim())))?;
        if !x.is_finite() {
            return Err(Failure::usage(format!(
                "--fix {name}: values must be finite, got {x}"
            )));
        }
        values.push(x);
    }
    Ok((name, values))
}

pub fn run(a: ForecastArgs) -> Result<Outcome, Failure> {
    let horizon = a.horizon.unwrap_or(DEFAULT_HORIZON);
    if horizon == 0 || horizon > MAX_HORIZON {
        return Err(Failure::usage(format!(
            "--horizon must be between 1 and {MAX_HORIZON}, got {horizon}"
        )));
    }
    let horizon = horizon as usize;
    let fixes = a
        .fix
        .iter()
        .map(|s| parse_fix(s))
        .collect::<Result<Vec<_>, _>>()?;
    let c = &a.common;
    let mut run = match prepare(c)? {
        Ok(r) => r,
        Err(outcome) => return Ok(outcome),
    };
    // A bad draws file stops the run before anything is written.
    let settings = super::config::SolveSettings::from_args(&c.solve)?;
    let draws = super::bands::load(&c.bands, &c.file, &settings)?;
    let p = run.ss.observables.len();
    let mut fixed = DMatrix::from_element(horizon, p, f64::NAN);
    let mut seen: Vec<&str> = Vec::new();
    for (name, values) in &fixes {
        let Some(j) = run.ss.observables.iter().position(|o| o == name) else {
            return Err(Failure::usage(format!(
                "--fix: `{name}` is not an observable of the model (observables: {})",
                run.ss.observables.join(", ")
            )));
        };
        if seen.contains(&name.as_str()) {
            return Err(Failure::usage(format!("--fix: `{name}` is given twice")));
        }
        seen.push(name);
        if values.len() > horizon {
            return Err(Failure::usage(format!(
                "--fix {name}: {} values for a horizon of {horizon} periods",
                values.len()
            )));
        }
        for (h, v) in values.iter().enumerate() {
            fixed[(h, j)] = *v;
        }
    }
    let r = run_forecast(
        &run.ss,
        &run.data,
        horizon,
        &fixed,
        &KalmanParams::default(),
    )
    .map_err(|e| kalman_failure(e, &run))?;
    let last = run.data.periods.last().map_or("0", |s| s.as_str());
    let periods = future_labels(last, horizon);
    let mut banded = None;
    if let Some(d) = &draws {
        let point = elements::forecast(&periods, &r);
        let data = &run.data;
        let b = super::bands::compute(d, &settings, &point, |model, solved| {
            let ss = model_state_space(model, solved).map_err(|e| e.to_string())?;
            let f = run_forecast(&ss, data, horizon, &fixed, &KalmanParams::default())
                .map_err(|e| e.to_string())?;
            Ok(super::bands::values(&elements::forecast(&periods, &f)))
        })?;
        run.prov.draws = d.record.files.clone();
        banded = Some((point, b, d));
    }
    let mut text = match c.format {
        Format::Text => render::forecast_text(&run.names, &periods, &r, &fixes, &run.prov),
        Format::Json => render::forecast_json(&periods, &r, &fixes, &run.prov),
        Format::Csv => render::forecast_csv(&periods, &r),
    };
    if let Some((point, b, d)) = &banded {
        text = super::bands::attach(text, c.format, &elements::DATA_COLUMNS, point, b, &d.record);
    }
    let svg = c.plot.as_ref().map(|_| {
        let (obs_labels, var_labels) = labels(&run);
        match &banded {
            Some((point, b, d)) => {
                let sub = |n: &str| {
                    run.ss
                        .observables
                        .iter()
                        .position(|v| v == n)
                        .and_then(|i| obs_labels.get(i).cloned().flatten())
                        .or_else(|| {
                            run.ss
                                .variables
                                .iter()
                                .position(|v| v == n)
                                .and_then(|i| var_labels.get(i).cloned().flatten())
                        })
                };
                let panels = super::bands::data_panels(point, b, "mean", &sub);
                super::bands::chart(
                    &format!(
                        "{}: forecast means with posterior bands",
                        run.names.title.as_deref().unwrap_or("Model")
                    ),
                    &periods,
                    &panels,
                    b,
                    &d.record,
                    &render::provenance_line(&run.prov),
                )
            }
            None => data_plot::fan_chart(
                &run.names,
                &obs_labels,
                &var_labels,
                &run.data.values,
                &periods,
                &r,
                &fixes,
                &render::provenance_line(&run.prov),
            ),
        }
    });
    emit(c.out.output.as_deref(), text.as_bytes())?;
    if let (Some(path), Some(svg)) = (&c.plot, svg) {
        write_atomic(path, svg.as_bytes())?;
    }
    Ok(Outcome::Success)
}
