//! A grid of small panels, one per variable, sharing the period axis (impulse responses, simulated
//! paths).
//!
//! Each panel has its own vertical scale (variables have different units), loose nice ticks with
//! light grid lines, a zero line, and the period axis at the bottom. Series keep one colour per
//! name across the whole document; a legend appears when a grid has more than one series name.
//! Long series are thinned to at most four points per pixel column (first, lowest, highest,
//! last of each column), which draws the same picture as the full series.

use std::collections::HashMap;

use super::layout::{default_width, grid_columns, legend_rows, wrap, MIN_PANEL_WIDTH};
use super::text::{ellipsize, escape, text_width};
use super::ticks::{format_ticks, integer_ticks, loose_ticks, signed, Ticks};
use super::{
    num, open_document, text_element, Panel, PanelGrid, AXIS, GRID, INK, MUTED, SERIES_COLOURS,
};

/// How a panel's vertical range is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum YRange {
    /// The range always contains zero (deviations from steady state: the zero line is the
    /// steady state and must be visible).
    IncludeZero,
    /// The range is the data's own (levels).
    Data,
}

/// Layout choices for [`panel_grid_with`]; the defaults suit impulse responses.
#[derive(Debug, Clone, PartialEq)]
pub struct GridOptions {
    /// Width of the document in pixels (default: by the number of columns, 640 to 960).
    pub width: Option<f64>,
    /// Columns of panels (default: a near-square arrangement).
    pub columns: Option<usize>,
    pub y_range: YRange,
    /// The period number of the first value (the x axis runs from it).
    pub first_period: i64,
    /// Lines printed under the chart (sources, caveats), wrapped to its width.
    pub notes: Vec<String>,
}

impl Default for GridOptions {
    fn default() -> Self {
        GridOptions {
            width: None,
            columns: None,
            y_range: YRange::IncludeZero,
            first_period: 0,
            notes: Vec::new(),
        }
    }
}

/// Most panels drawn in one grid; the rest are named in a note (a chart of more small panels is
/// unreadable, and the cap bounds the document's size).
pub const MAX_PANELS: usize = 64;

/// Values beyond this magnitude are not drawn (they keep `hi - lo` finite in double precision;
/// such values only come from explosive paths, which the chart cannot show usefully anyway).
pub const MAX_PLOTTABLE: f64 = 1e300;

/// A panel whose largest magnitude is below this fraction of the grid's largest is drawn as
/// zero: double-precision solutions carry round-off near 1e-16 times the scale of the matrices,
/// and magnifying it into a shape would show a response that is not there. 1e-12 leaves four
/// orders of magnitude above round-off and keeps genuine responses of variables in very
/// different units (a level in millions beside a rate in hundredths is a ratio near 1e-8).
pub const NEGLIGIBLE_RELATIVE: f64 = 1e-12;

/// A series whose range is below this fraction of its magnitude is treated as constant (the
/// relative spread of round-off in a constant computed in double precision; far below any
/// visible variation).
pub const CONSTANT_RELATIVE: f64 = 1e-9;

const MIN_WIDTH: f64 = 320.0;
const MAX_WIDTH: f64 = 4000.0;
const MARGIN: f64 = 16.0;
const TITLE_SIZE: f64 = 16.0;
const LEGEND_SIZE: f64 = 12.0;
const PANEL_TITLE_SIZE: f64 = 13.0;
const SUBTITLE_SIZE: f64 = 11.0;
const TICK_SIZE: f64 = 10.5;
const LABEL_SIZE: f64 = 11.5;
const NOTE_SIZE: f64 = 10.5;
const GAP_X: f64 = 24.0;
const GAP_Y: f64 = 20.0;
const RIGHT_PAD: f64 = 6.0;
const X_TICKS_BLOCK: f64 = 18.0;
const Y_LABEL_BLOCK: f64 = 22.0;
const LINE_WIDTH: f64 = 1.8;
/// Least distance between period labels: about one label per inch keeps the axis calm.
const MIN_X_LABEL_SPACING: f64 = 48.0;

/// A whole SVG document: `grid` drawn with the default options (zero always in range, periods
/// from 0).
pub fn panel_grid(grid: &PanelGrid) -> String {
    panel_grid_with(grid, &GridOptions::default())
}

