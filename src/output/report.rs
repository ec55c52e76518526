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

const SECTIONS: [(&str, &str); 7] = [
    ("summary", "Model summary"),
    ("calibration", "Calibration"),
    ("steady-state", "Steady state"),
    ("roots", "Roots and diagnosis"),
    ("solution", "Solution equations"),
    ("impulse-responses", "Impulse responses"),
    ("moments", "Moments and variance decompositions"),
];

fn open_section(h: &mut String, index: usize) {
    let (id, name) = SECTIONS[index];
    h.push_str(&format!(
        "<section id=\"{id}\">\n<h2><span class=\"num\">{}</span> {name}</h2>\n",
        index + 1
    ));
}

fn status_banner(s: &SolvedModel) -> String {
    let c = s.counts;
    let (headline, detail) = match s.status {
        Status::Determinate => (
            "Determinate: a unique stable solution exists.".to_string(),
            format!(
                "{} unstable root{} for {} forward-looking element{}, {} stable for {} predetermined (Blanchard and Kahn 1980 counting condition met, rank condition met).",
                c.unstable,
                plural(c.unstable),
                c.forward_looking,
                plural(c.forward_looking),
                c.stable,
                c.predetermined
            ),
        ),
        other => (
            format!("{}: no unique stable solution.", status_name(other)),
            diagnosis_text(s).unwrap_or_else(|| {
                format!(
                    "{} unstable roots for {} forward-looking elements.",
                    c.unstable, c.forward_looking
                )
            }),
        ),
    };
    format!(
        "<div class=\"status\" style=\"--status:{}\"><span class=\"badge\">{}</span><p><strong>{}</strong> {}</p></div>\n",
        status_colour(s.status.as_str()),
        escape(s.status.as_str()),
        escape(&headline),
        escape(&detail)
    )
}

/// The solver's diagnosis without a leading repetition of the status name (the page shows the
/// status beside it).
fn diagnosis_text(s: &SolvedModel) -> Option<String> {
    let d = s.diagnosis.as_deref()?.trim();
    let name = status_name(s.status);
    let rest = d
        .strip_prefix(name)
        .or_else(|| d.strip_prefix(s.status.as_str()))
        .and_then(|r| r.strip_prefix(':').or_else(|| r.strip_prefix('.')))
        .map(str::trim_start)
        .filter(|r| !r.is_empty());
    Some(match rest {
        Some(r) => {
            let mut c = r.chars();
            match c.next() {
                Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
                None => String::new(),
            }
        }
        None => d.to_string(),
    })
}

