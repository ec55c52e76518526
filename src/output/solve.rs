//! Renderings of a [`SolvedModel`]: text for people, JSON per cli.md (field names are a
//! contract), CSV of the roots table.

use serde::ser::{SerializeMap, SerializeSeq};
use serde::{Serialize, Serializer};

use super::csv;
use super::table::{number, Align, Table};
use crate::solution::{Root, SolvedModel, Status};

/// Coefficients smaller than this (absolute) are left out of the printed equations; the JSON
/// keeps every digit. Decision-rule coefficients of models in percent units are O(1e-3..1e2), so
/// 1e-10 only removes rounding noise of exact zeros.
pub const PRINT_ZERO: f64 = 1e-10;

/// A list of `(name, value)` serialized as a JSON object in the given order.
pub struct Ordered<'a, V: Serialize>(pub Vec<(&'a str, V)>);

impl<V: Serialize> Serialize for Ordered<'_, V> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            m.serialize_entry(k, v)?;
        }
        m.end()
    }
}

/// A matrix as a list of rows.
pub struct Rows<'a>(pub &'a nalgebra::DMatrix<f64>);

impl Serialize for Rows<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let m = self.0;
        let mut seq = s.serialize_seq(Some(m.nrows()))?;
        for i in 0..m.nrows() {
            let row: Vec<f64> = m.row(i).iter().copied().collect();
            seq.serialize_element(&row)?;
        }
        seq.end()
    }
}

#[derive(Serialize)]
struct JsonRoot {
    re: Option<f64>,
    im: Option<f64>,
    modulus: Option<f64>,
    infinite: bool,
    stable: bool,
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    boundary: bool,
}

#[derive(Serialize)]
struct Block<'a> {
    states: Rows<'a>,
    shocks: Rows<'a>,
}

#[derive(Serialize)]
struct JsonSolve<'a> {
    title: &'a Option<String>,
    status: &'static str,
    threshold: f64,
    counts: &'a crate::solution::Counts,
    roots: Vec<JsonRoot>,
    variables: &'a [String],
    shocks: &'a [String],
    log_variables: Vec<&'a str>,
    steady_state: Ordered<'a, f64>,
    states: Vec<String>,
    policy: Option<Block<'a>>,
    transition: Option<Block<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    diagnosis: &'a Option<String>,
    warnings: &'a [String],
}

fn json_root(r: &Root) -> JsonRoot {
    JsonRoot {
        re: if r.infinite { None } else { Some(r.re) },
        im: if r.infinite { None } else { Some(r.im) },
        modulus: r.modulus,
        infinite: r.infinite,
        stable: r.stable,
        boundary: r.boundary,
    }
}

/// The JSON document of cli.md for `saddle solve --format json` (pretty-printed, ending in a
/// newline).
pub fn json(s: &SolvedModel) -> String {
    let doc = JsonSolve {
        title: &s.title,
        status: s.status.as_str(),
        threshold: s.threshold,
        counts: &s.counts,
        roots: s.roots.iter().map(json_root).collect(),
        variables: &s.variables,
        shocks: &s.shocks,
        log_variables: s
            .variables
            .iter()
            .zip(&s.log)
            .filter(|(_, l)| **l)
            .map(|(v, _)| v.as_str())
            .collect(),
        steady_state: Ordered(
            s.variables
                .iter()
                .map(|v| v.as_str())
                .zip(s.steady_state.iter().copied())
                .collect(),
        ),
        states: s
            .solution
            .as_ref()
            .map(|x| x.states.clone())
            .unwrap_or_default(),
        policy: s.solution.as_ref().map(|x| Block {
            states: Rows(&x.p),
            shocks: Rows(&x.q),
        }),
        transition: s.solution.as_ref().map(|x| Block {
            states: Rows(&x.g),
            shocks: Rows(&x.h),
        }),
        diagnosis: &s.diagnosis,
        warnings: &s.warnings,
    };
    let mut out = serde_json::to_string_pretty(&doc)
        .unwrap_or_else(|e| format!("{{\"error\": \"could not serialize the result: {e}\"}}"));
    out.push('\n');
    out
}

