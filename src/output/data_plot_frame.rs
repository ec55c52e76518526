//! A grid of panels with bars, bands, lines and dots over labelled periods, for the charts of
//! [`super::data_plot`]. A value v on a panel's axis from lo to hi drawn over pixels [y1, y0]
//! sits at `y1 - (v - lo) / (hi - lo) (y1 - y0)`; the range is widened to nice ticks (Heckbert's
//! loose labelling, [`super::svg::ticks::loose_ticks`]) and is never empty, so nothing divides
//! by zero. Period x sits at `x0 + (x + 0.5) / n (x1 - x0)` (bars are centred on their period).

use super::svg::text::{ellipsize, escape, text_width};
use super::svg::ticks::{format_ticks, loose_ticks, signed};

const WIDTH: f64 = 960.0;
const MARGIN: f64 = 16.0;
const GAP_X: f64 = 28.0;
const GAP_Y: f64 = 22.0;
const PLOT_H: f64 = 170.0;
const TITLE: f64 = 16.0;
const PANEL_TITLE: f64 = 13.0;
const SUB: f64 = 11.0;
const TICK: f64 = 10.5;
const NOTE: f64 = 10.5;
const INK: &str = "#1a1a1a";
const MUTED: &str = "#595959";
const GRID: &str = "#e2e2e2";
const AXIS: &str = "#6e6e6e";
const FONT: &str = "Helvetica, Arial, 'Liberation Sans', 'Nimbus Sans', sans-serif";

/// A band: per period (low, high), its fill colour, and the period of its first value.
pub type Band = (Vec<(f64, f64)>, String, usize);