fn status_name(s: Status) -> &'static str {
    match s {
        Status::Determinate => "Determinate",
        Status::Indeterminate => "Indeterminate",
        Status::NoStableSolution => "No stable solution",
        Status::RankFailure => "Rank failure",
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

fn section_summary(h: &mut String, input: &ReportInput) {
    let m = input.model;
    open_section(h, 0);
    h.push_str(&format!(
        "<p>{} endogenous variable{}, {} innovation{}, {} parameter{} ({} derived from others), {} equation{}.</p>\n",
        m.endogenous.len(),
        plural(m.endogenous.len()),
        m.exogenous.len(),
        plural(m.exogenous.len()),
        m.parameters.len(),
        plural(m.parameters.len()),
        m.parameters.iter().filter(|p| !is_given(&p.expr)).count(),
        m.equations.len(),
        plural(m.equations.len())
    ));
    if !input.settings.is_empty() {
        h.push_str("<dl class=\"settings\">\n");
        for (k, v) in &input.settings {
            h.push_str(&format!("<dt>{}</dt><dd>{}</dd>\n", escape(k), escape(v)));
        }
        h.push_str("</dl>\n");
    }

    h.push_str("<h3>Endogenous variables</h3>\n");
    let mut t = HtmlTable::new(&[
        ("variable", Kind::Text),
        ("label", Kind::Text),
        ("linearized", Kind::Text),
        ("largest lead", Kind::Number),
        ("largest lag", Kind::Number),
    ]);
    for v in &m.endogenous {
        t.row(vec![
            Cell::code(&v.name),
            Cell::text(v.label.as_deref().unwrap_or("")),
            Cell::text(if v.log { "in logs" } else { "in levels" }),
            Cell::int(v.max_lead as i64),
            Cell::int(v.max_lag as i64),
        ]);
    }
    h.push_str(&t.render("variables"));

    h.push_str("<h3>Innovations</h3>\n");
    let mut t = HtmlTable::new(&[
        ("innovation", Kind::Text),
        ("label", Kind::Text),
        ("standard deviation", Kind::Number),
        ("largest lag", Kind::Number),
    ]);
    for (i, e) in m.exogenous.iter().enumerate() {
        let sd = m.covariance.get((i, i)).map(|v| v.max(0.0).sqrt());
        let mut sd_cell = match sd {
            Some(v) => Cell::num(v),
            None => Cell::text(""),
        };
        if !m.sd_given.get(i).copied().unwrap_or(true) {
            sd_cell.html.push_str(" <span class=\"tag\">default</span>");
        }
        t.row(vec![
            Cell::code(&e.name),
            Cell::text(e.label.as_deref().unwrap_or("")),
            sd_cell,
            Cell::int(e.max_lag as i64),
        ]);
    }
    h.push_str(&t.render("innovations"));
    let n = m.exogenous.len();
    let correlated =
        (0..n).any(|i| (0..i).any(|j| m.covariance.get((i, j)).is_some_and(|c| *c != 0.0)));
    if correlated {
        h.push_str("<p>Innovation correlations:</p>\n");
        h.push_str(&matrix_table(
            &corr_of(&m.covariance),
            &m.shock_names(),
            &m.shock_names(),
            true,
        ));
    }

    if !input.equations.is_empty() {
        h.push_str("<h3>Equations</h3>\n<ol class=\"equations\">\n");
        for e in &input.equations {
            h.push_str(&format!("<li><code>{}</code></li>\n", escape(e)));
        }
        h.push_str("</ol>\n");
    }
    h.push_str("</section>\n");
}

fn corr_of(cov: &DMatrix<f64>) -> DMatrix<f64> {
    let n = cov.nrows().min(cov.ncols());
    DMatrix::from_fn(n, n, |i, j| {
        let d = (cov[(i, i)] * cov[(j, j)]).sqrt();
        if d > 0.0 && d.is_finite() {
            cov[(i, j)] / d
        } else {
            f64::NAN
        }
    })
}

fn is_given(e: &Expr) -> bool {
    match e {
        Expr::Number(_) => true,
        Expr::Neg(inner) => matches!(**inner, Expr::Number(_)),
        _ => false,
    }
}

fn section_calibration(h: &mut String, input: &ReportInput) {
    let m = input.model;
    open_section(h, 1);
    if m.parameters.is_empty() {
        h.push_str("<p>The model has no parameters.</p>\n</section>\n");
        return;
    }
    h.push_str("<p>Parameter values used for every result on this page, in file order. Derived parameters are computed from the others.</p>\n");
    let mut t = HtmlTable::new(&[
        ("parameter", Kind::Text),
        ("value", Kind::Number),
        ("label", Kind::Text),
        ("source", Kind::Text),
    ]);
    for (i, p) in m.parameters.iter().enumerate() {
        let overridden = input.overrides.iter().any(|o| o == &p.name);
        let source = if overridden {
            Cell {
                html: "<span class=\"tag set\">set on the command line</span>".to_string(),
                sort: Some("set".to_string()),
                numeric: false,
                class: "",
                style: String::new(),
            }
        } else if is_given(&p.expr) {
            Cell::text("given")
        } else {
            match input.definitions.get(i).and_then(|d| d.as_deref()) {
                Some(d) => Cell {
                    html: format!("derived: <code>{}</code>", escape(d)),
                    sort: Some(format!("derived {d}")),
                    numeric: false,
                    class: "",
                    style: String::new(),
                },
                None => Cell::text("derived"),
            }
        };
        t.row(vec![
            Cell::code(&p.name),
            Cell::num(p.value),
            Cell::text(p.label.as_deref().unwrap_or("")),
            source,
        ]);
    }
    h.push_str(&t.render("calibration"));
    h.push_str("</section>\n");
}

fn section_steady(h: &mut String, input: &ReportInput) {
    let s = input.solved;
    open_section(h, 2);
    if s.steady_state.is_empty() {
        h.push_str("<p>No steady state was computed.</p>\n</section>\n");
        return;
    }
    h.push_str("<p>The deterministic steady state around which the model is linearized. Responses and moments below are deviations from it (log deviations, 0.01 = one percent, for variables linearized in logs).</p>\n");
    let mut t = HtmlTable::new(&[
        ("variable", Kind::Text),
        ("steady state", Kind::Number),
        ("deviations", Kind::Text),
        ("label", Kind::Text),
    ]);
    for (i, name) in s.variables.iter().enumerate() {
        let label = input
            .model
            .endogenous
            .iter()
            .find(|v| &v.name == name)
            .and_then(|v| v.label.clone())
            .unwrap_or_default();
        t.row(vec![
            Cell::code(name),
            s.steady_state
                .get(i)
                .map_or(Cell::text(""), |v| Cell::num(*v)),
            Cell::text(if s.log.get(i).copied().unwrap_or(false) {
                "log"
            } else {
                "level"
            }),
            Cell::text(&label),
        ]);
    }
    h.push_str(&t.render("steady"));
    h.push_str("</section>\n");
}

fn section_roots(h: &mut String, input: &ReportInput) {
    let s = input.solved;
    let c = s.counts;
    open_section(h, 3);
    h.push_str(&format!(
        "<p>A root is stable when its modulus is below the threshold {} (an infinite root is never stable). The counting condition asks for as many unstable roots as forward-looking elements (Blanchard and Kahn 1980).</p>\n",
        escape(&sig(s.threshold, 6))
    ));
    h.push_str("<div class=\"split\">\n<div>\n");
    let mut t = HtmlTable::new(&[
        ("", Kind::Text),
        ("roots", Kind::Number),
        ("", Kind::Text),
        ("elements", Kind::Number),
    ]);
    t.row(vec![
        Cell::text("unstable"),
        Cell::int(c.unstable as i64),
        Cell::text("forward-looking"),
        Cell::int(c.forward_looking as i64),
    ]);
    t.row(vec![
        Cell::text("stable"),
        Cell::int(c.stable as i64),
        Cell::text("predetermined"),
        Cell::int(c.predetermined as i64),
    ]);
    h.push_str(&t.render_plain("counts"));
    let verdict = match s.status {
        Status::Determinate => {
            "The counts match and the rank condition holds: the solution is unique and stable."
                .to_string()
        }
        _ => {
            diagnosis_text(s).unwrap_or_else(|| "The counting or rank condition fails.".to_string())
        }
    };
    h.push_str(&format!(
        "<p class=\"diagnosis\" style=\"--status:{}\"><strong>{}.</strong> {}</p>\n",
        status_colour(s.status.as_str()),
        status_name(s.status),
        escape(&verdict)
    ));
    if !s.warnings.is_empty() {
        h.push_str("<ul class=\"warnings\">\n");
        for w in &s.warnings {
            h.push_str(&format!("<li>{}</li>\n", escape(w)));
        }
        h.push_str("</ul>\n");
    }
    let mut t = HtmlTable::new(&[
        ("#", Kind::Number),
        ("real part", Kind::Number),
        ("imaginary part", Kind::Number),
        ("modulus", Kind::Number),
        ("class", Kind::Text),
    ]);
    for (i, r) in s.roots.iter().enumerate() {
        let class = if r.infinite {
            "infinite (unstable)"
        } else if r.stable {
            "stable"
        } else {
            "unstable"
        };
        let mut class_cell = Cell::text(class);
        if r.boundary {
            class_cell
                .html
                .push_str(" <span class=\"tag\">on the threshold</span>");
        }
        t.row(vec![
            Cell::int(i as i64 + 1),
            if r.infinite {
                Cell::text("")
            } else {
                Cell::num(r.re)
            },
            if r.infinite {
                Cell::text("")
            } else {
                Cell::num(r.im)
            },
            match r.modulus {
                Some(v) => Cell::num(v),
                None => Cell {
                    html: "\u{221e}".to_string(),
                    sort: Some(format!("{}", f64::MAX)),
                    numeric: true,
                    class: "",
                    style: String::new(),
                },
            },
            class_cell,
        ]);
    }
    if s.roots.is_empty() {
        h.push_str("<p>The pencil has no roots to classify.</p>\n");
    } else {
        h.push_str(&details(
            &format!("All {} roots, by increasing modulus", s.roots.len()),
            &t.render("roots"),
            s.roots.len() <= 12,
        ));
    }
    h.push_str("</div>\n<figure class=\"roots-figure\">\n");
    h.push_str(&root_plot(&s.roots, s.threshold));
    h.push_str("<figcaption>Generalized eigenvalues in the complex plane; the dashed circle is the stability threshold.</figcaption>\n</figure>\n</div>\n");

    h.push_str("</section>\n");
}

fn section_solution(h: &mut String, input: &ReportInput) {
    let s = input.solved;
    open_section(h, 4);
    let Some(ss) = &s.solution else {
        h.push_str(&format!(
            "<p class=\"absent\">No solution equations: the model has no unique stable solution (status <code>{}</code>). See the diagnosis above.</p>\n</section>\n",
            escape(s.status.as_str())
        ));
        return;
    };
    h.push_str("<p>The decision rule in deviations from the steady state: each variable at date <i>t</i> as a linear function of the states at <i>t</i>\u{2212}1 and the innovations at <i>t</i>, then the law of motion of the states. Coefficients are rounded to four significant digits; the full-precision matrices follow.</p>\n");
    let shock_terms: Vec<String> = s.shocks.iter().map(|e| format!("{e}[t]")).collect();
    h.push_str("<h3>Decision rule</h3>\n<table class=\"eq\">\n<tbody>\n");
    for (i, name) in s.variables.iter().enumerate() {
        let terms = row_terms(&ss.p, &ss.q, i, &ss.states, &shock_terms);
        h.push_str(&format!(
            "<tr><td class=\"lhs\"><code>{}[t]</code></td><td class=\"op\">=</td><td><code>{}</code></td></tr>\n",
            escape(name),
            terms
        ));
    }
    h.push_str("</tbody>\n</table>\n");
    if !ss.states.is_empty() {
        h.push_str("<h3>Law of motion of the states</h3>\n<table class=\"eq\">\n<tbody>\n");
        for (i, name) in ss.states.iter().enumerate() {
            let terms = row_terms(&ss.g, &ss.h, i, &ss.states, &shock_terms);
            h.push_str(&format!(
                "<tr><td class=\"lhs\"><code>{}</code></td><td class=\"op\">=</td><td><code>{}</code></td></tr>\n",
                escape(&advance_state(name)),
                terms
            ));
        }
        h.push_str("</tbody>\n</table>\n");
    }
    let mut matrices = String::new();
    matrices.push_str("<p>P (variables \u{d7} states) and Q (variables \u{d7} innovations):</p>\n");
    matrices.push_str(&matrix_table(&ss.p, &s.variables, &ss.states, false));
    matrices.push_str(&matrix_table(&ss.q, &s.variables, &s.shocks, false));
    if !ss.states.is_empty() {
        matrices.push_str("<p>G (states \u{d7} states) and H (states \u{d7} innovations):</p>\n");
        matrices.push_str(&matrix_table(&ss.g, &ss.states, &ss.states, false));
        matrices.push_str(&matrix_table(&ss.h, &ss.states, &s.shocks, false));
    }
    h.push_str(&details("Solution matrices", &matrices, false));
    h.push_str("</section>\n");
}

/// `a s + b e` for row `i` as escaped text: coefficients to four significant digits, negligible
/// ones left out, a true minus sign, `0` when every coefficient is negligible.
fn row_terms(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    i: usize,
    a_names: &[String],
    b_names: &[String],
) -> String {
    let scale = a
        .iter()
        .chain(b.iter())
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let mut out = String::new();
    let mut push = |c: f64, name: &str| {
        if !c.is_finite() {
            out.push_str(&format!(" + (not finite) {}", escape(name)));
            return;
        }
        if c.abs() <= NEGLIGIBLE_COEFFICIENT * scale || c == 0.0 {
            return;
        }
        let magnitude = sig(c.abs(), 4);
        if out.is_empty() {
            if c < 0.0 {
                out.push('\u{2212}');
            }
        } else {
            out.push_str(if c < 0.0 { " \u{2212} " } else { " + " });
        }
        out.push_str(&format!("{} {}", escape(&magnitude), escape(name)));
    };
    if i < a.nrows() {
        for (j, name) in a_names.iter().enumerate().take(a.ncols()) {
            push(a[(i, j)], name);
        }
    }
    if i < b.nrows() {
        for (j, name) in b_names.iter().enumerate().take(b.ncols()) {
            push(b[(i, j)], name);
        }
    }
    if out.is_empty() {
        "0".to_string()
    } else {
        out
    }
}

/// The name of a state one period later: `k[t-1]` becomes `k[t]`, `e[t-3]` becomes `e[t-2]`.
fn advance_state(name: &str) -> String {
    if let Some(open) = name.rfind("[t-") {
        if let Some(k) = name[open + 3..]
            .strip_suffix(']')
            .and_then(|k| k.parse::<u32>().ok())
        {
            let base = &name[..open];
            return if k <= 1 {
                format!("{base}[t]")
            } else {
                format!("{base}[t-{}]", k - 1)
            };
        }
    }
    format!("next {name}")
}

fn section_irf(h: &mut String, input: &ReportInput) {
    let s = input.solved;
    open_section(h, 5);
    let Some(irf) = input.irf else {
        let why = match (&s.status, &input.irf_error) {
            (Status::Determinate, Some(e)) => format!("Impulse responses could not be computed: {e}"),
            (Status::Determinate, None) => "Impulse responses were not computed.".to_string(),
            (st, _) => format!(
                "No impulse responses: the model has no unique stable solution (status {}), so there is no path to draw.",
                st.as_str()
            ),
        };
        h.push_str(&format!(
            "<p class=\"absent\">{}</p>\n</section>\n",
            escape(&why)
        ));
        return;
    };
    let size = impulse_words(irf.size);
    h.push_str(&format!(
        "<p>Responses to {size} in each innovation at period 0, over {} periods, in deviations from the steady state. Each panel has its own scale.</p>\n",
        irf.horizon
    ));
    let m = input.model;
    let grids = impulse_response_grids(
        irf.shocks,
        &shock_labels(m, irf.shocks),
        irf.variables,
        &variable_subtitles(m, irf.variables, true),
        irf.responses,
        irf.size,
    );
    for ((shock, resp), grid) in irf.shocks.iter().zip(irf.responses).zip(&grids) {
        h.push_str(&format!(
            "<figure class=\"chart\" id=\"irf-{}\">\n",
            escape(&slug(shock))
        ));
        h.push_str(&panel_grid_with(
            grid,
            &GridOptions {
                width: Some(960.0),
                y_range: YRange::IncludeZero,
                ..GridOptions::default()
            },
        ));
        h.push_str("</figure>\n");
        // Impact and peak, for quoting.
        let mut t = HtmlTable::new(&[
            ("variable", Kind::Text),
            ("on impact", Kind::Number),
            ("largest response", Kind::Number),
            ("at period", Kind::Number),
        ]);
        for (i, v) in irf
            .variables
            .iter()
            .enumerate()
            .filter(|(i, _)| *i < resp.nrows())
        {
            let row: Vec<f64> = resp.row(i).iter().copied().collect();
            let impact = row.first().copied().unwrap_or(f64::NAN);
            let peak = row
                .iter()
                .enumerate()
                .filter(|(_, x)| x.is_finite())
                .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()));
            t.row(vec![
                Cell::code(v),
                Cell::num(impact),
                peak.map_or(Cell::text(""), |p| Cell::num(*p.1)),
                peak.map_or(Cell::text(""), |p| Cell::int(p.0 as i64)),
            ]);
        }
        h.push_str(&details(
            &format!("Impact and largest response to {shock}"),
            &t.render(&format!("irf-table-{}", slug(shock))),
            false,
        ));
    }
    h.push_str("</section>\n");
}