/// The roots table as CSV: `index,re,im,modulus,infinite,stable,boundary` (infinite roots have
/// empty `re`, `im` and `modulus`).
/// One tidy table, `part,row,term,value`, that loads in one call:
/// - `root` rows: `row` is the root's position (smallest first), `term` one of `re`, `im`,
///   `modulus` (`inf` for an infinite root) and `stable` (1 or 0);
/// - with a solution, `policy` rows (`row` a variable, `term` a state or an innovation: the
///   coefficients of P and Q) and `transition` rows (`row` a state at t, the coefficients of G
///   and H), every coefficient including zeros, in declaration order.
pub fn csv(s: &SolvedModel) -> String {
    let mut out = String::new();
    csv::record(&mut out, &["part", "row", "term", "value"]);
    for (i, r) in s.roots.iter().enumerate() {
        let idx = (i + 1).to_string();
        let (re, im, m) = if r.infinite {
            (String::new(), String::new(), "inf".to_string())
        } else {
            (
                csv::number(r.re),
                csv::number(r.im),
                csv::number(r.modulus.unwrap_or(f64::NAN)),
            )
        };
        for (term, value) in [
            ("re", re),
            ("im", im),
            ("modulus", m),
            ("stable", if r.stable { "1" } else { "0" }.to_string()),
        ] {
            csv::record(&mut out, &["root", &idx, term, &value]);
        }
    }
    if let Some(x) = &s.solution {
        let mut rows = |part: &str,
                        names: &[String],
                        a: &nalgebra::DMatrix<f64>,
                        b: &nalgebra::DMatrix<f64>| {
            for (i, name) in names.iter().enumerate() {
                for (k, st) in x.states.iter().enumerate() {
                    csv::record(&mut out, &[part, name, st, &csv::number(a[(i, k)])]);
                }
                for (k, e) in s.shocks.iter().enumerate() {
                    csv::record(&mut out, &[part, name, e, &csv::number(b[(i, k)])]);
                }
            }
        };
        rows("policy", &s.variables, &x.p, &x.q);
        let next: Vec<String> = x.states.iter().map(|st| shift(st)).collect();
        rows("transition", &next, &x.g, &x.h);
    }
    out
}

/// A linear combination as a readable right-hand side: `-0.8300 drift[t-1] - 1.1200 e_rate`.
/// Terms below [`PRINT_ZERO`] are left out; all zero prints `0`.
pub fn combination(terms: &[(f64, &str)]) -> String {
    let mut out = String::new();
    for &(c, name) in terms {
        if c.abs() < PRINT_ZERO {
            continue;
        }
        let mag = if (c.abs() - 1.0).abs() <= 1e-12 {
            String::new()
        } else {
            format!("{} ", number(c.abs(), 4))
        };
        if out.is_empty() {
            if c < 0.0 {
                out.push('-');
            }
        } else {
            out.push_str(if c < 0.0 { " - " } else { " + " });
        }
        out.push_str(&mag);
        out.push_str(name);
    }
    if out.is_empty() {
        "0".to_string()
    } else {
        out
    }
}

fn status_phrase(s: Status) -> &'static str {
    match s {
        Status::Determinate => "determinate (a unique stable solution)",
        Status::Indeterminate => "indeterminate (many stable solutions)",
        Status::NoStableSolution => "no stable solution",
        Status::RankFailure => "rank condition fails (no unique stable solution)",
    }
}

