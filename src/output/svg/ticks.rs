//! Axis ticks at "nice numbers": steps of 1, 2 or 5 times a power of ten.
//!
//! The y axes use Heckbert's loose labelling (Heckbert 1990, "Nice numbers for graph labels",
//! Graphics Gems I, pp. 61-63 and 657-659): the data range is widened to whole multiples of a nice
//! step `d = nice(nice(max - min, false) / (n - 1), true)`, so the axis starts and ends on a label.
//! The x axes (periods) use integer steps 1, 2, 5, 10, 20, ... chosen so that the labels do not
//! crowd.

/// Axis ticks: the axis runs from `lo` to `hi`, labels at `values` (`step` apart).
#[derive(Debug, Clone, PartialEq)]
pub struct Ticks {
    pub lo: f64,
    pub hi: f64,
    pub step: f64,
    pub values: Vec<f64>,
}

/// Largest number of ticks an axis may carry; a guard against absurd requests, far above what
/// fits on a chart.
pub const MAX_TICKS: usize = 50;

/// A nice number near `x > 0`: 1, 2, 5 or 10 times a power of ten (Heckbert 1990, `nicenum`).
/// With `round`, the nearest of them; without, the smallest not below `x`. Returns 1 for a
/// non-finite or non-positive `x` (callers never pass one; the guard keeps the function total).
pub fn nice_number(x: f64, round: bool) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return 1.0;
    }
    let exponent = x.log10().floor();
    let power = 10f64.powf(exponent);
    let fraction = x / power;
    let nice = if round {
        if fraction < 1.5 {
            1.0
        } else if fraction < 3.0 {
            2.0
        } else if fraction < 7.0 {
            5.0
        } else {
            10.0
        }
    } else if fraction <= 1.0 {
        1.0
    } else if fraction <= 2.0 {
        2.0
    } else if fraction <= 5.0 {
        5.0
    } else {
        10.0
    };
    nice * power
}

/// Loose ticks covering `[min, max]` with about `target` labels (Heckbert 1990, `loose_label`,
/// with the step rounded from `span / (target - 1)` directly rather than from the nice ceiling of
/// the span, which on short panels often left only three labels).
///
/// Returns ticks whose `lo <= min`, `hi >= max`, every value a whole multiple of `step` (zero
/// exactly zero). Needs finite `min < max`; otherwise (or when the span overflows) returns the two
/// ends as the only ticks.
pub fn loose_ticks(min: f64, max: f64, target: usize) -> Ticks {
    let fallback = || Ticks {
        lo: min,
        hi: max,
        step: max - min,
        values: vec![min, max],
    };
    let span = max - min;
    if !(min.is_finite() && max.is_finite() && span.is_finite() && span > 0.0) {
        return fallback();
    }
    let target = target.clamp(2, MAX_TICKS);
    let step = nice_number(span / (target - 1) as f64, true);
    let k_lo = (min / step).floor();
    let k_hi = (max / step).ceil();
    if !(k_lo.is_finite() && k_hi.is_finite()) || k_hi - k_lo > MAX_TICKS as f64 {
        return fallback();
    }
    let (k_lo, k_hi) = (k_lo as i64, k_hi as i64);
    let values: Vec<f64> = (k_lo..=k_hi).map(|k| k as f64 * step).collect();
    Ticks {
        lo: k_lo as f64 * step,
        hi: k_hi as f64 * step,
        step,
        values,
    }
}

/// Ticks inside `[lo, hi]` (the axis keeps its exact ends): whole multiples of a nice step chosen
/// for about `target` labels (Heckbert 1990's step rule without widening the range). Needs finite
/// `lo < hi`; otherwise returns the single value `lo` on the range `[lo, hi]`.
pub fn inside_ticks(lo: f64, hi: f64, target: usize) -> Ticks {
    let span = hi - lo;
    if !(lo.is_finite() && hi.is_finite() && span.is_finite() && span > 0.0) {
        return Ticks {
            lo,
            hi,
            step: 1.0,
            values: vec![lo],
        };
    }
    let target = target.clamp(2, MAX_TICKS);
    let step = nice_number(span / (target - 1) as f64, true);
    let k_lo = (lo / step - 1e-9).ceil();
    let k_hi = (hi / step + 1e-9).floor();
    let values = if k_lo.is_finite() && k_hi.is_finite() && k_hi - k_lo <= MAX_TICKS as f64 {
        (k_lo as i64..=k_hi as i64)
            .map(|k| k as f64 * step)
            .collect()
    } else {
        vec![lo]
    };
    Ticks {
        lo,
        hi,
        step,
        values,
    }
}

