//! `saddle sweep` output: CSV rows (each varied parameter by name, `status`, `unstable`,
//! `forward_looking`, `largest_stable_modulus`, `message`), JSON (the same rows as a list of
//! objects) and a text summary (status counts; runs of equal status for one parameter, a character
//! map for two).

use super::csv;
use super::ordered_json::Json;
use super::table::{number, Align, Table};
use crate::analysis::sweep::{SweepPoint, SweepResult};

/// The CSV table; empty cells where a value does not apply.
pub fn to_csv(r: &SweepResult) -> String {
    to_csv_with(r, false)
}

/// The CSV table, with an `expected_loss` column (before `message`) when `loss`; empty cells
/// where a value does not apply.
pub fn to_csv_with(r: &SweepResult, loss: bool) -> String {
    let mut out = String::with_capacity(r.points.len() * 64 + 128);
    let mut header: Vec<&str> = r.parameters.iter().map(|s| s.as_str()).collect();
    header.extend([
        "status",
        "unstable",
        "forward_looking",
        "largest_stable_modulus",
    ]);
    if loss {
        header.push("expected_loss");
    }
    header.push("message");
    csv::record(&mut out, &header);
    for p in &r.points {
        let mut cells: Vec<String> = p.values.iter().map(|v| csv::number(*v)).collect();
        cells.push(p.status.as_str().to_string());
        cells.push(p.unstable.map_or(String::new(), |n| n.to_string()));
        cells.push(p.forward_looking.map_or(String::new(), |n| n.to_string()));
        cells.push(p.largest_stable_modulus.map_or(String::new(), csv::number));
        if loss {
            cells.push(p.expected_loss.map_or(String::new(), csv::number));
        }
        cells.push(p.message.clone().unwrap_or_default());
        let refs: Vec<&str> = cells.iter().map(|s| s.as_str()).collect();
        csv::record(&mut out, &refs);
    }
    out
}

fn row_json(parameters: &[String], p: &SweepPoint, loss: bool) -> Json {
    let mut fields: Vec<(String, Json)> = parameters
        .iter()
        .zip(&p.values)
        .map(|(n, v)| (n.clone(), Json::Number(*v)))
        .collect();
    fields.push(("status".into(), Json::String(p.status.as_str().to_string())));
    let int = |x: Option<usize>| x.map_or(Json::Null, |n| Json::Integer(n as i64));
    fields.push(("unstable".into(), int(p.unstable)));
    fields.push(("forward_looking".into(), int(p.forward_looking)));
    fields.push((
        "largest_stable_modulus".into(),
        Json::opt_number(p.largest_stable_modulus),
    ));
    if loss {
        fields.push(("expected_loss".into(), Json::opt_number(p.expected_loss)));
    }
    fields.push((
        "message".into(),
        p.message.clone().map_or(Json::Null, Json::String),
    ));
    Json::Object(fields)
}

/// The rows as a JSON list of objects.
pub fn to_json(r: &SweepResult) -> Json {
    to_json_with(r, false)
}

/// The rows as a JSON list of objects, with `expected_loss` when `loss`.
pub fn to_json_with(r: &SweepResult, loss: bool) -> Json {
    Json::Array(
        r.points
            .iter()
            .map(|p| row_json(&r.parameters, p, loss))
            .collect(),
    )
}

/// One letter per status for the text map.
fn letter(status: &str) -> char {
    match status {
        "determinate" => 'D',
        "indeterminate" => 'I',
        "no_stable_solution" => 'N',
        "rank_failure" => 'R',
        _ => 'E',
    }
}

/// Widest two-parameter grid drawn as a character map in text output.
const MAX_MAP_COLUMNS: usize = 120;

/// Text: counts per status, then runs (one parameter) or a map (two parameters).
pub fn to_text(r: &SweepResult) -> String {
    let mut out = format!(
        "Sweep over {} ({} points)\n\n",
        r.parameters.join(" x "),
        r.points.len()
    );
    let mut t = Table::new(&["status", "points"], &[Align::Left, Align::Right]);
    for (s, n) in r.status_counts() {
        t.row(vec![s.as_str().to_string(), n.to_string()]);
    }
    out.push_str(&t.render());
    if r.parameters.len() == 1 {
        out.push('\n');
        let mut t = Table::new(
            &[
                r.parameters[0].as_str(),
                "",
                "to",
                "status",
                "unstable",
                "forward_looking",
            ],
            &[
                Align::Right,
                Align::Left,
                Align::Right,
                Align::Left,
                Align::Right,
                Align::Right,
            ],
        );
        let mut start = 0;
        for k in 1..=r.points.len() {
            let same = k < r.points.len()
                && r.points[k].status == r.points[start].status
                && r.points[k].unstable == r.points[start].unstable
                && r.points[k].forward_looking == r.points[start].forward_looking;
            if !same {
                let a = &r.points[start];
                let b = &r.points[k - 1];
                t.row(vec![
                    number(a.values[0], 4),
                    "..".into(),
                    number(b.values[0], 4),
                    a.status.as_str().to_string(),
                    a.unstable.map_or("-".into(), |n| n.to_string()),
                    a.forward_looking.map_or("-".into(), |n| n.to_string()),
                ]);
                start = k;
            }
        }
        out.push_str(&t.render());
    } else if r.axes.len() == 2 && r.axes[1].len() <= MAX_MAP_COLUMNS {
        let (n0, n1) = (r.axes[0].len(), r.axes[1].len());
        out.push_str(&format!(
            "\nMap: rows {} from {} (top) to {}, columns {} from {} (left) to {}\n",
            r.parameters[0],
            number(r.axes[0][0], 4),
            number(r.axes[0][n0 - 1], 4),
            r.parameters[1],
            number(r.axes[1][0], 4),
            number(r.axes[1][n1 - 1], 4)
        ));
        for i in 0..n0 {
            let line: String = (0..n1)
                .map(|j| letter(r.points[i * n1 + j].status.as_str()))
                .collect();
            out.push_str(&line);
            out.push('\n');
        }
        out.push_str(
            "D determinate, I indeterminate, N no stable solution, R rank failure, E error\n",
        );
    }
    let errors: Vec<&SweepPoint> = r.points.iter().filter(|p| p.message.is_some()).collect();
    if let Some(first) = errors.first() {
        out.push_str(&format!(
            "\n{} point(s) failed; the first, at {}: {}\n",
            errors.len(),
            r.parameters
                .iter()
                .zip(&first.values)
                .map(|(n, v)| format!("{n} = {v}"))
                .collect::<Vec<_>>()
                .join(", "),
            first.message.as_deref().unwrap_or("")
        ));
    }
    out.push_str("\nResults are conditional on the model and its calibration.\n");
    out
}
