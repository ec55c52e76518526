//! Text measurement without a font engine, XML escaping, and shortening with an ellipsis.
//!
//! Width of a string at font size `s` is `s * SAFETY * sum(advance(c))`, where the advances are the
//! published character widths of Helvetica (Adobe Font Metrics, Helvetica.afm, in 1/1000 em; the
//! same widths as the metric-compatible Arial and Liberation Sans). Charts name Helvetica, Arial,
//! Liberation Sans first; other sans-serif fallbacks (DejaVu Sans is the widest common one, about
//! 8 % wider) are covered by [`SAFETY`]. Labels are laid out so that the estimate never exceeds the
//! space given, so real text rarely does.

/// Widening applied to every estimate so that wider fallback fonts still fit (DejaVu Sans runs
/// about 8 % wider than Helvetica on lower-case text; common practice, measured by eye on this
/// machine's renderings).
pub const SAFETY: f64 = 1.08;

/// Extra width of bold text over regular (Helvetica-Bold.afm against Helvetica.afm: about 6 %).
pub const BOLD_FACTOR: f64 = 1.07;

/// Advance width of one character in 1/1000 em (Helvetica AFM; ASCII from the metric file, other
/// characters by class: wide East Asian 1000, others 600).
fn advance(c: char) -> u32 {
    match c {
        ' ' | '!' | ',' | '.' | '/' | ':' | ';' | '[' | ']' | '\\' | 'I' | 'f' | 't' => 278,
        'i' | 'j' | 'l' | '\'' | '|' => 222,
        '"' => 355,
        '#' | '$' | '0'..='9' | '_' | '?' => 556,
        '%' => 889,
        '&' | 'A' | 'B' | 'E' | 'K' | 'P' | 'S' | 'V' | 'X' | 'Y' => 667,
        '(' | ')' | '-' | '`' | 'r' | '{' | '}' => 333,
        '*' => 389,
        '+' | '<' | '=' | '>' | '~' => 584,
        '@' => 1015,
        'C' | 'D' | 'H' | 'N' | 'R' | 'U' => 722,
        'F' | 'T' | 'Z' => 611,
        'G' | 'O' | 'Q' => 778,
        'J' | 'c' | 'k' | 's' | 'v' | 'x' | 'y' | 'z' => 500,
        'L' | 'a' | 'b' | 'd' | 'e' | 'g' | 'h' | 'n' | 'o' | 'p' | 'q' | 'u' => 556,
        'M' | 'm' => 833,
        'W' => 944,
        'w' => 722,
        '^' => 469,
        '\u{2212}' | '×' => 584,
        '…' => 1000,
        '⁰'..='⁹' | '¹' | '²' | '³' | '⁻' => 333,
        c if is_wide(c) => 1000,
        _ => 600,
    }
}

/// East Asian wide characters (CJK ideographs, kana, Hangul, full-width forms).
fn is_wide(c: char) -> bool {
    matches!(c as u32,
        0x1100..=0x115F | 0x2E80..=0xA4CF | 0xAC00..=0xD7A3 | 0xF900..=0xFAFF | 0xFE30..=0xFE4F
        | 0xFF00..=0xFF60 | 0xFFE0..=0xFFE6 | 0x20000..=0x3FFFD)
}

/// Estimated width in pixels of `s` at `size` pixels (bold when `bold`).
pub fn text_width(s: &str, size: f64, bold: bool) -> f64 {
    let units: u64 = s.chars().map(|c| advance(c) as u64).sum();
    let w = units as f64 / 1000.0 * size * SAFETY;
    if bold {
        w * BOLD_FACTOR
    } else {
        w
    }
}

/// `s` unchanged if it fits in `max_width` pixels, otherwise its longest prefix (ending without
/// spaces) followed by an ellipsis that fits; an empty string if not even the ellipsis fits.
pub fn ellipsize(s: &str, size: f64, bold: bool, max_width: f64) -> String {
    if text_width(s, size, bold) <= max_width {
        return s.to_string();
    }
    let budget = max_width - text_width("…", size, bold);
    if budget < 0.0 {
        return String::new();
    }
    let mut used = 0.0;
    let mut end = 0;
    let scale = size * SAFETY / 1000.0 * if bold { BOLD_FACTOR } else { 1.0 };
    for (i, c) in s.char_indices() {
        let w = advance(c) as f64 * scale;
        if used + w > budget {
            break;
        }
        used += w;
        end = i + c.len_utf8();
    }
    let mut prefix = s[..end].trim_end().to_string();
    // A dangling comma or opening bracket before the ellipsis reads badly.
    while prefix.ends_with([',', '(', '[', ':', ';', '-']) {
        prefix.pop();
        prefix = prefix.trim_end().to_string();
    }
    format!("{prefix}…")
}

/// `s` made safe as XML character data or an attribute value: `& < > " '` escaped, line breaks
/// and tabs turned into spaces, other control characters (not allowed in XML 1.0) replaced by
/// U+FFFD.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\n' | '\r' | '\t' => out.push(' '),
            c if (c as u32) < 0x20 || c == '\u{7f}' || c == '\u{fffe}' || c == '\u{ffff}' => {
                out.push('\u{fffd}')
            }
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn widths_follow_the_metrics() {
        // "Hello" in Helvetica: H 722 + e 556 + l 222 + l 222 + o 556 = 2278 units.
        let w = text_width("Hello", 10.0, false);
        assert!((w - 22.78 * SAFETY).abs() < 1e-9);
        assert!(text_width("mmmm", 12.0, false) > text_width("iiii", 12.0, false) * 3.0);
        assert!(text_width("x", 12.0, true) > text_width("x", 12.0, false));
        assert_eq!(text_width("", 12.0, false), 0.0);
    }

    #[test]
    fn ellipsis_shortens_to_fit() {
        let long = "inflation, quarterly percent, annualised, seasonally adjusted";
        let s = ellipsize(long, 11.0, false, 120.0);
        assert!(s.ends_with('…'));
        assert!(text_width(&s, 11.0, false) <= 120.0);
        assert!(long.starts_with(s.trim_end_matches('…')));
        assert_eq!(ellipsize("gap", 11.0, false, 120.0), "gap");
        assert_eq!(ellipsize("gap", 11.0, false, 2.0), "");
        // Multi-byte characters are never split.
        let s = ellipsize("ééééééééééééééééééééé", 11.0, false, 40.0);
        assert!(s.ends_with('…'));
    }

    #[test]
    fn escaping_covers_markup_and_controls() {
        assert_eq!(
            escape("a<b & \"c\" 'd'>"),
            "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;"
        );
        assert_eq!(escape("x\ny\u{1}"), "x y\u{fffd}");
    }
}