/// Integer ticks inside `[lo, hi]`: multiples of the smallest step in 1, 2, 5, 10, 20, 50, ...
/// that gives at most `max_labels` labels (at least one label, `lo` itself, if the range is empty).
pub fn integer_ticks(lo: i64, hi: i64, max_labels: usize) -> Vec<i64> {
    if hi <= lo {
        return vec![lo];
    }
    let max_labels = max_labels.max(2) as i64;
    let first_multiple =
        |step: i64| lo.div_euclid(step) * step + if lo.rem_euclid(step) == 0 { 0 } else { step };
    let mut power: i64 = 1;
    let step = 'search: loop {
        for m in [1i64, 2, 5] {
            let step = m.saturating_mul(power);
            let first = first_multiple(step);
            let count = if first > hi {
                0
            } else {
                (hi - first) / step + 1
            };
            if count <= max_labels || step > hi - lo || power >= i64::MAX / 100 {
                break 'search step;
            }
        }
        power = power.saturating_mul(10);
    };
    let first = first_multiple(step);
    let mut out = Vec::new();
    let mut v = first;
    while v <= hi && out.len() <= MAX_TICKS {
        out.push(v);
        v = match v.checked_add(step) {
            Some(n) => n,
            None => break,
        };
    }
    if out.is_empty() {
        out.push(lo);
    }
    out
}

/// Tick labels sharing one format: as many decimals as the step needs, a true minus sign, and,
/// when the values are very large or very small, a common power of ten taken out and returned
/// as a note such as `×10⁻⁴` (the labels are then the values divided by that power).
pub fn format_ticks(ticks: &Ticks) -> (Vec<String>, Option<String>) {
    let max_abs = ticks.values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let step = ticks.step.abs();
    let mut exponent = 0i32;
    if max_abs.is_finite() && max_abs > 0.0 && !(SCALE_BELOW..SCALE_ABOVE).contains(&max_abs) {
        exponent = max_abs.log10().floor() as i32;
    }
    let scale = 10f64.powi(exponent);
    let decimals = if step.is_finite() && step > 0.0 {
        // The step is m * 10^e with m in {1, 2, 5}; labels need max(-e, 0) decimals after
        // scaling. A tiny offset keeps 0.1 (= 1e-1 in binary, slightly above) from flooring to -2.
        let e = (step / scale).log10().floor() as i32;
        let e = if (step / scale / 10f64.powi(e + 1) - 1.0).abs() < 1e-9 {
            e + 1
        } else {
            e
        };
        (-e).clamp(0, 12) as usize
    } else {
        2
    };
    let labels = ticks
        .values
        .iter()
        .map(|v| signed(&format!("{:.*}", decimals, v / scale)))
        .collect();
    let note = (exponent != 0).then(|| format!("×10{}", superscript(exponent)));
    (labels, note)
}

/// Values at least this large in magnitude are labelled with a common power of ten taken out.
pub const SCALE_ABOVE: f64 = 1e5;
/// Values all below this in magnitude (and not all zero) are labelled likewise.
pub const SCALE_BELOW: f64 = 1e-3;

/// Replaces a leading ASCII hyphen by a true minus sign (U+2212) and turns `-0.00` into `0.00`.
pub fn signed(s: &str) -> String {
    match s.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        Some(rest) => format!("\u{2212}{rest}"),
        None => s.to_string(),
    }
}

