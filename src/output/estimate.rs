//! `saddle estimate`: text and JSON (cli.md "Data commands") from an [`Estimate`], with its
//! provenance. JSON:
//!
//! ```text
//! {"method": "posterior_mode" | "maximum_likelihood",
//!  "mode": {NAME: X}, "mode_sd": {NAME: X}, "loglik_at_mode": X, "log_posterior_at_mode": X,
//!  "log_marginal": {"laplace": X | null, "harmonic": X | null},
//!  "posterior": {NAME: {"mean", "sd", "q05", "q50", "q95", "rhat", "ess"}},
//!  "acceptance": [per chain], "sampler": {...}, "warnings": [...], "provenance": {...}}
//! ```

use super::ordered_json::Json;
use super::table::{number, Align, Table};
use crate::estimation::{Estimate, Quantity};
use crate::stats::Distribution;

/// Where an estimate came from (cli.md "Every output says where it came from").
#[derive(Debug, Clone, PartialEq)]
pub struct Provenance {
    pub file: String,
    pub sha256: String,
    pub data_file: String,
    pub data_sha256: String,
    pub version: String,
    /// Exactly the `--set` values.
    pub overrides: Vec<(String, f64)>,
    /// Every parameter's value at the calibration (the estimated ones start there).
    pub parameters: Vec<(String, f64)>,
    pub threshold: f64,
    pub regime: String,
}

/// The sampler's settings, for the record.
#[derive(Debug, Clone, PartialEq)]
pub struct SamplerRecord {
    pub chains: usize,
    pub draws: usize,
    pub burn_in: usize,
    pub seed: u64,
    pub step: f64,
    /// Draws files the chains were read from (`--diagnose`), with their SHA-256; empty when the
    /// chains ran in this run.
    pub files: Vec<(String, String)>,
}

/// A prior in words with its natural parameters, e.g. `beta(a = 3, b = 2) in [0.1, 0.9]`.
pub fn prior_text(q: &Quantity) -> String {
    let g = |x: f64| format!("{}", (x * 1e6).round() / 1e6);
    let mut s = match q.prior.distribution {
        Distribution::Normal { mean, sd } => format!("normal(mean = {}, sd = {})", g(mean), g(sd)),
        Distribution::Beta { a, b } => format!("beta(a = {}, b = {})", g(a), g(b)),
        Distribution::Gamma { shape, scale } => {
            format!("gamma(shape = {}, scale = {})", g(shape), g(scale))
        }
        Distribution::InvGamma { shape, scale } => {
            format!("invgamma(shape = {}, scale = {})", g(shape), g(scale))
        }
        Distribution::Uniform { lo, hi } => format!("uniform(lo = {}, hi = {})", g(lo), g(hi)),
        Distribution::Flat => "flat()".to_string(),
    };
    if let Some((lo, hi)) = q.prior.truncation {
        s.push_str(&format!(" in [{}, {}]", g(lo), g(hi)));
    }
    s
}

fn provenance_json(p: &Provenance) -> Json {
    let pairs = |v: &[(String, f64)]| {
        Json::Object(
            v.iter()
                .map(|(k, x)| (k.clone(), Json::Number(*x)))
                .collect(),
        )
    };
    Json::Object(vec![
        ("file".into(), Json::String(p.file.clone())),
        ("sha256".into(), Json::String(p.sha256.clone())),
        ("data_file".into(), Json::String(p.data_file.clone())),
        ("data_sha256".into(), Json::String(p.data_sha256.clone())),
        ("version".into(), Json::String(p.version.clone())),
        ("overrides".into(), pairs(&p.overrides)),
        ("parameters".into(), pairs(&p.parameters)),
        ("threshold".into(), Json::Number(p.threshold)),
        ("regime".into(), Json::String(p.regime.clone())),
        (
            "note".into(),
            Json::String("conditional on the model, the priors and the data".into()),
        ),
    ])
}

