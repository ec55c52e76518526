//! A small JSON value that keeps its keys in insertion order (so variables appear in declaration
//! order) and writes NaN and infinities as `null`. Strings and numbers are formatted by serde_json,
//! so escaping and number syntax are standard.

/// A JSON value with ordered object keys.
#[derive(Debug, Clone, PartialEq)]
pub enum Json {
    Null,
    Bool(bool),
    /// Non-finite values are written as `null`.
    Number(f64),
    /// An integer, written without a fraction.
    Integer(i64),
    String(String),
    Array(Vec<Json>),
    Object(Vec<(String, Json)>),
}

/// Containers whose one-line form is at most this wide are written on one line.
const INLINE_WIDTH: usize = 100;

impl Json {
    /// A number, or `null` when `x` is `None` or not finite.
    pub fn opt_number(x: Option<f64>) -> Json {
        x.map_or(Json::Null, Json::Number)
    }

    /// An array of numbers.
    pub fn numbers(xs: &[f64]) -> Json {
        Json::Array(xs.iter().map(|&x| Json::Number(x)).collect())
    }

    fn is_scalar(&self) -> bool {
        !matches!(self, Json::Array(_) | Json::Object(_))
    }

    fn scalar(&self, out: &mut String) {
        match self {
            Json::Null => out.push_str("null"),
            Json::Bool(b) => out.push_str(if *b { "true" } else { "false" }),
            Json::Number(x) => {
                if x.is_finite() {
                    // serde_json writes the shortest representation that reads back exactly.
                    out.push_str(
                        &serde_json::Number::from_f64(*x)
                            .map_or("null".to_string(), |n| n.to_string()),
                    )
                } else {
                    out.push_str("null")
                }
            }
            Json::Integer(i) => out.push_str(&i.to_string()),
            Json::String(s) => {
                out.push_str(&serde_json::to_string(s).unwrap_or_else(|_| "\"\"".to_string()))
            }
            Json::Array(_) | Json::Object(_) => {}
        }
    }

    /// One-line form.
    fn compact(&self, out: &mut String) {
        match self {
            Json::Array(items) => {
                out.push('[');
                for (i, v) in items.iter().enumerate() {
                    if i > 0 {
                        out.push_str(", ");
                    }
                    v.compact(out);
                }
                out.push(']');
            }
            Json::Object(fields) => {
                out.push('{');
                for (i, (k, v)) in fields.iter().enumerate() {
                    if i > 0 {
                        out.push_str(", ");
                    }
                    Json::String(k.clone()).scalar(out);
                    out.push_str(": ");
                    v.compact(out);
                }
                out.push('}');
            }
            _ => self.scalar(out),
        }
    }

    fn pretty(&self, indent: usize, out: &mut String) {
        let children_scalar = match self {
            Json::Array(items) => items.iter().all(Json::is_scalar),
            Json::Object(fields) => fields.iter().all(|(_, v)| v.is_scalar()),
            _ => true,
        };
        if self.is_scalar() {
            self.scalar(out);
            return;
        }
        if children_scalar {
            let mut one = String::new();
            self.compact(&mut one);
            if one.len() <= INLINE_WIDTH || matches!(self, Json::Array(_)) {
                out.push_str(&one);
                return;
            }
        }
        let pad = "  ".repeat(indent + 1);
        match self {
            Json::Array(items) => {
                if items.is_empty() {
                    out.push_str("[]");
                    return;
                }
                out.push_str("[\n");
                for (i, v) in items.iter().enumerate() {
                    out.push_str(&pad);
                    v.pretty(indent + 1, out);
                    if i + 1 < items.len() {
                        out.push(',');
                    }
                    out.push('\n');
                }
                out.push_str(&"  ".repeat(indent));
                out.push(']');
            }
            Json::Object(fields) => {
                if fields.is_empty() {
                    out.push_str("{}");
                    return;
                }
                out.push_str("{\n");
                for (i, (k, v)) in fields.iter().enumerate() {
                    out.push_str(&pad);
                    Json::String(k.clone()).scalar(out);
                    out.push_str(": ");
                    v.pretty(indent + 1, out);
                    if i + 1 < fields.len() {
                        out.push(',');
                    }
                    out.push('\n');
                }
                out.push_str(&"  ".repeat(indent));
                out.push('}');
            }
            _ => {}
        }
    }

    /// Indented text ending in a newline; arrays of scalars (long series) stay on one line.
    pub fn to_pretty_string(&self) -> String {
        let mut out = String::new();
        self.pretty(0, &mut out);
        out.push('\n');
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_order_and_writes_null_for_nan() {
        let j = Json::Object(vec![
            ("z".into(), Json::Number(1.5)),
            ("a".into(), Json::Number(f64::NAN)),
            ("s".into(), Json::String("say \"hi\"".into())),
        ]);
        let s = j.to_pretty_string();
        assert_eq!(s, "{\"z\": 1.5, \"a\": null, \"s\": \"say \\\"hi\\\"\"}\n");
        let v: serde_json::Value = serde_json::from_str(&s).unwrap();
        assert!(v["a"].is_null());
        let nested = Json::Object(vec![(
            "rows".into(),
            Json::Array(vec![Json::numbers(&[1.0, 2.0])]),
        )]);
        let v: serde_json::Value = serde_json::from_str(&nested.to_pretty_string()).unwrap();
        assert_eq!(v["rows"][0][1], 2.0);
    }
}
