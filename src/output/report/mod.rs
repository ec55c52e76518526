//! The HTML report: one self-contained page (inline CSS, inline SVG, a few lines of inline script
//! for sorting tables; no network access, no external scripts or fonts) with the model summary,
//! calibration, steady state, roots and diagnosis, solution equations, impulse-response charts,
//! moments and variance decompositions.
//!
//! Contract: [`render`] is a pure function of a [`ReportInput`] (values the library computed) to a
//! `String`. It works for every status: a model without a unique stable solution gets its roots
//! and diagnosis and, in place of charts and moments, a sentence saying why they are absent. All
//! text is escaped. Tables stay in model order without script; with it, clicking a column header
//! sorts by that column (numbers by value, text alphabetically, blanks last).

mod assets;
mod format;
mod sections;
mod table;

use assets::*;
pub use format::sig;
#[allow(unused_imports)]
use format::*;
use sections::*;
#[allow(unused_imports)]
use table::*;

#[allow(unused_imports)]
use nalgebra::DMatrix;

use super::svg::charts::{impulse_response_grids, impulse_words, shock_labels, variable_subtitles};
use super::svg::{escape, panel_grid_with, root_plot, status_colour, GridOptions, YRange};
use crate::model::{Expr, Model};
use crate::solution::{SolvedModel, Status};

/// Impulse responses as the report reads them (the shape of `analysis::irf`'s result).
#[derive(Debug, Clone, Copy)]
pub struct IrfView<'a> {
    /// `"one-sd"` or `"unit"`.
    pub size: &'a str,
    pub horizon: usize,
    pub shocks: &'a [String],
    pub variables: &'a [String],
    /// Per shock: variables x (horizon + 1).
    pub responses: &'a [DMatrix<f64>],
}

/// Theoretical moments as the report reads them (the shape of `analysis::moments`'s result).
#[derive(Debug, Clone, Copy)]
pub struct MomentsView<'a> {
    pub variables: &'a [String],
    pub shocks: &'a [String],
    /// `None` where the variance does not exist.
    pub std: &'a [Option<f64>],
    /// NaN where undefined.
    pub correlation: &'a DMatrix<f64>,
    /// Per variable, lags 1..=L.
    pub autocorrelation: &'a [Vec<f64>],
    /// Per variable, per shock: shares of the unconditional variance.
    pub variance_decomposition: &'a [Vec<f64>],
    /// Per horizon: per variable, per shock shares.
    pub fevd: &'a [(usize, Vec<Vec<f64>>)],
    pub nonstationary: &'a [String],
    pub warnings: &'a [String],
}

/// Everything the page shows.
#[derive(Debug, Clone)]
pub struct ReportInput<'a> {
    /// The model file as the user named it.
    pub source: &'a str,
    pub model: &'a Model,
    pub solved: &'a SolvedModel,
    /// The model's equations as text, one per equation (e.g. `demand: gap = ...`); empty to
    /// leave the section out.
    pub equations: Vec<String>,
    /// Per parameter (file order): its defining expression as text when it is derived.
    pub definitions: Vec<Option<String>>,
    /// Parameters set on the command line.
    pub overrides: Vec<String>,
    /// Settings used (e.g. ("stable-root threshold", "1 (from the file)")).
    pub settings: Vec<(String, String)>,
    pub irf: Option<IrfView<'a>>,
    pub moments: Option<MomentsView<'a>>,
    /// Why impulse responses or moments are missing although the model is determinate (a
    /// numerical failure in that step), shown in their sections.
    pub irf_error: Option<String>,
    pub moments_error: Option<String>,
    /// The program's version, for the footer.
    pub version: &'a str,
    /// The optimal-policy section's body (rendered by [`super::policy::report_section`]),
    /// shown last when the model has an objective.
    pub policy_html: Option<String>,
    /// The data section (`--data`), already rendered by [`super::data_report::section`].
    pub data_section: Option<String>,
    /// The estimation section (`--draws`), already rendered by
    /// [`super::estimate_report::section`].
    pub estimation_section: Option<String>,
}

/// Coefficients smaller than this fraction of the largest in their matrix are left out of the
/// printed solution equations (they are round-off of exact zeros; the full matrices are given in
/// the tables below the equations).
pub const NEGLIGIBLE_COEFFICIENT: f64 = 1e-12;

/// Most autocorrelation lags shown as table columns (the page stays readable on a laptop screen).
pub const MAX_LAG_COLUMNS: usize = 8;

