//! The charts of the commands, built from the library's results: impulse responses (one grid
//! per shock, one panel per variable, the shock named in the title, units from the variables'
//! labels), simulated paths, and the determinacy map of a sweep. Each returns a whole SVG
//! document; the command-line layer only writes it to the `--plot` path.

use nalgebra::DMatrix;

use super::{
    panel_grids, status_map_with, GridOptions, Panel, PanelGrid, Series, StatusMap,
    StatusMapOptions, YRange,
};
use crate::model::Model;

/// Subtitle of each variable's panel: its label from the model (the units, by convention), with
/// "log deviation" added for variables linearized in logs when `deviations` is true.
pub fn variable_subtitles(
    model: &Model,
    names: &[String],
    deviations: bool,
) -> Vec<Option<String>> {
    names
        .iter()
        .map(|n| {
            let v = model.endogenous.iter().find(|v| &v.name == n);
            let label = v.and_then(|v| v.label.clone()).filter(|l| !l.is_empty());
            let log = deviations && v.is_some_and(|v| v.log);
            match (label, log) {
                (Some(l), true) => Some(format!("{l} (log deviation)")),
                (Some(l), false) => Some(l),
                (None, true) => Some("log deviation".to_string()),
                (None, false) => None,
            }
        })
        .collect()
}

/// Label of each innovation from the model (`None` where it has none).
pub fn shock_labels(model: &Model, shocks: &[String]) -> Vec<Option<String>> {
    shocks
        .iter()
        .map(|s| {
            model
                .exogenous
                .iter()
                .find(|e| &e.name == s)
                .and_then(|e| e.label.clone())
                .filter(|l| !l.is_empty())
        })
        .collect()
}

/// The words for an impulse size: `"unit"` gives "a unit impulse", anything else "a
/// one-standard-deviation impulse".
pub fn impulse_words(size: &str) -> &'static str {
    if size == "unit" {
        "a unit impulse"
    } else {
        "a one-standard-deviation impulse"
    }
}

/// One grid per shock: panels per variable (rows of `responses[k]`, variables x periods).
/// Missing or short inputs give fewer panels, never a panic.
pub fn impulse_response_grids(
    shocks: &[String],
    shock_labels: &[Option<String>],
    variables: &[String],
    subtitles: &[Option<String>],
    responses: &[DMatrix<f64>],
    size: &str,
) -> Vec<PanelGrid> {
    let words = impulse_words(size);
    shocks
        .iter()
        .zip(responses)
        .enumerate()
        .map(|(k, (shock, resp))| {
            let title = match shock_labels.get(k).and_then(|l| l.as_deref()) {
                Some(l) => format!("Responses to {words} in {shock} ({l})"),
                None => format!("Responses to {words} in {shock}"),
            };
            let panels = variables
                .iter()
                .enumerate()
                .take(resp.nrows())
                .map(|(i, v)| Panel {
                    title: v.clone(),
                    subtitle: subtitles.get(i).cloned().flatten(),
                    series: vec![Series {
                        name: shock.clone(),
                        values: resp.row(i).iter().copied().collect(),
                    }],
                })
                .collect();
            PanelGrid {
                title,
                x_label: "periods after the impulse".to_string(),
                y_label: Some("deviation from steady state".to_string()),
                panels,
            }
        })
        .collect()
}

/// The `irf --plot` document: the grids of [`impulse_response_grids`] stacked, with a note.
/// `source` is the provenance line (file, hash, overrides; see `output::provenance`).
pub fn impulse_response_chart(grids: &[PanelGrid], source: &str) -> String {
    panel_grids(
        grids,
        &GridOptions {
            y_range: YRange::IncludeZero,
            notes: vec![
                "Deviations from the steady state; each panel has its own scale. Results are conditional on the model and its calibration.".to_string(),
                source.to_string(),
            ],
            ..GridOptions::default()
        },
    )
}

/// The `simulate --plot` document: one panel per variable (columns of `paths`, periods x
/// variables), periods numbered from 1, levels on their own range or deviations around zero.
pub fn simulation_chart(
    title: &str,
    variables: &[String],
    subtitles: &[Option<String>],
    paths: &DMatrix<f64>,
    levels: bool,
    note: &str,
) -> String {
    let panels = variables
        .iter()
        .enumerate()
        .take(paths.ncols())
        .map(|(j, v)| Panel {
            title: v.clone(),
            subtitle: subtitles.get(j).cloned().flatten(),
            series: vec![Series {
                name: "simulated path".to_string(),
                values: paths.column(j).iter().copied().collect(),
            }],
        })
        .collect();
    let grid = PanelGrid {
        title: title.to_string(),
        x_label: "period".to_string(),
        y_label: Some(if levels {
            "level".to_string()
        } else {
            "deviation from steady state".to_string()
        }),
        panels,
    };
    let mut notes = Vec::new();
    // One note per line of `note` (the provenance line apart from the run's settings).
    notes.extend(note.lines().filter(|l| !l.is_empty()).map(str::to_string));
    notes.push("Results are conditional on the model and its calibration.".to_string());
    panel_grids(
        std::slice::from_ref(&grid),
        &GridOptions {
            y_range: if levels {
                YRange::Data
            } else {
                YRange::IncludeZero
            },
            first_period: 1,
            notes,
            ..GridOptions::default()
        },
    )
}

/// The `sweep --plot` document: one parameter gives a strip, two a map (the first across, the
/// second up); `status` is row-major with the first parameter slowest.
pub fn sweep_chart(
    title: &str,
    parameters: &[String],
    axes: &[Vec<f64>],
    status: Vec<String>,
    source: &str,
) -> String {
    let x_name = parameters.first().cloned().unwrap_or_default();
    let x_values = axes.first().cloned().unwrap_or_default();
    let y = match (parameters.get(1), axes.get(1)) {
        (Some(n), Some(v)) => Some((n.clone(), v.clone())),
        _ => None,
    };
    status_map_with(
        &StatusMap {
            title: title.to_string(),
            x_name,
            x_values,
            y,
            status,
        },
        &StatusMapOptions {
            width: None,
            notes: vec![format!(
                "Model {source}; other parameters at their calibrated values. Results are conditional on the model and its calibration."
            )],
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grids_name_the_shock_and_tolerate_short_inputs() {
        let r = DMatrix::from_row_slice(2, 3, &[1.0, 0.5, 0.25, -1.0, -0.5, -0.25]);
        let grids = impulse_response_grids(
            &["e_a".into(), "e_b".into()],
            &[Some("productivity".into())],
            &["y".into(), "c".into(), "extra".into()],
            &[Some("output, percent".into())],
            &[r],
            "one-sd",
        );
        assert_eq!(grids.len(), 1);
        assert_eq!(
            grids[0].title,
            "Responses to a one-standard-deviation impulse in e_a (productivity)"
        );
        assert_eq!(grids[0].panels.len(), 2);
        assert_eq!(grids[0].panels[1].subtitle, None);
    }
}
