//! The determinacy map: the solution status at each point of a one- or two-parameter grid, one
//! coloured cell per point, with a legend that counts the points of each status.
//!
//! Cell `i` of an axis with values `v_0 .. v_{n-1}` (strictly monotone) spans the midpoints
//! `[(v_{i-1} + v_i)/2, (v_i + v_{i+1})/2]`, the end cells extended by half their neighbour's gap,
//! so every grid value sits at its cell's centre and the cells tile the plot without gaps. The
//! first parameter runs along the horizontal axis, the second up the vertical one. Each status
//! has one fixed colour and hatching in every chart (the same status is always the same colour).

use super::layout::{legend_rows, wrap};
use super::text::{ellipsize, escape, text_width};
use super::ticks::{format_ticks, inside_ticks, Ticks};
use super::{id_prefix, num, open_document, text_element, StatusMap, AXIS, INK, MUTED};

/// The statuses in legend order (cli.md's spellings, plus `error` for a point that failed for
/// another reason).
pub const STATUS_ORDER: [&str; 5] = [
    "determinate",
    "indeterminate",
    "no_stable_solution",
    "rank_failure",
    "error",
];

/// Hatching laid over a status's fill, so statuses stay apart in greyscale print.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Hatch {
    None,
    Forward,
    Backward,
    Cross,
}

/// Fill colour and hatching of a status (Okabe and Ito 2008 palette): determinate bluish green,
/// indeterminate orange, no stable solution vermillion with forward hatching, rank failure
/// reddish purple with backward hatching, error grey with cross-hatching; statuses outside the
/// contract get sky blue, blue, yellow, black in order of appearance.
fn style(status: &str, extra_index: usize) -> (&'static str, Hatch) {
    match status {
        "determinate" => ("#009E73", Hatch::None),
        "indeterminate" => ("#E69F00", Hatch::None),
        "no_stable_solution" => ("#D55E00", Hatch::Forward),
        "rank_failure" => ("#CC79A7", Hatch::Backward),
        "error" => ("#9A9A9A", Hatch::Cross),
        _ => {
            const EXTRA: [&str; 4] = ["#56B4E9", "#0072B2", "#F0E442", "#000000"];
            (EXTRA[extra_index % EXTRA.len()], Hatch::None)
        }
    }
}

/// The fill colour of a status in every status chart (and in the HTML report's badges).
pub fn status_colour(status: &str) -> &'static str {
    style(status, 0).0
}

/// A status as a person reads it (`no_stable_solution` becomes `no stable solution`).
fn display(status: &str) -> String {
    status.replace('_', " ")
}

/// Layout choices for [`status_map_with`].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StatusMapOptions {
    /// Width of the document in pixels (default 760).
    pub width: Option<f64>,
    /// Lines printed under the chart, wrapped to its width.
    pub notes: Vec<String>,
}

/// Most cells drawn along one axis; a finer grid is drawn at every k-th point (and the chart says
/// so). Bounds the document's size; 600 is above the pixel width of the plot.
pub const MAX_CELLS_PER_AXIS: usize = 600;

const DEFAULT_WIDTH: f64 = 760.0;
const MARGIN: f64 = 16.0;
const TITLE_SIZE: f64 = 16.0;
const LEGEND_SIZE: f64 = 12.0;
const TICK_SIZE: f64 = 10.5;
const LABEL_SIZE: f64 = 12.0;
const NOTE_SIZE: f64 = 10.5;
const STRIP_HEIGHT: f64 = 40.0;

/// A whole SVG document with the default options.
pub fn status_map(map: &StatusMap) -> String {
    status_map_with(map, &StatusMapOptions::default())
}

/// One axis of the map after checking its values.
struct MapAxis {
    name: String,
    /// Indices of the grid points drawn (every k-th when the grid is finer than the cap).
    drawn: Vec<usize>,
    /// Cell edges in axis units, `drawn.len() + 1` of them, monotone.
    edges: Vec<f64>,
    /// Axis range (the outer edges, ascending).
    lo: f64,
    hi: f64,
    /// False when the values were not strictly monotone and finite: cells then stand in grid
    /// order and the axis is labelled by grid index.
    by_value: bool,
    stride: usize,
}

