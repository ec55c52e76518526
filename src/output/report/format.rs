//! Number formatting of the report: significant digits, fixed decimals, trailing zeros.

#[allow(unused_imports)]
use super::*;

/// `x` to `digits` significant digits: fixed notation for moderate magnitudes, otherwise
/// `m×10ⁿ`; a true minus sign; never `-0`.
pub fn sig(x: f64, digits: usize) -> String {
    if x.is_nan() {
        return "NaN".to_string();
    }
    if x.is_infinite() {
        return if x > 0.0 {
            "\u{221e}"
        } else {
            "\u{2212}\u{221e}"
        }
        .to_string();
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let digits = digits.clamp(1, 17);
    let e = x.abs().log10().floor() as i32;
    let s = if (-4..6).contains(&e) {
        let decimals = (digits as i32 - 1 - e).max(0) as usize;
        let s = format!("{:.*}", decimals, x);
        trim_zeros(&s)
    } else {
        let s = format!("{:.*e}", digits - 1, x);
        let (mant, exp) = s.split_once('e').unwrap_or((&s, "0"));
        let exp: i32 = exp.parse().unwrap_or(0);
        format!(
            "{}\u{d7}10{}",
            trim_zeros(mant),
            crate::output::svg::ticks::superscript(exp)
        )
    };
    crate::output::svg::ticks::signed(&s)
}

/// `x` with exactly `decimals` decimals, a true minus sign, never `-0`.
pub(super) fn fixed(x: f64, decimals: usize) -> String {
    crate::output::svg::ticks::signed(&format!("{:.*}", decimals, x))
}

pub(super) fn trim_zeros(s: &str) -> String {
    if !s.contains('.') {
        return s.to_string();
    }
    let t = s.trim_end_matches('0');
    t.trim_end_matches('.').to_string()
}
