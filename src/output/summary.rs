//! `saddle check` output: a checked model's summary as text or JSON.
//!
//! Contract: [`text`] and [`json`] render a [`Model`] without computing anything but its counts;
//! the JSON has at least `title`, `endogenous` (`{name, label, log, max_lead, max_lag}` per
//! variable, declaration order), `exogenous`, `parameters` (`{name: value}`) and `equations`
//! (`{label, text}`), as cli.md and issue 2 require.

use serde_json::{json, Map, Value};

use super::table::{Align, Table};
use crate::model::print::{self, Names};
use crate::model::{Model, SteadyKind};

/// A value in a short readable form: up to six decimals without trailing zeros for moderate
/// magnitudes, scientific notation otherwise.
pub fn value_text(v: f64) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if a == 0.0 {
        return "0".to_string();
    }
    if (1e-4..1e9).contains(&a) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        if s == "-0" {
            "0".to_string()
        } else {
            s.to_string()
        }
    } else {
        format!("{v:.4e}")
    }
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// Whether parameter `i` is derived (its value is an expression, not a number).
fn derived(m: &Model, i: usize) -> bool {
    !matches!(m.parameters[i].expr, crate::model::Expr::Number(_))
}

/// Standard deviation of innovation `i` from the covariance matrix.
fn sd(m: &Model, i: usize) -> f64 {
    m.covariance[(i, i)].max(0.0).sqrt()
}

/// The text summary.
pub fn text(m: &Model) -> String {
    let mut out = String::new();
    let title = m.title.as_deref().unwrap_or("(untitled model)");
    out.push_str(title);
    out.push('\n');
    out.push_str(&"=".repeat(title.chars().count().min(100)));
    out.push('\n');
    let lead = m.endogenous.iter().map(|v| v.max_lead).max().unwrap_or(0);
    let lag = m.endogenous.iter().map(|v| v.max_lag).max().unwrap_or(0);
    let exo_lag = m.exogenous.iter().map(|v| v.max_lag).max().unwrap_or(0);
    let logs = m.endogenous.iter().filter(|v| v.log).count();
    out.push_str(&format!(
        "{}, {}, {}, {}\n",
        plural(
            m.endogenous.len(),
            "endogenous variable",
            "endogenous variables"
        ),
        plural(m.exogenous.len(), "innovation", "innovations"),
        plural(m.parameters.len(), "parameter", "parameters"),
        plural(m.equations.len(), "equation", "equations"),
    ));
    out.push_str(&format!(
        "largest lead {lead}, largest lag {lag}, largest innovation lag {exo_lag}; {logs} of {} variables in logs\n",
        m.endogenous.len()
    ));

    out.push_str("\nEndogenous variables\n");
    let mut t = Table::new(
        &["variable", "in logs", "max lead", "max lag", "label"],
        &[
            Align::Left,
            Align::Left,
            Align::Right,
            Align::Right,
            Align::Left,
        ],
    );
    for v in &m.endogenous {
        t.row(vec![
            v.name.clone(),
            if v.log { "yes" } else { "no" }.to_string(),
            v.max_lead.to_string(),
            v.max_lag.to_string(),
            v.label.clone().unwrap_or_default(),
        ]);
    }
    out.push_str(&t.render());

    if !m.exogenous.is_empty() {
        out.push_str("\nInnovations\n");
        let mut t = Table::new(
            &["innovation", "sd", "sd from", "max lag", "label"],
            &[
                Align::Left,
                Align::Right,
                Align::Left,
                Align::Right,
                Align::Left,
            ],
        );
        for (i, v) in m.exogenous.iter().enumerate() {
            let given = m.sd_given.get(i).copied().unwrap_or(false);
            t.row(vec![
                v.name.clone(),
                value_text(sd(m, i)),
                if given { "file" } else { "default (1)" }.to_string(),
                v.max_lag.to_string(),
                v.label.clone().unwrap_or_default(),
            ]);
        }
        out.push_str(&t.render());
        let n = m.exogenous.len();
        let correlated: Vec<String> = (0..n)
            .flat_map(|i| (i + 1..n).map(move |j| (i, j)))
            .filter(|&(i, j)| m.covariance[(i, j)] != 0.0)
            .map(|(i, j)| {
                let r = m.covariance[(i, j)] / (sd(m, i) * sd(m, j));
                format!(
                    "{} and {}: {}",
                    m.exogenous[i].name,
                    m.exogenous[j].name,
                    value_text(r)
                )
            })
            .collect();
        if correlated.is_empty() {
            out.push_str("innovations are uncorrelated\n");
        } else {
            out.push_str(&format!("correlations: {}\n", correlated.join("; ")));
        }
    }

    if !m.parameters.is_empty() {
        out.push_str("\nParameters\n");
        let names = Names::of(m);
        let mut t = Table::new(
            &["parameter", "value", "defined as", "label"],
            &[Align::Left, Align::Right, Align::Left, Align::Left],
        );
        for (i, p) in m.parameters.iter().enumerate() {
            t.row(vec![
                p.name.clone(),
                value_text(p.value),
                if derived(m, i) {
                    print::expr_text(&p.expr, &names)
                } else {
                    String::new()
                },
                p.label.clone().unwrap_or_default(),
            ]);
        }
        out.push_str(&t.render());
    }

    out.push_str("\nEquations\n");
    let mut t = Table::new(&["equation", "text"], &[Align::Left, Align::Left]);
    for i in 0..m.equations.len() {
        t.row(vec![m.equation_name(i), print::equation_text(m, i)]);
    }
    out.push_str(&t.render());

    if !m.steady.is_empty() {
        let known = m
            .steady
            .iter()
            .filter(|s| s.kind == SteadyKind::Known)
            .count();
        let guesses = m.steady.len() - known;
        out.push_str(&format!(
            "\nSteady state: {} given, {} for the Newton solve\n",
            plural(known, "value", "values"),
            plural(guesses, "starting guess", "starting guesses")
        ));
    }
    let o = &m.options;
    let mut opts = Vec::new();
    if let Some(e) = &o.discount {
        opts.push(format!("discount {}", value_text(m.eval_parameters(e))));
    }
    if let Some(e) = &o.threshold {
        opts.push(format!("threshold {}", value_text(m.eval_parameters(e))));
    }
    if let Some(h) = o.horizon {
        opts.push(format!("horizon {h}"));
    }
    if !opts.is_empty() {
        out.push_str(&format!("\nOptions: {}\n", opts.join(", ")));
    }
    out
}

