//! The loss map: the expected loss of a policy objective at each point of a one- or two-parameter
//! grid (`sweep --measure loss --plot`), one shaded cell per point,
//!
//! ```text
//!   shade(point) = ramp((f(L) - f(L_min)) / (f(L_max) - f(L_min))),   f = log10 when L_max / L_min > LOG_RATIO, else identity,
//! ```
//!
//! over the points with a unique stable solution; the others are drawn in the determinacy map's
//! colour and hatching of their status, so the map reads like the determinacy map with the
//! determinate region shaded. The point of least loss is ringed. Cells are laid out by grid index
//! (the sweep's grids are evenly spaced, so this is also by value) and labelled by value.

use super::text::{ellipsize, escape, text_width};
use super::ticks::{format_ticks, inside_ticks};
use super::{num, open_document, text_element, AXIS, INK, MUTED};
use crate::analysis::sweep::SweepResult;

/// Above this ratio of the largest to the least loss the shading is logarithmic (a loss that
/// grows without bound near the edge of determinacy would otherwise leave the rest one colour).
pub const LOG_RATIO: f64 = 20.0;

/// Most cells drawn along one axis (finer grids are drawn at every k-th point).
pub const MAX_CELLS: usize = 600;

/// The ramp, dark (low loss) to light (high loss): stops of the viridis colour map (van der Walt
/// and Smith 2015, matplotlib), values from memory; perceptually even and readable in greyscale.
const RAMP: [(u8, u8, u8); 9] = [
    (0x44, 0x01, 0x54),
    (0x47, 0x2d, 0x7b),
    (0x3b, 0x52, 0x8b),
    (0x2c, 0x72, 0x8e),
    (0x21, 0x91, 0x8c),
    (0x28, 0xae, 0x80),
    (0x5e, 0xc9, 0x62),
    (0xad, 0xdc, 0x30),
    (0xfd, 0xe7, 0x25),
];

fn ramp(t: f64) -> String {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let x = t * (RAMP.len() - 1) as f64;
    let i = (x.floor() as usize).min(RAMP.len() - 2);
    let f = x - i as f64;
    let mix = |a: u8, b: u8| (a as f64 + (b as f64 - a as f64) * f).round() as u8;
    let (a, b) = (RAMP[i], RAMP[i + 1]);
    format!(
        "#{:02x}{:02x}{:02x}",
        mix(a.0, b.0),
        mix(a.1, b.1),
        mix(a.2, b.2)
    )
}

/// Fill of a point without a loss, by status (the determinacy map's colours).
fn status_fill(status: &str) -> &'static str {
    super::status_colour(status)
}

const WIDTH: f64 = 760.0;
const MARGIN: f64 = 16.0;
const TITLE_SIZE: f64 = 16.0;
const TICK_SIZE: f64 = 10.5;
const LABEL_SIZE: f64 = 12.0;
const NOTE_SIZE: f64 = 10.5;
const STRIP_HEIGHT: f64 = 40.0;
const BAR_HEIGHT: f64 = 12.0;

/// Indices drawn along an axis of `n` points.
fn drawn(n: usize) -> Vec<usize> {
    let stride = n.div_ceil(MAX_CELLS).max(1);
    (0..n).step_by(stride).collect()
}

/// Tick values and labels for an axis whose values run from `a` (left/bottom) to `b`.
fn ticks(a: f64, b: f64, target: usize) -> (Vec<f64>, Vec<String>) {
    if !(a.is_finite() && b.is_finite()) || a == b {
        return (vec![a], vec![format!("{a}")]);
    }
    let (lo, hi) = (a.min(b), a.max(b));
    let t = inside_ticks(lo, hi, target);
    let (labels, _) = format_ticks(&t);
    (t.values.clone(), labels)
}

