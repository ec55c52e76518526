//! Stock timing (spec §8): a `predetermined` variable rewritten as an end-of-period stock.
//!
//! Contract: for a variable x declared `predetermined` (its value at t fixed at t-1), define the
//! end-of-period stock x'_t = x_{t+1}. Then x[t+j] = x'[t+j-1] exactly, so [`end_of_period`]
//! rewrites every occurrence `x[t+j]` in the equations as `x'[t+j-1]` (the variable keeps its
//! index, name and steady state; only offsets move) and clears the marker. The rewritten model has
//! the ordinary timing the solver knows (a lead means an expectation, a lag a state), and x_t is
//! its state x'_{t-1}: the solver reports it that way (see `solution::stocks`). Observables and
//! the loss keep the timing as written.
//!
//! A `predetermined` variable that never appears with a lead is left as it is: the marker says
//! nothing there (spec §8), and [`idle_markers`] names such variables for a hint.

use std::borrow::Cow;

use super::{Expr, Model};

/// `model` with every `predetermined` variable in end-of-period timing (borrowed unchanged when
/// no variable is predetermined). Overwrites nothing; returns the rewritten model, whose
/// `max_lead` and `max_lag` follow the new offsets.
pub fn end_of_period(model: &Model) -> Cow<'_, Model> {
    let shifted = stocks(model);
    if !shifted.iter().any(|&s| s) {
        return Cow::Borrowed(model);
    }
    let mut m = model.clone();
    for eq in &mut m.equations {
        shift(&mut eq.lhs, &shifted);
        shift(&mut eq.rhs, &shifted);
    }
    for (v, &s) in m.endogenous.iter_mut().zip(&shifted) {
        v.predetermined = false;
        if s {
            // Offsets k in [-max_lag, max_lead] become k - 1.
            let lead = v.max_lead as i64 - 1;
            let lag = v.max_lag as i64 + 1;
            v.max_lead = lead.max(0) as u32;
            v.max_lag = lag as u32;
        }
    }
    Cow::Owned(m)
}

/// Per variable: declared `predetermined` and written with a lead somewhere in the equations, so
/// that [`end_of_period`] moves its offsets.
pub fn stocks(model: &Model) -> Vec<bool> {
    model
        .endogenous
        .iter()
        .map(|v| v.predetermined && v.max_lead > 0)
        .collect()
}

/// Indices of the variables declared `predetermined` that never appear with a lead (the marker
/// does nothing there).
pub fn idle_markers(model: &Model) -> Vec<usize> {
    model
        .endogenous
        .iter()
        .enumerate()
        .filter(|(_, v)| v.predetermined && v.max_lead == 0)
        .map(|(i, _)| i)
        .collect()
}

/// Moves offsets of the `shifted` variables back one period in `e` (recursive; depth bounded by
/// [`super::MAX_EXPR_DEPTH`]).
fn shift(e: &mut Expr, shifted: &[bool]) {
    match e {
        Expr::Variable { index, offset } if shifted.get(*index).copied().unwrap_or(false) => {
            *offset -= 1;
        }
        Expr::Neg(a) | Expr::Call(_, a) => shift(a, shifted),
        Expr::Binary(_, a, b) | Expr::Call2(_, a, b) => {
            shift(a, shifted);
            shift(b, shifted);
        }
        _ => {}
    }
}
