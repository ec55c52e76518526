//! The canonical first-order form A E_t z_{t+1} = B z_t + C e_t (spec §7).
//!
//! Contract. z_t = [k_t; x_t] stacks
//! - the predetermined block k_t (known at t-1): for each variable j with largest lag L_j >= 1 the
//!   values y_{j,t-1}, ..., y_{j,t-L_j}, and for each innovation s with largest lag M_s >= 1 the
//!   values e_{s,t-1}, ..., e_{s,t-M_s}. This is the state vector s_{t-1} of the solution.
//! - the forward-looking block x_t: y_{j,t} for each variable that has a lead (or that has neither
//!   lead nor lag, when such static variables are kept), and the auxiliary expectations
//!   E_t y_{j,t+i}, i = 1..K_j-1, for a variable whose largest lead is K_j >= 2.
//!
//! A variable with lags but no lead has no element of its own in x_t: its current value is the
//! first element of its lag chain one period on, y_{j,t} = k_{t+1}[y_j[t-1]], which is known at t.
//! So its coefficients enter A, not B, and the system stays of the smallest Klein-style size
//! (Klein 2000, "Using the generalized Schur form to solve a multivariate linear rational
//! expectations model", JEDC 24).
//!
//! Rows: each model equation (sum of F_{i,j,k} times the element representing y_{j,t+k}, moved to
//! the side it belongs to: A for t+1, B with a minus sign for t, C with a minus sign for e_t), then
//! one identity row per auxiliary link (y_{j,t-l} one period on is y_{j,t-l+1}; e_{s,t-1} one
//! period on is e_{s,t}; E_t of the i-th expectation one period on is the (i+1)-th).
//!
//! **Static variables** (no lead, no lag) may be eliminated first: with F_S the columns of the
//! current-period coefficients of the static variables and F_S = Q [R; 0] its QR factorization,
//! the first |S| rows of Q' times the system give the static variables exactly once the others
//! are known, and the remaining rows are free of them. This is exact whenever F_S has full column
//! rank (checked), removes |S| infinite roots from the pencil and shrinks the QZ, whose cost grows
//! with the cube of the dimension. See docs/performance.md for the measurement behind making it
//! the default.

use nalgebra::DMatrix;

use crate::linear::{dated, LinearSystem};
use crate::model::Model;
use crate::symbolic::{CompiledModel, Leaf};

/// `|R_ii|` below this times the largest `|R_ii|` means the static columns are rank deficient
/// and elimination would not be exact (about 1e6 machine epsilons: a margin against rounding in
/// coefficients computed from a steady state).
pub const STATIC_RANK_TOL: f64 = 1e-10;

/// What to do with static variables.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StaticTreatment {
    /// Eliminate them when that is exact (full column rank), else keep them.
    #[default]
    Eliminate,
    /// Keep them in the pencil (each gives an infinite root).
    Keep,
}

/// One predetermined element of z.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StateElement {
    /// y_{variable, t-lag}.
    VariableLag { variable: usize, lag: u32 },
    /// e_{shock, t-lag}.
    ShockLag { shock: usize, lag: u32 },
}

/// One forward-looking element of z: E_t y_{variable, t+lead}.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ForwardElement {
    pub variable: usize,
    pub lead: u32,
}

/// The structure of z: depends only on which leads and lags occur, not on parameter values.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    pub n_variables: usize,
    pub n_shocks: usize,
    /// Largest lag with a structurally nonzero coefficient, per variable.
    pub lags: Vec<u32>,
    /// Largest lead, per variable.
    pub leads: Vec<u32>,
    /// Largest lag per innovation.
    pub shock_lags: Vec<u32>,
    /// The predetermined block, in order (the solution's states).
    pub states: Vec<StateElement>,
    /// Names of the states, like `k[t-1]` or `e_rate[t-2]`.
    pub state_names: Vec<String>,
    /// Forward-looking elements of dynamic variables (statics not included).
    pub forward: Vec<ForwardElement>,
    /// Variables with neither lead nor lag.
    pub statics: Vec<usize>,
    /// Variable names (for element names).
    names: Vec<String>,
    /// Equation names (labels, else `equation i`).
    equation_names: Vec<String>,
}

