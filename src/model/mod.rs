//! The checked model: the front end's product and the numerics' only input.
//!
//! A [`Model`] is a model file after parsing, name resolution and every check of spec §5. Names
//! have become indices into the declaration lists, time indices have become integer offsets, and
//! parameters carry their evaluated values. It holds no source text and no spans: numerics never
//! see source text. The front end ([`check`]) builds it from the syntax tree; [`Model::with_overrides`]
//! re-evaluates it for `--set NAME=VALUE`.

pub mod calibrate;
pub mod check;
pub mod expr;
pub mod print;
pub mod timing;

use nalgebra::DMatrix;

pub use calibrate::OverrideError;
pub use check::check_source;
pub use expr::{BinaryOp, Expr, Function, Function2, Leaves, MAX_EXPR_DEPTH};

/// An endogenous variable.
#[derive(Debug, Clone, PartialEq)]
pub struct Endogenous {
    pub name: String,
    pub label: Option<String>,
    /// Linearized in logs (deviations are proportional).
    pub log: bool,
    /// Largest lead with which the variable appears in the equations (0 if none).
    pub max_lead: u32,
    /// Largest lag with which the variable appears in the equations (0 if none).
    pub max_lag: u32,
    /// Declared `predetermined` (spec §8): a stock at the start of the period, whose value at `t`
    /// is fixed at `t-1`, so `x[t+1]` is known at `t` and the variable is a state as written.
    pub predetermined: bool,
}

/// An exogenous innovation (i.i.d., zero mean).
#[derive(Debug, Clone, PartialEq)]
pub struct Exogenous {
    pub name: String,
    pub label: Option<String>,
    /// Largest lag with which the innovation appears (0 if only at `t`).
    pub max_lag: u32,
}

/// A parameter, its defining expression (over other parameters) and its value at the calibration.
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    pub name: String,
    pub label: Option<String>,
    pub expr: Expr,
    pub value: f64,
}

/// One equation, `lhs = rhs` (a bare expression in the file has `rhs = 0`).
#[derive(Debug, Clone, PartialEq)]
pub struct Equation {
    pub label: Option<String>,
    pub lhs: Expr,
    pub rhs: Expr,
}

/// How a covariance item was written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CovarianceKind {
    /// `sd(e) = expr`
    Sd,
    /// `var(e) = expr`
    Var,
    /// `corr(e1, e2) = expr`
    Corr,
}

/// One item of the `covariance` section.
#[derive(Debug, Clone, PartialEq)]
pub struct CovarianceItem {
    pub kind: CovarianceKind,
    /// Innovation indices; for `Sd` and `Var` both are the same.
    pub shocks: (usize, usize),
    pub expr: Expr,
}

/// Whether a `steady` item fixes a value or only starts the search there.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SteadyKind {
    /// `name = expr`: the steady-state value is known (and checked against the equations).
    Known,
    /// `guess name = expr`: a starting point for the Newton solve.
    Guess,
}

/// One item of the `steady` section. `expr` may use parameters and `Expr::SteadyState` of other
/// variables that have `Known` values.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyItem {
    pub kind: SteadyKind,
    pub variable: usize,
    pub expr: Expr,
}

/// The `options` section, as expressions of parameters and as evaluated values.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ModelOptions {
    pub discount: Option<Expr>,
    pub threshold: Option<Expr>,
    pub horizon: Option<u32>,
}

/// An observable series (spec §9): `name = expr`, an expression of endogenous variables at `t`
/// and their lags (offsets <= 0), parameters and steady values; no leads, no innovations.
#[derive(Debug, Clone, PartialEq)]
pub struct Observable {
    pub name: String,
    pub label: Option<String>,
    pub expr: Expr,
}

/// What a `priors` item is about (spec §10).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PriorTarget {
    /// A parameter given directly in `parameters` (never a derived one), by index.
    Parameter(usize),
    /// `sd(e)` of an innovation, by index into `exogenous`.
    ShockSd(usize),
    /// `sd(o)` of an observable's measurement error, by index into `observables`.
    MeasurementSd(usize),
}

/// One `priors` item: the distribution of the named quantity itself, optionally truncated to
/// `[lo, hi]` (renormalised).
#[derive(Debug, Clone, PartialEq)]
pub struct Prior {
    pub target: PriorTarget,
    pub distribution: crate::stats::Distribution,
    pub truncation: Option<(f64, f64)>,
}

/// A control of the policymaker (spec §11): `control NAME [replaces LABEL]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Control {
    /// Index into `endogenous`.
    pub variable: usize,
    /// Index into `equations` of the simple rule set aside under an optimal policy; `None` for a
    /// control with no rule (then only optimal-policy regimes can solve the model).
    pub replaces: Option<usize>,
}