/// A whole SVG document: `grid` drawn with `options`.
pub fn panel_grid_with(grid: &PanelGrid, options: &GridOptions) -> String {
    panel_grids(std::slice::from_ref(grid), options)
}

/// A whole SVG document: several grids stacked top to bottom at one width (for instance the
/// responses to each shock), series colours shared across all of them, `options.notes` at the
/// bottom.
pub fn panel_grids(grids: &[PanelGrid], options: &GridOptions) -> String {
    let max_panels = grids
        .iter()
        .map(|g| g.panels.len().min(MAX_PANELS))
        .max()
        .unwrap_or(0);
    let width = match options.width {
        Some(w) if w.is_finite() => w.clamp(MIN_WIDTH, MAX_WIDTH),
        _ => {
            let c = options
                .columns
                .unwrap_or_else(|| grid_columns(max_panels, 4));
            default_width(c)
        }
    };
    let colours = colour_map(grids);

    let mut body = String::new();
    let mut y = MARGIN;
    for (i, grid) in grids.iter().enumerate() {
        if i > 0 {
            // A hairline between stacked grids.
            body.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{GRID}\" stroke-width=\"1\"/>\n",
                num(MARGIN),
                num(y + 6.0),
                num(width - MARGIN),
                num(y + 6.0)
            ));
            y += 22.0;
        }
        y = render_grid(grid, width, options, &colours, y, &mut body);
    }
    if grids.is_empty() {
        text_element(
            &mut body,
            MARGIN,
            y + 14.0,
            &format!("font-size=\"12\" fill=\"{MUTED}\""),
            "nothing to draw",
        );
        y += 20.0;
    }
    let mut notes: Vec<String> = Vec::new();
    for n in &options.notes {
        notes.extend(wrap(n, NOTE_SIZE, width - 2.0 * MARGIN));
    }
    if !notes.is_empty() {
        y += 8.0;
        for line in &notes {
            y += NOTE_SIZE + 4.0;
            text_element(
                &mut body,
                MARGIN,
                y,
                &format!("font-size=\"{NOTE_SIZE}\" fill=\"{MUTED}\" class=\"note\""),
                line,
            );
        }
    }
    let height = y + MARGIN;

    let title = grids
        .iter()
        .map(|g| g.title.as_str())
        .filter(|t| !t.is_empty())
        .collect::<Vec<_>>()
        .join("; ");
    let desc = grids
        .iter()
        .map(|g| {
            let names: Vec<&str> = g.panels.iter().map(|p| p.title.as_str()).collect();
            format!("{} panels: {}", g.panels.len(), names.join(", "))
        })
        .collect::<Vec<_>>()
        .join("; ");
    let mut out = String::with_capacity(body.len() + 512);
    open_document(&mut out, width, height, &title, &desc);
    out.push_str(&body);
    out.push_str("</svg>\n");
    out
}

/// Series name to palette index, in order of first appearance across `grids`.
fn colour_map(grids: &[PanelGrid]) -> HashMap<String, usize> {
    let mut map = HashMap::new();
    for g in grids {
        for p in g.panels.iter().take(MAX_PANELS) {
            for s in &p.series {
                let next = map.len();
                map.entry(s.name.clone()).or_insert(next);
            }
        }
    }
    map
}

fn colour_of(colours: &HashMap<String, usize>, name: &str) -> &'static str {
    let i = colours.get(name).copied().unwrap_or(0);
    SERIES_COLOURS[i % SERIES_COLOURS.len()]
}

/// What a panel's vertical axis shows.
#[derive(Debug, Clone)]
enum Scale {
    /// Ordinary data with ticks and their labels (`note`: a common power of ten).
    Data {
        ticks: Ticks,
        labels: Vec<String>,
        note: Option<String>,
    },
    /// Every value negligible: drawn as a flat line at zero on the range [-1, 1].
    Zero,
    /// No value can be drawn.
    Empty,
}

