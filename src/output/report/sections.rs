//! The sections of the report page, each writing its HTML into the page (status banner, summary,
//! calibration, steady state, roots, solution equations, impulse responses, moments).

#[allow(unused_imports)]
use super::*;

pub(super) fn status_banner(s: &SolvedModel) -> String {
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
pub(super) fn diagnosis_text(s: &SolvedModel) -> Option<String> {
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

pub(super) fn status_name(s: Status) -> &'static str {
    match s {
        Status::Determinate => "Determinate",
        Status::Indeterminate => "Indeterminate",
        Status::NoStableSolution => "No stable solution",
        Status::RankFailure => "Rank failure",
    }
}

pub(super) fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

pub(super) fn section_summary(h: &mut String, input: &ReportInput) {
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

pub(super) fn corr_of(cov: &DMatrix<f64>) -> DMatrix<f64> {
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

pub(super) fn is_given(e: &Expr) -> bool {
    match e {
        Expr::Number(_) => true,
        Expr::Neg(inner) => matches!(**inner, Expr::Number(_)),
        _ => false,
    }
}

pub(super) fn section_calibration(h: &mut String, input: &ReportInput) {
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

pub(super) fn section_steady(h: &mut String, input: &ReportInput) {
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

pub(super) fn section_roots(h: &mut String, input: &ReportInput) {
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

pub(super) fn section_solution(h: &mut String, input: &ReportInput) {
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
pub(super) fn row_terms(
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
pub(super) fn advance_state(name: &str) -> String {
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

pub(super) fn section_irf(h: &mut String, input: &ReportInput) {
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

pub(super) fn section_moments(h: &mut String, input: &ReportInput) {
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