fn section_moments(h: &mut String, input: &ReportInput) {
    let s = input.solved;
    open_section(h, 6);
    let Some(mo) = input.moments else {
        let why = match (&s.status, &input.moments_error) {
            (Status::Determinate, Some(e)) => format!("Moments could not be computed: {e}"),
            (Status::Determinate, None) => "Moments were not computed.".to_string(),
            (st, _) => format!(
                "No moments: the model has no unique stable solution (status {}).",
                st.as_str()
            ),
        };
        h.push_str(&format!(
            "<p class=\"absent\">{}</p>\n</section>\n",
            escape(&why)
        ));
        return;
    };
    h.push_str("<p>Theoretical (population) moments implied by the solution, in deviations from the steady state.</p>\n");
    if !mo.nonstationary.is_empty() {
        h.push_str(&format!(
            "<p class=\"absent\">The variance does not exist for {} (a unit or explosive root reaches {}); their moments are left blank.</p>\n",
            escape(&mo.nonstationary.join(", ")),
            if mo.nonstationary.len() == 1 { "it" } else { "them" }
        ));
    }
    for w in mo.warnings {
        h.push_str(&format!("<p class=\"note\">{}</p>\n", escape(w)));
    }

    // Standard deviations and autocorrelations.
    let lags = mo
        .autocorrelation
        .iter()
        .map(|a| a.len())
        .max()
        .unwrap_or(0)
        .min(MAX_LAG_COLUMNS);
    let mut head: Vec<(String, Kind)> = vec![
        ("variable".to_string(), Kind::Text),
        ("standard deviation".to_string(), Kind::Number),
    ];
    for l in 1..=lags {
        head.push((format!("autocorr. lag {l}"), Kind::Number));
    }
    let head_refs: Vec<(&str, Kind)> = head.iter().map(|(n, k)| (n.as_str(), *k)).collect();
    let mut t = HtmlTable::new(&head_refs);
    for (i, v) in mo.variables.iter().enumerate() {
        let mut row = vec![
            Cell::code(v),
            match mo.std.get(i).copied().flatten() {
                Some(x) => Cell::num(x),
                None => Cell::text("does not exist"),
            },
        ];
        for l in 0..lags {
            row.push(
                mo.autocorrelation
                    .get(i)
                    .and_then(|a| a.get(l))
                    .map_or(Cell::text(""), |x| Cell::num(*x)),
            );
        }
        t.row(row);
    }
    h.push_str("<h3>Standard deviations and autocorrelations</h3>\n");
    h.push_str(&t.render("std"));

    h.push_str("<h3>Correlations</h3>\n");
    h.push_str(&matrix_table(
        mo.correlation,
        mo.variables,
        mo.variables,
        true,
    ));

    h.push_str("<h3>Variance decomposition</h3>\n<p>Share of each variable's unconditional variance due to each innovation, in percent.</p>\n");
    h.push_str(&shares_table(
        mo.variance_decomposition,
        mo.variables,
        mo.shocks,
        "vd",
    ));
    if !mo.fevd.is_empty() {
        h.push_str("<h3>Forecast-error variance decomposition</h3>\n<p>Share of the <i>h</i>-period-ahead forecast-error variance due to each innovation, in percent.</p>\n");
        for (horizon, shares) in mo.fevd {
            h.push_str(&details(
                &format!("Horizon {horizon}"),
                &shares_table(shares, mo.variables, mo.shocks, &format!("fevd-{horizon}")),
                mo.fevd.len() <= 2,
            ));
        }
    }
    h.push_str("</section>\n");
}