/// The text report: title, status, roots table, counts, diagnosis, steady state, the solution as
/// equations, warnings.
pub fn text(s: &SolvedModel) -> String {
    let mut out = String::new();
    if let Some(t) = &s.title {
        out.push_str(t);
        out.push_str("\n\n");
    }
    out.push_str(&format!("Status: {}\n", status_phrase(s.status)));
    out.push_str(&format!(
        "Threshold: roots with modulus below {} are stable\n\n",
        super::super::solution::threshold::show(s.threshold)
    ));

    out.push_str(&format!(
        "Roots of the canonical form, smallest first; a root is stable when its size is below {}\n",
        super::super::solution::threshold::show(s.threshold)
    ));
    let mut t = Table::new(
        &["root", "size", "against the threshold", "verdict"],
        &[Align::Left, Align::Right, Align::Right, Align::Left],
    );
    // A complex pair (conjugates next to each other, same modulus) shares one row.
    let mut i = 0;
    while i < s.roots.len() {
        let r = &s.roots[i];
        let pair = r.im != 0.0
            && s.roots.get(i + 1).is_some_and(|q| {
                // Conjugates agree to rounding (relative to the root's size).
                let scale = r.modulus.unwrap_or(1.0).max(f64::MIN_POSITIVE);
                let near = |a: f64, b: f64| (a - b).abs() <= 1e-9 * scale;
                q.stable == r.stable && near(q.re, r.re) && near(q.im, -r.im) && r.im != 0.0
            });
        let verdict = {
            let mut v = if r.infinite {
                "unstable (infinite)".to_string()
            } else if r.stable {
                "stable".to_string()
            } else {
                "unstable".to_string()
            };
            if r.boundary {
                v.push_str(", on the boundary");
            }
            if pair {
                v.push_str(", a complex pair");
            }
            v
        };
        let (root, size, gap) = match r.modulus {
            None => ("infinite".to_string(), "-".to_string(), "-".to_string()),
            Some(m) => {
                let root = if r.im == 0.0 {
                    number(r.re, 4)
                } else {
                    let sign = if pair {
                        "\u{b1}"
                    } else if r.im < 0.0 {
                        "-"
                    } else {
                        "+"
                    };
                    format!("{} {sign} {}i", number(r.re, 4), number(r.im.abs(), 4))
                };
                // The distance in percent of the threshold: how far a calibration change must
                // move the root to change the verdict.
                let gap = 100.0 * (m - s.threshold) / s.threshold;
                (root, number(m, 4), format!("{gap:+.1}%"))
            }
        };
        t.row(vec![root, size, gap, verdict]);
        i += if pair { 2 } else { 1 };
    }
    if s.roots.is_empty() {
        out.push_str("  (none: the model has no dynamics once its static equations are solved)\n");
    } else {
        out.push_str(&indent(&t.render()));
    }
    let c = &s.counts;
    out.push_str(&format!(
        "\nCounts: {} stable, {} unstable (infinite included); {} forward-looking, {} predetermined. ",
        c.stable, c.unstable, c.forward_looking, c.predetermined
    ));
    out.push_str(if c.unstable == c.forward_looking {
        "The counting condition holds.\n"
    } else {
        "The counting condition fails.\n"
    });
    if let Some(d) = &s.diagnosis {
        out.push_str(&format!("\nDiagnosis: {d}\n"));
    }

    out.push_str("\nSteady state\n");
    let mut t = Table::new(&["variable", "value", ""], &[Align::Left, Align::Right]);
    // Values within rounding (1e-12 of the largest, at least of 1) of zero print as zero.
    let scale = s.steady_state.iter().fold(
        1.0f64,
        |a, v| if v.is_finite() { a.max(v.abs()) } else { a },
    );
    for (j, v) in s.variables.iter().enumerate() {
        let x = s.steady_state[j];
        t.row(vec![
            v.clone(),
            number(if x.abs() <= 1e-12 * scale { 0.0 } else { x }, 6),
            if s.log[j] {
                "(log variable)".to_string()
            } else {
                String::new()
            },
        ]);
    }
    out.push_str(&indent(&t.render()));

    if let Some(x) = &s.solution {
        out.push_str("\nSolution, in deviations from the steady state");
        if s.log.iter().any(|l| *l) {
            out.push_str(" (log deviations for log variables)");
        }
        out.push('\n');
        let width = s.variables.iter().map(|v| v.len()).max().unwrap_or(0);
        for (j, v) in s.variables.iter().enumerate() {
            let mut terms: Vec<(f64, &str)> = Vec::new();
            for (k, st) in x.states.iter().enumerate() {
                terms.push((x.p[(j, k)], st.as_str()));
            }
            for (k, e) in s.shocks.iter().enumerate() {
                terms.push((x.q[(j, k)], e.as_str()));
            }
            out.push_str(&format!("  {v:<width$} = {}\n", combination(&terms)));
        }
        if !x.states.is_empty() {
            out.push_str("\nLaw of motion of the states\n");
            let shifted: Vec<String> = x.states.iter().map(|st| shift(st)).collect();
            let width = shifted.iter().map(|v| v.len()).max().unwrap_or(0);
            let mut skipped = 0;
            for (i, name) in shifted.iter().enumerate() {
                let mut terms: Vec<(f64, &str)> = Vec::new();
                for (k, st) in x.states.iter().enumerate() {
                    terms.push((x.g[(i, k)], st.as_str()));
                }
                for (k, e) in s.shocks.iter().enumerate() {
                    terms.push((x.h[(i, k)], e.as_str()));
                }
                // A pure shift (x[t-1] one period on is x[t-2]'s successor) says nothing new.
                let nonzero: Vec<&(f64, &str)> = terms
                    .iter()
                    .filter(|(c, _)| c.abs() >= PRINT_ZERO)
                    .collect();
                if nonzero.len() == 1
                    && (nonzero[0].0 - 1.0).abs() <= 1e-12
                    && nonzero[0].1 == name.as_str()
                {
                    skipped += 1;
                    continue;
                }
                out.push_str(&format!("  {name:<width$} = {}\n", combination(&terms)));
            }
            if skipped > 0 {
                out.push_str(&format!(
                    "  ({skipped} identities that only shift lags are not shown)\n"
                ));
            }
        }
    }
    if !s.warnings.is_empty() {
        out.push_str("\nWarnings\n");
        for w in &s.warnings {
            out.push_str(&format!("  - {w}\n"));
        }
    }
    out.push_str("\nResults are conditional on the model and its calibration.\n");
    out
}