/// A whole SVG document: the expected loss of `result`'s points (`expected_loss`) over its grid,
/// with a colour bar, the least-loss point ringed and `source` named in the footer.
pub fn loss_map(title: &str, result: &SweepResult, source: &str) -> String {
    let nx = result.axes.first().map_or(0, |a| a.len());
    let two = result.axes.len() >= 2;
    let ny = if two { result.axes[1].len() } else { 1 };
    let point = |ix: usize, iy: usize| result.points.get(ix * ny + iy);
    let losses: Vec<f64> = result
        .points
        .iter()
        .filter_map(|p| p.expected_loss)
        .filter(|v| v.is_finite() && *v >= 0.0)
        .collect();
    let lmin = losses.iter().copied().fold(f64::INFINITY, f64::min);
    let lmax = losses.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let log = lmin > 0.0 && lmax / lmin > LOG_RATIO;
    let f = |v: f64| if log { v.log10() } else { v };
    let shade = |v: f64| {
        let span = f(lmax) - f(lmin);
        if span > 0.0 {
            ramp((f(v) - f(lmin)) / span)
        } else {
            ramp(0.5)
        }
    };
    let best = result
        .points
        .iter()
        .enumerate()
        .filter_map(|(k, p)| p.expected_loss.filter(|v| v.is_finite()).map(|v| (k, v)))
        .min_by(|a, b| a.1.partial_cmp(&b.1).unwrap_or(std::cmp::Ordering::Equal));

    let mut body = String::new();
    let mut y = MARGIN + TITLE_SIZE;
    text_element(
        &mut body,
        MARGIN,
        y,
        &format!(
            "font-size=\"{TITLE_SIZE}\" font-weight=\"700\" fill=\"{INK}\" class=\"chart-title\""
        ),
        &ellipsize(title, TITLE_SIZE, true, WIDTH - 2.0 * MARGIN),
    );
    y += 14.0;

    // Colour bar.
    let bar_w = 260.0;
    let bar_x = MARGIN;
    let label = if log {
        "expected loss (log scale)"
    } else {
        "expected loss"
    };
    text_element(
        &mut body,
        bar_x,
        y + 10.0,
        &format!("font-size=\"{LABEL_SIZE}\" fill=\"{INK}\""),
        label,
    );
    let bar_y = y + 16.0;
    if losses.is_empty() {
        text_element(
            &mut body,
            bar_x,
            bar_y + 10.0,
            &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\""),
            "no point has an expected loss (no unique stable solution anywhere)",
        );
    } else {
        let steps = 40;
        for s in 0..steps {
            body.push_str(&format!(
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{BAR_HEIGHT}\" fill=\"{}\"/>\n",
                num(bar_x + bar_w * s as f64 / steps as f64),
                num(bar_y),
                num(bar_w / steps as f64 + 0.5),
                ramp((s as f64 + 0.5) / steps as f64)
            ));
        }
        for (v, text) in [(lmin, "least"), (lmax, "largest")] {
            let frac = if f(lmax) > f(lmin) {
                (f(v) - f(lmin)) / (f(lmax) - f(lmin))
            } else {
                0.5
            };
            let anchor = if frac < 0.5 { "start" } else { "end" };
            text_element(
                &mut body,
                bar_x + bar_w * frac,
                bar_y + BAR_HEIGHT + 12.0,
                &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"{anchor}\""),
                &format!("{text} {}", crate::output::policy::fmt_num(v)),
            );
        }
    }
    // Swatches for points without a loss.
    let mut sx = bar_x + bar_w + 24.0;
    let mut statuses: Vec<&str> = Vec::new();
    for p in &result.points {
        if p.expected_loss.is_none() && !statuses.contains(&p.status.as_str()) {
            statuses.push(p.status.as_str());
        }
    }
    for s in &statuses {
        let text = format!("{} (no loss)", s.replace('_', " "));
        body.push_str(&format!(
            "<rect x=\"{}\" y=\"{}\" width=\"12\" height=\"12\" fill=\"{}\" stroke=\"{AXIS}\" stroke-width=\"0.5\" data-status=\"{}\"/>\n",
            num(sx),
            num(bar_y),
            status_fill(s),
            escape(s)
        ));
        text_element(
            &mut body,
            sx + 17.0,
            bar_y + 10.0,
            &format!("font-size=\"{TICK_SIZE}\" fill=\"{INK}\""),
            &text,
        );
        sx += 17.0 + text_width(&text, TICK_SIZE, false) + 16.0;
    }
    y = bar_y + BAR_HEIGHT + 24.0;

    // Plot geometry.
    let y_vals = if two { result.axes[1].clone() } else { vec![] };
    let (ytv, ytl) = if two {
        ticks(y_vals[0], y_vals[ny - 1], 6)
    } else {
        (vec![], vec![])
    };
    let ylw = ytl
        .iter()
        .map(|l| text_width(l, TICK_SIZE, false))
        .fold(0.0f64, f64::max);
    let left = MARGIN + if two { LABEL_SIZE + 18.0 + ylw } else { 0.0 };
    let plot_w = WIDTH - left - MARGIN;
    let plot_h = if two {
        (plot_w * 0.62).clamp(120.0, 460.0)
    } else {
        STRIP_HEIGHT
    };
    let (x0, y0) = (left, y);
    let (y1, x1) = (y0 + plot_h, x0 + plot_w);
    let dx = drawn(nx);
    let dy = drawn(ny);
    let cw = plot_w / dx.len().max(1) as f64;
    let ch = plot_h / dy.len().max(1) as f64;
    body.push_str("<g class=\"cells\" shape-rendering=\"crispEdges\">\n");
    for (cx, &ix) in dx.iter().enumerate() {
        for (cy, &iy) in dy.iter().enumerate() {
            let Some(p) = point(ix, iy) else { continue };
            let fill = match p.expected_loss.filter(|v| v.is_finite()) {
                Some(v) => shade(v),
                None => status_fill(p.status.as_str()).to_string(),
            };
            body.push_str(&format!(
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{fill}\" data-status=\"{}\"/>\n",
                num(x0 + cx as f64 * cw),
                num(y1 - (cy + 1) as f64 * ch),
                num(cw + 0.3),
                num(ch + 0.3),
                escape(p.status.as_str())
            ));
        }
    }
    body.push_str("</g>\n");
    body.push_str(&format!(
        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
        num(x0),
        num(y0),
        num(plot_w),
        num(plot_h)
    ));
    // Position of value v on an axis with values vals drawn over [p0, p0 + len].
    let at = |vals: &[f64], v: f64, p0: f64, len: f64| {
        let n = vals.len();
        if n < 2 || vals[n - 1] == vals[0] {
            return p0 + 0.5 * len;
        }
        let t = (v - vals[0]) / (vals[n - 1] - vals[0]);
        // cell centres run from half a cell in to half a cell from the end
        let c = len / n as f64;
        p0 + 0.5 * c + t * (len - c)
    };
    let x_vals = result.axes.first().cloned().unwrap_or_default();
    if let Some((k, v)) = best {
        let ix = k / ny;
        let iy = k % ny;
        let px = at(&x_vals, x_vals.get(ix).copied().unwrap_or(0.0), x0, plot_w);
        let py = if two {
            y1 - at(&y_vals, y_vals.get(iy).copied().unwrap_or(0.0), 0.0, plot_h)
        } else {
            y0 + 0.5 * plot_h
        };
        body.push_str(&format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"6\" fill=\"none\" stroke=\"#ffffff\" stroke-width=\"3\"/>\n<circle cx=\"{}\" cy=\"{}\" r=\"6\" fill=\"none\" stroke=\"#000000\" stroke-width=\"1.5\" class=\"least-loss\"/>\n",
            num(px), num(py), num(px), num(py)
        ));
        let mut at_text = format!(
            "ringed: least expected loss {} at {} = {}",
            crate::output::policy::fmt_num(v),
            result.parameters.first().map_or("", |s| s.as_str()),
            crate::output::policy::fmt_num(x_vals.get(ix).copied().unwrap_or(f64::NAN))
        );
        if two {
            at_text.push_str(&format!(
                ", {} = {}",
                result.parameters[1],
                crate::output::policy::fmt_num(y_vals.get(iy).copied().unwrap_or(f64::NAN))
            ));
        }
        text_element(
            &mut body,
            MARGIN,
            y1 + 50.0,
            &format!("font-size=\"{NOTE_SIZE}\" fill=\"{INK}\" class=\"note\""),
            &at_text,
        );
    }
    // Axes.
    if nx > 0 {
        let (xtv, xtl) = ticks(x_vals[0], x_vals[nx - 1], 8);
        for (v, l) in xtv.iter().zip(&xtl) {
            let px = at(&x_vals, *v, x0, plot_w);
            if px < x0 - 0.5 || px > x1 + 0.5 {
                continue;
            }
            body.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
                num(px),
                num(y1),
                num(px),
                num(y1 + 4.0)
            ));
            text_element(
                &mut body,
                px,
                y1 + 16.0,
                &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"middle\" class=\"x-tick\""),
                l,
            );
        }
    }
    text_element(
        &mut body,
        x0 + 0.5 * plot_w,
        y1 + 32.0,
        &format!(
            "font-size=\"{LABEL_SIZE}\" fill=\"{INK}\" text-anchor=\"middle\" class=\"x-label\""
        ),
        result.parameters.first().map_or("", |s| s.as_str()),
    );
    if two {
        for (v, l) in ytv.iter().zip(&ytl) {
            let py = y1 - at(&y_vals, *v, 0.0, plot_h);
            if py < y0 - 0.5 || py > y1 + 0.5 {
                continue;
            }
            body.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
                num(x0 - 4.0),
                num(py),
                num(x0),
                num(py)
            ));
            text_element(
                &mut body,
                x0 - 7.0,
                py + TICK_SIZE * 0.35,
                &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"end\" class=\"y-tick\""),
                l,
            );
        }
        body.push_str(&format!(
            "<text x=\"0\" y=\"0\" transform=\"translate({} {}) rotate(-90)\" text-anchor=\"middle\" font-size=\"{LABEL_SIZE}\" fill=\"{INK}\" class=\"y-label\">{}</text>\n",
            num(MARGIN + LABEL_SIZE),
            num(y0 + 0.5 * plot_h),
            escape(&result.parameters[1])
        ));
    }
    y = y1 + 50.0;
    let notes = [
        format!(
            "{} grid points; each cell is one solved model, shaded by the unconditional mean of the period loss where the model has a unique stable solution.",
            result.points.len()
        ),
        format!(
            "Model {source}; other parameters at their calibrated values. Results are conditional on the model, its calibration and its objective."
        ),
    ];
    for n in &notes {
        for line in super::layout::wrap(n, NOTE_SIZE, WIDTH - 2.0 * MARGIN) {
            y += NOTE_SIZE + 4.0;
            text_element(
                &mut body,
                MARGIN,
                y,
                &format!("font-size=\"{NOTE_SIZE}\" fill=\"{MUTED}\" class=\"note\""),
                &line,
            );
        }
    }
    let height = y + MARGIN;
    let desc = if losses.is_empty() {
        "no point has an expected loss".to_string()
    } else {
        format!(
            "expected loss from {} to {} over {} points",
            crate::output::policy::fmt_num(lmin),
            crate::output::policy::fmt_num(lmax),
            losses.len()
        )
    };
    let mut out = String::with_capacity(body.len() + 512);
    open_document(&mut out, WIDTH, height, title, &desc);
    out.push_str(&body);
    out.push_str("</svg>\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::sweep::{error_point, SweepPoint, SweepStatus};
    use crate::solution::Status;

    fn point(values: Vec<f64>, loss: Option<f64>) -> SweepPoint {
        SweepPoint {
            values,
            status: SweepStatus::Solved(if loss.is_some() {
                Status::Determinate
            } else {
                Status::Indeterminate
            }),
            unstable: Some(1),
            forward_looking: Some(1),
            largest_stable_modulus: None,
            message: None,
            expected_loss: loss,
        }
    }

    #[test]
    fn ramp_runs_from_dark_to_light_and_clamps() {
        assert_eq!(ramp(0.0), "#440154");
        assert_eq!(ramp(1.0), "#fde725");
        assert_eq!(ramp(-3.0), ramp(0.0));
        assert_eq!(ramp(f64::NAN), ramp(0.0));
    }

    #[test]
    fn the_map_rings_the_least_loss_and_colours_points_without_one_by_status() {
        let axes = vec![vec![1.0, 2.0, 3.0], vec![0.0, 0.5]];
        let mut points = Vec::new();
        for x in &axes[0] {
            for y in &axes[1] {
                let loss = (*x > 1.0).then(|| (x - 2.0) * (x - 2.0) + y + 0.1);
                points.push(point(vec![*x, *y], loss));
            }
        }
        points[5] = error_point(vec![3.0, 0.5], "no steady state");
        let r = SweepResult {
            parameters: vec!["a".into(), "b".into()],
            axes,
            points,
        };
        let svg = loss_map("t <&>", &r, "m.saddle");
        assert!(
            svg.contains("least expected loss 0.1 at a = 2, b = 0"),
            "{svg}"
        );
        assert!(svg.contains("data-status=\"indeterminate\""));
        assert!(svg.contains("data-status=\"error\""));
        assert!(svg.contains("t &lt;&amp;&gt;"));
        assert_eq!(svg.matches("class=\"least-loss\"").count(), 1);
        // Empty and one-point grids still make a document.
        let empty = SweepResult {
            parameters: vec!["a".into()],
            axes: vec![vec![]],
            points: vec![],
        };
        assert!(loss_map("", &empty, "m").ends_with("</svg>\n"));
    }
}
