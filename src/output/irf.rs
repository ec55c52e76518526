//! Renderings of [`ImpulseResponses`]: an aligned text table per shock, JSON per cli.md
//! (`responses[shock][variable][h]`), tidy CSV `shock,variable,period,value`.

use super::csv;
use super::solve::Ordered;
use super::table::{number, Align, Table};
use crate::analysis::irf::{ImpulseResponses, ImpulseSize};

#[derive(serde::Serialize)]
struct JsonIrf<'a> {
    horizon: usize,
    size: &'static str,
    responses: Ordered<'a, Ordered<'a, Vec<f64>>>,
    impulse: Ordered<'a, f64>,
    /// The whole impulse vector per shock (the co-movement of correlated innovations included).
    impulse_vectors: Ordered<'a, Ordered<'a, f64>>,
    convention: &'static str,
    warnings: &'a [String],
}

/// The impulse convention in a sentence, for every rendering.
pub fn convention(size: ImpulseSize) -> &'static str {
    match size {
        ImpulseSize::OneSd => "impulse of one standard deviation of the innovation, with the co-movement of correlated innovations it predicts (Sigma u_k / sd_k)",
        ImpulseSize::OneSdAlone => "impulse of one standard deviation of the innovation alone (correlated innovations held at zero)",
        ImpulseSize::Unit => "unit impulse of the innovation alone",
    }
}

/// The JSON document of cli.md (pretty-printed, ending in a newline), without warnings.
pub fn json(r: &ImpulseResponses) -> String {
    json_with_warnings(r, &[])
}

/// The JSON document of cli.md plus the solve's `warnings` (pretty-printed, ending in a newline).
pub fn json_with_warnings(r: &ImpulseResponses, warnings: &[String]) -> String {
    let responses = Ordered(
        r.shocks
            .iter()
            .zip(&r.responses)
            .map(|(shock, m)| {
                let per_var = Ordered(
                    r.variables
                        .iter()
                        .enumerate()
                        .map(|(j, v)| (v.as_str(), m.row(j).iter().copied().collect()))
                        .collect(),
                );
                (shock.as_str(), per_var)
            })
            .collect(),
    );
    let doc = JsonIrf {
        horizon: r.horizon,
        size: r.size.as_str(),
        responses,
        impulse: Ordered(
            r.shocks
                .iter()
                .map(|s| s.as_str())
                .zip(r.impulse.iter().copied())
                .collect(),
        ),
        impulse_vectors: Ordered(
            r.shocks
                .iter()
                .zip(&r.impulse_vectors)
                .map(|(s, v)| {
                    (
                        s.as_str(),
                        Ordered(
                            r.innovations
                                .iter()
                                .map(|n| n.as_str())
                                .zip(v.iter().copied())
                                .collect(),
                        ),
                    )
                })
                .collect(),
        ),
        convention: convention(r.size),
        warnings,
    };
    let mut out = serde_json::to_string_pretty(&doc)
        .unwrap_or_else(|e| format!("{{\"error\": \"could not serialize: {e}\"}}"));
    out.push('\n');
    out
}

/// Tidy CSV: `shock,variable,period,value`, one row each (values round-trip exactly).
pub fn csv(r: &ImpulseResponses) -> String {
    let mut out = String::new();
    csv::record(&mut out, &["shock", "variable", "period", "value"]);
    for (shock, m) in r.shocks.iter().zip(&r.responses) {
        for (j, v) in r.variables.iter().enumerate() {
            for h in 0..=r.horizon {
                let period = h.to_string();
                let value = csv::number(m[(j, h)]);
                csv::record(&mut out, &[shock, v, &period, &value]);
            }
        }
    }
    out
}

/// One aligned table per shock: a row per period, a column per variable.
pub fn text(r: &ImpulseResponses, title: Option<&str>, log: &[bool]) -> String {
    let mut out = String::new();
    if let Some(t) = title {
        out.push_str(t);
        out.push_str("\n\n");
    }
    out.push_str("Impulse responses, in deviations from the steady state");
    if log.iter().any(|l| *l) {
        out.push_str(" (log deviations for log variables: 0.01 = one percent)");
    }
    out.push_str(".\n");
    let mut header: Vec<&str> = vec!["period"];
    header.extend(r.variables.iter().map(|v| v.as_str()));
    let align = vec![Align::Right; header.len()];
    for ((shock, m), amount) in r.shocks.iter().zip(&r.responses).zip(&r.impulse) {
        let size = match r.size {
            ImpulseSize::OneSd if comoves(r, shock) => format!(
                "one standard deviation = {}, with the co-movement of the innovations that correlate with it",
                number(*amount, 6)
            ),
            ImpulseSize::OneSd => format!("one standard deviation = {}", number(*amount, 6)),
            ImpulseSize::OneSdAlone => {
                format!("one standard deviation = {}, alone", number(*amount, 6))
            }
            ImpulseSize::Unit => "a unit impulse".to_string(),
        };
        out.push_str(&format!("\nResponses to {shock} ({size}) at period 0\n"));
        let mut t = Table::new(&header, &align);
        // Values below 1e-12 of the table's largest are rounding noise of exact zeros.
        let big = m.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let show = |x: f64| {
            if x.abs() <= 1e-12 * big {
                number(0.0, 5)
            } else {
                number(x, 5)
            }
        };
        for h in 0..=r.horizon {
            let mut row = vec![h.to_string()];
            row.extend((0..r.variables.len()).map(|j| show(m[(j, h)])));
            t.row(row);
        }
        for l in t.render().lines() {
            out.push_str("  ");
            out.push_str(l);
            out.push('\n');
        }
    }
    out.push_str("\nResults are conditional on the model and its calibration.\n");
    out
}

/// Whether the impulse to `shock` moves other innovations too (they correlate with it).
fn comoves(r: &ImpulseResponses, shock: &str) -> bool {
    let Some(i) = r.shocks.iter().position(|s| s == shock) else {
        return false;
    };
    let own = r.innovations.iter().position(|s| s == shock);
    r.impulse_vectors.get(i).is_some_and(|v| {
        v.iter()
            .enumerate()
            .any(|(j, x)| Some(j) != own && *x != 0.0)
    })
}