impl Scale {
    fn range(&self) -> (f64, f64) {
        match self {
            Scale::Data { ticks, .. } => (ticks.lo, ticks.hi),
            Scale::Zero | Scale::Empty => (-1.0, 1.0),
        }
    }
    fn labels(&self) -> Vec<(f64, String)> {
        match self {
            Scale::Data { ticks, labels, .. } => ticks
                .values
                .iter()
                .copied()
                .zip(labels.iter().cloned())
                .collect(),
            Scale::Zero => vec![(0.0, "0".to_string())],
            Scale::Empty => Vec::new(),
        }
    }
}

fn plottable(v: f64) -> bool {
    v.is_finite() && v.abs() <= MAX_PLOTTABLE
}

/// The largest magnitude among the drawable values of `panel` (0 if none), and whether it has any.
fn panel_extent(panel: &Panel) -> (f64, f64, f64, bool) {
    let (mut lo, mut hi, mut max_abs, mut any) = (f64::INFINITY, f64::NEG_INFINITY, 0.0f64, false);
    for s in &panel.series {
        for &v in s.values.iter().filter(|v| plottable(**v)) {
            lo = lo.min(v);
            hi = hi.max(v);
            max_abs = max_abs.max(v.abs());
            any = true;
        }
    }
    (lo, hi, max_abs, any)
}

/// The vertical scale of one panel, with ticks spaced at least two and a bit label heights apart
/// in a plot `plot_height` pixels tall.
fn panel_scale(panel: &Panel, global_max: f64, y_range: YRange, plot_height: f64) -> Scale {
    let (mut lo, mut hi, max_abs, any) = panel_extent(panel);
    if !any {
        return Scale::Empty;
    }
    if max_abs == 0.0 || max_abs < NEGLIGIBLE_RELATIVE * global_max {
        return Scale::Zero;
    }
    if y_range == YRange::IncludeZero {
        lo = lo.min(0.0);
        hi = hi.max(0.0);
    }
    if hi - lo <= CONSTANT_RELATIVE * lo.abs().max(hi.abs()) {
        let pad = 0.1 * lo.abs().max(hi.abs());
        let mid = 0.5 * (lo + hi);
        lo = mid - pad;
        hi = mid + pad;
    }
    let mut target = ((plot_height / 40.0).round() as usize).clamp(3, 6);
    loop {
        let ticks = loose_ticks(lo, hi, target);
        let spacing = plot_height * ticks.step / (ticks.hi - ticks.lo);
        if spacing >= 2.2 * TICK_SIZE || target <= 2 {
            let (labels, note) = format_ticks(&ticks);
            return Scale::Data {
                ticks,
                labels,
                note,
            };
        }
        target -= 1;
    }
}

