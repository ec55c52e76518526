//! What the stability threshold means for a reader: its printed form, the warning when it is no
//! longer a test of stability, and the hint to use a discount factor the model has.
//!
//! Contract: roots with modulus below tau are "stable" (spec §7). tau = 1 tests boundedness;
//! tau = 1/sqrt(b) for a discount factor b in (0, 1) admits paths that grow more slowly than
//! b^{-t/2}, which is what a discounted quadratic objective needs (Hansen and Sargent 2014,
//! Recursive Models of Dynamic Linear Economies, ch. 3, from memory). A tau below 1 calls some
//! decaying roots "unstable": the count is then no longer a test of stability.

use super::Root;
use crate::model::{BinaryOp, Expr, Model};

/// Significant digits for printing a threshold (enough to tell 1/sqrt(0.99) = 1.005038 from 1,
/// few enough to read).
pub const THRESHOLD_DIGITS: usize = 7;

/// `tau` with [`THRESHOLD_DIGITS`] significant digits and no trailing zeros (`1`, `1.005038`).
pub fn show(tau: f64) -> String {
    if !tau.is_finite() || tau == 0.0 {
        return format!("{tau}");
    }
    let magnitude = tau.abs().log10().floor() as i32;
    let decimals = (THRESHOLD_DIGITS as i32 - 1 - magnitude).clamp(0, 17) as usize;
    let s = format!("{tau:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The warning for a threshold below 1, or `None`.
pub fn below_one_warning(tau: f64) -> Option<String> {
    (tau < 1.0).then(|| {
        format!(
            "the threshold {} is below 1, so roots between {} and 1 (which decay) count as unstable: the counting condition is then no longer a test of stability, and a \"determinate\" verdict does not mean the model has a unique stable solution",
            show(tau),
            show(tau)
        )
    })
}

/// A discount factor the model has: the `options` discount, else a parameter with a value in
/// (0, 1) that multiplies an expectation (a variable with a lead) in some equation, as `beta` in
/// `beta * pi[t+1]`. Returns its value and where it comes from.
pub fn model_discount(model: &Model) -> Option<(f64, String)> {
    if let Some(e) = &model.options.discount {
        let b = model.eval_parameters(e);
        if b > 0.0 && b < 1.0 {
            return Some((b, "the file's `discount` option".to_string()));
        }
    }
    for eq in &model.equations {
        for side in [&eq.lhs, &eq.rhs] {
            let mut found = None;
            side.walk(&mut |e| {
                if found.is_some() {
                    return;
                }
                if let Expr::Binary(BinaryOp::Mul, a, b) = e {
                    for (p, other) in [(a, b), (b, a)] {
                        if let Expr::Parameter(i) = **p {
                            if has_lead(other) {
                                if let Some(par) = model.parameters.get(i) {
                                    if par.value > 0.0 && par.value < 1.0 {
                                        found =
                                            Some((par.value, format!("parameter `{}`", par.name)));
                                    }
                                }
                            }
                        }
                    }
                }
            });
            if found.is_some() {
                return found;
            }
        }
    }
    None
}

fn has_lead(e: &Expr) -> bool {
    let mut lead = false;
    e.walk(&mut |x| {
        if let Expr::Variable { offset, .. } = x {
            lead |= *offset > 0;
        }
    });
    lead
}

/// When a counting condition fails at threshold `tau` and some roots lie in [1, 1/sqrt(b)) for a
/// discount factor b of the model, the sentence suggesting `b` as the discount; else `None`.
pub fn discount_hint(model: &Model, roots: &[Root], tau: f64) -> Option<String> {
    let (b, source) = model_discount(model)?;
    let wide = 1.0 / b.sqrt();
    if tau >= wide {
        return None;
    }
    let between = roots
        .iter()
        .filter_map(|r| r.modulus)
        .filter(|&m| m >= tau.min(1.0) && m < wide)
        .count();
    (between > 0).then(|| {
        format!(
            "{between} root{} lie{} between {} and 1/sqrt({}) = {}, with {} as the discount factor; if the model is a discounted problem whose paths may grow at up to that rate, solve with the discount {} (threshold {}).",
            if between == 1 { "" } else { "s" },
            if between == 1 { "s" } else { "" },
            show(tau.min(1.0)),
            show(b),
            show(wide),
            source,
            show(b),
            show(wide)
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thresholds_print_with_seven_significant_digits() {
        assert_eq!(show(1.0), "1");
        assert_eq!(show(1.015346165133619), "1.015346");
        assert_eq!(show(1.0 / 0.99f64.sqrt()), "1.005038");
        assert_eq!(show(0.5), "0.5");
        assert_eq!(show(123.456789), "123.4568");
    }

    #[test]
    fn a_threshold_below_one_is_flagged_and_one_is_not() {
        assert!(below_one_warning(0.9).is_some_and(|w| w.contains("no longer a test")));
        assert!(below_one_warning(1.0).is_none());
        assert!(below_one_warning(1.01).is_none());
    }
}