impl Layout {
    /// Reads the leads and lags off the structural nonzeros of `compiled`.
    pub fn new(model: &Model, compiled: &CompiledModel) -> Layout {
        let n = model.endogenous.len();
        let ne = model.exogenous.len();
        let mut lags = vec![0u32; n];
        let mut leads = vec![0u32; n];
        let mut shock_lags = vec![0u32; ne];
        for c in &compiled.coefficient_pattern {
            match c.leaf {
                Leaf::Variable { index, offset } if index < n => {
                    if offset > 0 {
                        leads[index] = leads[index].max(offset as u32);
                    } else {
                        lags[index] = lags[index].max((-offset) as u32);
                    }
                }
                Leaf::Innovation { index, offset } if index < ne => {
                    shock_lags[index] = shock_lags[index].max((-offset).max(0) as u32);
                }
                _ => {}
            }
        }
        let names: Vec<String> = model.variable_names();
        let shock_names = model.shock_names();
        let mut states = Vec::new();
        let mut state_names = Vec::new();
        for j in 0..n {
            for l in 1..=lags[j] {
                states.push(StateElement::VariableLag {
                    variable: j,
                    lag: l,
                });
                state_names.push(dated(&names[j], -(l as i32)));
            }
        }
        for s in 0..ne {
            for l in 1..=shock_lags[s] {
                states.push(StateElement::ShockLag { shock: s, lag: l });
                state_names.push(dated(&shock_names[s], -(l as i32)));
            }
        }
        let mut forward = Vec::new();
        let mut statics = Vec::new();
        for j in 0..n {
            if leads[j] > 0 {
                for i in 0..leads[j] {
                    forward.push(ForwardElement {
                        variable: j,
                        lead: i,
                    });
                }
            } else if lags[j] == 0 {
                // Appears only at t (or not at all, which the checker rules out).
                statics.push(j);
            }
        }
        Layout {
            n_variables: n,
            n_shocks: ne,
            lags,
            leads,
            shock_lags,
            states,
            state_names,
            forward,
            statics,
            names,
            equation_names: (0..model.equations.len())
                .map(|i| model.equation_name(i))
                .collect(),
        }
    }

    /// Position of y_{j,t-l} (l >= 1) in the state block.
    pub fn state_of_variable(&self, j: usize, l: u32) -> Option<usize> {
        self.states.iter().position(|s| {
            *s == StateElement::VariableLag {
                variable: j,
                lag: l,
            }
        })
    }

    /// Position of e_{s,t-l} (l >= 1) in the state block.
    pub fn state_of_shock(&self, s: usize, l: u32) -> Option<usize> {
        self.states
            .iter()
            .position(|e| *e == StateElement::ShockLag { shock: s, lag: l })
    }
}

/// Static variables eliminated from the pencil and how to recover them:
/// R y_S = -(A1 E_t z_{t+1} - B1 z_t - C1 e_t).
#[derive(Debug, Clone, PartialEq)]
pub struct StaticBlock {
    pub variables: Vec<usize>,
    pub r: DMatrix<f64>,
    pub a1: DMatrix<f64>,
    pub b1: DMatrix<f64>,
    pub c1: DMatrix<f64>,
}

