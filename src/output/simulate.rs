//! `saddle simulate` output: CSV (wide: `period,<variable>...`; tidy: `period,variable,value`),
//! JSON `{seed, periods, burn_in, levels, variables, paths: {variable: [...]}}` and a text table.
//! Periods are numbered from 1 (the first kept period after the burn-in).

use std::fmt::Write;

use super::csv;
use super::ordered_json::Json;
use super::table::{number, Align, Table};
use crate::analysis::simulate::Simulation;

/// Appends a number in its shortest round-trip form (the Ryu algorithm, Adams 2018, through
/// serde_json's formatter: about ten times faster than `Display` on long series, and it writes
/// 1e-300 as `1e-300`); non-finite values as [`csv::number`] writes them.
fn push_number(out: &mut String, x: f64) {
    use serde_json::ser::{CompactFormatter, Formatter};
    if x.is_finite() {
        let mut buf: Vec<u8> = Vec::with_capacity(24);
        if CompactFormatter.write_f64(&mut buf, x).is_ok() {
            // Ryu writes ASCII digits, '.', '-', 'e' only.
            out.push_str(std::str::from_utf8(&buf).unwrap_or("NaN"));
            return;
        }
    }
    out.push_str(&csv::number(x));
}

/// One row per period, one column per variable.
pub fn to_csv_wide(s: &Simulation) -> String {
    let mut out = String::with_capacity(s.periods * (s.variables.len() + 1) * 20 + 64);
    let mut header = vec!["period"];
    header.extend(s.variables.iter().map(|v| v.as_str()));
    csv::record(&mut out, &header);
    for t in 0..s.periods {
        let _ = write!(out, "{}", t + 1);
        for i in 0..s.variables.len() {
            out.push(',');
            push_number(&mut out, s.paths[(t, i)]);
        }
        out.push('\n');
    }
    out
}

/// One row per (period, variable), periods outermost.
pub fn to_csv_tidy(s: &Simulation) -> String {
    let mut out = String::with_capacity(s.periods * s.variables.len() * 32 + 64);
    csv::record(&mut out, &["period", "variable", "value"]);
    let names: Vec<String> = s.variables.iter().map(|v| csv::field(v)).collect();
    for t in 0..s.periods {
        for (i, name) in names.iter().enumerate() {
            let _ = write!(out, "{},{},", t + 1, name);
            push_number(&mut out, s.paths[(t, i)]);
            out.push('\n');
        }
    }
    out
}

/// The JSON document.
pub fn to_json(s: &Simulation) -> Json {
    Json::Object(vec![
        // Seeds above 2^53 do not survive a JSON reader's doubles: they are written as strings.
        (
            "seed".into(),
            if s.seed <= 1 << 53 {
                Json::Integer(s.seed as i64)
            } else {
                Json::String(s.seed.to_string())
            },
        ),
        ("periods".into(), Json::Integer(s.periods as i64)),
        ("burn_in".into(), Json::Integer(s.burn_in as i64)),
        ("levels".into(), Json::Bool(s.levels)),
        (
            "variables".into(),
            Json::Array(
                s.variables
                    .iter()
                    .map(|v| Json::String(v.clone()))
                    .collect(),
            ),
        ),
        (
            "paths".into(),
            Json::Object(
                s.variables
                    .iter()
                    .enumerate()
                    .map(|(i, v)| (v.clone(), Json::numbers(s.paths.column(i).as_slice())))
                    .collect(),
            ),
        ),
    ])
}

/// A table of the paths (one row per period) under a line saying what they are.
pub fn to_text(s: &Simulation) -> String {
    let mut out = format!(
        "Simulated paths: seed {}, {} periods after a burn-in of {}, {}\n\n",
        s.seed,
        s.periods,
        s.burn_in,
        if s.levels {
            "levels"
        } else {
            "deviations from the steady state (log deviations for log variables)"
        }
    );
    let mut header = vec!["period"];
    header.extend(s.variables.iter().map(|v| v.as_str()));
    let align = vec![Align::Right; header.len()];
    let mut t = Table::new(&header, &align);
    for p in 0..s.periods {
        let mut row = vec![(p + 1).to_string()];
        row.extend((0..s.variables.len()).map(|i| number(s.paths[(p, i)], 4)));
        t.row(row);
    }
    out.push_str(&t.render());
    out
}