impl MapAxis {
    fn new(name: &str, values: &[f64]) -> MapAxis {
        let n = values.len();
        let stride = n.div_ceil(MAX_CELLS_PER_AXIS).max(1);
        let drawn: Vec<usize> = (0..n).step_by(stride).collect();
        let sampled: Vec<f64> = drawn.iter().map(|&i| values[i]).collect();
        let finite = sampled.iter().all(|v| v.is_finite() && v.abs() < 1e300);
        let ascending = sampled.windows(2).all(|w| w[1] > w[0]);
        let descending = sampled.windows(2).all(|w| w[1] < w[0]);
        let by_value = finite && !sampled.is_empty() && (ascending || descending);
        let positions: Vec<f64> = if by_value {
            sampled.clone()
        } else {
            drawn.iter().map(|&i| i as f64).collect()
        };
        let edges = edges_of(&positions);
        let (lo, hi) = match (edges.first(), edges.last()) {
            (Some(&a), Some(&b)) => (a.min(b), a.max(b)),
            _ => (0.0, 1.0),
        };
        let (lo, hi) = if hi > lo {
            (lo, hi)
        } else {
            (lo - 0.5, lo + 0.5)
        };
        MapAxis {
            name: name.to_string(),
            drawn,
            edges,
            lo,
            hi,
            by_value,
            stride,
        }
    }

    /// Pixel position of axis value `v` on `[p0, p1]`.
    fn at(&self, v: f64, p0: f64, p1: f64) -> f64 {
        p0 + (v - self.lo) / (self.hi - self.lo) * (p1 - p0)
    }

    /// The pixel extent (ascending) of drawn cells `a..=b` on `[p0, p1]`.
    fn span(&self, a: usize, b: usize, p0: f64, p1: f64) -> (f64, f64) {
        let e = [
            self.edges[a],
            self.edges[a + 1],
            self.edges[b],
            self.edges[b + 1],
        ];
        let min = e.iter().copied().fold(f64::INFINITY, f64::min);
        let max = e.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let (x, y) = (self.at(min, p0, p1), self.at(max, p0, p1));
        (x.min(y), x.max(y))
    }

    fn label(&self) -> String {
        if self.by_value {
            self.name.clone()
        } else {
            format!("{} (grid index)", self.name)
        }
    }
}

/// Edges of cells centred on `positions` (monotone): midpoints, ends extended by half a gap; a
/// single position gets a cell of width 1 (or 10 % of its magnitude) around it.
fn edges_of(positions: &[f64]) -> Vec<f64> {
    match positions.len() {
        0 => vec![0.0, 1.0],
        1 => {
            let v = positions[0];
            let h = if v == 0.0 { 0.5 } else { 0.1 * v.abs() };
            vec![v - h, v + h]
        }
        n => {
            let mut e = Vec::with_capacity(n + 1);
            e.push(positions[0] - 0.5 * (positions[1] - positions[0]));
            for w in positions.windows(2) {
                e.push(0.5 * (w[0] + w[1]));
            }
            e.push(positions[n - 1] + 0.5 * (positions[n - 1] - positions[n - 2]));
            e
        }
    }
}

/// Ticks inside the axis range whose labels, `min_gap` pixels apart at least, fit `length`
/// pixels (`horizontal`: label widths count; vertical: label heights).
fn axis_ticks(
    axis: &MapAxis,
    length: f64,
    horizontal: bool,
) -> (Ticks, Vec<String>, Option<String>) {
    let mut target = if horizontal {
        8
    } else {
        ((length / 60.0) as usize).clamp(2, 8)
    };
    loop {
        let t = inside_ticks(axis.lo, axis.hi, target);
        let (labels, note) = format_ticks(&t);
        let spacing = length * t.step / (axis.hi - axis.lo);
        let need = if horizontal {
            labels
                .iter()
                .map(|l| text_width(l, TICK_SIZE, false))
                .fold(0.0f64, f64::max)
                + 14.0
        } else {
            2.0 * TICK_SIZE
        };
        if spacing >= need || target <= 2 {
            return (t, labels, note);
        }
        target -= 1;
    }
}

