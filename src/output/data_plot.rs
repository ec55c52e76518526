//! SVG charts of the data commands: the observables' data against what the smoothed states
//! imply (`filter --plot`, the panel grid of [`super::svg`]), stacked bars of the historical
//! decomposition with the smoothed line (`decompose --plot`), and fan charts with 50 and 90
//! percent bands (`forecast --plot`):
//!
//! ```text
//!   band_q = mean +- z_q sd,   z_0.75 = 0.6744897501960817,  z_0.95 = 1.6448536269514722
//! ```
//!
//! (standard normal quantiles, from any table of the normal distribution; the forecast
//! distribution is Gaussian). Every function is pure and total: non-finite values are not drawn,
//! the number of panels is capped at [`MAX_DATA_PANELS`].

use nalgebra::DMatrix;

use super::data::{Conditions, Names};
use super::data_plot_frame::{Frame, FrameGrid};
use super::svg::{panel_grid_with, GridOptions, Panel, PanelGrid, Series, YRange, SERIES_COLOURS};
use crate::data::run::ForecastResults;

/// Most panels drawn in one data chart (the rest are named in a note).
pub const MAX_DATA_PANELS: usize = 48;

/// Standard normal quantile at 0.75 (half-width of the 50 percent band in sds).
pub const Z50: f64 = 0.674_489_750_196_081_7;
/// Standard normal quantile at 0.95 (half-width of the 90 percent band in sds).
pub const Z90: f64 = 1.644_853_626_951_472_2;

const CONDITIONAL: &str = "Results are conditional on the model, its calibration and its data.";

fn period_note(periods: &[String]) -> String {
    match (periods.first(), periods.last()) {
        (Some(a), Some(b)) => format!(
            "Periods are numbered from 1 = {a} to {} = {b}.",
            periods.len()
        ),
        _ => String::new(),
    }
}

/// `filter --plot`: one panel per observable, the data and d + Z alpha^_t (data units).
pub fn fit_chart(
    names: &Names,
    obs_labels: &[Option<String>],
    data: &DMatrix<f64>,
    smoothed_obs: &DMatrix<f64>,
    source: &str,
) -> String {
    let panels = names
        .observables
        .iter()
        .enumerate()
        .take(data.ncols().min(smoothed_obs.ncols()))
        .map(|(j, o)| Panel {
            title: o.clone(),
            subtitle: obs_labels.get(j).cloned().flatten(),
            series: vec![
                Series {
                    name: "data".into(),
                    values: data.column(j).iter().copied().collect(),
                },
                Series {
                    name: "implied by the smoothed states".into(),
                    values: smoothed_obs.column(j).iter().copied().collect(),
                },
            ],
        })
        .collect();
    let grid = PanelGrid {
        title: "Observables: the data and the smoothed model".to_string(),
        x_label: "period".into(),
        y_label: Some("data units".into()),
        panels,
    };
    panel_grid_with(
        &grid,
        &GridOptions {
            y_range: YRange::Data,
            first_period: 1,
            notes: vec![
                format!("{source}."),
                period_note(&names.periods),
                "The smoothed line is d + Z E[state | all data], without measurement error.".into(),
                format!("Gaps are missing data. {CONDITIONAL}"),
            ],
            ..GridOptions::default()
        },
    )
}

