//! The data section of the HTML report (`saddle report FILE --data D.csv`): the likelihood with
//! its convention, the observables against the smoothed model, the historical decomposition and
//! unconditional fan charts, with the data file and its sha256. One HTML fragment
//! (`<section id="data">`), inserted by [`super::report::render`]; the charts are the SVG
//! documents of [`super::data_plot`], inlined.

use super::data::{provenance_line, Provenance, CONDITIONAL, LIKELIHOOD_CONVENTION};
use super::svg::escape;
use super::table::number;
use crate::data::run::FilterResults;

/// The pre-rendered pieces of the section.
pub struct DataSection<'a> {
    pub prov: &'a Provenance,
    pub periods: &'a [String],
    pub filter: &'a FilterResults,
    pub fit_svg: String,
    pub decomposition_svg: Option<String>,
    pub forecast_svg: Option<String>,
    /// Problems met on the way (a part that could not be computed), for the reader.
    pub notes: Vec<String>,
}

/// The `<section>` element, numbered `number`.
pub fn section(d: &DataSection, number_in_page: usize) -> String {
    let mut h = String::new();
    h.push_str(&format!(
        "<section id=\"data\">\n<h2><span class=\"num\">{number_in_page}</span> Data: filter, decomposition, forecasts</h2>\n"
    ));
    h.push_str(&format!(
        "<p class=\"meta\">{}</p>\n",
        escape(&provenance_line(d.prov))
    ));
    let r = d.filter;
    let mut ll = format!(
        "Log-likelihood <strong>{}</strong> over {} periods ({} to {}), {} observations used",
        escape(&number(r.loglik, 4)),
        d.periods.len(),
        escape(d.periods.first().map_or("", |s| s.as_str())),
        escape(d.periods.last().map_or("", |s| s.as_str())),
        r.n_used
    );
    if r.n_diffuse > 0 {
        ll.push_str(&format!(
            ", {} left out (they resolve unit-root states)",
            r.n_diffuse
        ));
    }
    if r.n_skipped > 0 {
        ll.push_str(&format!(
            ", {} skipped as exact combinations of others",
            r.n_skipped
        ));
    }
    h.push_str(&format!(
        "<p>{ll}. It is the {}.</p>\n",
        escape(LIKELIHOOD_CONVENTION)
    ));
    for (id, caption, svg) in [
        (
            "data-fit",
            "The observables and what the smoothed states imply (data units).",
            Some(&d.fit_svg),
        ),
        (
            "data-decomposition",
            "Historical decomposition of the smoothed variables by innovation and initial state.",
            d.decomposition_svg.as_ref(),
        ),
        (
            "data-forecast",
            "Forecasts past the data with 50 and 90 percent bands (unconditional).",
            d.forecast_svg.as_ref(),
        ),
    ] {
        if let Some(svg) = svg {
            h.push_str(&format!(
                "<figure class=\"chart\" id=\"{id}\">\n{svg}<figcaption>{}</figcaption>\n</figure>\n",
                escape(caption)
            ));
        }
    }
    for n in &d.notes {
        h.push_str(&format!("<p class=\"absent\">{}</p>\n", escape(n)));
    }
    h.push_str(&format!("<p>{}</p>\n</section>\n", escape(CONDITIONAL)));
    h
}
