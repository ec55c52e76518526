//! Posterior bands in words and tables: for each element of a command's output (an impulse
//! response at one period, a standard deviation, a smoothed value...) its value at the
//! calibration and its quantiles over the draws, b_j(p) of [`crate::estimation::bands`].
//!
//! A command describes its elements once ([`Element`]: the cells of its tidy CSV key columns
//! and the path of its JSON shape) and this module renders them three ways: text (an aligned
//! table per kind, after the command's usual output), JSON (`"bands"` with one object per
//! quantile, `q05`, `q50`, `q95`, each in the shape of the command's own JSON) and CSV (the
//! command's tidy columns, `value`, then one column per quantile).

use serde_json::{Map, Value};

use super::csv;
use crate::estimation::bands::Bands;

/// One step of a JSON path: an object member or a list position.
#[derive(Debug, Clone, PartialEq)]
pub enum Seg {
    Key(String),
    Index(usize),
}

/// One element of a command's output.
#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    /// The cells of the command's CSV key columns (e.g. shock, variable, period).
    pub keys: Vec<String>,
    /// Where the value sits in the command's JSON (e.g. `e_rate`, `gap`, 3).
    pub path: Vec<Seg>,
    /// The value at the calibration (the command's usual answer).
    pub value: f64,
}

/// Where the draws came from and how many were used.
#[derive(Debug, Clone, PartialEq)]
pub struct DrawsRecord {
    /// The draws files as named, with their SHA-256.
    pub files: Vec<(String, String)>,
    /// Chains in the files (by seed and chain number).
    pub chains: usize,
    /// The most draws used (`--max-draws`).
    pub max_draws: usize,
}

/// The column name of probability `p`: `q05`, `q50`, `q95`, or `q2.5` when p*100 is fractional.
pub fn quantile_name(p: f64) -> String {
    let pct = p * 100.0;
    if (pct - pct.round()).abs() < 1e-9 {
        format!("q{:02}", pct.round() as i64)
    } else {
        format!("q{pct}")
    }
}

fn num(x: f64) -> Value {
    serde_json::Number::from_f64(x)
        .map(Value::Number)
        .unwrap_or(Value::Null)
}

/// Sets `v` at `path` in `root`, creating objects and lists (lists padded with null).
fn insert(root: &mut Value, path: &[Seg], v: Value) {
    let Some((first, rest)) = path.split_first() else {
        *root = v;
        return;
    };
    match first {
        Seg::Key(k) => {
            if !root.is_object() {
                *root = Value::Object(Map::new());
            }
            if let Value::Object(o) = root {
                insert(o.entry(k.clone()).or_insert(Value::Null), rest, v);
            }
        }
        Seg::Index(i) => {
            if !root.is_array() {
                *root = Value::Array(Vec::new());
            }
            if let Value::Array(a) = root {
                if a.len() <= *i {
                    a.resize(*i + 1, Value::Null);
                }
                insert(&mut a[*i], rest, v);
            }
        }
    }
}

/// The sentence that says what the bands rest on.
pub fn summary_line(b: &Bands, rec: &DrawsRecord) -> String {
    let files: Vec<String> = rec
        .files
        .iter()
        .map(|(f, sha)| format!("{f} (sha256 {})", sha.get(..12).unwrap_or(sha)))
        .collect();
    let thinning = if b.used < b.rows {
        format!(
            "{} of {} draws, evenly spaced (at most {})",
            b.used, b.rows, rec.max_draws
        )
    } else {
        format!("all {} draws", b.rows)
    };
    let mut s = format!(
        "Posterior bands over {thinning} from {} chain{} of {}",
        rec.chains,
        if rec.chains == 1 { "" } else { "s" },
        files.join(", ")
    );
    if b.failed > 0 {
        s.push_str(&format!(
            "; {} draw{} left out (no unique stable solution or no result; first: row {}: {})",
            b.failed,
            if b.failed == 1 { "" } else { "s" },
            b.failures.first().map_or(0, |f| f.0 + 2),
            b.failures.first().map_or("", |f| f.1.as_str())
        ));
    } else {
        s.push_str("; every draw has a unique stable solution");
    }
    s.push('.');
    s
}

/// The `"bands"` JSON object: quantiles, the draws' record and one object per quantile in the
/// command's shape.
pub fn json(elements: &[Element], b: &Bands, rec: &DrawsRecord) -> Value {
    let mut o = Map::new();
    o.insert(
        "quantiles".into(),
        Value::Array(b.quantiles.iter().map(|&q| num(q)).collect()),
    );
    let files: Vec<Value> = rec
        .files
        .iter()
        .map(|(f, sha)| serde_json::json!({"file": f, "sha256": sha}))
        .collect();
    let failures: Vec<Value> = b
        .failures
        .iter()
        .map(|(r, why)| serde_json::json!({"row": r + 2, "reason": why}))
        .collect();
    o.insert(
        "draws".into(),
        serde_json::json!({
            "files": files,
            "chains": rec.chains,
            "rows": b.rows,
            "used": b.used,
            "max_draws": rec.max_draws,
            "thinning": if b.used < b.rows { "evenly spaced" } else { "none" },
            "failed": b.failed,
            "failures": failures,
        }),
    );
    for (k, &q) in b.quantiles.iter().enumerate() {
        let mut v = Value::Null;
        for (e, vals) in elements.iter().zip(&b.values) {
            insert(&mut v, &e.path, num(vals[k]));
        }
        o.insert(quantile_name(q), v);
    }
    Value::Object(o)
}

