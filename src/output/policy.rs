//! Renderers for optimal policy: the `solve` output with the regime's additions (cli.md
//! "Optimal policy regimes"), and `saddle optimize` (the regimes side by side, the tuned rule).
//!
//! The solve JSON of a regime is the ordinary solve JSON ([`super::solve::json`]) with
//! `"regime"`, `"expected_loss"` (a number or `null`) and `"multipliers"` (the multiplier
//! variables, commitment) appended as its last fields.

use crate::policy::Regime;
use crate::solution::SolvedModel;

pub use super::provenance::{sha256_hex, Provenance};

/// A JSON number, or `null` when not finite or absent.
pub fn json_number(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => {
            serde_json::to_string(&v).unwrap_or_else(|_| "null".to_string())
        }
        _ => "null".to_string(),
    }
}

/// A JSON string.
pub fn json_string(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"?\"".to_string())
}

/// Appends `fields` (name, JSON text) to the top-level object `doc` (a JSON object ending in
/// `}` and optional whitespace). Returns the new text.
pub fn append_fields(doc: &str, fields: &[(&str, String)]) -> String {
    let trimmed = doc.trim_end();
    let Some(body) = trimmed.strip_suffix('}') else {
        return doc.to_string();
    };
    let body = body.trim_end();
    let mut out = body.to_string();
    let empty = body.ends_with('{');
    for (k, (name, value)) in fields.iter().enumerate() {
        if !(empty && k == 0) {
            out.push(',');
        }
        out.push_str(&format!("\n  {}: {}", json_string(name), value));
    }
    out.push_str("\n}\n");
    out
}

/// The solve JSON with the regime's fields.
pub fn solve_json(
    s: &SolvedModel,
    regime: Regime,
    expected_loss: Option<f64>,
    multipliers: &[String],
    provenance: Option<&Provenance>,
) -> String {
    let mults: Vec<String> = multipliers.iter().map(|m| json_string(m)).collect();
    let mut fields = vec![
        ("regime", json_string(regime.as_str())),
        ("expected_loss", json_number(expected_loss)),
        ("multipliers", format!("[{}]", mults.join(", "))),
    ];
    if let Some(p) = provenance {
        fields.push(("provenance", p.json_text()));
    }
    append_fields(&super::solve::json(s), &fields)
}

/// The lines the text output of `solve` gains under a regime.
pub fn solve_text_note(
    regime: Regime,
    expected_loss: Option<f64>,
    multipliers: &[String],
) -> String {
    let mut t = format!("\npolicy regime: {}\n", regime.as_str());
    match expected_loss {
        Some(l) => t.push_str(&format!(
            "expected loss (unconditional mean of the period loss): {}\n",
            fmt_num(l)
        )),
        None => t.push_str("expected loss: none (no stationary distribution under this regime)\n"),
    }
    if !multipliers.is_empty() {
        t.push_str(&format!(
            "Lagrange multipliers (extra variables): {}\n",
            multipliers.join(", ")
        ));
    }
    t.push_str("(conditional on the model, its calibration and its objective)\n");
    t
}

/// A number in 6 significant digits for text.
pub fn fmt_num(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.abs() >= 1e-3 && x.abs() < 1e6 {
        format!("{:.6}", x)
            .trim_end_matches('0')
            .trim_end_matches('.')
            .to_string()
    } else {
        format!("{x:.5e}")
    }
}

/// The rule of variable `var` as an equation in the states and innovations of `s` (deviations
/// from the steady state): `i = 0.5 u[t-1] + 0.3 e_cost`. `None` without a solution.
pub fn rule_equation(s: &SolvedModel, var: usize) -> Option<String> {
    let sp = s.solution.as_ref()?;
    let name = s.variables.get(var)?;
    let mut parts = Vec::new();
    let tiny = 1e-12
        * sp.p
            .row(var)
            .iter()
            .chain(sp.q.row(var).iter())
            .fold(0.0f64, |a, v| a.max(v.abs()));
    for (k, st) in sp.states.iter().enumerate() {
        let c = sp.p[(var, k)];
        if c.abs() > tiny {
            parts.push((c, st.clone()));
        }
    }
    for (k, sh) in s.shocks.iter().enumerate() {
        let c = sp.q[(var, k)];
        if c.abs() > tiny {
            parts.push((c, sh.clone()));
        }
    }
    let mut out = format!("{name} =");
    if parts.is_empty() {
        out.push_str(" 0");
    }
    for (k, (c, what)) in parts.iter().enumerate() {
        let sign = if *c < 0.0 { "-" } else { "+" };
        if k == 0 {
            out.push_str(&format!(
                " {}{} {what}",
                if *c < 0.0 { "-" } else { "" },
                fmt_num(c.abs())
            ));
        } else {
            out.push_str(&format!(" {sign} {} {what}", fmt_num(c.abs())));
        }
    }
    Some(out)
}

