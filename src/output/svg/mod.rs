//! SVG charts a person puts in a paper or a briefing: a grid of small panels of series over
//! periods (impulse responses, simulated paths) and a map of solution status over a parameter grid.
//!
//! Contract: every function here is pure (values in, one SVG document out as a `String`), total
//! (no input panics: empty, constant, non-finite or huge data give a readable chart or a chart
//! that says what is missing) and bounded (panels, ticks, points and cells are capped, so the
//! output size is bounded by the chart's pixel size, not the data's length). All text is escaped
//! for XML. Coordinates are finite numbers with at most two decimals.
//!
//! Layout arithmetic: a value `v` on an axis running from `lo` to `hi` drawn over pixels
//! `[p0, p1]` sits at `p0 + (v - lo) / (hi - lo) * (p1 - p0)`; every axis guarantees `hi > lo`
//! (a constant series gets a padded range), so no scaling divides by zero.
//!
//! Colours: the Okabe-Ito palette (Okabe and Ito 2008, "Color Universal Design: how to make
//! figures and presentations that are friendly to colorblind people"), distinguishable under the
//! common forms of colour blindness; statuses also carry hatching so they survive greyscale print.

pub mod charts;
mod layout;
mod loss;
mod panels;
mod roots;
mod status;
pub mod text;
pub mod ticks;

pub use loss::loss_map;
pub use panels::{panel_grid, panel_grid_with, panel_grids, GridOptions, YRange};
pub use roots::root_plot;
pub use status::{status_colour, status_map, status_map_with, StatusMapOptions, STATUS_ORDER};
pub use text::escape;

/// One line in a panel: a name (for the legend) and one value per period.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub name: String,
    pub values: Vec<f64>,
}

/// One small chart: a title (the variable), an optional subtitle (its label, with units) and the
/// series drawn in it.
#[derive(Debug, Clone, PartialEq)]
pub struct Panel {
    pub title: String,
    /// E.g. the variable's label: units.
    pub subtitle: Option<String>,
    pub series: Vec<Series>,
}

/// A grid of panels sharing the period axis `x = 0 .. len - 1`.
#[derive(Debug, Clone, PartialEq)]
pub struct PanelGrid {
    pub title: String,
    pub x_label: String,
    pub y_label: Option<String>,
    pub panels: Vec<Panel>,
}

/// Solution status over one parameter (a strip) or two (a map).
#[derive(Debug, Clone, PartialEq)]
pub struct StatusMap {
    pub title: String,
    pub x_name: String,
    pub x_values: Vec<f64>,
    pub y: Option<(String, Vec<f64>)>,
    /// Row-major, first parameter (x) slowest: `status[ix * ny + iy]`.
    pub status: Vec<String>,
}

/// Line colours for series, in order of first appearance (Okabe and Ito 2008; yellow is left out
/// because it is too light for thin lines on white).
pub const SERIES_COLOURS: [&str; 7] = [
    "#0072B2", // blue
    "#D55E00", // vermillion
    "#009E73", // bluish green
    "#CC79A7", // reddish purple
    "#E69F00", // orange
    "#56B4E9", // sky blue
    "#000000", // black
];

/// Font stack of every chart: Helvetica metrics (see [`text`]) with its metric-compatible
/// stand-ins first, then any sans-serif.
pub const FONT_FAMILY: &str = "Helvetica, Arial, 'Liberation Sans', 'Nimbus Sans', sans-serif";

/// Colour of primary text (titles).
pub(crate) const INK: &str = "#1a1a1a";
/// Colour of secondary text (subtitles, tick labels, notes).
pub(crate) const MUTED: &str = "#595959";
/// Colour of light grid lines.
pub(crate) const GRID: &str = "#e2e2e2";
/// Colour of the zero line and axis lines.
pub(crate) const AXIS: &str = "#6e6e6e";

/// A coordinate or length as SVG text: two decimals at most, trailing zeros dropped, never `-0`;
/// a non-finite value (a logic error upstream) is written as `0` so the document stays valid.
pub(crate) fn num(x: f64) -> String {
    if !x.is_finite() {
        return "0".to_string();
    }
    let mut s = format!("{:.2}", x);
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "-0" {
        s = "0".to_string();
    }
    s
}

/// A short identifier for element ids, derived from the chart's content (FNV-1a), so several
/// charts inlined in one HTML page do not share ids unless they are identical.
pub(crate) fn id_prefix(seed: &str) -> String {
    let mut h: u64 = 0xcbf29ce484222325;
    for b in seed.bytes() {
        h ^= b as u64;
        h = h.wrapping_mul(0x100000001b3);
    }
    format!("s{:08x}", h as u32)
}

/// The opening tag of a standalone SVG document of the given size, with its accessible title
/// and description and a white background.
pub(crate) fn open_document(out: &mut String, width: f64, height: f64, title: &str, desc: &str) {
    out.push_str(&format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" \
viewBox=\"0 0 {w} {h}\" font-family=\"{FONT_FAMILY}\" role=\"img\">\n",
        w = num(width),
        h = num(height)
    ));
    out.push_str(&format!("<title>{}</title>\n", escape(title)));
    if !desc.is_empty() {
        out.push_str(&format!("<desc>{}</desc>\n", escape(desc)));
    }
    out.push_str(&format!(
        "<rect x=\"0\" y=\"0\" width=\"{}\" height=\"{}\" fill=\"#ffffff\"/>\n",
        num(width),
        num(height)
    ));
}

/// Appends one `<text>` element; `content` is escaped here, `attrs` is trusted markup.
pub(crate) fn text_element(out: &mut String, x: f64, y: f64, attrs: &str, content: &str) {
    out.push_str(&format!(
        "<text x=\"{}\" y=\"{}\" {attrs}>{}</text>\n",
        num(x),
        num(y),
        escape(content)
    ));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_short_and_never_negative_zero() {
        assert_eq!(num(1.0), "1");
        assert_eq!(num(1.256), "1.26");
        assert_eq!(num(-0.001), "0");
        assert_eq!(num(f64::NAN), "0");
        assert_eq!(num(120.5), "120.5");
    }

    #[test]
    fn id_prefixes_differ_by_content() {
        assert_ne!(id_prefix("a"), id_prefix("b"));
        assert_eq!(id_prefix("a"), id_prefix("a"));
    }
}