/// The JSON summary (pretty-printed, ending in a newline).
pub fn json_value(m: &Model) -> Value {
    let names = Names::of(m);
    let mut params = Map::new();
    for p in &m.parameters {
        params.insert(p.name.clone(), json!(p.value));
    }
    let endogenous: Vec<Value> = m
        .endogenous
        .iter()
        .map(|v| {
            json!({
                "name": v.name,
                "label": v.label,
                "log": v.log,
                "max_lead": v.max_lead,
                "max_lag": v.max_lag,
            })
        })
        .collect();
    let exogenous: Vec<Value> = m
        .exogenous
        .iter()
        .enumerate()
        .map(|(i, v)| {
            json!({
                "name": v.name,
                "label": v.label,
                "sd": sd(m, i),
                "sd_given": m.sd_given.get(i).copied().unwrap_or(false),
                "max_lag": v.max_lag,
            })
        })
        .collect();
    let equations: Vec<Value> = (0..m.equations.len())
        .map(|i| {
            json!({
                "label": m.equations[i].label,
                "text": print::equation_text(m, i),
            })
        })
        .collect();
    let n = m.exogenous.len();
    let covariance: Vec<Vec<f64>> = (0..n)
        .map(|i| (0..n).map(|j| m.covariance[(i, j)]).collect())
        .collect();
    let steady: Vec<Value> = m
        .steady
        .iter()
        .map(|s| {
            json!({
                "variable": names.endogenous.get(s.variable),
                "kind": match s.kind { SteadyKind::Known => "value", SteadyKind::Guess => "guess" },
                "text": print::expr_text(&s.expr, &names),
            })
        })
        .collect();
    let o = &m.options;
    json!({
        "title": m.title,
        "counts": {
            "endogenous": m.endogenous.len(),
            "exogenous": m.exogenous.len(),
            "parameters": m.parameters.len(),
            "equations": m.equations.len(),
        },
        "endogenous": endogenous,
        "exogenous": exogenous,
        "parameters": params,
        "derived_parameters": m.parameters.iter().enumerate()
            .filter(|(i, _)| derived(m, *i)).map(|(_, p)| p.name.clone()).collect::<Vec<_>>(),
        "equations": equations,
        "covariance": covariance,
        "steady": steady,
        "options": {
            "discount": o.discount.as_ref().map(|e| m.eval_parameters(e)),
            "threshold": o.threshold.as_ref().map(|e| m.eval_parameters(e)),
            "horizon": o.horizon,
        },
    })
}

/// The JSON summary as text (pretty-printed, ending in a newline).
pub fn json(m: &Model) -> String {
    let mut s = serde_json::to_string_pretty(&json_value(m)).unwrap_or_else(|_| "{}".to_string());
    s.push('\n');
    s
}