/// One regime's row of `optimize`.
pub struct RegimeView<'a> {
    pub regime: Regime,
    /// The solved regime, or why it failed.
    pub result: Result<RegimeData<'a>, String>,
}

/// A solved regime for `optimize`.
pub struct RegimeData<'a> {
    pub solved: &'a SolvedModel,
    pub expected_loss: Option<f64>,
    pub multipliers: &'a [String],
    /// Control variable indices.
    pub controls: &'a [usize],
}

/// The `--tune` search and its result.
pub struct TunedView {
    /// (name, value at the best point, lo, hi).
    pub parameters: Vec<(String, f64, f64, f64)>,
    pub expected_loss: Option<f64>,
    pub evaluations: usize,
    /// Points without a unique stable solution (counted as infinitely bad).
    pub infeasible: usize,
    pub method: String,
    /// Per parameter: the best point borders points without a unique stable solution.
    pub edge: Vec<bool>,
}

/// Whether a tuned value sits at an end of its search range (within 1e-6 of the range's width:
/// golden-section search converging to an end stops a few 1e-7 of a grid cell short of it).
fn at_bound(v: f64, lo: f64, hi: f64) -> bool {
    let w = hi - lo;
    (v - lo).abs() <= 1e-6 * w || (hi - v).abs() <= 1e-6 * w
}

fn ratio(l: Option<f64>, c: Option<f64>) -> Option<f64> {
    match (l, c) {
        (Some(l), Some(c)) if c > 0.0 => Some(l / c),
        _ => None,
    }
}

fn commitment_loss(regimes: &[RegimeView]) -> Option<f64> {
    regimes
        .iter()
        .find(|r| r.regime == Regime::Commitment)
        .and_then(|r| r.result.as_ref().ok())
        .and_then(|d| d.expected_loss)
}

/// Text of `optimize`.
pub fn optimize_text(
    title: Option<&str>,
    regimes: &[RegimeView],
    tuned: Option<&TunedView>,
    provenance: &Provenance,
) -> String {
    let mut t = String::new();
    if let Some(title) = title {
        t.push_str(&format!("{title}\n"));
    }
    t.push_str(&format!("{}\n", provenance.text_line()));
    t.push_str("optimal policy: the regimes side by side\n\n");
    let c = commitment_loss(regimes);
    t.push_str(&format!(
        "{:<12} {:>16} {:>20}\n",
        "regime", "expected loss", "ratio to commitment"
    ));
    for r in regimes {
        match &r.result {
            Ok(d) => t.push_str(&format!(
                "{:<12} {:>16} {:>20}\n",
                r.regime.as_str(),
                d.expected_loss.map_or("none".into(), fmt_num),
                ratio(d.expected_loss, c).map_or("-".into(), fmt_num)
            )),
            Err(_) => t.push_str(&format!("{:<12} {:>16}\n", r.regime.as_str(), "failed")),
        }
    }
    if let Some(tu) = tuned {
        t.push_str(&format!(
            "{:<12} {:>16} {:>20}\n",
            "tuned rule",
            tu.expected_loss.map_or("none".into(), fmt_num),
            ratio(tu.expected_loss, c).map_or("-".into(), fmt_num)
        ));
    }
    for r in regimes {
        t.push_str(&format!("\n{}:\n", r.regime.as_str()));
        match &r.result {
            Ok(d) => {
                for &cv in d.controls {
                    if let Some(eq) = rule_equation(d.solved, cv) {
                        t.push_str(&format!("  {eq}\n"));
                    }
                }
                if d.solved.solution.is_none() {
                    t.push_str(&format!(
                        "  no unique stable solution ({})\n",
                        d.solved.status.as_str()
                    ));
                }
                if !d.multipliers.is_empty() {
                    t.push_str(&format!("  multipliers: {}\n", d.multipliers.join(", ")));
                }
                let roots: Vec<String> = d
                    .solved
                    .roots
                    .iter()
                    .map(|r| match r.modulus {
                        Some(m) if r.im.abs() > 0.0 => format!(
                            "{}{}{}i (modulus {})",
                            fmt_num(r.re),
                            if r.im < 0.0 { "-" } else { "+" },
                            fmt_num(r.im.abs()),
                            fmt_num(m)
                        ),
                        Some(_) => fmt_num(r.re),
                        None => "inf".into(),
                    })
                    .collect();
                t.push_str(&format!("  roots: {}\n", roots.join(", ")));
                for w in &d.solved.warnings {
                    t.push_str(&format!("  warning: {w}\n"));
                }
            }
            Err(e) => t.push_str(&format!("  {e}\n")),
        }
    }
    if let Some(tu) = tuned {
        t.push_str("\ntuned simple rule:\n");
        for (k, (name, v, lo, hi)) in tu.parameters.iter().enumerate() {
            t.push_str(&format!(
                "  {name} = {} (searched {lo} to {hi}){}{}\n",
                fmt_num(*v),
                if at_bound(*v, *lo, *hi) {
                    "; at an end of the range, so the least loss may lie beyond it"
                } else {
                    ""
                },
                if tu.edge.get(k).copied().unwrap_or(false) {
                    "; at the edge of the region with a unique stable solution (the loss falls towards a point where the rule no longer determines the economy)"
                } else {
                    ""
                }
            ));
        }
        t.push_str(&format!(
            "  {} evaluations, {} without a unique stable solution (counted as infinitely bad); {}\n",
            tu.evaluations, tu.infeasible, tu.method
        ));
    }
    t.push_str("\nRules are in deviations from the steady state (log deviations for log variables).\nConditional on the model, its calibration and its objective.\n");
    t
}