/// The pencil of the canonical form and what its elements are.
#[derive(Debug, Clone, PartialEq)]
pub struct Pencil {
    pub a: DMatrix<f64>,
    pub b: DMatrix<f64>,
    pub c: DMatrix<f64>,
    /// The first `n_predetermined` elements of z are the states (in `Layout::states` order).
    pub n_predetermined: usize,
    /// The forward-looking elements after them (statics appended with lead 0 when kept).
    pub forward: Vec<ForwardElement>,
    /// Names of all elements of z.
    pub names: Vec<String>,
    /// What each row of the pencil is: an equation's name, `a combination of equations` after
    /// static elimination, or `the definition of x[t-1]` for an auxiliary link.
    pub row_names: Vec<String>,
    /// `Some` when static variables were eliminated.
    pub statics: Option<StaticBlock>,
    /// Static variables were present but kept because elimination would not have been exact.
    pub statics_kept_for_rank: bool,
}

/// Why the canonical form could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CanonicalError {
    #[error("the canonical form has {rows} rows for {cols} unknowns; this is a bug in saddle, please report it with the model")]
    Shape { rows: usize, cols: usize },
}

impl Pencil {
    /// Dimension of z.
    pub fn dim(&self) -> usize {
        self.a.ncols()
    }

    /// Position of E_t y_{j,t+i} in z, if it is an element.
    pub fn forward_index(&self, j: usize, i: u32) -> Option<usize> {
        self.forward
            .iter()
            .position(|f| f.variable == j && f.lead == i)
            .map(|p| self.n_predetermined + p)
    }
}

/// Assembles the pencil from `linear` on `layout` (see the module doc). Returns the pencil;
/// static variables are eliminated when `treatment` asks for it and it is exact.
pub fn build_pencil(
    layout: &Layout,
    linear: &LinearSystem,
    treatment: StaticTreatment,
) -> Result<Pencil, CanonicalError> {
    if treatment == StaticTreatment::Eliminate && !layout.statics.is_empty() {
        let p = assemble(layout, linear, true)?;
        if p.statics.is_some() {
            return Ok(p);
        }
        let mut kept = assemble(layout, linear, false)?;
        kept.statics_kept_for_rank = true;
        return Ok(kept);
    }
    assemble(layout, linear, false)
}

/// Where the element representing y_{j,t+o} lives: `(true, slot)` in E_t z_{t+1} (matrix A),
/// `(false, slot)` in z_t (matrix B).
fn place(
    layout: &Layout,
    pencil_forward: &[ForwardElement],
    nk: usize,
    j: usize,
    o: i32,
) -> Option<(bool, usize)> {
    let fwd = |i: u32| {
        pencil_forward
            .iter()
            .position(|f| f.variable == j && f.lead == i)
            .map(|p| nk + p)
    };
    if o <= -1 {
        return layout.state_of_variable(j, (-o) as u32).map(|s| (false, s));
    }
    let k = layout.leads[j];
    if o == 0 {
        if let Some(x) = fwd(0) {
            return Some((false, x));
        }
        // A variable with lags and no lead: its current value is its first lag one period on.
        return layout.state_of_variable(j, 1).map(|s| (true, s));
    }
    let o = o as u32;
    if o < k {
        fwd(o).map(|x| (false, x))
    } else if o == k {
        fwd(k - 1).map(|x| (true, x))
    } else {
        None
    }
}

