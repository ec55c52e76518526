//! Start-of-period stocks (spec §8) in the reported solution.
//!
//! A `predetermined` variable x is solved in end-of-period timing (`model::timing`): the solver
//! sees x'_t = x_{t+1}, so its state x'_{t-1} is x_t itself and its state x'_{t-L} is
//! x_{t-L+1}. The decision rule of x as written is therefore the selector
//!
//!   x_t = x'_{t-1} = e_j' s_{t-1},  with no response to e_t,
//!
//! (j the position of x'_{t-1} among the states), and the states are named as written: `x` for
//! x'_{t-1}, `x[t-1]` for x'_{t-2}, and so on. Nothing else changes: G and H are the law of motion
//! of the same state vector.

use super::StateSpace;
use crate::canonical::{Layout, StateElement};

/// Rewrites `space` (solved in end-of-period timing) into the timing as written, for the
/// variables flagged in `stocks` (from `model::timing::stocks`). Overwrites the rows of P and Q of
/// each stock and the names of its states; returns the rewritten state space.
pub fn to_start_of_period(
    mut space: StateSpace,
    stocks: &[bool],
    layout: &Layout,
    names: &[String],
) -> StateSpace {
    if !stocks.iter().any(|&s| s) {
        return space;
    }
    for (a, element) in layout.states.iter().enumerate() {
        let StateElement::VariableLag { variable, lag } = *element else {
            continue;
        };
        if !stocks.get(variable).copied().unwrap_or(false) {
            continue;
        }
        let Some(name) = names.get(variable) else {
            continue;
        };
        if let Some(slot) = space.states.get_mut(a) {
            *slot = if lag <= 1 {
                name.clone()
            } else {
                format!("{name}[t-{}]", lag - 1)
            };
        }
        if lag == 1 && variable < space.p.nrows() {
            space.p.row_mut(variable).fill(0.0);
            space.p[(variable, a)] = 1.0;
            space.q.row_mut(variable).fill(0.0);
        }
    }
    space
}
