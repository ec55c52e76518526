//! `saddle moments` output: text tables, JSON (cli.md shape `{variables, std, correlation,
//! autocorrelation, variance_decomposition}` plus `shocks`, `lags`, `fevd`, `nonstationary`,
//! `warnings`) and a tidy CSV `statistic,variable,against,horizon,value`.

use super::csv;
use super::ordered_json::Json;
use super::table::{number, Align, Table};
use crate::analysis::moments::Moments;

/// The JSON document (undefined values are `null`).
pub fn to_json(m: &Moments) -> Json {
    let names = |v: &[String]| Json::Array(v.iter().map(|s| Json::String(s.clone())).collect());
    let per_variable = |f: &dyn Fn(usize) -> Json| {
        Json::Object(
            m.variables
                .iter()
                .enumerate()
                .map(|(i, v)| (v.clone(), f(i)))
                .collect(),
        )
    };
    let shares = |rows: &[Vec<f64>]| {
        per_variable(&|i| {
            Json::Object(
                m.shocks
                    .iter()
                    .enumerate()
                    .map(|(j, s)| (s.clone(), Json::Number(rows[i][j])))
                    .collect(),
            )
        })
    };
    let n = m.variables.len();
    let correlation = Json::Array(
        (0..n)
            .map(|i| {
                Json::Array(
                    (0..n)
                        .map(|k| Json::Number(m.correlation[(i, k)]))
                        .collect(),
                )
            })
            .collect(),
    );
    Json::Object(vec![
        ("variables".into(), names(&m.variables)),
        ("shocks".into(), names(&m.shocks)),
        ("std".into(), per_variable(&|i| Json::opt_number(m.std[i]))),
        ("correlation".into(), correlation),
        (
            "autocorrelation".into(),
            per_variable(&|i| Json::numbers(&m.autocorrelation[i])),
        ),
        (
            "variance_decomposition".into(),
            shares(&m.variance_decomposition),
        ),
        (
            "fevd".into(),
            Json::Array(
                m.fevd
                    .iter()
                    .map(|(h, rows)| {
                        Json::Object(vec![
                            ("horizon".into(), Json::Integer(*h as i64)),
                            ("shares".into(), shares(rows)),
                        ])
                    })
                    .collect(),
            ),
        ),
        ("nonstationary".into(), names(&m.nonstationary)),
        (
            "warnings".into(),
            Json::Array(m.warnings.iter().map(|w| Json::String(w.clone())).collect()),
        ),
    ])
}

/// Tidy CSV: one row per statistic. `statistic` is `std`, `correlation` (against another
/// variable), `autocorrelation` (horizon = lag), `variance_share` (against an innovation) or
/// `fevd_share` (against an innovation, at a horizon). Undefined values are `NaN`.
pub fn to_csv(m: &Moments) -> String {
    let mut out = String::new();
    csv::record(
        &mut out,
        &["statistic", "variable", "against", "horizon", "value"],
    );
    for (i, v) in m.variables.iter().enumerate() {
        let sd = m.std[i].unwrap_or(f64::NAN);
        csv::record(&mut out, &["std", v, "", "", &csv::number(sd)]);
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (k, w) in m.variables.iter().enumerate() {
            let c = csv::number(m.correlation[(i, k)]);
            csv::record(&mut out, &["correlation", v, w, "", &c]);
        }
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (lag, a) in m.autocorrelation[i].iter().enumerate() {
            let lag = (lag + 1).to_string();
            csv::record(
                &mut out,
                &["autocorrelation", v, "", &lag, &csv::number(*a)],
            );
        }
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (j, s) in m.shocks.iter().enumerate() {
            let x = csv::number(m.variance_decomposition[i][j]);
            csv::record(&mut out, &["variance_share", v, s, "", &x]);
        }
    }
    for (h, rows) in &m.fevd {
        let hs = h.to_string();
        for (i, v) in m.variables.iter().enumerate() {
            for (j, s) in m.shocks.iter().enumerate() {
                let x = csv::number(rows[i][j]);
                csv::record(&mut out, &["fevd_share", v, s, &hs, &x]);
            }
        }
    }
    out
}

fn cell(x: f64, decimals: usize) -> String {
    if x.is_nan() {
        "-".to_string()
    } else {
        number(x, decimals)
    }
}

fn percent(x: f64) -> String {
    if x.is_nan() {
        "-".to_string()
    } else {
        number(100.0 * x, 1)
    }
}

