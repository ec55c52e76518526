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
        "Theoretical moments (deviations from the steady state; log deviations for log variables)\n\n",
    );
    let lags = m.autocorrelation.first().map_or(0, |a| a.len());
    let mut header: Vec<String> = vec!["variable".into(), "std".into()];
    for k in 1..=lags {
        header.push(format!("ac({k})"));
    }
    let hdr: Vec<&str> = header.iter().map(|s| s.as_str()).collect();
    let mut align = vec![Align::Left];
    align.resize(hdr.len(), Align::Right);
    let mut t = Table::new(&hdr, &align);
    for (i, v) in m.variables.iter().enumerate() {
        let mut row = vec![
            v.clone(),
            m.std[i].map_or("does not exist".to_string(), |s| number(s, 4)),
        ];
        row.extend(m.autocorrelation[i].iter().map(|a| cell(*a, 3)));
        t.row(row);
    }
    out.push_str(&t.render());

    out.push_str("\nCorrelation\n");
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
    out.push_str("\nVariance decomposition (percent of the unconditional variance)\n");
    out.push_str(&shares_table(&m.variance_decomposition));
    for (h, rows) in &m.fevd {
        out.push_str(&format!(
            "\nForecast-error variance decomposition at horizon {h} (percent)\n"
        ));
        out.push_str(&shares_table(rows));
    }
    for w in &m.warnings {
        out.push_str(&format!("\nnote: {w}\n"));
    }
    out.push_str("\nResults are conditional on the model and its calibration.\n");
    out
}