/// Draws one grid starting at height `top`; returns the height below it.
fn render_grid(
    grid: &PanelGrid,
    width: f64,
    options: &GridOptions,
    colours: &HashMap<String, usize>,
    top: f64,
    out: &mut String,
) -> f64 {
    let shown: &[Panel] = &grid.panels[..grid.panels.len().min(MAX_PANELS)];
    let mut y = top;
    out.push_str("<g class=\"grid\">\n");

    // Title.
    if !grid.title.is_empty() {
        y += TITLE_SIZE;
        let t = ellipsize(&grid.title, TITLE_SIZE, true, width - 2.0 * MARGIN);
        titled_text(
            out,
            MARGIN,
            y,
            &format!("font-size=\"{TITLE_SIZE}\" font-weight=\"700\" fill=\"{INK}\" class=\"chart-title\""),
            &t,
            &grid.title,
        );
        y += 10.0;
    }

    // Legend: one entry per series name when there is more than one.
    let mut names: Vec<&str> = Vec::new();
    for p in shown {
        for s in &p.series {
            if !names.contains(&s.name.as_str()) {
                names.push(&s.name);
            }
        }
    }
    if names.len() > 1 {
        let max_entry = (width - 2.0 * MARGIN) * 0.5;
        let labels: Vec<String> = names
            .iter()
            .map(|n| ellipsize(n, LEGEND_SIZE, false, max_entry - 24.0))
            .collect();
        let widths: Vec<f64> = labels
            .iter()
            .map(|l| 24.0 + text_width(l, LEGEND_SIZE, false))
            .collect();
        let slots = legend_rows(&widths, width - 2.0 * MARGIN, 18.0);
        let rows = slots.last().map_or(0, |s| s.row + 1);
        out.push_str("<g class=\"legend\">\n");
        for ((name, label), slot) in names.iter().zip(&labels).zip(&slots) {
            let ly = y + 12.0 + slot.row as f64 * 18.0;
            let lx = MARGIN + slot.x;
            out.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{}\" stroke-width=\"2.5\" stroke-linecap=\"round\"/>\n",
                num(lx + 1.0),
                num(ly - 4.0),
                num(lx + 17.0),
                num(ly - 4.0),
                colour_of(colours, name)
            ));
            titled_text(
                out,
                lx + 24.0,
                ly,
                &format!("font-size=\"{LEGEND_SIZE}\" fill=\"{INK}\""),
                label,
                name,
            );
        }
        out.push_str("</g>\n");
        y += rows as f64 * 18.0 + 6.0;
    }
    y += 8.0;

    if shown.is_empty() {
        y += 14.0;
        text_element(
            out,
            MARGIN,
            y,
            &format!("font-size=\"12\" fill=\"{MUTED}\""),
            "no panels to draw",
        );
        out.push_str("</g>\n");
        return y + 6.0;
    }

    // Grid geometry.
    let left = MARGIN
        + if grid.y_label.as_deref().is_some_and(|l| !l.is_empty()) {
            Y_LABEL_BLOCK
        } else {
            0.0
        };
    let grid_width = width - left - MARGIN;
    let max_columns = ((grid_width + GAP_X) / (MIN_PANEL_WIDTH + GAP_X)).floor() as usize;
    let columns = options
        .columns
        .unwrap_or_else(|| grid_columns(shown.len(), 4))
        .clamp(1, max_columns.max(1))
        .min(shown.len());
    let rows = shown.len().div_ceil(columns);
    let cell_w = (grid_width - (columns as f64 - 1.0) * GAP_X) / columns as f64;
    let plot_h = (cell_w * 0.55).clamp(100.0, 240.0);
    let has_subtitles = shown
        .iter()
        .any(|p| p.subtitle.as_deref().is_some_and(|s| !s.is_empty()));
    let title_block = if has_subtitles { 42.0 } else { 28.0 };
    let cell_h = title_block + plot_h + X_TICKS_BLOCK;

    let global_max = shown
        .iter()
        .map(|p| panel_extent(p).2)
        .fold(0.0f64, f64::max);
    let scales: Vec<Scale> = shown
        .iter()
        .map(|p| panel_scale(p, global_max, options.y_range, plot_h))
        .collect();
    let label_w = scales
        .iter()
        .flat_map(|s| s.labels())
        .map(|(_, l)| text_width(&l, TICK_SIZE, false))
        .fold(0.0f64, f64::max);
    let axis_w = (label_w + 8.0).max(22.0);
    let plot_w = (cell_w - axis_w - RIGHT_PAD).max(20.0);

    // Shared period axis.
    let n_periods = shown
        .iter()
        .flat_map(|p| p.series.iter().map(|s| s.values.len()))
        .max()
        .unwrap_or(0)
        .max(1);
    let first = options.first_period;
    let last = first.saturating_add(n_periods as i64 - 1);
    let x_span = (n_periods.max(2) - 1) as f64;
    let widest_x_label = text_width(&signed(&last.to_string()), TICK_SIZE, false).max(text_width(
        &signed(&first.to_string()),
        TICK_SIZE,
        false,
    ));
    let max_x_labels = (plot_w / (widest_x_label + 16.0).max(MIN_X_LABEL_SPACING)).floor() as usize;
    let x_ticks = integer_ticks(first, last, max_x_labels.max(2));

    let grid_top = y;
    for (i, (panel, scale)) in shown.iter().zip(&scales).enumerate() {
        let col = i % columns;
        let row = i / columns;
        let cx = left + col as f64 * (cell_w + GAP_X);
        let cy = grid_top + row as f64 * (cell_h + GAP_Y);
        let geometry = PanelGeometry {
            x0: cx + axis_w,
            x1: cx + axis_w + plot_w,
            y0: cy + title_block,
            y1: cy + title_block + plot_h,
        };
        out.push_str(&format!(
            "<g class=\"panel\" data-title=\"{}\">\n",
            escape(&panel.title)
        ));
        // Title, with a power-of-ten note at the right when the labels need one.
        let note = match scale {
            Scale::Data { note, .. } => note.clone(),
            _ => None,
        };
        let note_w = note
            .as_deref()
            .map_or(0.0, |n| text_width(n, TICK_SIZE, false) + 8.0);
        let t = ellipsize(
            &panel.title,
            PANEL_TITLE_SIZE,
            true,
            cell_w - note_w.max(0.0),
        );
        titled_text(
            out,
            cx,
            cy + PANEL_TITLE_SIZE,
            &format!(
                "font-size=\"{PANEL_TITLE_SIZE}\" font-weight=\"700\" fill=\"{INK}\" class=\"panel-title\""
            ),
            &t,
            &panel.title,
        );
        if let Some(n) = &note {
            text_element(
                out,
                cx + cell_w,
                cy + PANEL_TITLE_SIZE,
                &format!(
                    "font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"end\" class=\"scale-note\""
                ),
                n,
            );
        }
        if let Some(sub) = panel.subtitle.as_deref().filter(|s| !s.is_empty()) {
            let s = ellipsize(sub, SUBTITLE_SIZE, false, cell_w);
            titled_text(
                out,
                cx,
                cy + PANEL_TITLE_SIZE + 15.0,
                &format!("font-size=\"{SUBTITLE_SIZE}\" fill=\"{MUTED}\" class=\"panel-subtitle\""),
                &s,
                sub,
            );
        }
        draw_axes(out, &geometry, scale, &x_ticks, first, x_span);
        draw_series(out, panel, &geometry, scale, x_span, colours);
        out.push_str("</g>\n");
    }
    let grid_bottom = grid_top + rows as f64 * cell_h + (rows as f64 - 1.0) * GAP_Y;

    if let Some(label) = grid.y_label.as_deref().filter(|l| !l.is_empty()) {
        let mid = 0.5 * (grid_top + grid_bottom);
        let l = ellipsize(label, LABEL_SIZE, false, grid_bottom - grid_top);
        out.push_str(&format!(
            "<text x=\"0\" y=\"0\" transform=\"translate({} {}) rotate(-90)\" text-anchor=\"middle\" font-size=\"{LABEL_SIZE}\" fill=\"{MUTED}\" class=\"y-label\">{}</text>\n",
            num(MARGIN + LABEL_SIZE),
            num(mid),
            escape(&l)
        ));
    }
    y = grid_bottom;
    if !grid.x_label.is_empty() {
        y += LABEL_SIZE + 8.0;
        let l = ellipsize(&grid.x_label, LABEL_SIZE, false, grid_width);
        text_element(
            out,
            left + 0.5 * grid_width,
            y,
            &format!(
                "font-size=\"{LABEL_SIZE}\" fill=\"{MUTED}\" text-anchor=\"middle\" class=\"x-label\""
            ),
            &l,
        );
    }
    if grid.panels.len() > MAX_PANELS {
        y += NOTE_SIZE + 8.0;
        let rest: Vec<&str> = grid.panels[MAX_PANELS..]
            .iter()
            .map(|p| p.title.as_str())
            .collect();
        let msg = format!(
            "Showing the first {MAX_PANELS} of {} panels; not drawn: {}",
            grid.panels.len(),
            rest.join(", ")
        );
        let l = ellipsize(&msg, NOTE_SIZE, false, width - 2.0 * MARGIN);
        text_element(
            out,
            MARGIN,
            y,
            &format!("font-size=\"{NOTE_SIZE}\" fill=\"{MUTED}\" class=\"note\""),
            &l,
        );
    }
    out.push_str("</g>\n");
    y
}