/// One panel. Index-based series start at their `offset` on the period axis.
pub struct Frame {
    pub title: String,
    pub subtitle: Option<String>,
    pub lo: f64,
    pub hi: f64,
    pub n_periods: usize,
    pub first_x: usize,
    /// Per period (from `first_x`): stacked segments (from, to, colour).
    pub bars: Vec<Vec<(f64, f64, &'static str)>>,
    /// (per period (low, high), fill colour, offset): drawn first, in order.
    pub bands: Vec<Band>,
    /// (values, colour, offset); NaN splits a line.
    pub lines: Vec<(Vec<f64>, String, usize)>,
    /// (period, value) marks.
    pub dots: Vec<(usize, f64)>,
    /// A dashed vertical line at this x (periods), e.g. the end of the data.
    pub divider: Option<f64>,
}

/// Panels in a grid under a title and a legend; `legend` items are (name, colour, drawn as a
/// box rather than a line).
pub struct FrameGrid {
    pub title: String,
    pub legend: Vec<(String, String, bool)>,
    pub frames: Vec<Frame>,
    pub period_labels: Vec<String>,
    pub notes: Vec<String>,
}

fn num(x: f64) -> String {
    if !x.is_finite() {
        return "0".into();
    }
    let mut s = format!("{x:.2}");
    while s.contains('.') && (s.ends_with('0') || s.ends_with('.')) {
        s.pop();
    }
    if s == "-0" {
        s = "0".into();
    }
    s
}

fn text(out: &mut String, x: f64, y: f64, attrs: &str, content: &str) {
    out.push_str(&format!(
        "<text x=\"{}\" y=\"{}\" {attrs}>{}</text>\n",
        num(x),
        num(y),
        escape(content)
    ));
}

/// Greedy word wrap of `s` to `max` pixels at font size `size`.
fn wrap(s: &str, size: f64, max: f64) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for w in s.split_whitespace() {
        let trial = if cur.is_empty() {
            w.to_string()
        } else {
            format!("{cur} {w}")
        };
        if text_width(&trial, size, false) > max && !cur.is_empty() {
            lines.push(std::mem::take(&mut cur));
            cur = w.to_string();
        } else {
            cur = trial;
        }
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

impl FrameGrid {
    /// The whole SVG document.
    pub fn render(&self) -> String {
        let columns = if self.frames.len() > 3 { 2 } else { 1 };
        let cell_w = (WIDTH - 2.0 * MARGIN - (columns as f64 - 1.0) * GAP_X) / columns as f64;
        let mut body = String::new();
        let mut y = MARGIN + TITLE;
        text(
            &mut body,
            MARGIN,
            y,
            &format!("font-size=\"{TITLE}\" font-weight=\"700\" fill=\"{INK}\""),
            &ellipsize(&self.title, TITLE, true, WIDTH - 2.0 * MARGIN),
        );
        // Legend, wrapped to the width.
        y += 10.0;
        let mut lx = MARGIN;
        let mut ly = y + 14.0;
        for (name, colour, boxed) in &self.legend {
            let w = 24.0 + text_width(name, 12.0, false) + 14.0;
            if lx + w > WIDTH - MARGIN && lx > MARGIN {
                lx = MARGIN;
                ly += 18.0;
            }
            if *boxed {
                body.push_str(&format!(
                    "<rect x=\"{}\" y=\"{}\" width=\"16\" height=\"10\" fill=\"{colour}\"/>\n",
                    num(lx + 1.0),
                    num(ly - 9.0)
                ));
            } else {
                body.push_str(&format!(
                    "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{colour}\" stroke-width=\"2.5\"/>\n",
                    num(lx + 1.0),
                    num(ly - 4.0),
                    num(lx + 17.0),
                    num(ly - 4.0)
                ));
            }
            text(
                &mut body,
                lx + 24.0,
                ly,
                &format!("font-size=\"12\" fill=\"{INK}\""),
                name,
            );
            lx += w;
        }
        y = ly + 12.0;
        let title_block = 40.0;
        let cell_h = title_block + PLOT_H + 20.0;
        for (i, f) in self.frames.iter().enumerate() {
            let cx = MARGIN + (i % columns) as f64 * (cell_w + GAP_X);
            let cy = y + (i / columns) as f64 * (cell_h + GAP_Y);
            self.panel(&mut body, f, cx, cy, cell_w, title_block);
        }
        let rows = self.frames.len().div_ceil(columns);
        y += rows as f64 * cell_h + rows.saturating_sub(1) as f64 * GAP_Y;
        if self.frames.is_empty() {
            y += 16.0;
            text(
                &mut body,
                MARGIN,
                y,
                &format!("font-size=\"12\" fill=\"{MUTED}\""),
                "nothing to draw",
            );
        }
        y += 6.0;
        for n in &self.notes {
            // 10 percent slack: renderers substitute fonts wider than the Helvetica metrics.
            for l in wrap(n, NOTE, 0.9 * (WIDTH - 2.0 * MARGIN)) {
                y += NOTE + 4.0;
                text(
                    &mut body,
                    MARGIN,
                    y,
                    &format!("font-size=\"{NOTE}\" fill=\"{MUTED}\" class=\"note\""),
                    &l,
                );
            }
        }
        let height = y + MARGIN;
        let mut out = format!(
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" font-family=\"{FONT}\" role=\"img\">\n<title>{}</title>\n<rect x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" fill=\"#ffffff\"/>\n",
            escape(&self.title),
            w = num(WIDTH),
            h = num(height)
        );
        out.push_str(&body);
        out.push_str("</svg>\n");
        out
    }

    fn panel(&self, out: &mut String, f: &Frame, cx: f64, cy: f64, cell_w: f64, title_block: f64) {
        out.push_str(&format!(
            "<g class=\"panel\" data-title=\"{}\">\n",
            escape(&f.title)
        ));
        text(
            out,
            cx,
            cy + PANEL_TITLE,
            &format!("font-size=\"{PANEL_TITLE}\" font-weight=\"700\" fill=\"{INK}\""),
            &ellipsize(&f.title, PANEL_TITLE, true, cell_w),
        );
        if let Some(s) = &f.subtitle {
            text(
                out,
                cx,
                cy + PANEL_TITLE + 15.0,
                &format!("font-size=\"{SUB}\" fill=\"{MUTED}\""),
                &ellipsize(s, SUB, false, cell_w),
            );
        }
        let (mut lo, mut hi) = (f.lo, f.hi);
        if !(lo.is_finite() && hi.is_finite()) {
            lo = -1.0;
            hi = 1.0;
        }
        if hi - lo <= 1e-12 * lo.abs().max(hi.abs()).max(1e-300) {
            let pad = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
            lo -= pad;
            hi += pad;
        }
        let ticks = loose_ticks(lo, hi, 5);
        let (labels, note) = format_ticks(&ticks);
        let (lo, hi) = (ticks.lo, ticks.hi);
        let label_w = labels
            .iter()
            .map(|l| text_width(l, TICK, false))
            .fold(0.0, f64::max);
        let x0 = cx + label_w + 8.0;
        let x1 = cx + cell_w - 4.0;
        let y0 = cy + title_block;
        let y1 = y0 + PLOT_H;
        if let Some(n) = note {
            text(
                out,
                x1,
                cy + PANEL_TITLE,
                &format!("font-size=\"{TICK}\" fill=\"{MUTED}\" text-anchor=\"end\""),
                &n,
            );
        }
        let n = f.n_periods.max(1) as f64;
        let px = |x: f64| x0 + (x + 0.5) / n * (x1 - x0);
        let py = |v: f64| y1 - (v.clamp(lo, hi) - lo) / (hi - lo) * (y1 - y0);
        for (v, l) in ticks.values.iter().zip(&labels) {
            let y = py(*v);
            out.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{GRID}\"/>\n",
                num(x0),
                num(y),
                num(x1),
                num(y)
            ));
            text(
                out,
                x0 - 5.0,
                y + TICK * 0.35,
                &format!("font-size=\"{TICK}\" fill=\"{MUTED}\" text-anchor=\"end\""),
                l,
            );
        }
        // Bands.
        for (band, colour, offset) in &f.bands {
            let pts: Vec<(f64, f64, f64)> = band
                .iter()
                .enumerate()
                .filter(|(_, (a, b))| a.is_finite() && b.is_finite())
                .map(|(k, (a, b))| (px((offset + k) as f64), py(*a), py(*b)))
                .collect();
            if pts.is_empty() {
                continue;
            }
            let mut d = String::new();
            for (k, (x, _, top)) in pts.iter().enumerate() {
                d.push_str(&format!(
                    "{}{},{} ",
                    if k == 0 { "M" } else { "L" },
                    num(*x),
                    num(*top)
                ));
            }
            for (x, bottom, _) in pts.iter().rev() {
                d.push_str(&format!("L{},{} ", num(*x), num(*bottom)));
            }
            d.push('Z');
            out.push_str(&format!(
                "<path d=\"{d}\" fill=\"{colour}\" stroke=\"{colour}\" stroke-width=\"1\" class=\"band\"/>\n"
            ));
        }
        // Bars.
        let bw = ((x1 - x0) / n * 0.8).max(0.5);
        for (k, stack) in f.bars.iter().enumerate() {
            let xc = px((f.first_x + k) as f64);
            for &(a, b, colour) in stack {
                let (ya, yb) = (py(a), py(b));
                out.push_str(&format!(
                    "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{colour}\" class=\"bar\"/>\n",
                    num(xc - bw / 2.0),
                    num(yb.min(ya)),
                    num(bw),
                    num((ya - yb).abs())
                ));
            }
        }
        // Zero line and axes.
        if lo < 0.0 && hi > 0.0 {
            out.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" class=\"zero-line\"/>\n",
                num(x0),
                num(py(0.0)),
                num(x1),
                num(py(0.0))
            ));
        }
        out.push_str(&format!(
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\"/>\n",
            num(x0),
            num(y1),
            num(x1),
            num(y1)
        ));
        if let Some(d) = f.divider {
            let x = x0 + (d + 0.5) / n * (x1 - x0);
            out.push_str(&format!(
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\" stroke-dasharray=\"4 3\"/>\n",
                num(x),
                num(y0),
                num(x),
                num(y1)
            ));
        }
        // Lines.
        for (values, colour, offset) in &f.lines {
            let mut seg: Vec<String> = Vec::new();
            let flush = |seg: &mut Vec<String>, out: &mut String| {
                if seg.len() > 1 {
                    out.push_str(&format!(
                        "<polyline points=\"{}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"1.8\" stroke-linejoin=\"round\"/>\n",
                        seg.join(" ")
                    ));
                } else if let Some(p) = seg.first() {
                    let (x, y) = p.split_once(',').unwrap_or(("0", "0"));
                    out.push_str(&format!(
                        "<circle cx=\"{x}\" cy=\"{y}\" r=\"2\" fill=\"{colour}\"/>\n"
                    ));
                }
                seg.clear();
            };
            for (k, v) in values.iter().enumerate() {
                if v.is_finite() {
                    seg.push(format!("{},{}", num(px((offset + k) as f64)), num(py(*v))));
                } else {
                    flush(&mut seg, out);
                }
            }
            flush(&mut seg, out);
        }
        for &(k, v) in &f.dots {
            if v.is_finite() {
                out.push_str(&format!(
                    "<circle cx=\"{}\" cy=\"{}\" r=\"3.5\" fill=\"#D55E00\" stroke=\"#ffffff\" stroke-width=\"1\" class=\"fixed\"/>\n",
                    num(px(k as f64)),
                    num(py(v))
                ));
            }
        }
        // Period labels: about one per 64 pixels, first and last period kept in reach.
        let labels = &self.period_labels;
        if !labels.is_empty() {
            let widest = labels
                .iter()
                .map(|l| text_width(l, TICK, false))
                .fold(0.0, f64::max);
            let fit = (((x1 - x0) / (widest + 14.0).max(48.0)).floor() as usize).max(2);
            let step = labels.len().div_ceil(fit).max(1);
            for (k, l) in labels.iter().enumerate().take(f.n_periods) {
                if k % step != 0 {
                    continue;
                }
                let x = px(k as f64);
                out.push_str(&format!(
                    "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{AXIS}\"/>\n",
                    num(x),
                    num(y1),
                    num(x),
                    num(y1 + 4.0)
                ));
                text(
                    out,
                    x,
                    y1 + 15.0,
                    &format!("font-size=\"{TICK}\" fill=\"{MUTED}\" text-anchor=\"middle\""),
                    &signed(l),
                );
            }
        }
        out.push_str("</g>\n");
    }
}