/// The `objective` section (spec §11): minimise E_0 sum_t discount^t loss_t.
#[derive(Debug, Clone, PartialEq)]
pub struct Objective {
    /// The period loss: a quadratic form in endogenous variables at `t` and their lags.
    pub loss: Expr,
    /// The policymaker's discount factor, an expression of parameters; `None` falls back to the
    /// `options` discount.
    pub discount: Option<Expr>,
    pub controls: Vec<Control>,
}

/// A model that passed every check of spec §5.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    pub title: Option<String>,
    /// Declaration order.
    pub endogenous: Vec<Endogenous>,
    /// Declaration order.
    pub exogenous: Vec<Exogenous>,
    /// File order (values are evaluated in `parameter_order`).
    pub parameters: Vec<Parameter>,
    /// A topological order of `parameters`: each depends only on those before it.
    pub parameter_order: Vec<usize>,
    /// File order; as many as `endogenous`.
    pub equations: Vec<Equation>,
    pub covariance_items: Vec<CovarianceItem>,
    /// Innovation covariance at the calibration (symmetric; built from `covariance_items`).
    pub covariance: DMatrix<f64>,
    /// Per innovation: whether the file gave its sd or var (else it defaulted to sd 1).
    pub sd_given: Vec<bool>,
    /// A dependency order for the `Known` steady items is computed where they are used.
    pub steady: Vec<SteadyItem>,
    pub options: ModelOptions,
    /// The `observables` section, file order (spec §9).
    pub observables: Vec<Observable>,
    /// `covariance` items about observables' measurement errors; indices into `observables`.
    pub measurement_items: Vec<CovarianceItem>,
    /// Measurement-error covariance at the calibration (observables x observables; zero where
    /// none was given).
    pub measurement_covariance: DMatrix<f64>,
    /// The `priors` section, file order (spec §10).
    pub priors: Vec<Prior>,
    /// The `objective` section (spec §11), if any.
    pub objective: Option<Objective>,
}

/// Parameter values as [`Leaves`] for evaluating parameter-only expressions. Asking for a
/// variable or innovation is a logic error the checker rules out; it returns NaN.
pub struct ParameterValues<'a>(pub &'a [Parameter]);

impl Leaves for ParameterValues<'_> {
    fn parameter(&self, index: usize) -> f64 {
        self.0.get(index).map_or(f64::NAN, |p| p.value)
    }
    fn variable(&self, _: usize, _: i32) -> f64 {
        f64::NAN
    }
    fn innovation(&self, _: usize, _: i32) -> f64 {
        f64::NAN
    }
    fn steady_state(&self, _: usize) -> f64 {
        f64::NAN
    }
}

/// Records in `endogenous` and `exogenous` the largest lead and lag with which each appears in
/// `equations` (overwrites only fields that grow; start them at 0). The front end computes the same
/// from the syntax tree; this serves models built directly as `Expr` trees (tests, benchmarks).
pub fn record_leads_and_lags(
    endogenous: &mut [Endogenous],
    exogenous: &mut [Exogenous],
    equations: &[(Expr, Expr)],
) {
    for (l, r) in equations {
        for side in [l, r] {
            side.walk(&mut |x| match x {
                Expr::Variable { index, offset } => {
                    if let Some(en) = endogenous.get_mut(*index) {
                        if *offset > 0 {
                            en.max_lead = en.max_lead.max(offset.unsigned_abs());
                        } else {
                            en.max_lag = en.max_lag.max(offset.unsigned_abs());
                        }
                    }
                }
                Expr::Innovation { index, offset } => {
                    if let Some(ex) = exogenous.get_mut(*index) {
                        ex.max_lag = ex.max_lag.max(offset.unsigned_abs());
                    }
                }
                _ => {}
            });
        }
    }
}

impl Model {
    pub fn variable_names(&self) -> Vec<String> {
        self.endogenous.iter().map(|v| v.name.clone()).collect()
    }
    pub fn shock_names(&self) -> Vec<String> {
        self.exogenous.iter().map(|v| v.name.clone()).collect()
    }
    pub fn parameter_index(&self, name: &str) -> Option<usize> {
        self.parameters.iter().position(|p| p.name == name)
    }
    pub fn shock_index(&self, name: &str) -> Option<usize> {
        self.exogenous.iter().position(|p| p.name == name)
    }
    /// Name of equation `i` for messages: its label, or `equation i+1`.
    pub fn equation_name(&self, i: usize) -> String {
        match self.equations.get(i).and_then(|e| e.label.as_deref()) {
            Some(l) => l.to_string(),
            None => format!("equation {}", i + 1),
        }
    }
    /// Evaluates a parameter-only expression at the current calibration.
    pub fn eval_parameters(&self, expr: &Expr) -> f64 {
        expr.eval(&ParameterValues(&self.parameters))
    }
}