/// The plot rectangle of one panel in pixels (`y0` top, `y1` bottom).
struct PanelGeometry {
    x0: f64,
    x1: f64,
    y0: f64,
    y1: f64,
}

impl PanelGeometry {
    fn x(&self, period_offset: f64, x_span: f64) -> f64 {
        self.x0 + period_offset / x_span * (self.x1 - self.x0)
    }
    fn y(&self, v: f64, lo: f64, hi: f64) -> f64 {
        self.y1 - (v - lo) / (hi - lo) * (self.y1 - self.y0)
    }
}

/// Grid lines, tick labels, the zero line and the period axis of one panel.
fn draw_axes(
    out: &mut String,
    g: &PanelGeometry,
    scale: &Scale,
    x_ticks: &[i64],
    first: i64,
    x_span: f64,
) {
    let (lo, hi) = scale.range();
    for (v, label) in scale.labels() {
        let y = g.y(v, lo, hi);
        if v != 0.0 {
            out.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{GRID}\" stroke-width=\"1\"/>\n",
                num(g.x0),
                num(y),
                num(g.x1),
                num(y)
            ));
        }
        text_element(
            out,
            g.x0 - 6.0,
            y + TICK_SIZE * 0.35,
            &format!(
                "font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"end\" class=\"y-tick\""
            ),
            &label,
        );
    }
    // The zero line (the steady state for deviations) above the grid lines.
    if !matches!(scale, Scale::Empty) && lo <= 0.0 && hi >= 0.0 {
        let y = g.y(0.0, lo, hi);
        out.push_str(&format!(
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-width=\"1\" class=\"zero-line\"/>\n",
            num(g.x0),
            num(y),
            num(g.x1),
            num(y)
        ));
    }
    // Period axis.
    out.push_str(&format!(
        "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
        num(g.x0),
        num(g.y1),
        num(g.x1),
        num(g.y1)
    ));
    for &t in x_ticks {
        let x = g.x((t - first) as f64, x_span);
        out.push_str(&format!(
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
            num(x),
            num(g.y1),
            num(x),
            num(g.y1 + 4.0)
        ));
        text_element(
            out,
            x,
            g.y1 + 15.0,
            &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"middle\" class=\"x-tick\""),
            &signed(&t.to_string()),
        );
    }
}