fn assemble(
    layout: &Layout,
    linear: &LinearSystem,
    eliminate: bool,
) -> Result<Pencil, CanonicalError> {
    let n = linear.n_equations;
    let ne = layout.n_shocks;
    let nk = layout.states.len();
    let mut forward = layout.forward.clone();
    let is_static: Vec<bool> = {
        let mut v = vec![false; layout.n_variables];
        for &j in &layout.statics {
            v[j] = true;
        }
        v
    };
    if !eliminate {
        for &j in &layout.statics {
            forward.push(ForwardElement {
                variable: j,
                lead: 0,
            });
        }
    }
    let dim = nk + forward.len();
    let ms = if eliminate { layout.statics.len() } else { 0 };
    let static_col: Vec<usize> = {
        let mut v = vec![usize::MAX; layout.n_variables];
        if eliminate {
            for (c, &j) in layout.statics.iter().enumerate() {
                v[j] = c;
            }
        }
        v
    };
    // Model rows, as one matrix [F_S | A | B | C] so the static elimination transforms all at once.
    let width = ms + 2 * dim + ne;
    let mut m = DMatrix::<f64>::zeros(n, width);
    for t in &linear.variable_terms {
        if eliminate && is_static[t.variable] {
            m[(t.equation, static_col[t.variable])] += t.value;
            continue;
        }
        match place(layout, &forward, nk, t.variable, t.offset) {
            Some((true, s)) => m[(t.equation, ms + s)] += t.value,
            Some((false, s)) => m[(t.equation, ms + dim + s)] -= t.value,
            None => return Err(CanonicalError::Shape { rows: n, cols: dim }),
        }
    }
    for t in &linear.innovation_terms {
        if t.lag == 0 {
            m[(t.equation, ms + 2 * dim + t.shock)] -= t.value;
        } else if let Some(s) = layout.state_of_shock(t.shock, t.lag) {
            m[(t.equation, ms + dim + s)] -= t.value;
        }
    }
    let mut statics = None;
    let model_rows: DMatrix<f64>;
    // Names of the model rows of the pencil, in order.
    let mut model_row_names: Vec<String> = layout.equation_names.clone();
    if ms > 0 {
        // Only the rows that contain static variables take part, and only the columns that are
        // nonzero in those rows need transforming (the others stay zero): same result as the
        // QR of all rows, at a fraction of the cost for sparse models.
        let rows_s: Vec<usize> = (0..n)
            .filter(|&i| (0..ms).any(|c| m[(i, c)] != 0.0))
            .collect();
        let others: Vec<usize> = (0..n)
            .filter(|&i| (0..ms).all(|c| m[(i, c)] == 0.0))
            .collect();
        let rs = rows_s.len();
        let not_exact = || Pencil {
            a: DMatrix::zeros(0, 0),
            b: DMatrix::zeros(0, 0),
            c: DMatrix::zeros(0, 0),
            n_predetermined: nk,
            forward: forward.clone(),
            names: Vec::new(),
            row_names: Vec::new(),
            statics: None,
            statics_kept_for_rank: false,
        };
        if rs < ms {
            // Not exact: the caller rebuilds with the statics kept.
            return Ok(not_exact());
        }
        let fs = DMatrix::from_fn(rs, ms, |i, c| m[(rows_s[i], c)]);
        let qr = fs.qr();
        let r = qr.r();
        let diag: Vec<f64> = r.diagonal().iter().map(|v| v.abs()).collect();
        let big = diag.iter().copied().fold(0.0, f64::max);
        let exact = big > 0.0 && diag.iter().all(|&d| d >= STATIC_RANK_TOL * big);
        if !exact {
            return Ok(not_exact());
        }
        let cols: Vec<usize> = (ms..width)
            .filter(|&c| rows_s.iter().any(|&i| m[(i, c)] != 0.0))
            .collect();
        let mut sub = DMatrix::from_fn(rs, cols.len(), |i, k| m[(rows_s[i], cols[k])]);
        qr.q_tr_mul(&mut sub);
        let mut rest = DMatrix::<f64>::zeros(rs, width - ms);
        for (k, &c) in cols.iter().enumerate() {
            rest.column_mut(c - ms).copy_from(&sub.column(k));
        }
        statics = Some(StaticBlock {
            variables: layout.statics.clone(),
            r: r.rows(0, ms).into_owned(),
            a1: rest.view((0, 0), (ms, dim)).into_owned(),
            b1: rest.view((0, dim), (ms, dim)).into_owned(),
            c1: rest.view((0, 2 * dim), (ms, ne)).into_owned(),
        });
        let mut rows = DMatrix::<f64>::zeros(n - ms, width - ms);
        rows.rows_mut(0, rs - ms).copy_from(&rest.rows(ms, rs - ms));
        for (k, &i) in others.iter().enumerate() {
            rows.row_mut(rs - ms + k)
                .copy_from(&m.view((i, ms), (1, width - ms)));
        }
        model_row_names =
            vec!["a combination of equations (static variables eliminated)".to_string(); rs - ms];
        model_row_names.extend(others.iter().map(|&i| layout.equation_names[i].clone()));
        model_rows = rows;
    } else {
        model_rows = m;
    }
    let n_model = model_rows.nrows();
    let mut a = DMatrix::<f64>::zeros(dim, dim);
    let mut b = DMatrix::<f64>::zeros(dim, dim);
    let mut c = DMatrix::<f64>::zeros(dim, ne);
    if n_model > dim {
        return Err(CanonicalError::Shape {
            rows: n_model,
            cols: dim,
        });
    }
    a.rows_mut(0, n_model)
        .copy_from(&model_rows.columns(0, dim));
    b.rows_mut(0, n_model)
        .copy_from(&model_rows.columns(dim, dim));
    c.rows_mut(0, n_model)
        .copy_from(&model_rows.columns(2 * dim, ne));
    let mut row = n_model;
    let mut row_names: Vec<String> = model_row_names;
    let mut element_names = layout.state_names.clone();
    for f in &forward {
        element_names.push(dated(&layout.names[f.variable], f.lead as i32));
    }
    let link = |row: &mut usize| -> Result<usize, CanonicalError> {
        if *row >= dim {
            return Err(CanonicalError::Shape {
                rows: *row + 1,
                cols: dim,
            });
        }
        *row += 1;
        Ok(*row - 1)
    };
    // Lag chains.
    for (s, st) in layout.states.iter().enumerate() {
        match *st {
            StateElement::VariableLag {
                variable: j,
                lag: 1,
            } => {
                if let Some(x) = forward.iter().position(|f| f.variable == j && f.lead == 0) {
                    let r = link(&mut row)?;
                    row_names.push(format!("the definition of {}", element_names[s]));
                    a[(r, s)] = 1.0;
                    b[(r, nk + x)] = 1.0;
                }
                // Without a current element, the model equations define this one.
            }
            StateElement::VariableLag { variable: j, lag } => {
                let r = link(&mut row)?;
                row_names.push(format!("the definition of {}", element_names[s]));
                a[(r, s)] = 1.0;
                if let Some(prev) = layout.state_of_variable(j, lag - 1) {
                    b[(r, prev)] = 1.0;
                }
            }
            StateElement::ShockLag { shock, lag: 1 } => {
                let r = link(&mut row)?;
                row_names.push(format!("the definition of {}", element_names[s]));
                a[(r, s)] = 1.0;
                c[(r, shock)] = 1.0;
            }
            StateElement::ShockLag { shock, lag } => {
                let r = link(&mut row)?;
                row_names.push(format!("the definition of {}", element_names[s]));
                a[(r, s)] = 1.0;
                if let Some(prev) = layout.state_of_shock(shock, lag - 1) {
                    b[(r, prev)] = 1.0;
                }
            }
        }
    }
    // Expectation chains: E_t (E_{t+1} y_{t+1+i-1}) = E_t y_{t+i}.
    for (p, f) in forward.iter().enumerate() {
        if f.lead >= 1 {
            if let Some(prev) = forward
                .iter()
                .position(|g| g.variable == f.variable && g.lead == f.lead - 1)
            {
                let r = link(&mut row)?;
                row_names.push(format!("the definition of {}", element_names[nk + p]));
                a[(r, nk + prev)] = 1.0;
                b[(r, nk + p)] = 1.0;
            }
        }
    }
    if row != dim {
        return Err(CanonicalError::Shape {
            rows: row,
            cols: dim,
        });
    }
    Ok(Pencil {
        a,
        b,
        c,
        n_predetermined: nk,
        forward,
        names: element_names,
        row_names,
        statics,
        statics_kept_for_rank: false,
    })
}

#[cfg(test)]
mod tests;