/// The whole HTML page.
pub fn render(input: &ReportInput) -> String {
    let m = input.model;
    let s = input.solved;
    let title = s
        .title
        .clone()
        .or_else(|| m.title.clone())
        .unwrap_or_else(|| format!("Model {}", input.source));
    let mut h = String::with_capacity(64 * 1024);
    h.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    h.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
    h.push_str(&format!(
        "<meta name=\"generator\" content=\"saddle {}\">\n<title>{} \u{2014} saddle report</title>\n",
        escape(input.version),
        escape(&title)
    ));
    h.push_str("<style>\n");
    h.push_str(CSS);
    h.push_str("</style>\n</head>\n<body>\n<div class=\"page\">\n");

    // Header.
    h.push_str("<header>\n");
    h.push_str(&format!("<h1>{}</h1>\n", escape(&title)));
    h.push_str(&format!(
        "<p class=\"meta\">Model file <code>{}</code> \u{b7} {} variables, {} innovations, {} parameters \u{b7} report by saddle {}</p>\n",
        escape(input.source),
        m.endogenous.len(),
        m.exogenous.len(),
        m.parameters.len(),
        escape(input.version)
    ));
    h.push_str(&status_banner(s));
    h.push_str(
        "<aside class=\"caveat\" role=\"note\"><strong>Conditional results.</strong> Everything on \
this page follows from the model's equations and its calibration: the numbers are what this \
model implies with these parameter values, not forecasts or measurements. Other plausible \
calibrations can give different answers; check the calibration table before quoting a number.</aside>\n",
    );
    h.push_str("<nav aria-label=\"Contents\"><ol>\n");
    for (id, name) in SECTIONS {
        h.push_str(&format!("<li><a href=\"#{id}\">{name}</a></li>\n"));
    }
    if input.policy_html.is_some() {
        h.push_str("<li><a href=\"#policy\">Optimal policy</a></li>\n");
    }
    if input.data_section.is_some() {
        h.push_str("<li><a href=\"#data\">Data: filter, decomposition, forecasts</a></li>\n");
    }
    if input.estimation_section.is_some() {
        h.push_str("<li><a href=\"#estimation\">Estimation: posterior draws and bands</a></li>\n");
    }
    h.push_str("</ol></nav>\n</header>\n<main>\n");

    section_summary(&mut h, input);
    section_calibration(&mut h, input);
    section_steady(&mut h, input);
    section_roots(&mut h, input);
    section_solution(&mut h, input);
    section_irf(&mut h, input);
    section_moments(&mut h, input);
    if let Some(p) = &input.policy_html {
        h.push_str(&format!(
            "<section id=\"policy\">\n<h2><span class=\"num\">{}</span> Optimal policy</h2>\n{p}</section>\n",
            SECTIONS.len() + 1
        ));
    }
    if let Some(d) = &input.data_section {
        h.push_str(d);
    }
    if let Some(e) = &input.estimation_section {
        h.push_str(e);
    }

    h.push_str("</main>\n<footer>\n");
    h.push_str(&format!(
        "<p>Generated by saddle {} from <code>{}</code>. Results are conditional on the model and its calibration.</p>\n",
        escape(input.version),
        escape(input.source)
    ));
    h.push_str("</footer>\n</div>\n<script>\n");
    h.push_str(SCRIPT);
    h.push_str("</script>\n</body>\n</html>\n");
    h
}

pub(super) const SECTIONS: [(&str, &str); 7] = [
    ("summary", "Model summary"),
    ("calibration", "Calibration"),
    ("steady-state", "Steady state"),
    ("roots", "Roots and diagnosis"),
    ("solution", "Solution equations"),
    ("impulse-responses", "Impulse responses"),
    ("moments", "Moments and variance decompositions"),
];

pub(super) fn open_section(h: &mut String, index: usize) {
    let (id, name) = SECTIONS[index];
    h.push_str(&format!(
        "<section id=\"{id}\">\n<h2><span class=\"num\">{}</span> {name}</h2>\n",
        index + 1
    ));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits_read_well() {
        assert_eq!(sig(0.123456, 4), "0.1235");
        assert_eq!(sig(-1234.5678, 4), "\u{2212}1235");
        assert_eq!(sig(1.0, 4), "1");
        assert_eq!(sig(2.5e-7, 3), "2.5×10⁻⁷");
        assert_eq!(sig(-3.0e8, 4), "\u{2212}3×10⁸");
        assert_eq!(sig(0.0, 4), "0");
        assert_eq!(sig(-0.00001234, 2), "\u{2212}1.2×10⁻⁵");
    }

    #[test]
    fn states_advance_one_period() {
        assert_eq!(advance_state("k[t-1]"), "k[t]");
        assert_eq!(advance_state("e_rate[t-3]"), "e_rate[t-2]");
        assert_eq!(advance_state("odd"), "next odd");
    }

    #[test]
    fn terms_drop_round_off_and_use_true_minus() {
        let p = DMatrix::from_row_slice(1, 2, &[0.5, 1e-17]);
        let q = DMatrix::from_row_slice(1, 1, &[-0.25]);
        let s = row_terms(
            &p,
            &q,
            0,
            &["a[t-1]".into(), "b[t-1]".into()],
            &["e[t]".into()],
        );
        assert_eq!(s, "0.5 a[t-1] \u{2212} 0.25 e[t]");
        let z = DMatrix::<f64>::zeros(1, 1);
        assert_eq!(row_terms(&z, &z, 0, &["a".into()], &["e".into()]), "0");
    }
}