/// An integer in Unicode superscript digits (`-4` gives `⁻⁴`).
pub fn superscript(n: i32) -> String {
    const DIGITS: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::new();
    if n < 0 {
        s.push('⁻');
    }
    for c in n.unsigned_abs().to_string().chars() {
        let d = c.to_digit(10).unwrap_or(0) as usize;
        s.push(DIGITS[d]);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Whether `x` is 1, 2 or 5 times a power of ten (to rounding).
    fn is_nice(x: f64) -> bool {
        let e = x.log10().floor();
        let m = x / 10f64.powf(e);
        [1.0, 2.0, 5.0, 10.0].iter().any(|n| (m - n).abs() < 1e-9)
    }

    #[test]
    fn nice_numbers_follow_heckbert() {
        // Heckbert 1990, Graphics Gems I p. 62: rounded 1.4 -> 1, 2.9 -> 2, 6.9 -> 5, 7 -> 10;
        // ceiling 1.01 -> 2, 2.01 -> 5, 5.01 -> 10.
        assert_eq!(nice_number(1.4, true), 1.0);
        assert_eq!(nice_number(2.9, true), 2.0);
        assert_eq!(nice_number(6.9, true), 5.0);
        assert_eq!(nice_number(7.0, true), 10.0);
        assert_eq!(nice_number(1.01, false), 2.0);
        assert_eq!(nice_number(2.01, false), 5.0);
        assert_eq!(nice_number(5.01, false), 10.0);
        assert!((nice_number(0.034, true) - 0.05).abs() < 1e-15);
    }

    #[test]
    fn loose_ticks_cover_the_data_with_nice_steps() {
        for &(lo, hi) in &[
            (0.0, 1.0),
            (-0.37, 0.81),
            (-1234.5, 98765.0),
            (1e-7, 3e-7),
            (0.5, 0.5000001),
            (-3.0, -2.0),
        ] {
            let t = loose_ticks(lo, hi, 5);
            assert!(
                t.lo <= lo && t.hi >= hi,
                "{t:?} does not cover [{lo}, {hi}]"
            );
            assert!(is_nice(t.step), "step {} not nice", t.step);
            assert!(t.values.len() >= 2 && t.values.len() <= 12, "{t:?}");
            for v in &t.values {
                let k = v / t.step;
                assert!(
                    (k - k.round()).abs() < 1e-6,
                    "{v} not a multiple of {}",
                    t.step
                );
            }
        }
        let t = loose_ticks(-0.37, 0.81, 5);
        assert!(t.values.contains(&0.0));
    }

    #[test]
    fn degenerate_ranges_do_not_loop_or_divide_by_zero() {
        let t = loose_ticks(1.0, 1.0, 5);
        assert_eq!(t.values, vec![1.0, 1.0]);
        let t = loose_ticks(f64::NAN, 1.0, 5);
        assert_eq!(t.values.len(), 2);
        let t = loose_ticks(-1e308, 1e308, 5);
        assert_eq!(t.values.len(), 2);
    }

    #[test]
    fn inside_ticks_stay_inside() {
        let t = inside_ticks(-0.05, 3.05, 5);
        assert_eq!(t.values.first(), Some(&0.0));
        assert!(t.values.iter().all(|v| *v >= -0.05 && *v <= 3.05));
        assert!(is_nice(t.step));
        assert!(t.values.len() >= 3 && t.values.len() <= 8, "{t:?}");
        assert_eq!(inside_ticks(1.0, 1.0, 5).values, vec![1.0]);
    }

    #[test]
    fn integer_ticks_thin_to_the_budget() {
        assert_eq!(integer_ticks(0, 40, 6), vec![0, 10, 20, 30, 40]);
        assert_eq!(integer_ticks(0, 8, 10), (0..=8).collect::<Vec<_>>());
        assert_eq!(integer_ticks(0, 12, 5), vec![0, 5, 10]);
        assert_eq!(integer_ticks(3, 3, 5), vec![3]);
        assert_eq!(integer_ticks(1, 200, 6), vec![50, 100, 150, 200]);
        let t = integer_ticks(0, 1_000_000, 6);
        assert!(t.len() <= 6 && t.len() >= 2, "{t:?}");
    }

    #[test]
    fn labels_share_decimals_and_use_a_true_minus() {
        let t = loose_ticks(-0.37, 0.81, 5);
        let (labels, note) = format_ticks(&t);
        assert_eq!(note, None);
        assert!(labels.contains(&"0.0".to_string()), "{labels:?}");
        assert!(
            labels.iter().any(|l| l.starts_with('\u{2212}')),
            "{labels:?}"
        );
        let t = loose_ticks(1e-7, 3e-7, 5);
        let (labels, note) = format_ticks(&t);
        assert_eq!(note.as_deref(), Some("×10⁻⁷"));
        assert!(labels.iter().all(|l| l.len() <= 4), "{labels:?}");
        let t = loose_ticks(0.0, 2.0e6, 5);
        let (_, note) = format_ticks(&t);
        assert_eq!(note.as_deref(), Some("×10⁶"));
        let t = loose_ticks(0.0, 1.0, 6);
        let (labels, _) = format_ticks(&t);
        assert_eq!(labels, vec!["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
    }
}