/// The JSON document of the module doc.
pub fn json(
    e: &Estimate,
    quantities: &[Quantity],
    sampler: &SamplerRecord,
    prov: &Provenance,
) -> String {
    let by_name = |f: &dyn Fn(usize) -> f64| {
        Json::Object(
            e.names
                .iter()
                .enumerate()
                .map(|(i, n)| (n.clone(), Json::Number(f(i))))
                .collect(),
        )
    };
    let posterior = Json::Object(
        e.names
            .iter()
            .zip(&e.summaries)
            .map(|(n, s)| {
                (
                    n.clone(),
                    Json::Object(vec![
                        ("mean".into(), Json::Number(s.mean)),
                        ("sd".into(), Json::Number(s.sd)),
                        ("q05".into(), Json::Number(s.q05)),
                        ("q50".into(), Json::Number(s.q50)),
                        ("q95".into(), Json::Number(s.q95)),
                        ("rhat".into(), Json::Number(s.rhat)),
                        ("ess".into(), Json::Number(s.ess)),
                    ]),
                )
            })
            .collect(),
    );
    let priors = Json::Object(
        quantities
            .iter()
            .map(|q| (q.name.clone(), Json::String(prior_text(q))))
            .collect(),
    );
    let doc = Json::Object(vec![
        (
            "method".into(),
            Json::String(
                if e.maximum_likelihood {
                    "maximum_likelihood"
                } else {
                    "posterior_mode"
                }
                .into(),
            ),
        ),
        ("mode".into(), by_name(&|i| e.mode.x[i])),
        ("mode_sd".into(), by_name(&|i| e.mode.sd[i])),
        ("loglik_at_mode".into(), Json::Number(e.mode.loglik)),
        (
            "log_posterior_at_mode".into(),
            Json::Number(e.mode.log_posterior),
        ),
        (
            "log_marginal".into(),
            Json::Object(vec![
                ("laplace".into(), Json::opt_number(e.mode.laplace)),
                ("harmonic".into(), Json::opt_number(e.harmonic)),
            ]),
        ),
        ("posterior".into(), posterior),
        (
            "acceptance".into(),
            Json::numbers(&e.chains.iter().map(|c| c.acceptance).collect::<Vec<_>>()),
        ),
        ("priors".into(), priors),
        (
            "mode_search".into(),
            Json::Object(vec![
                ("start_values".into(), Json::numbers(&e.mode.start_values)),
                (
                    "evaluations".into(),
                    Json::Integer(e.mode.evaluations as i64),
                ),
            ]),
        ),
        (
            "sampler".into(),
            Json::Object(vec![
                ("chains".into(), Json::Integer(sampler.chains as i64)),
                ("draws".into(), Json::Integer(sampler.draws as i64)),
                ("burn_in".into(), Json::Integer(sampler.burn_in as i64)),
                ("seed".into(), Json::String(sampler.seed.to_string())),
                ("step".into(), Json::Number(sampler.step)),
                (
                    "files".into(),
                    Json::Array(
                        sampler
                            .files
                            .iter()
                            .map(|(f, sha)| {
                                Json::Object(vec![
                                    ("file".into(), Json::String(f.clone())),
                                    ("sha256".into(), Json::String(sha.clone())),
                                ])
                            })
                            .collect(),
                    ),
                ),
            ]),
        ),
        (
            "warnings".into(),
            Json::Array(e.warnings.iter().map(|w| Json::String(w.clone())).collect()),
        ),
        ("provenance".into(), provenance_json(prov)),
    ]);
    doc.to_pretty_string()
}