/// JSON of `optimize`: `{"regimes": {"rule": {...}, ...}, "tuned": {...} | null}`.
pub fn optimize_json(
    regimes: &[RegimeView],
    tuned: Option<&TunedView>,
    provenance: &Provenance,
) -> String {
    let c = commitment_loss(regimes);
    let mut parts = Vec::new();
    for r in regimes {
        let body = match &r.result {
            Ok(d) => {
                let rules: Vec<String> = d
                    .controls
                    .iter()
                    .filter_map(|&cv| rule_equation(d.solved, cv))
                    .map(|e| json_string(&e))
                    .collect();
                append_fields(
                    &solve_json(d.solved, r.regime, d.expected_loss, d.multipliers, None),
                    &[
                        (
                            "ratio_to_commitment",
                            json_number(ratio(d.expected_loss, c)),
                        ),
                        ("rules", format!("[{}]", rules.join(", "))),
                    ],
                )
            }
            Err(e) => format!(
                "{{\"regime\": {}, \"error\": {}}}",
                json_string(r.regime.as_str()),
                json_string(e)
            ),
        };
        parts.push(format!(
            "{}: {}",
            json_string(r.regime.as_str()),
            body.trim_end()
        ));
    }
    let tuned = match tuned {
        Some(tu) => {
            let ps: Vec<String> = tu
                .parameters
                .iter()
                .enumerate()
                .map(|(k, (n, v, lo, hi))| {
                    format!(
                        "{}: {{\"value\": {}, \"lo\": {}, \"hi\": {}, \"at_bound\": {}, \"at_edge\": {}}}",
                        json_string(n),
                        json_number(Some(*v)),
                        json_number(Some(*lo)),
                        json_number(Some(*hi)),
                        at_bound(*v, *lo, *hi),
                        tu.edge.get(k).copied().unwrap_or(false)
                    )
                })
                .collect();
            format!(
                "{{\"parameters\": {{{}}}, \"expected_loss\": {}, \"ratio_to_commitment\": {}, \"evaluations\": {}, \"infeasible\": {}, \"method\": {}}}",
                ps.join(", "),
                json_number(tu.expected_loss),
                json_number(ratio(tu.expected_loss, c)),
                tu.evaluations,
                tu.infeasible,
                json_string(&tu.method)
            )
        }
        None => "null".into(),
    };
    format!(
        "{{\"regimes\": {{\n{}}},\n\"tuned\": {},\n\"provenance\": {}}}\n",
        parts.join(",\n"),
        tuned,
        provenance.json_text()
    )
}

