//! The estimation section of the HTML report (`saddle report FILE --draws D.csv`): a summary of
//! the posterior draws per estimated quantity (mean, sd, 5/50/95 percent quantiles, rank-normalised
//! split R-hat and bulk ESS over the chains of the file, cut to equal length) and the impulse
//! responses with posterior bands, with the sentence saying which draws were used.

use super::svg::escape;
use super::table::number;
use crate::estimation::diagnostics::{ess_bulk, quantile_sorted, rhat};
use crate::estimation::draws::Draws;

/// One row of the summary: name, mean, sd, q05, q50, q95, R-hat, ESS.
pub fn summary_rows(d: &Draws) -> Vec<(String, [f64; 7])> {
    let chains = d.chains();
    let n = chains.iter().map(|(_, r)| r.len()).min().unwrap_or(0);
    d.names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let mut all: Vec<f64> = d.x.iter().map(|x| x[i]).collect();
            let m = all.len() as f64;
            let mean = all.iter().sum::<f64>() / m;
            let sd = if all.len() > 1 {
                (all.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (m - 1.0)).sqrt()
            } else {
                f64::NAN
            };
            all.sort_by(f64::total_cmp);
            let cols: Vec<Vec<f64>> = chains
                .iter()
                .map(|(_, rows)| rows[..n].iter().map(|&r| d.x[r][i]).collect())
                .collect();
            let refs: Vec<&[f64]> = cols.iter().map(|c| c.as_slice()).collect();
            (
                name.clone(),
                [
                    mean,
                    sd,
                    quantile_sorted(&all, 0.05),
                    quantile_sorted(&all, 0.5),
                    quantile_sorted(&all, 0.95),
                    rhat(&refs),
                    ess_bulk(&refs),
                ],
            )
        })
        .collect()
}

/// The section's HTML: heading number `number_in_page`, the draws' summary table, the bands'
/// sentence `bands_line`, the band chart `svg` (inline) and the provenance line.
pub fn section(
    d: &Draws,
    number_in_page: usize,
    bands_line: &str,
    svg: Option<&str>,
    provenance_line: &str,
) -> String {
    let mut h = format!(
        "<section id=\"estimation\">\n<h2><span class=\"num\">{number_in_page}</span> Estimation: posterior draws and bands</h2>\n<p class=\"meta\">{}</p>\n",
        escape(provenance_line)
    );
    h.push_str(&format!(
        "<p>{} draws in {} chain(s). R-hat and ESS over the chains cut to the shortest one's length. Results are conditional on the model, the priors and the data.</p>\n",
        d.len(),
        d.chains().len()
    ));
    h.push_str("<table>\n<thead><tr><th>quantity</th><th>mean</th><th>sd</th><th>q05</th><th>q50</th><th>q95</th><th>R-hat</th><th>ESS</th></tr></thead>\n<tbody>\n");
    for (name, v) in summary_rows(d) {
        h.push_str(&format!("<tr><td>{}</td>", escape(&name)));
        for (k, x) in v.iter().enumerate() {
            let digits = if k == 6 { 0 } else { 4 };
            h.push_str(&format!(
                "<td class=\"num\">{}</td>",
                if x.is_finite() {
                    escape(&number(*x, digits))
                } else {
                    "&ndash;".to_string()
                }
            ));
        }
        h.push_str("</tr>\n");
    }
    h.push_str("</tbody>\n</table>\n");
    h.push_str(&format!("<p>{}</p>\n", escape(bands_line)));
    if let Some(s) = svg {
        let body = s.find("<svg").map_or(s, |i| &s[i..]);
        h.push_str(&format!("<figure>{body}</figure>\n"));
    }
    h.push_str("</section>\n");
    h
}