/// The text report: header with provenance, the mode table, the posterior table, the
/// acceptance rates, the marginal likelihoods, warnings.
pub fn text(
    e: &Estimate,
    quantities: &[Quantity],
    sampler: &SamplerRecord,
    prov: &Provenance,
) -> String {
    let mut out = String::new();
    out.push_str(&format!(
        "saddle estimate {}: {} (sha256 {}), data {} (sha256 {})\n",
        prov.version,
        prov.file,
        &prov.sha256[..prov.sha256.len().min(12)],
        prov.data_file,
        &prov.data_sha256[..prov.data_sha256.len().min(12)]
    ));
    if !prov.overrides.is_empty() {
        let o: Vec<String> = prov
            .overrides
            .iter()
            .map(|(k, v)| format!("{k}={v}"))
            .collect();
        out.push_str(&format!("overrides: {}\n", o.join(", ")));
    }
    out.push_str(&format!(
        "regime {}, threshold {}\n",
        prov.regime,
        crate::solution::threshold::show(prov.threshold)
    ));
    out.push_str(
        "Results are conditional on the model, the priors and the data; they are not facts about the world.\n\n",
    );
    if e.maximum_likelihood {
        out.push_str("Maximum likelihood (every prior is flat)\n");
    } else {
        out.push_str("Posterior mode\n");
    }
    let sd_head = if e.maximum_likelihood {
        "std. error"
    } else {
        "mode sd"
    };
    let head = if e.maximum_likelihood {
        "estimate"
    } else {
        "mode"
    };
    let mut t = Table::new(
        &["quantity", "prior", head, sd_head],
        &[Align::Left, Align::Left, Align::Right, Align::Right],
    );
    for (i, q) in quantities.iter().enumerate() {
        t.row(vec![
            q.name.clone(),
            prior_text(q),
            number(e.mode.x[i], 4),
            number(e.mode.sd[i], 4),
        ]);
    }
    out.push_str(&t.render());
    out.push_str(&format!(
        "found from {} starting point(s) in {} evaluations of the likelihood\n",
        e.mode.start_values.len(),
        e.mode.evaluations
    ));
    out.push_str(&format!(
        "log likelihood at the {head}: {}\n",
        number(e.mode.loglik, 4)
    ));
    if !e.maximum_likelihood {
        out.push_str(&format!(
            "log posterior kernel (prior + likelihood) at the mode: {}\n",
            number(e.mode.log_posterior, 4)
        ));
    }
    if !e.chains.is_empty() && !sampler.files.is_empty() {
        let files: Vec<String> = sampler
            .files
            .iter()
            .map(|(f, sha)| format!("{f} (sha256 {})", sha.get(..12).unwrap_or(sha)))
            .collect();
        out.push_str(&format!(
            "\nPosterior from {} chains x {} draws read from {}\n",
            sampler.chains,
            sampler.draws,
            files.join(", ")
        ));
    } else if !e.chains.is_empty() {
        out.push_str(&format!(
            "\nPosterior from {} chains x {} draws (burn-in {}, seed {})\n",
            sampler.chains, sampler.draws, sampler.burn_in, sampler.seed
        ));
        let mut t = Table::new(
            &[
                "quantity", "mean", "sd", "q05", "q50", "q95", "R-hat", "ESS",
            ],
            &[
                Align::Left,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Right,
            ],
        );
        for (n, s) in e.names.iter().zip(&e.summaries) {
            t.row(vec![
                n.clone(),
                number(s.mean, 4),
                number(s.sd, 4),
                number(s.q05, 4),
                number(s.q50, 4),
                number(s.q95, 4),
                number(s.rhat, 3),
                number(s.ess, 0),
            ]);
        }
        out.push_str(&t.render());
        let acc: Vec<String> = e
            .chains
            .iter()
            .map(|c| format!("{:.3}", c.acceptance))
            .collect();
        out.push_str(&format!("acceptance rate per chain: {}\n", acc.join(", ")));
    }
    if !e.maximum_likelihood {
        let show = |x: Option<f64>| x.map_or("not available".to_string(), |v| number(v, 4));
        out.push_str(&format!(
            "\nlog marginal likelihood: Laplace {}, modified harmonic mean {}\n",
            show(e.mode.laplace),
            show(e.harmonic)
        ));
    }
    if !e.warnings.is_empty() {
        out.push_str("\nwarnings:\n");
        for w in &e.warnings {
            out.push_str(&format!("  - {w}\n"));
        }
    }
    out
}

/// The `--plot` document: one panel per estimated quantity with the trace of each chain's kept
/// draws (x axis: draw number), the file and data named in a note.
pub fn trace_chart(e: &Estimate, prov: &Provenance) -> String {
    use super::svg::{panel_grids, GridOptions, Panel, PanelGrid, Series, YRange};
    let panels = e
        .names
        .iter()
        .enumerate()
        .map(|(i, n)| Panel {
            title: n.clone(),
            subtitle: e
                .summaries
                .get(i)
                .map(|s| format!("mean {}, R-hat {}", number(s.mean, 3), number(s.rhat, 3))),
            series: e
                .chains
                .iter()
                .enumerate()
                .map(|(c, ch)| Series {
                    name: format!("chain {}", c + 1),
                    values: ch.x.column(i).iter().copied().collect(),
                })
                .collect(),
        })
        .collect();
    let grid = PanelGrid {
        title: "Traces of the Metropolis-Hastings chains (kept draws)".to_string(),
        x_label: "draw".to_string(),
        y_label: Some("value".to_string()),
        panels,
    };
    let mut notes = vec![format!(
        "{} (sha256 {}), data {} (sha256 {}), saddle {}",
        prov.file,
        &prov.sha256[..prov.sha256.len().min(12)],
        prov.data_file,
        &prov.data_sha256[..prov.data_sha256.len().min(12)],
        prov.version
    )];
    if !prov.overrides.is_empty() {
        let o: Vec<String> = prov
            .overrides
            .iter()
            .map(|(k, v)| format!("{k}={v}"))
            .collect();
        notes.push(format!("overrides: {}", o.join(", ")));
    }
    notes.push("Results are conditional on the model, the priors and the data.".to_string());
    panel_grids(
        std::slice::from_ref(&grid),
        &GridOptions {
            y_range: YRange::Data,
            first_period: 1,
            notes,
            ..GridOptions::default()
        },
    )
}

/// Bins of the posterior histogram in [`density_chart`].
pub const DENSITY_BINS: usize = 40;