/// Text tables: standard deviations with autocorrelations, the correlation matrix, the variance
/// decomposition in percent and, when asked, the forecast-error decompositions.
pub fn to_text(m: &Moments, title: Option<&str>) -> String {
    let mut out = String::new();
    if let Some(t) = title {
        out.push_str(t);
        out.push('\n');
    }
    out.push_str(
        "How much each variable moves, how long a movement lasts, and what drives it\n\
         (unconditional, in deviations from the steady state; log deviations for log variables)\n\n",
    );
    let lags = m.autocorrelation.first().map_or(0, |a| a.len());
    let profile_head = if lags > 0 {
        format!("persistence, lags 1-{lags}")
    } else {
        "persistence".to_string()
    };
    let header = [
        "variable",
        "sd",
        profile_head.as_str(),
        "half-life",
        "largest sources of its variance",
    ];
    let align = [
        Align::Left,
        Align::Right,
        Align::Left,
        Align::Right,
        Align::Left,
    ];
    let mut t = Table::new(&header, &align);
    for (i, v) in m.variables.iter().enumerate() {
        let ac = m.autocorrelation.get(i).map_or(&[][..], |a| &a[..]);
        let shares = m.variance_decomposition.get(i).map_or(&[][..], |r| &r[..]);
        t.row(vec![
            v.clone(),
            m.std[i].map_or("does not exist".to_string(), |s| number(s, 4)),
            persistence_profile(ac),
            half_life(ac.first().copied()),
            largest_sources(&m.shocks, shares),
        ]);
    }
    out.push_str(&t.render());
    if lags > 0 {
        out.push_str("\nAutocorrelations\n");
        let mut header: Vec<String> = vec!["variable".into()];
        header.extend((1..=lags).map(|k| format!("lag {k}")));
        let hdr: Vec<&str> = header.iter().map(|s| s.as_str()).collect();
        let mut align = vec![Align::Left];
        align.resize(hdr.len(), Align::Right);
        let mut t = Table::new(&hdr, &align);
        for (i, v) in m.variables.iter().enumerate() {
            let mut row = vec![v.clone()];
            row.extend(m.autocorrelation[i].iter().map(|a| cell(*a, 3)));
            t.row(row);
        }
        out.push_str(&t.render());
    }

    out.push_str("\nHow the variables move together (correlations)\n");
    let mut header: Vec<&str> = vec![""];
    header.extend(m.variables.iter().map(|s| s.as_str()));
    let mut align = vec![Align::Left];
    align.resize(header.len(), Align::Right);
    let mut t = Table::new(&header, &align);
    for (i, v) in m.variables.iter().enumerate() {
        let mut row = vec![v.clone()];
        row.extend((0..m.variables.len()).map(|k| cell(m.correlation[(i, k)], 3)));
        t.row(row);
    }
    out.push_str(&t.render());

    let shares_table = |rows: &[Vec<f64>]| {
        let mut header: Vec<&str> = vec!["variable"];
        header.extend(m.shocks.iter().map(|s| s.as_str()));
        let mut align = vec![Align::Left];
        align.resize(header.len(), Align::Right);
        let mut t = Table::new(&header, &align);
        for (i, v) in m.variables.iter().enumerate() {
            let mut row = vec![v.clone()];
            row.extend(rows[i].iter().map(|x| percent(*x)));
            t.row(row);
        }
        t.render()
    };
    out.push_str("\nShares of each innovation in the unconditional variance (percent)\n");
    out.push_str(&shares_table(&m.variance_decomposition));
    for (h, rows) in &m.fevd {
        out.push_str(&format!(
            "\nShares of each innovation in the variance of the forecast error {h} periods ahead (percent)\n"
        ));
        out.push_str(&shares_table(rows));
    }
    for w in &m.warnings {
        out.push_str(&format!("\nnote: {w}\n"));
    }
    out.push_str("\nResults are conditional on the model and its calibration.\n");
    out
}

/// Eight levels of a block character, for a persistence profile at a glance.
const BLOCKS: [char; 8] = [
    '\u{2581}', '\u{2582}', '\u{2583}', '\u{2584}', '\u{2585}', '\u{2586}', '\u{2587}', '\u{2588}',
];

/// The autocorrelations as a row of block characters (height |rho|; a negative one is marked
/// `-` before its block; `?` where it does not exist). Returns `-` without autocorrelations.
fn persistence_profile(ac: &[f64]) -> String {
    if ac.is_empty() {
        return "-".to_string();
    }
    let mut s = String::new();
    for a in ac {
        if a.is_finite() {
            if *a < 0.0 {
                s.push('-');
            }
            let level = (a.abs().min(1.0) * 7.0).round() as usize;
            s.push(BLOCKS[level.min(7)]);
        } else {
            s.push('?');
        }
    }
    s
}

/// Periods for a movement to halve when the first autocorrelation is rho in (0, 1):
/// ln(0.5) / ln(rho) (exact for a first-order process, an indication otherwise). Returns `-`
/// otherwise.
fn half_life(rho: Option<f64>) -> String {
    match rho {
        Some(r) if r > 0.0 && r < 1.0 => format!("{:.1}", 0.5f64.ln() / r.ln()),
        _ => "-".to_string(),
    }
}

/// The innovations with the largest shares (at most three, each at least half a percent), as
/// `e_rate 87%, e_cost 13%`.
fn largest_sources(shocks: &[String], shares: &[f64]) -> String {
    let mut order: Vec<usize> = (0..shares.len().min(shocks.len())).collect();
    order.sort_by(|&a, &b| shares[b].total_cmp(&shares[a]));
    let parts: Vec<String> = order
        .iter()
        .filter(|&&k| shares[k].is_finite() && shares[k] >= 0.005)
        .take(3)
        .map(|&k| format!("{} {:.0}%", shocks[k], 100.0 * shares[k]))
        .collect();
    if parts.is_empty() {
        "-".to_string()
    } else {
        parts.join(", ")
    }
}
