//! Plugging a solution back into the linearized equations.
//!
//! Contract: with y_t = P s_{t-1} + Q e_t and s_t = G s_{t-1} + H e_t, every term of the linear
//! system is a linear map of (s_{t-1}, e_t): E_t y_{j,t+k} = P_j G^{k-1} [G H] for k >= 1,
//! y_{j,t} = [P_j Q_j], y_{j,t-l} and e_{s,t-l} are states, e_{s,t} is a unit vector. The residual
//! of equation i is the sum of its coefficients times these maps; it must vanish identically.
//! This check uses only P, Q, G, H and the state names' meaning, not the canonical form the
//! solution came from, so it is an independent test of the whole chain.

use nalgebra::DMatrix;

use crate::canonical::Layout;
use crate::linear::LinearSystem;
use crate::solution::StateSpace;

/// Residuals of a solution in the linearized equations.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlugBack {
    /// Largest absolute residual coefficient.
    pub absolute: f64,
    /// Largest residual relative to the size of the terms in its equation.
    pub relative: f64,
}

/// The relative residual of [`plug_back_detailed`] (NaN-safe: a NaN residual returns NaN).
pub fn plug_back(linear: &LinearSystem, layout: &Layout, space: &StateSpace) -> f64 {
    plug_back_detailed(linear, layout, space).relative
}

/// Computes the residual of every equation as a map of (s_{t-1}, e_t) (see the module doc).
pub fn plug_back_detailed(linear: &LinearSystem, layout: &Layout, space: &StateSpace) -> PlugBack {
    let nk = space.g.nrows();
    let ne = space.q.ncols();
    let width = nk + ne;
    let max_lead = linear
        .variable_terms
        .iter()
        .map(|t| t.offset)
        .max()
        .unwrap_or(0)
        .max(0) as usize;
    // gh[k-1] = G^{k-1} [G H]
    let mut gh: Vec<DMatrix<f64>> = Vec::with_capacity(max_lead);
    if max_lead > 0 {
        let mut first = DMatrix::<f64>::zeros(nk, width);
        first.view_mut((0, 0), (nk, nk)).copy_from(&space.g);
        first.view_mut((0, nk), (nk, ne)).copy_from(&space.h);
        gh.push(first);
        for k in 1..max_lead {
            let next = &space.g * &gh[k - 1];
            gh.push(next);
        }
    }
    let n = linear.n_equations;
    let mut resid = DMatrix::<f64>::zeros(n, width);
    let mut scale = vec![0.0f64; n];
    let mut row = vec![0.0; width];
    for t in &linear.variable_terms {
        row.iter_mut().for_each(|v| *v = 0.0);
        let j = t.variable;
        if t.offset == 0 {
            for (c, r) in row.iter_mut().enumerate() {
                *r = if c < nk {
                    space.p[(j, c)]
                } else {
                    space.q[(j, c - nk)]
                };
            }
        } else if t.offset > 0 {
            let m = &gh[t.offset as usize - 1];
            for c in 0..width {
                let mut acc = 0.0;
                for r in 0..nk {
                    acc += space.p[(j, r)] * m[(r, c)];
                }
                row[c] = acc;
            }
        } else {
            match layout.state_of_variable(j, (-t.offset) as u32) {
                Some(s) => row[s] = 1.0,
                None => {
                    return PlugBack {
                        absolute: f64::NAN,
                        relative: f64::NAN,
                    }
                }
            }
        }
        for c in 0..width {
            let term = t.value * row[c];
            resid[(t.equation, c)] += term;
            scale[t.equation] = scale[t.equation].max(term.abs());
        }
    }
    for t in &linear.innovation_terms {
        let c = if t.lag == 0 {
            Some(nk + t.shock)
        } else {
            layout.state_of_shock(t.shock, t.lag)
        };
        match c {
            Some(c) => {
                resid[(t.equation, c)] += t.value;
                scale[t.equation] = scale[t.equation].max(t.value.abs());
            }
            None => {
                return PlugBack {
                    absolute: f64::NAN,
                    relative: f64::NAN,
                }
            }
        }
    }
    let mut absolute = 0.0f64;
    let mut relative = 0.0f64;
    for i in 0..n {
        for c in 0..width {
            let r = resid[(i, c)].abs();
            if r.is_nan() {
                return PlugBack {
                    absolute: f64::NAN,
                    relative: f64::NAN,
                };
            }
            absolute = absolute.max(r);
            if r > 0.0 {
                relative = relative.max(r / scale[i].max(f64::MIN_POSITIVE));
            }
        }
    }
    PlugBack { absolute, relative }
}
