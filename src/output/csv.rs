//! Minimal CSV writing (RFC 4180 quoting): fields with a comma, quote or line break are quoted,
//! quotes doubled. Numbers are written with Rust's shortest round-trip formatting.

/// Quotes one field when needed.
pub fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A number as CSV text: the shortest representation that reads back to the same `f64`
/// (plain decimals for moderate magnitudes, exponent notation below 1e-5 and from 1e16 on, so
/// `1e-300` is not written out with 300 zeros); non-finite values as `NaN`, `inf`, `-inf`.
pub fn number(x: f64) -> String {
    if x.is_nan() {
        "NaN".to_string()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.to_string()
    } else if x == 0.0 || (1e-5..1e16).contains(&x.abs()) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

/// Appends one record (fields joined by commas, quoted as needed) and a newline to `out`.
pub fn record(out: &mut String, fields: &[&str]) {
    for (i, f) in fields.iter().enumerate() {
        if i > 0 {
            out.push(',');
        }
        out.push_str(&field(f));
    }
    out.push('\n');
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quoting_and_numbers_round_trip() {
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("plain"), "plain");
        let x = 0.1 + 0.2;
        assert_eq!(number(x).parse::<f64>().unwrap(), x);
        assert_eq!(number(1e-300), "1e-300");
        assert_eq!(number(0.25), "0.25");
        assert_eq!(number(-3.0), "-3");
        assert_eq!(number(1.5e20), "1.5e20");
        assert_eq!(number(1e-300).parse::<f64>().unwrap(), 1e-300);
        let mut s = String::new();
        record(&mut s, &["shock", "variable", "period", "value"]);
        assert_eq!(s, "shock,variable,period,value\n");
    }
}