/// The lines of one panel (or its explanation when there is nothing to draw).
fn draw_series(
    out: &mut String,
    panel: &Panel,
    g: &PanelGeometry,
    scale: &Scale,
    x_span: f64,
    colours: &HashMap<String, usize>,
) {
    let (lo, hi) = scale.range();
    let message = match scale {
        Scale::Empty => Some("no finite values to draw"),
        Scale::Zero => Some("zero throughout (to rounding)"),
        Scale::Data { .. } => None,
    };
    let columns = ((g.x1 - g.x0).ceil() as usize).max(1);
    for s in &panel.series {
        let colour = colour_of(colours, &s.name);
        let segments = match scale {
            Scale::Zero => {
                let n = s.values.iter().filter(|v| plottable(**v)).count();
                if n == 0 {
                    Vec::new()
                } else {
                    // Drawn flat at zero over the periods where the series is defined.
                    let zeroed: Vec<f64> = s
                        .values
                        .iter()
                        .map(|&v| if plottable(v) { 0.0 } else { f64::NAN })
                        .collect();
                    segments(&zeroed, columns)
                }
            }
            Scale::Empty => Vec::new(),
            Scale::Data { .. } => segments(&s.values, columns),
        };
        out.push_str(&format!(
            "<g class=\"series\" data-name=\"{}\">\n",
            escape(&s.name)
        ));
        for seg in &segments {
            if seg.len() == 1 {
                let (i, v) = seg[0];
                out.push_str(&format!(
                    "<circle cx=\"{}\" cy=\"{}\" r=\"2\" fill=\"{colour}\"/>\n",
                    num(g.x(i, x_span)),
                    num(g.y(v, lo, hi))
                ));
                continue;
            }
            let mut points = String::with_capacity(seg.len() * 14);
            for (k, &(i, v)) in seg.iter().enumerate() {
                if k > 0 {
                    points.push(' ');
                }
                points.push_str(&num(g.x(i, x_span)));
                points.push(',');
                points.push_str(&num(g.y(v, lo, hi)));
            }
            out.push_str(&format!(
                "<polyline points=\"{points}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"{LINE_WIDTH}\" stroke-linejoin=\"round\" stroke-linecap=\"round\"/>\n"
            ));
        }
        out.push_str("</g>\n");
    }
    if let Some(m) = message {
        let cx = 0.5 * (g.x0 + g.x1);
        let cy = g.y0 + 0.3 * (g.y1 - g.y0);
        let m = ellipsize(m, SUBTITLE_SIZE, false, g.x1 - g.x0);
        text_element(
            out,
            cx,
            cy,
            &format!(
                "font-size=\"{SUBTITLE_SIZE}\" font-style=\"italic\" fill=\"{MUTED}\" text-anchor=\"middle\" class=\"panel-message\""
            ),
            &m,
        );
    }
}