/// The name of a state one period on: `k[t-1]` becomes `k`, `e[t-3]` becomes `e[t-2]`, and a
/// start-of-period stock `k` (spec §8) becomes `k[t+1]`.
fn shift(state: &str) -> String {
    if !state.contains('[') {
        return format!("{state}[t+1]");
    }
    if let Some((base, rest)) = state.split_once("[t-") {
        if let Some(num) = rest.strip_suffix(']') {
            if let Ok(l) = num.parse::<u32>() {
                return if l <= 1 {
                    base.to_string()
                } else {
                    format!("{base}[t-{}]", l - 1)
                };
            }
        }
    }
    state.to_string()
}

fn indent(s: &str) -> String {
    s.lines().map(|l| format!("  {l}\n")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn combinations_read_like_equations() {
        assert_eq!(
            combination(&[(-0.83, "drift[t-1]"), (-1.12, "e_rate"), (0.0, "e_cost")]),
            "-0.8300 drift[t-1] - 1.1200 e_rate"
        );
        assert_eq!(
            combination(&[(1.0, "e"), (0.5, "k[t-1]")]),
            "e + 0.5000 k[t-1]"
        );
        assert_eq!(combination(&[(1e-14, "e")]), "0");
        assert_eq!(shift("k[t-1]"), "k");
        assert_eq!(shift("e_rate[t-3]"), "e_rate[t-2]");
    }
}