/// `json` (the command's JSON object as text) with `"bands"` added; other text unchanged.
pub fn add_to_json(text: &str, elements: &[Element], b: &Bands, rec: &DrawsRecord) -> String {
    match serde_json::from_str::<Value>(text) {
        Ok(Value::Object(mut o)) => {
            o.insert("bands".into(), json(elements, b, rec));
            let mut out =
                serde_json::to_string_pretty(&Value::Object(o)).unwrap_or_else(|_| text.into());
            out.push('\n');
            out
        }
        _ => text.to_string(),
    }
}

/// Tidy CSV: the key `columns`, `value`, then one column per quantile.
pub fn csv(columns: &[&str], elements: &[Element], b: &Bands) -> String {
    let mut out = String::new();
    let mut head: Vec<String> = columns.iter().map(|c| c.to_string()).collect();
    head.push("value".into());
    head.extend(b.quantiles.iter().map(|&q| quantile_name(q)));
    let refs: Vec<&str> = head.iter().map(|s| s.as_str()).collect();
    csv::record(&mut out, &refs);
    for (e, vals) in elements.iter().zip(&b.values) {
        let mut row: Vec<String> = e.keys.clone();
        row.push(csv::number(e.value));
        row.extend(vals.iter().map(|&v| csv::number(v)));
        let refs: Vec<&str> = row.iter().map(|s| s.as_str()).collect();
        csv::record(&mut out, &refs);
    }
    out
}

/// A number for the text table (6 significant digits; `-` where there is none).
fn cell(x: f64) -> String {
    if x.is_finite() {
        let s = format!("{x:.6}");
        if x.abs() >= 1e-3 || x == 0.0 {
            s
        } else {
            format!("{x:.3e}")
        }
    } else {
        "-".into()
    }
}

/// The text section: the summary line, then an aligned table with the key `columns`, `value`
/// (at the calibration) and the quantiles.
pub fn text(columns: &[&str], elements: &[Element], b: &Bands, rec: &DrawsRecord) -> String {
    let mut head: Vec<String> = columns.iter().map(|c| c.to_string()).collect();
    head.push("calibration".into());
    head.extend(b.quantiles.iter().map(|&q| quantile_name(q)));
    let mut rows: Vec<Vec<String>> = vec![head];
    for (e, vals) in elements.iter().zip(&b.values) {
        let mut r = e.keys.clone();
        r.push(cell(e.value));
        r.extend(vals.iter().map(|&v| cell(v)));
        rows.push(r);
    }
    let ncol = rows[0].len();
    let width: Vec<usize> = (0..ncol)
        .map(|c| {
            rows.iter()
                .map(|r| r.get(c).map_or(0, |s| s.chars().count()))
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    out.push_str(&summary_line(b, rec));
    out.push_str("\n\n");
    for r in &rows {
        let mut line = String::new();
        for (c, s) in r.iter().enumerate() {
            let pad = width[c] - s.chars().count();
            if c < columns.len() {
                line.push_str(s);
                line.push_str(&" ".repeat(pad + 2));
            } else {
                line.push_str(&" ".repeat(pad));
                line.push_str(s);
                line.push_str("  ");
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn json_paths_nest_and_lists_fill_in_order() {
        let e = |s: &str, h: usize, v: f64| Element {
            keys: vec![s.into(), h.to_string()],
            path: vec![Seg::Key(s.into()), Seg::Index(h)],
            value: v,
        };
        let els = vec![e("a", 0, 1.0), e("a", 1, 2.0), e("b", 0, 3.0)];
        let b = Bands {
            quantiles: vec![0.05, 0.5],
            values: vec![vec![0.5, 1.0], vec![1.5, 2.0], vec![2.5, 3.0]],
            rows: 10,
            used: 10,
            failed: 0,
            failures: vec![],
        };
        let rec = DrawsRecord {
            files: vec![("d.csv".into(), "ab".repeat(32))],
            chains: 2,
            max_draws: 500,
        };
        let j = json(&els, &b, &rec);
        assert_eq!(j["q05"]["a"], serde_json::json!([0.5, 1.5]));
        assert_eq!(j["q50"]["b"][0], 3.0);
        assert_eq!(quantile_name(0.025), "q2.5");
        let c = csv(&["name", "period"], &els, &b);
        assert_eq!(c.lines().next(), Some("name,period,value,q05,q50"));
    }
}