/// Runs of drawable points `(index, value)`, split where a value cannot be drawn. Series longer
/// than twice `columns` keep, per bucket of `len / columns` periods, the first, lowest, highest
/// and last values of each run, in period order.
fn segments(values: &[f64], columns: usize) -> Vec<Vec<(f64, f64)>> {
    let bucket = if values.len() > 2 * columns {
        values.len().div_ceil(columns)
    } else {
        1
    };
    let mut out: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut current: Vec<(f64, f64)> = Vec::new();
    let mut start = 0;
    while start < values.len() {
        let end = (start + bucket).min(values.len());
        let mut run: Option<RunSummary> = None;
        for (i, &v) in values.iter().enumerate().take(end).skip(start) {
            if plottable(v) {
                match &mut run {
                    Some(r) => r.add(i, v),
                    None => run = Some(RunSummary::new(i, v)),
                }
            } else {
                if let Some(r) = run.take() {
                    r.flush(&mut current);
                }
                if !current.is_empty() {
                    out.push(std::mem::take(&mut current));
                }
            }
        }
        if let Some(r) = run.take() {
            r.flush(&mut current);
        }
        start = end;
    }
    if !current.is_empty() {
        out.push(current);
    }
    out
}

/// First, lowest, highest and last point of a run of values inside one bucket.
struct RunSummary {
    first: (usize, f64),
    low: (usize, f64),
    high: (usize, f64),
    last: (usize, f64),
}

impl RunSummary {
    fn new(i: usize, v: f64) -> Self {
        RunSummary {
            first: (i, v),
            low: (i, v),
            high: (i, v),
            last: (i, v),
        }
    }
    fn add(&mut self, i: usize, v: f64) {
        if v < self.low.1 {
            self.low = (i, v);
        }
        if v > self.high.1 {
            self.high = (i, v);
        }
        self.last = (i, v);
    }
    /// Appends the distinct points in period order.
    fn flush(self, out: &mut Vec<(f64, f64)>) {
        let mut pts = [self.first, self.low, self.high, self.last];
        pts.sort_by_key(|p| p.0);
        let mut previous: Option<usize> = None;
        for (i, v) in pts {
            if previous != Some(i) {
                out.push((i as f64, v));
                previous = Some(i);
            }
        }
    }
}

/// A `<text>` element; when `shown` was shortened from `full`, the full text is kept as a
/// tooltip (`<title>`), which browsers show on hover.
fn titled_text(out: &mut String, x: f64, y: f64, attrs: &str, shown: &str, full: &str) {
    if shown == full {
        text_element(out, x, y, attrs, shown);
    } else {
        out.push_str(&format!("<g><title>{}</title>\n", escape(full)));
        text_element(out, x, y, attrs, shown);
        out.push_str("</g>\n");
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_series_are_thinned_but_keep_extremes() {
        let values: Vec<f64> = (0..100_000)
            .map(|i| {
                if i == 54_321 {
                    9.0
                } else {
                    (i as f64 * 0.01).sin()
                }
            })
            .collect();
        let segs = segments(&values, 300);
        assert_eq!(segs.len(), 1);
        assert!(segs[0].len() <= 4 * 300 + 4, "{}", segs[0].len());
        assert!(segs[0].iter().any(|&(i, v)| i == 54_321.0 && v == 9.0));
        // Period order is kept.
        assert!(segs[0].windows(2).all(|w| w[0].0 < w[1].0));
    }

    #[test]
    fn non_finite_values_split_the_line() {
        let segs = segments(&[1.0, 2.0, f64::NAN, 3.0, f64::INFINITY, 4.0, 5.0], 100);
        assert_eq!(
            segs,
            vec![
                vec![(0.0, 1.0), (1.0, 2.0)],
                vec![(3.0, 3.0)],
                vec![(5.0, 4.0), (6.0, 5.0)]
            ]
        );
    }
}