/// Shares (fractions) as a sortable table in percent, each cell with a bar of its size.
fn shares_table(shares: &[Vec<f64>], rows: &[String], columns: &[String], id: &str) -> String {
    let mut head: Vec<(&str, Kind)> = vec![("variable", Kind::Text)];
    for c in columns {
        head.push((c.as_str(), Kind::Number));
    }
    let mut t = HtmlTable::new(&head);
    for (i, r) in rows.iter().enumerate() {
        let mut row = vec![Cell::code(r)];
        for j in 0..columns.len() {
            let v = shares.get(i).and_then(|s| s.get(j)).copied();
            row.push(match v {
                Some(x) if x.is_finite() => {
                    let pct = 100.0 * x;
                    Cell {
                        html: escape(&fixed(pct, 1)),
                        sort: Some(format!("{x}")),
                        numeric: true,
                        class: "share",
                        style: format!("--w:{:.1}%", pct.clamp(0.0, 100.0)),
                    }
                }
                _ => Cell::text(""),
            });
        }
        t.row(row);
    }
    t.render(id)
}

/// A labelled matrix; `tinted` colours cells from blue (-1) through white to orange (+1), for
/// correlations.
fn matrix_table(a: &DMatrix<f64>, rows: &[String], columns: &[String], tinted: bool) -> String {
    let scale = a
        .iter()
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let mut out =
        String::from("<div class=\"scroll\"><table class=\"matrix\">\n<thead><tr><th></th>");
    for c in columns.iter().take(a.ncols()) {
        out.push_str(&format!(
            "<th scope=\"col\"><code>{}</code></th>",
            escape(c)
        ));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for (i, r) in rows.iter().enumerate().take(a.nrows()) {
        out.push_str(&format!(
            "<tr><th scope=\"row\"><code>{}</code></th>",
            escape(r)
        ));
        for j in 0..columns.len().min(a.ncols()) {
            let v = a[(i, j)];
            if !v.is_finite() {
                out.push_str("<td class=\"n\"></td>");
                continue;
            }
            if tinted && i == j {
                out.push_str(&format!(
                    "<td class=\"n diag\">{}</td>",
                    escape(&fixed(v, 2))
                ));
                continue;
            }
            let style = if tinted {
                let t = v.clamp(-1.0, 1.0);
                // Okabe-Ito blue (0,114,178) for -1 and orange (230,159,0) for +1, mixed with white.
                let (r0, g0, b0) = if t < 0.0 {
                    (0.0, 114.0, 178.0)
                } else {
                    (230.0, 159.0, 0.0)
                };
                let w = 0.55 * t.abs();
                let mix = |c: f64| (255.0 + (c - 255.0) * w).round() as u8;
                format!(
                    " style=\"background:#{:02x}{:02x}{:02x}\"",
                    mix(r0),
                    mix(g0),
                    mix(b0)
                )
            } else {
                String::new()
            };
            let text = if tinted {
                fixed(v, 2)
            } else if v.abs() <= NEGLIGIBLE_COEFFICIENT * scale {
                "0".to_string()
            } else {
                sig(v, 4)
            };
            out.push_str(&format!("<td class=\"n\"{style}>{}</td>", escape(&text)));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table></div>\n");
    out
}

fn details(summary: &str, body: &str, open: bool) -> String {
    format!(
        "<details{}><summary>{}</summary>\n{}</details>\n",
        if open { " open" } else { "" },
        escape(summary),
        body
    )
}

/// A fragment safe for an id: letters, digits, `-` and `_`.
fn slug(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect()
}

/// `x` to `digits` significant digits: fixed notation for moderate magnitudes, otherwise
/// `m×10ⁿ`; a true minus sign; never `-0`.
pub fn sig(x: f64, digits: usize) -> String {
    if x.is_nan() {
        return "NaN".to_string();
    }
    if x.is_infinite() {
        return if x > 0.0 {
            "\u{221e}"
        } else {
            "\u{2212}\u{221e}"
        }
        .to_string();
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let digits = digits.clamp(1, 17);
    let e = x.abs().log10().floor() as i32;
    let s = if (-4..6).contains(&e) {
        let decimals = (digits as i32 - 1 - e).max(0) as usize;
        let s = format!("{:.*}", decimals, x);
        trim_zeros(&s)
    } else {
        let s = format!("{:.*e}", digits - 1, x);
        let (mant, exp) = s.split_once('e').unwrap_or((&s, "0"));
        let exp: i32 = exp.parse().unwrap_or(0);
        format!(
            "{}\u{d7}10{}",
            trim_zeros(mant),
            super::svg::ticks::superscript(exp)
        )
    };
    super::svg::ticks::signed(&s)
}

/// `x` with exactly `decimals` decimals, a true minus sign, never `-0`.
fn fixed(x: f64, decimals: usize) -> String {
    super::svg::ticks::signed(&format!("{:.*}", decimals, x))
}

fn trim_zeros(s: &str) -> String {
    if !s.contains('.') {
        return s.to_string();
    }
    let t = s.trim_end_matches('0');
    t.trim_end_matches('.').to_string()
}

/// Column kinds: numbers are right-aligned and sort by value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Text,
    Number,
}

/// One table cell: its markup and the key it sorts by.
#[derive(Debug, Clone)]
struct Cell {
    html: String,
    /// Sort key (a number for numeric cells); `None` sorts last.
    sort: Option<String>,
    numeric: bool,
    /// Extra class and inline style of the `<td>` (e.g. the bar of a share).
    class: &'static str,
    style: String,
}

impl Cell {
    fn text(s: &str) -> Cell {
        Cell {
            html: escape(s),
            sort: (!s.is_empty()).then(|| s.to_string()),
            numeric: false,
            class: "",
            style: String::new(),
        }
    }
    fn code(s: &str) -> Cell {
        Cell {
            html: format!("<code>{}</code>", escape(s)),
            sort: Some(s.to_string()),
            numeric: false,
            class: "",
            style: String::new(),
        }
    }
    /// A number to four significant digits; NaN (undefined) as a muted dash.
    fn num(x: f64) -> Cell {
        if x.is_nan() {
            return Cell {
                html: "<span class=\"na\" title=\"undefined\">\u{2014}</span>".to_string(),
                sort: None,
                numeric: true,
                class: "",
                style: String::new(),
            };
        }
        Cell {
            html: escape(&sig(x, 4)),
            sort: x.is_finite().then(|| format!("{x}")),
            numeric: true,
            class: "",
            style: String::new(),
        }
    }
    fn int(n: i64) -> Cell {
        Cell {
            html: super::svg::ticks::signed(&n.to_string()),
            sort: Some(n.to_string()),
            numeric: true,
            class: "",
            style: String::new(),
        }
    }
}

/// A table with typed columns; rendered sortable (a class the page's script picks up).
struct HtmlTable {
    head: Vec<(String, Kind)>,
    rows: Vec<Vec<Cell>>,
}

impl HtmlTable {
    fn new(head: &[(&str, Kind)]) -> HtmlTable {
        HtmlTable {
            head: head.iter().map(|(n, k)| (n.to_string(), *k)).collect(),
            rows: Vec::new(),
        }
    }
    fn row(&mut self, cells: Vec<Cell>) {
        self.rows.push(cells);
    }
    fn render(&self, id: &str) -> String {
        self.render_with(id, self.rows.len() > 1)
    }
    fn render_plain(&self, id: &str) -> String {
        self.render_with(id, false)
    }
    fn render_with(&self, id: &str, sortable: bool) -> String {
        let mut out = format!(
            "<div class=\"scroll\"><table id=\"t-{}\" class=\"data{}\">\n<thead><tr>",
            escape(&slug(id)),
            if sortable { " sortable" } else { "" }
        );
        for (name, kind) in &self.head {
            let class = if *kind == Kind::Number {
                " class=\"n\""
            } else {
                ""
            };
            out.push_str(&format!("<th scope=\"col\"{class}>{}</th>", escape(name)));
        }
        out.push_str("</tr></thead>\n<tbody>\n");
        for r in &self.rows {
            out.push_str("<tr>");
            for (j, c) in r.iter().enumerate() {
                let numeric =
                    c.numeric || self.head.get(j).is_some_and(|(_, k)| *k == Kind::Number);
                let key = match &c.sort {
                    Some(k) => format!(" data-sort=\"{}\"", escape(k)),
                    None => String::new(),
                };
                let classes: Vec<&str> = [if numeric { "n" } else { "" }, c.class]
                    .into_iter()
                    .filter(|c| !c.is_empty())
                    .collect();
                let class = if classes.is_empty() {
                    String::new()
                } else {
                    format!(" class=\"{}\"", classes.join(" "))
                };
                let style = if c.style.is_empty() {
                    String::new()
                } else {
                    format!(" style=\"{}\"", escape(&c.style))
                };
                out.push_str(&format!("<td{class}{style}{key}>{}</td>", c.html));
            }
            out.push_str("</tr>\n");
        }
        out.push_str("</tbody>\n</table></div>\n");
        out
    }
}

/// The page's style: system fonts, a readable measure, tabular figures, print-friendly.
const CSS: &str = r#":root { --ink: #1a1a1a; --muted: #595959; --rule: #d9d9d9; --soft: #f5f6f7; --accent: #0072B2; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; color: var(--ink); background: #fff; font: 15px/1.5 -apple-system, "Segoe UI", Helvetica, Arial, "Liberation Sans", sans-serif; }
.page { max-width: 1000px; margin: 0 auto; padding: 28px 24px 48px; }
h1 { font-size: 26px; line-height: 1.25; margin: 0 0 4px; }
h2 { font-size: 20px; margin: 40px 0 10px; padding-bottom: 6px; border-bottom: 1px solid var(--rule); }
h2 .num { color: var(--muted); font-weight: 400; margin-right: 4px; }
h3 { font-size: 15.5px; margin: 22px 0 8px; }
p { margin: 8px 0; max-width: 75ch; }
code { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace; font-size: 0.92em; }
.meta { color: var(--muted); margin: 0 0 14px; max-width: none; }
.status { display: flex; gap: 12px; align-items: flex-start; border-left: 5px solid var(--status); background: var(--soft); padding: 10px 14px; margin: 12px 0; }
.status p { margin: 0; }
.badge { flex: none; background: var(--status); color: #fff; font-weight: 700; font-size: 12.5px; padding: 2px 8px; border-radius: 3px; margin-top: 2px; }
.caveat { border: 1px solid #e4d3a6; background: #fff9e8; padding: 10px 14px; margin: 12px 0; max-width: none; }
nav ol { columns: 2; margin: 12px 0 0; padding-left: 22px; color: var(--muted); }
nav a { color: var(--accent); text-decoration: none; }
nav a:hover { text-decoration: underline; }
.settings { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 10px 0; }
.settings dt { color: var(--muted); }
.settings dd { margin: 0; }
.scroll { overflow-x: auto; margin: 8px 0 14px; }
table { border-collapse: collapse; font-size: 14px; font-variant-numeric: tabular-nums; }
table.data th, table.data td, table.matrix th, table.matrix td { padding: 4px 12px; text-align: left; vertical-align: top; }
table.data thead th, table.matrix thead th { border-bottom: 2px solid #9a9a9a; font-weight: 600; white-space: nowrap; }
table.data tbody tr:nth-child(even) { background: #fafafa; }
table.data tbody td { border-bottom: 1px solid #eeeeee; }
table.data .n, table.matrix .n { text-align: right; white-space: nowrap; }
table.matrix td { text-align: right; border: 1px solid #eeeeee; min-width: 4.5em; }
table.matrix tbody th { text-align: left; font-weight: 400; border-right: 1px solid #cfcfcf; }
table.matrix td.diag { color: var(--muted); background: var(--soft); }
table.sortable thead th { cursor: pointer; user-select: none; }
table.sortable thead th:hover { color: var(--accent); }
table.sortable thead th[aria-sort="ascending"]::after { content: " \25B2"; font-size: 10px; }
table.sortable thead th[aria-sort="descending"]::after { content: " \25BC"; font-size: 10px; }
td.share { min-width: 6.5em; background-image: linear-gradient(90deg, #cfe3f1 var(--w), transparent var(--w)); background-repeat: no-repeat; background-size: 100% 70%; background-position: 0 50%; }
.tag { display: inline-block; font-size: 11.5px; color: var(--muted); border: 1px solid var(--rule); border-radius: 3px; padding: 0 5px; }
.tag.set { color: #8a4b00; border-color: #e6b566; background: #fff4e0; }
table.eq { border-collapse: collapse; margin: 6px 0 12px; }
table.eq td { padding: 3px 6px; vertical-align: top; }
table.eq td.lhs { white-space: nowrap; text-align: right; }
table.eq td.op { color: var(--muted); }
ol.equations { padding-left: 28px; }
ol.equations li { margin: 3px 0; }
.split { display: flex; flex-wrap: wrap; gap: 16px 32px; align-items: flex-start; }
.split > div { flex: 1 1 360px; }
.diagnosis { border-left: 4px solid var(--status); padding-left: 10px; }
.warnings { color: #7a4a00; }
.absent { color: var(--muted); font-style: italic; }
.na { color: #9a9a9a; }
.note { color: var(--muted); }
figure { margin: 12px 0 18px; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { color: var(--muted); font-size: 13px; margin-top: 4px; max-width: 360px; }
.roots-figure { flex: 0 1 360px; margin: 0; }
details { margin: 8px 0 14px; }
summary { cursor: pointer; color: var(--accent); }
footer { margin-top: 48px; padding-top: 12px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 13px; }
@media print {
  .page { max-width: none; padding: 0; }
  nav, summary { display: none; }
  details > * { display: block; }
  h2 { break-after: avoid; }
  figure, table { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"#;

/// Sorting by clicking a header: numbers by `data-sort` value, text alphabetically, blanks last;
/// a second click reverses. Without script the tables simply stay in model order.
const SCRIPT: &str = r#"(function () {
  'use strict';
  var tables = document.querySelectorAll('table.sortable');
  Array.prototype.forEach.call(tables, function (table) {
    var heads = table.tHead ? table.tHead.rows[0].cells : [];
    Array.prototype.forEach.call(heads, function (th, col) {
      th.tabIndex = 0;
      th.title = 'Sort by this column';
      var sort = function () {
        var asc = th.getAttribute('aria-sort') !== 'ascending';
        Array.prototype.forEach.call(heads, function (h) { h.removeAttribute('aria-sort'); });
        th.setAttribute('aria-sort', asc ? 'ascending' : 'descending');
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        var numeric = th.classList.contains('n');
        rows.sort(function (a, b) {
          var x = a.cells[col] ? a.cells[col].getAttribute('data-sort') : null;
          var y = b.cells[col] ? b.cells[col].getAttribute('data-sort') : null;
          if (x === null || y === null) { return (x === null) - (y === null); }
          var d = numeric ? parseFloat(x) - parseFloat(y) : x.localeCompare(y);
          return asc ? d : -d;
        });
        rows.forEach(function (r) { body.appendChild(r); });
      };
      th.addEventListener('click', sort);
      th.addEventListener('keydown', function (e) { if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); sort(); } });
    });
  });
})();
"#;

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