/// The lines `sweep`'s text summary gains under a regime or with `--measure loss`: the regime
/// and, with `loss`, the point of least expected loss and how many points have none.
pub fn sweep_loss_note(
    r: &crate::analysis::sweep::SweepResult,
    regime: Regime,
    loss: bool,
) -> String {
    let mut t = format!("\npolicy regime: {}\n", regime.as_str());
    if !loss {
        return t;
    }
    let best = r
        .points
        .iter()
        .filter_map(|p| p.expected_loss.filter(|v| v.is_finite()).map(|v| (p, v)))
        .min_by(|a, b| a.1.partial_cmp(&b.1).unwrap_or(std::cmp::Ordering::Equal));
    let without = r
        .points
        .iter()
        .filter(|p| p.expected_loss.is_none())
        .count();
    match best {
        Some((p, v)) => {
            let at: Vec<String> = r
                .parameters
                .iter()
                .zip(&p.values)
                .map(|(n, x)| format!("{n} = {}", fmt_num(*x)))
                .collect();
            t.push_str(&format!(
                "least expected loss on the grid: {} at {}\n",
                fmt_num(v),
                at.join(", ")
            ));
        }
        None => t.push_str("no grid point has an expected loss\n"),
    }
    t.push_str(&format!(
        "{without} point(s) without an expected loss (no unique stable solution there)\n"
    ));
    t
}

/// A regime in words, for a person.
pub fn regime_words(regime: Regime) -> &'static str {
    match regime {
        Regime::Rule => "rule (the model as written; each control follows its simple rule)",
        Regime::Commitment => {
            "commitment (timeless-perspective optimal plan; Lagrange multipliers as states)"
        }
        Regime::Discretion => {
            "discretion (Markov-perfect optimal policy, re-optimised each period)"
        }
    }
}

/// The HTML body of the report's optimal-policy section: the regimes side by side (expected
/// loss, ratio to commitment, each control's rule in the states, the roots' count and largest
/// stable modulus), the regimes that failed with why, and what the numbers are conditional on.
pub fn report_section(regimes: &[RegimeView]) -> String {
    use super::svg::escape;
    let c = commitment_loss(regimes);
    let mut h = String::new();
    h.push_str("<p>The model's objective solved three ways: its simple rule as written, the optimal plan with commitment (timeless perspective) and the optimal policy under discretion (Markov-perfect). The expected loss is the unconditional mean of the period loss.</p>\n");
    h.push_str("<table>\n<thead><tr><th>regime</th><th class=\"num\">expected loss</th><th class=\"num\">ratio to commitment</th><th>rule of each control (deviations from the steady state)</th></tr></thead>\n<tbody>\n");
    for r in regimes {
        match &r.result {
            Ok(d) => {
                let rules: Vec<String> = d
                    .controls
                    .iter()
                    .filter_map(|&cv| rule_equation(d.solved, cv))
                    .map(|e| format!("<code>{}</code>", escape(&e)))
                    .collect();
                h.push_str(&format!(
                    "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td></tr>\n",
                    escape(regime_words(r.regime)),
                    d.expected_loss.map_or("none".into(), fmt_num),
                    ratio(d.expected_loss, c).map_or("-".into(), fmt_num),
                    if rules.is_empty() {
                        format!("no unique stable solution ({})", escape(d.solved.status.as_str()))
                    } else {
                        rules.join("<br>")
                    }
                ));
            }
            Err(e) => h.push_str(&format!(
                "<tr><td>{}</td><td class=\"num\">failed</td><td class=\"num\">-</td><td>{}</td></tr>\n",
                escape(regime_words(r.regime)),
                escape(e)
            )),
        }
    }
    h.push_str("</tbody>\n</table>\n");
    for r in regimes {
        if let Ok(d) = &r.result {
            for w in &d.solved.warnings {
                h.push_str(&format!("<p class=\"note\">{}</p>\n", escape(w)));
            }
        }
    }
    h.push_str("<p class=\"note\">Conditional on the model, its calibration and its objective. <code>saddle optimize</code> gives the same comparison with the roots, and <code>--tune</code> searches the simple rule's coefficients.</p>\n");
    h
}