/// `decompose --plot`: per variable, stacked bars of the contributions (each innovation and
/// the initial state; positive ones stacked up from zero, negative ones down) and the smoothed
/// line.
pub fn decomposition_chart(
    names: &Names,
    var_labels: &[Option<String>],
    smoothed: &DMatrix<f64>,
    contributions: &[DMatrix<f64>],
    source: &str,
) -> String {
    let mut legend: Vec<(String, &'static str)> = names
        .shocks
        .iter()
        .enumerate()
        .map(|(j, s)| (s.clone(), SERIES_COLOURS[j % (SERIES_COLOURS.len() - 1)]))
        .collect();
    legend.push(("initial state".into(), "#BBBBBB"));
    let colours: Vec<&'static str> = legend.iter().map(|l| l.1).collect();
    let mut frames = Vec::new();
    for (i, v) in names.variables.iter().enumerate().take(MAX_DATA_PANELS) {
        let Some(c) = contributions.get(i) else { break };
        let n = c.nrows().min(smoothed.nrows());
        let line: Vec<f64> = (0..n).map(|t| smoothed[(t, i)]).collect();
        let mut lo: f64 = 0.0;
        let mut hi: f64 = 0.0;
        let mut bars = Vec::with_capacity(n);
        for t in 0..n {
            let (mut up, mut down) = (0.0, 0.0);
            let mut stack = Vec::with_capacity(c.ncols());
            for (j, colour) in colours.iter().enumerate().take(c.ncols()) {
                let x = c[(t, j)];
                if !x.is_finite() || x == 0.0 {
                    continue;
                }
                if x > 0.0 {
                    stack.push((up, up + x, *colour));
                    up += x;
                } else {
                    stack.push((down + x, down, *colour));
                    down += x;
                }
            }
            lo = lo.min(down);
            hi = hi.max(up);
            bars.push(stack);
        }
        for &x in line.iter().filter(|x| x.is_finite()) {
            lo = lo.min(x);
            hi = hi.max(x);
        }
        frames.push(Frame {
            title: v.clone(),
            subtitle: var_labels.get(i).cloned().flatten(),
            lo,
            hi,
            n_periods: n,
            first_x: 0,
            bars,
            bands: Vec::new(),
            lines: vec![(line, "#000000".to_string(), 0)],
            dots: Vec::new(),
            divider: None,
        });
    }
    let mut notes = vec![format!("{source}.")];
    if names.variables.len() > MAX_DATA_PANELS {
        notes.push(format!(
            "Showing the first {MAX_DATA_PANELS} of {} variables.",
            names.variables.len()
        ));
    }
    notes.push(format!(
        "Bars: the contribution of each smoothed innovation and of the smoothed initial state; they add up to the smoothed deviation from the steady state (black line). {} {CONDITIONAL}",
        period_note(&names.periods)
    ));
    let mut legend_items: Vec<(String, String, bool)> = legend
        .iter()
        .map(|(n, c)| (n.clone(), c.to_string(), true))
        .collect();
    legend_items.push(("smoothed".into(), "#000000".into(), false));
    FrameGrid {
        title: format!(
            "{}: historical decomposition",
            names.title.as_deref().unwrap_or("Model")
        ),
        legend: legend_items,
        frames,
        period_labels: names.periods.clone(),
        notes,
    }
    .render()
}

/// `forecast --plot`: one fan chart per observable (with the last data periods) and per
/// variable: the mean, 50 and 90 percent bands, and the fixed values of `--fix` as dots.
#[allow(clippy::too_many_arguments)]
pub fn fan_chart(
    names: &Names,
    obs_labels: &[Option<String>],
    var_labels: &[Option<String>],
    data: &DMatrix<f64>,
    periods: &[String],
    r: &ForecastResults,
    fixed: &Conditions,
    source: &str,
) -> String {
    let horizon = r.mean.nrows();
    let n_data = data.nrows();
    // History shown: at most 3 horizons and at most 40 periods of data.
    let history = n_data.min((3 * horizon).max(8)).min(40);
    let mut labels: Vec<String> = names.periods[n_data - history..].to_vec();
    labels.extend(periods.iter().cloned());
    let blue = SERIES_COLOURS[0];
    let mut frames = Vec::new();
    let mut order: Vec<usize> = (0..r.names.len()).filter(|&j| r.is_observable[j]).collect();
    order.extend((0..r.names.len()).filter(|&j| !r.is_observable[j]));
    for &j in order.iter().take(MAX_DATA_PANELS) {
        let name = &r.names[j];
        let is_obs = r.is_observable[j];
        let obs_index = names.observables.iter().position(|o| o == name);
        let (subtitle, hist): (Option<String>, Vec<f64>) = match (is_obs, obs_index) {
            (true, Some(k)) => (
                obs_labels.get(k).cloned().flatten(),
                (n_data - history..n_data).map(|t| data[(t, k)]).collect(),
            ),
            _ => {
                let k = names.variables.iter().position(|v| v == name);
                (
                    k.and_then(|k| var_labels.get(k).cloned().flatten()),
                    Vec::new(),
                )
            }
        };
        let offset = history; // forecast h = 1 sits at x = history
        let mean: Vec<f64> = (0..horizon).map(|h| r.mean[(h, j)]).collect();
        let sd: Vec<f64> = (0..horizon).map(|h| r.sd[(h, j)]).collect();
        let band = |z: f64| -> Vec<(f64, f64)> {
            mean.iter()
                .zip(&sd)
                .map(|(m, s)| (m - z * s, m + z * s))
                .collect()
        };
        let b90 = band(Z90);
        let b50 = band(Z50);
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        for &(a, b) in &b90 {
            if a.is_finite() && b.is_finite() {
                lo = lo.min(a);
                hi = hi.max(b);
            }
        }
        for &x in hist.iter().chain(&mean).filter(|x| x.is_finite()) {
            lo = lo.min(x);
            hi = hi.max(x);
        }
        if !is_obs {
            lo = lo.min(0.0);
            hi = hi.max(0.0);
        }
        let mut lines = Vec::new();
        if !hist.is_empty() {
            lines.push((hist, "#000000".to_string(), 0));
        }
        lines.push((mean, blue.to_string(), offset));
        let mut dots = Vec::new();
        if let Some((_, vals)) = fixed.iter().find(|(n, _)| n == name) {
            for (h, v) in vals.iter().enumerate() {
                dots.push((offset + h, *v));
            }
        }
        frames.push(Frame {
            title: name.clone(),
            subtitle: Some(format!(
                "{}{}",
                subtitle.map(|s| format!("{s}; ")).unwrap_or_default(),
                if is_obs {
                    "data units"
                } else {
                    "deviation from steady state"
                }
            )),
            lo: if lo.is_finite() { lo } else { -1.0 },
            hi: if hi.is_finite() { hi } else { 1.0 },
            n_periods: history + horizon,
            first_x: 0,
            bars: Vec::new(),
            bands: vec![
                (b90, "#C6DBEF".to_string(), offset),
                (b50, "#6BAED6".to_string(), offset),
            ],
            lines,
            dots,
            divider: if history > 0 {
                Some(history as f64 - 0.5)
            } else {
                None
            },
        });
    }
    let mut legend = vec![
        ("data".to_string(), "#000000".to_string(), false),
        ("forecast mean".to_string(), blue.to_string(), false),
        ("50% band".to_string(), "#6BAED6".to_string(), true),
        ("90% band".to_string(), "#C6DBEF".to_string(), true),
    ];
    if !fixed.is_empty() {
        legend.push((
            "fixed value (--fix)".to_string(),
            "#D55E00".to_string(),
            true,
        ));
    }
    let mut notes = vec![format!("{source}.")];
    notes.push(format!(
        "{} Bands hold 50 and 90 percent of the Gaussian forecast distribution given the data{}; observables include their measurement error. {CONDITIONAL}",
        if history > 0 {
            format!("The last {history} data periods are drawn left of the dashed line.")
        } else {
            String::new()
        },
        if fixed.is_empty() {
            ""
        } else {
            " and the fixed values"
        }
    ));
    FrameGrid {
        title: format!("{}: forecasts", names.title.as_deref().unwrap_or("Model")),
        legend,
        frames,
        period_labels: labels,
        notes,
    }
    .render()
}