/// A whole SVG document: the statuses of `map` as a strip (one parameter) or a map (two), with a
/// legend counting the points of each status and `options.notes` underneath.
pub fn status_map_with(map: &StatusMap, options: &StatusMapOptions) -> String {
    let width = match options.width {
        Some(w) if w.is_finite() => w.clamp(360.0, 4000.0),
        _ => DEFAULT_WIDTH,
    };
    let prefix = id_prefix(&format!(
        "{}|{}|{}|{}",
        map.title,
        map.x_name,
        map.x_values.len(),
        map.status.len()
    ));
    let x_axis = MapAxis::new(&map.x_name, &map.x_values);
    let y_axis = map.y.as_ref().map(|(n, v)| MapAxis::new(n, v));
    let nx = map.x_values.len();
    let ny = map.y.as_ref().map_or(1, |(_, v)| v.len());
    let expected = nx.saturating_mul(ny);
    let status_at =
        |ix: usize, iy: usize| -> Option<&str> { map.status.get(ix * ny + iy).map(|s| s.as_str()) };

    // Statuses present (in legend order, unknown ones after) with their counts over the full grid.
    let mut present: Vec<(String, usize)> = Vec::new();
    for s in map.status.iter().take(expected) {
        match present.iter_mut().find(|(p, _)| p == s) {
            Some(entry) => entry.1 += 1,
            None => present.push((s.clone(), 1)),
        }
    }
    present.sort_by_key(|(s, _)| {
        STATUS_ORDER
            .iter()
            .position(|o| o == s)
            .unwrap_or(STATUS_ORDER.len())
    });
    let mut extra_index = std::collections::HashMap::new();
    for (s, _) in &present {
        if !STATUS_ORDER.contains(&s.as_str()) {
            let next = extra_index.len();
            extra_index.entry(s.clone()).or_insert(next);
        }
    }
    let style_of = |s: &str| style(s, extra_index.get(s).copied().unwrap_or(0));
    let class_of = |s: &str| -> String {
        let i = present.iter().position(|(p, _)| p == s).unwrap_or(0);
        format!("{prefix}-c{i}")
    };

    let mut body = String::new();
    let mut defs = String::new();
    for (s, _) in &present {
        let (colour, hatch) = style_of(s);
        let id = class_of(s);
        defs.push_str(&pattern(&id, colour, hatch));
    }

    let mut y = MARGIN;
    if !map.title.is_empty() {
        y += TITLE_SIZE;
        let t = ellipsize(&map.title, TITLE_SIZE, true, width - 2.0 * MARGIN);
        text_element(
            &mut body,
            MARGIN,
            y,
            &format!("font-size=\"{TITLE_SIZE}\" font-weight=\"700\" fill=\"{INK}\" class=\"chart-title\""),
            &t,
        );
        y += 10.0;
    }

    // Legend.
    let total: usize = present.iter().map(|(_, c)| c).sum();
    let entries: Vec<String> = present
        .iter()
        .map(|(s, c)| format!("{} ({})", display(s), thousands(*c)))
        .collect();
    let widths: Vec<f64> = entries
        .iter()
        .map(|e| 20.0 + text_width(e, LEGEND_SIZE, false))
        .collect();
    let slots = legend_rows(&widths, width - 2.0 * MARGIN, 20.0);
    let rows = slots.last().map_or(0, |s| s.row + 1);
    body.push_str("<g class=\"legend\">\n");
    for (((s, _), entry), slot) in present.iter().zip(&entries).zip(&slots) {
        let lx = MARGIN + slot.x;
        let ly = y + 14.0 + slot.row as f64 * 20.0;
        body.push_str(&format!(
            "<g class=\"legend-entry\" data-status=\"{}\"><rect x=\"{}\" y=\"{}\" width=\"13\" height=\"13\" fill=\"url(#{})\" stroke=\"{AXIS}\" stroke-width=\"0.5\"/>\n",
            escape(s),
            num(lx),
            num(ly - 11.0),
            class_of(s)
        ));
        text_element(
            &mut body,
            lx + 19.0,
            ly,
            &format!("font-size=\"{LEGEND_SIZE}\" fill=\"{INK}\""),
            entry,
        );
        body.push_str("</g>\n");
    }
    body.push_str("</g>\n");
    y += rows as f64 * 20.0 + 14.0;

    // Plot geometry.
    let (y_ticks, y_labels, y_note) = match &y_axis {
        Some(a) => {
            let plot_h_guess = ((width - 2.0 * MARGIN) * 0.62).min(460.0);
            let (t, l, n) = axis_ticks(a, plot_h_guess, false);
            (Some(t), l, n)
        }
        None => (None, Vec::new(), None),
    };
    let y_label_w = y_labels
        .iter()
        .map(|l| text_width(l, TICK_SIZE, false))
        .fold(0.0f64, f64::max);
    let left = MARGIN
        + if y_axis.is_some() {
            LABEL_SIZE + 10.0 + y_label_w + 8.0
        } else {
            0.0
        };
    let plot_w = (width - left - MARGIN).max(40.0);
    let plot_h = if y_axis.is_some() {
        (plot_w * 0.62).clamp(120.0, 460.0)
    } else {
        STRIP_HEIGHT
    };
    let (x0, x1) = (left, left + plot_w);
    let (y0, y1) = (y, y + plot_h);

    // Cells: runs of equal status merged into one rectangle (down each column on a map, along the
    // strip otherwise).
    body.push_str("<g class=\"cells\" shape-rendering=\"crispEdges\">\n");
    let push_rect = |body: &mut String, s: Option<&str>, rx: (f64, f64), ry: (f64, f64)| {
        let (fill, status) = match s {
            Some(s) => (format!("url(#{})", class_of(s)), s.to_string()),
            None => ("#ffffff".to_string(), "missing".to_string()),
        };
        body.push_str(&format!(
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{fill}\" data-status=\"{}\"/>\n",
            num(rx.0),
            num(ry.0),
            num(rx.1 - rx.0),
            num(ry.1 - ry.0),
            escape(&status)
        ));
    };
    match &y_axis {
        Some(ya) => {
            for (cx, &ix) in x_axis.drawn.iter().enumerate() {
                let rx = x_axis.span(cx, cx, x0, x1);
                let mut start = 0;
                while start < ya.drawn.len() {
                    let s = status_at(ix, ya.drawn[start]);
                    let mut end = start;
                    while end + 1 < ya.drawn.len() && status_at(ix, ya.drawn[end + 1]) == s {
                        end += 1;
                    }
                    // Values increase upwards: flip the pixel span.
                    let (a, b) = ya.span(start, end, 0.0, plot_h);
                    push_rect(&mut body, s, rx, (y1 - b, y1 - a));
                    start = end + 1;
                }
            }
        }
        None => {
            let mut start = 0;
            while start < x_axis.drawn.len() {
                let s = status_at(x_axis.drawn[start], 0);
                let mut end = start;
                while end + 1 < x_axis.drawn.len() && status_at(x_axis.drawn[end + 1], 0) == s {
                    end += 1;
                }
                let rx = x_axis.span(start, end, x0, x1);
                push_rect(&mut body, s, rx, (y0, y1));
                start = end + 1;
            }
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

    // Axes.
    let (x_ticks, x_labels, x_note) = axis_ticks(&x_axis, plot_w, true);
    for (v, l) in x_ticks.values.iter().zip(&x_labels) {
        let px = x_axis.at(*v, x0, x1);
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
    let mut x_title = x_axis.label();
    if let Some(n) = &x_note {
        x_title = format!("{x_title} ({n})");
    }
    let x_title_y = y1 + 16.0 + LABEL_SIZE + 8.0;
    text_element(
        &mut body,
        x0 + 0.5 * plot_w,
        x_title_y,
        &format!(
            "font-size=\"{LABEL_SIZE}\" fill=\"{INK}\" text-anchor=\"middle\" class=\"x-label\""
        ),
        &ellipsize(&x_title, LABEL_SIZE, false, plot_w),
    );
    if let (Some(ya), Some(t)) = (&y_axis, &y_ticks) {
        for (v, l) in t.values.iter().zip(&y_labels) {
            let py = y1 - ya.at(*v, 0.0, plot_h);
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
        let mut y_title = ya.label();
        if let Some(n) = &y_note {
            y_title = format!("{y_title} ({n})");
        }
        body.push_str(&format!(
            "<text x=\"0\" y=\"0\" transform=\"translate({} {}) rotate(-90)\" text-anchor=\"middle\" font-size=\"{LABEL_SIZE}\" fill=\"{INK}\" class=\"y-label\">{}</text>\n",
            num(MARGIN + LABEL_SIZE),
            num(y0 + 0.5 * plot_h),
            escape(&ellipsize(&y_title, LABEL_SIZE, false, plot_h))
        ));
    }
    y = x_title_y;

    // Notes: the grid size, any resampling or mismatch, then the caller's.
    let mut notes = Vec::new();
    let grid_text = if y_axis.is_some() {
        format!(
            "{} × {} = {} grid points ({} values of {} across, {} of {} up); each cell is one solved model.",
            thousands(nx),
            thousands(ny),
            thousands(expected),
            thousands(nx),
            map.x_name,
            thousands(ny),
            map.y.as_ref().map_or("", |(n, _)| n.as_str())
        )
    } else {
        format!(
            "{} grid points of {}; each cell is one solved model.",
            thousands(nx),
            map.x_name
        )
    };
    notes.push(grid_text);
    let stride_y = y_axis.as_ref().map_or(1, |a| a.stride);
    if x_axis.stride > 1 || stride_y > 1 {
        notes.push(format!(
            "The grid is finer than the chart: drawn at every {} point across{}.",
            ordinal(x_axis.stride),
            if y_axis.is_some() {
                format!(" and every {} point up", ordinal(stride_y))
            } else {
                String::new()
            }
        ));
    }
    if map.status.len() != expected {
        notes.push(format!(
            "The status list has {} entries for a grid of {} points; missing points are left white.",
            thousands(map.status.len()),
            thousands(expected)
        ));
    }
    if total == 0 && expected > 0 {
        notes.push("No point has a status.".to_string());
    }
    notes.extend(options.notes.iter().cloned());
    y += 10.0;
    for n in &notes {
        for line in wrap(n, NOTE_SIZE, width - 2.0 * MARGIN) {
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

    let desc = present
        .iter()
        .map(|(s, c)| format!("{}: {} points", display(s), c))
        .collect::<Vec<_>>()
        .join("; ");
    let mut out = String::with_capacity(body.len() + defs.len() + 512);
    open_document(&mut out, width, height, &map.title, &desc);
    out.push_str("<defs>\n");
    out.push_str(&defs);
    out.push_str("</defs>\n");
    out.push_str(&body);
    out.push_str("</svg>\n");
    out
}

/// A fill pattern: the colour, with white hatching lines when the status has them. Patterns sit
/// in page coordinates, so hatching runs on across neighbouring cells.
fn pattern(id: &str, colour: &str, hatch: Hatch) -> String {
    let lines = match hatch {
        Hatch::None => "",
        Hatch::Forward => "<path d=\"M-2,2 l4,-4 M0,8 l8,-8 M6,10 l4,-4\" stroke=\"#ffffff\" stroke-opacity=\"0.55\" stroke-width=\"1.4\"/>",
        Hatch::Backward => "<path d=\"M-2,6 l4,4 M0,0 l8,8 M6,-2 l4,4\" stroke=\"#ffffff\" stroke-opacity=\"0.55\" stroke-width=\"1.4\"/>",
        Hatch::Cross => "<path d=\"M-2,2 l4,-4 M0,8 l8,-8 M6,10 l4,-4 M-2,6 l4,4 M0,0 l8,8 M6,-2 l4,4\" stroke=\"#ffffff\" stroke-opacity=\"0.5\" stroke-width=\"1\"/>",
    };
    format!(
        "<pattern id=\"{id}\" patternUnits=\"userSpaceOnUse\" width=\"8\" height=\"8\"><rect width=\"8\" height=\"8\" fill=\"{colour}\"/>{lines}</pattern>\n"
    )
}

/// An integer with thin-space-free comma grouping (`12,345`).
fn thousands(n: usize) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

fn ordinal(n: usize) -> String {
    let suffix = match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edges_centre_cells_on_values() {
        assert_eq!(edges_of(&[0.0, 1.0, 2.0]), vec![-0.5, 0.5, 1.5, 2.5]);
        assert_eq!(edges_of(&[2.0, 1.0]), vec![2.5, 1.5, 0.5]);
        assert_eq!(edges_of(&[0.0]), vec![-0.5, 0.5]);
    }

    #[test]
    fn counts_and_ordinals_read_well() {
        assert_eq!(thousands(1234567), "1,234,567");
        assert_eq!(thousands(12), "12");
        assert_eq!(ordinal(2), "2nd");
        assert_eq!(ordinal(11), "11th");
        assert_eq!(ordinal(23), "23rd");
    }
}
