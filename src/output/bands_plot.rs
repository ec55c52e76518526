//! Posterior bands as pictures: one panel per series (an impulse response of one variable to
//! one innovation, a smoothed variable, a forecast), over its periods, with the band between
//! the lowest and the highest quantile shaded, the middle quantile as a blue line and the value at
//! the calibration as a black line, drawn by [`super::data_plot_frame`].

use super::data_plot_frame::{Frame, FrameGrid};
use super::svg::SERIES_COLOURS;

/// Most panels in one band chart (the rest are left out and named in a note).
pub const MAX_BAND_PANELS: usize = 36;

/// One panel: title, subtitle, and per period the calibration value and the bands (one vector
/// per quantile, lowest first).
#[derive(Debug, Clone, PartialEq)]
pub struct BandPanel {
    pub title: String,
    pub subtitle: Option<String>,
    pub point: Vec<f64>,
    pub quantiles: Vec<Vec<f64>>,
}

/// The SVG document: `title`, the panels over `period_labels`, a legend naming the shaded band
/// (`low`..`high` quantile names) and the middle line, and `notes` under the chart.
pub fn band_chart(
    title: &str,
    period_labels: &[String],
    panels: &[BandPanel],
    quantile_names: &[String],
    notes: &[String],
) -> String {
    let blue = SERIES_COLOURS[0];
    let shade = "#C6DBEF";
    let n = period_labels.len();
    let mut frames = Vec::new();
    for p in panels.iter().take(MAX_BAND_PANELS) {
        let (lo_q, hi_q) = match (p.quantiles.first(), p.quantiles.last()) {
            (Some(a), Some(b)) => (a.clone(), b.clone()),
            _ => (Vec::new(), Vec::new()),
        };
        let band: Vec<(f64, f64)> = lo_q.iter().zip(&hi_q).map(|(&a, &b)| (a, b)).collect();
        let mut lo = 0.0f64;
        let mut hi = 0.0f64;
        for &v in p
            .point
            .iter()
            .chain(p.quantiles.iter().flatten())
            .filter(|v| v.is_finite())
        {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        let mut lines = Vec::new();
        if p.quantiles.len() >= 3 {
            lines.push((
                p.quantiles[p.quantiles.len() / 2].clone(),
                blue.to_string(),
                0,
            ));
        }
        lines.push((p.point.clone(), "#000000".to_string(), 0));
        frames.push(Frame {
            title: p.title.clone(),
            subtitle: p.subtitle.clone(),
            lo,
            hi,
            n_periods: n,
            first_x: 0,
            bars: Vec::new(),
            bands: vec![(band, shade.to_string(), 0)],
            lines,
            dots: Vec::new(),
            divider: None,
        });
    }
    let low = quantile_names.first().cloned().unwrap_or_default();
    let high = quantile_names.last().cloned().unwrap_or_default();
    let mut legend = vec![(format!("{low} to {high} band"), shade.to_string(), true)];
    if quantile_names.len() >= 3 {
        legend.push((
            format!("{} (median)", quantile_names[quantile_names.len() / 2]),
            blue.to_string(),
            false,
        ));
    }
    legend.push((
        "at the calibration".to_string(),
        "#000000".to_string(),
        false,
    ));
    let mut notes = notes.to_vec();
    if panels.len() > MAX_BAND_PANELS {
        let rest: Vec<&str> = panels[MAX_BAND_PANELS..]
            .iter()
            .map(|p| p.title.as_str())
            .collect();
        notes.push(format!(
            "{} more panels not drawn: {}.",
            rest.len(),
            rest.join(", ")
        ));
    }
    FrameGrid {
        title: title.to_string(),
        legend,
        frames,
        period_labels: period_labels.to_vec(),
        notes,
    }
    .render()
}
