//! `saddle decompose FILE --data D.csv`: the historical decomposition of each smoothed variable
//! into the contributions of the smoothed innovations and of the smoothed initial state,
//!
//! ```text
//!   smoothed_t = T^t alpha^_0 + sum_{s<=t} T^{t-s} R e^_s   (first rows: the variables)
//! ```
//!
//! as text, JSON or tidy CSV (cli.md), `--plot` stacked bars with the smoothed line.

use super::args::{DataCommandArgs, Format};
use super::filter::{kalman_failure, labels, prepare};
use super::output::{emit, write_atomic};
use super::{Failure, Outcome};
use saddle::data::run::run_decomposition;
use saddle::kalman::KalmanParams;
use saddle::output::data::{self as render};
use saddle::output::data_plot;

pub fn run(a: DataCommandArgs) -> Result<Outcome, Failure> {
    if !a.bands.draws.is_empty() {
        return Err(Failure::usage(
            "decompose has no posterior bands (--draws works with irf, moments, filter and forecast)",
        ));
    }
    let run = match prepare(&a)? {
        Ok(r) => r,
        Err(outcome) => return Ok(outcome),
    };
    let r = run_decomposition(&run.ss, &run.data, &KalmanParams::default())
        .map_err(|e| kalman_failure(e, &run))?;
    let text = match a.format {
        Format::Text => render::decompose_text(&run.names, &r, &run.prov),
        Format::Json => render::decompose_json(&run.names, &r, &run.prov),
        Format::Csv => render::decompose_csv(&run.names, &r),
    };
    let svg = a.plot.as_ref().map(|_| {
        let (_, var_labels) = labels(&run);
        data_plot::decomposition_chart(
            &run.names,
            &var_labels,
            &r.smoothed,
            &r.contributions,
            &render::provenance_line(&run.prov),
        )
    });
    emit(a.out.output.as_deref(), text.as_bytes())?;
    if let (Some(path), Some(svg)) = (&a.plot, svg) {
        write_atomic(path, svg.as_bytes())?;
    }
    Ok(Outcome::Success)
}