/// Prior against posterior, one panel per quantity: the histogram of the kept draws as a
/// density (bars: count / (draws x bin width), 40 bins over the draws' range widened by a tenth
/// on each side and kept inside the support), the prior density at the bin centres (a line;
/// none for `flat()`), and the mode as a dashed vertical line. Returns the SVG document.
pub fn density_chart(e: &Estimate, quantities: &[Quantity], prov: &Provenance) -> String {
    use super::data_plot_frame::{Frame, FrameGrid};
    let mut frames = Vec::new();
    let mut labels = Vec::new();
    for (i, q) in quantities.iter().enumerate() {
        let mut all: Vec<f64> = e
            .chains
            .iter()
            .flat_map(|c| c.x.column(i).iter().copied().collect::<Vec<f64>>())
            .filter(|v| v.is_finite())
            .collect();
        all.sort_by(f64::total_cmp);
        let (Some(&min), Some(&max)) = (all.first(), all.last()) else {
            continue;
        };
        let pad = ((max - min) * 0.1).max(1e-9 * max.abs().max(1.0));
        let lo = (min - pad).max(q.lo);
        let hi = (max + pad).min(q.hi);
        let w = (hi - lo) / DENSITY_BINS as f64;
        let mut counts = vec![0usize; DENSITY_BINS];
        for v in &all {
            let k = (((v - lo) / w).floor().max(0.0) as usize).min(DENSITY_BINS - 1);
            counts[k] += 1;
        }
        let n = all.len() as f64;
        let bars: Vec<Vec<(f64, f64, &'static str)>> = counts
            .iter()
            .map(|&c| vec![(0.0, c as f64 / (n * w), "#9ECAE1")])
            .collect();
        let centres: Vec<f64> = (0..DENSITY_BINS)
            .map(|k| lo + (k as f64 + 0.5) * w)
            .collect();
        let prior: Vec<f64> = if q.prior.is_flat() {
            Vec::new()
        } else {
            centres
                .iter()
                .map(|&x| q.prior.log_density(x).exp())
                .collect()
        };
        let top = bars
            .iter()
            .map(|b| b[0].1)
            .chain(prior.iter().copied())
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max);
        let mode = e.mode.x.get(i).copied().unwrap_or(f64::NAN);
        let mode_x = (mode - lo) / w - 0.5;
        let mut lines = Vec::new();
        if !prior.is_empty() {
            lines.push((prior, "#D55E00".to_string(), 0));
        }
        frames.push(Frame {
            title: q.name.clone(),
            subtitle: Some(format!(
                "from {} to {}; mode {}",
                number(lo, 4),
                number(hi, 4),
                number(mode, 4)
            )),
            lo: 0.0,
            hi: if top > 0.0 { top } else { 1.0 },
            n_periods: DENSITY_BINS,
            first_x: 0,
            bars,
            bands: Vec::new(),
            lines,
            dots: Vec::new(),
            divider: (mode_x.is_finite() && mode_x >= -0.5 && mode_x <= DENSITY_BINS as f64 - 0.5)
                .then_some(mode_x),
        });
        if labels.is_empty() {
            labels = (0..DENSITY_BINS)
                .map(|k| format!("bin {}", k + 1))
                .collect();
        }
    }
    FrameGrid {
        title: "Prior and posterior densities".to_string(),
        legend: vec![
            ("posterior (histogram of the draws)".to_string(), "#9ECAE1".to_string(), true),
            ("prior density".to_string(), "#D55E00".to_string(), false),
            ("mode (dashed)".to_string(), "#595959".to_string(), false),
        ],
        frames,
        period_labels: labels,
        notes: vec![
            format!(
                "Each panel runs over the range in its subtitle, in {DENSITY_BINS} bins. {} (sha256 {}), data {} (sha256 {}), saddle {}.",
                prov.file,
                &prov.sha256[..prov.sha256.len().min(12)],
                prov.data_file,
                &prov.data_sha256[..prov.data_sha256.len().min(12)],
                prov.version
            ),
            "Results are conditional on the model, the priors and the data.".to_string(),
        ],
    }
    .render()
}

/// SVG documents stacked vertically into one (each kept whole as a nested `<svg>` placed at
/// its offset); a document whose size cannot be read is left out.
pub fn stack_svg(docs: &[String]) -> String {
    let attr = |tag: &str, name: &str| -> Option<f64> {
        let key = format!(" {name}=\"");
        let start = tag.find(&key)? + key.len();
        let end = tag[start..].find('"')? + start;
        tag[start..end].parse().ok()
    };
    let mut body = String::new();
    let (mut width, mut height) = (0.0f64, 0.0f64);
    for d in docs {
        let Some(at) = d.find("<svg") else { continue };
        let Some(close) = d[at..].find('>') else {
            continue;
        };
        let tag = &d[at..at + close];
        let (Some(w), Some(h)) = (attr(tag, "width"), attr(tag, "height")) else {
            continue;
        };
        body.push_str(&format!("<svg x=\"0\" y=\"{height}\"{}", &d[at + 4..]));
        body.push('\n');
        width = width.max(w);
        height += h;
    }
    format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\">\n{body}</svg>\n"
    )
}
