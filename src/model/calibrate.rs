//! Calibration: parameter values, the innovation covariance matrix, and `--set` overrides.
//!
//! Contract: parameter `p` has value `eval(expr_p)` with every parameter it uses already
//! evaluated (a topological order, [`super::Model::parameter_order`]); the covariance matrix is
//! Sigma = D R D with D = diag(sd) (sd 1 where the file gives neither `sd` nor `var`, `sd =
//! sqrt(var)` where it gives `var`) and R the correlation matrix (ones on the diagonal, `corr`
//! items off it), required symmetric positive semi-definite; its diagonal is the variance as
//! given (`var` exactly, `sd^2` otherwise). [`super::Model::with_overrides`]
//! re-runs all of this with some parameters replaced by numbers.

use nalgebra::DMatrix;

use super::{CovarianceItem, CovarianceKind, Expr, Leaves, Model, Parameter};

/// Relative tolerance for the smallest eigenvalue of the covariance matrix: building Sigma from
/// sd and corr costs a few rounding errors of the largest entry, so an eigenvalue above
/// `-PSD_TOLERANCE * max(1, largest |eigenvalue|)` counts as zero (a correlation of exactly 1 is a
/// valid, singular covariance).
pub const PSD_TOLERANCE: f64 = 1e-12;

/// Values of parameters (and steady-state values) for evaluating expressions; anything not
/// given evaluates to NaN.
pub struct Values<'a> {
    pub parameters: &'a [f64],
    pub steady: &'a [f64],
}

impl Leaves for Values<'_> {
    fn parameter(&self, i: usize) -> f64 {
        self.parameters.get(i).copied().unwrap_or(f64::NAN)
    }
    fn variable(&self, _: usize, _: i32) -> f64 {
        f64::NAN
    }
    fn innovation(&self, _: usize, _: i32) -> f64 {
        f64::NAN
    }
    fn steady_state(&self, i: usize) -> f64 {
        self.steady.get(i).copied().unwrap_or(f64::NAN)
    }
}

/// The innermost sub-expression of `e` that is not finite although all its operands are (the
/// place where NaN or infinity arises), or `None` when `e` is finite. Recursive (depth bounded by
/// [`super::MAX_EXPR_DEPTH`]).
pub fn non_finite_source<'e>(e: &'e Expr, leaves: &impl Leaves) -> Option<&'e Expr> {
    if e.eval(leaves).is_finite() {
        return None;
    }
    let children: Vec<&Expr> = match e {
        Expr::Neg(a) | Expr::Call(_, a) => vec![a],
        Expr::Binary(_, a, b) | Expr::Call2(_, a, b) => vec![a, b],
        _ => vec![],
    };
    for c in children {
        if let Some(inner) = non_finite_source(c, leaves) {
            return Some(inner);
        }
    }
    Some(e)
}

/// Evaluates every parameter in `order`, overwriting `parameters[i].value`. Returns the index of
/// the first parameter whose value is not finite, if any (later ones are still evaluated).
pub fn evaluate_parameters(parameters: &mut [Parameter], order: &[usize]) -> Option<usize> {
    let mut values: Vec<f64> = parameters.iter().map(|p| p.value).collect();
    let mut first_bad = None;
    for &i in order {
        let v = parameters[i].expr.eval(&Values {
            parameters: &values,
            steady: &[],
        });
        values[i] = v;
        parameters[i].value = v;
        if !v.is_finite() && first_bad.is_none() {
            first_bad = Some(i);
        }
    }
    first_bad
}

/// What is wrong with one covariance item (its index in the item list is beside it).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CovarianceProblem {
    #[error("evaluates to {0}")]
    NotFinite(f64),
    #[error("the variance (the square of the sd {0:e}) is not a finite number")]
    VarianceOverflow(f64),
    #[error("a standard deviation must not be negative, got {0}")]
    NegativeSd(f64),
    #[error("a variance must not be negative, got {0}")]
    NegativeVar(f64),
    #[error("a correlation must lie in [-1, 1], got {0}")]
    CorrelationOutOfRange(f64),
    #[error("the same innovation is given a scale twice (the first is item {0})")]
    DuplicateScale(usize),
    #[error("the same pair is given a correlation twice (the first is item {0})")]
    DuplicateCorrelation(usize),
    #[error("a correlation of an innovation with itself is always 1")]
    SelfCorrelation,
    #[error(
        "the correlations contradict each other: they do not form a valid correlation matrix (smallest eigenvalue {0:.3})"
    )]
    NotPositiveSemidefinite(f64),
    #[error("a correlation of measurement errors needs the sd or var of both errors")]
    CorrelationWithoutError,
}

/// A covariance matrix and, per innovation, whether its sd or var was given.
pub type Covariance = (DMatrix<f64>, Vec<bool>);

/// Builds the covariance matrix of `n` innovations from `items` at the parameter values `values`.
/// Returns the matrix and, per innovation, whether its sd or var was given; or every problem
/// found, each with the index of the item it concerns (for `NotPositiveSemidefinite`, the first
/// `corr` item).
pub fn build_covariance(
    n: usize,
    items: &[CovarianceItem],
    values: &[f64],
) -> Result<Covariance, Vec<(usize, CovarianceProblem)>> {
    build_scaled(n, items, values, 1.0)
}

/// Builds the measurement-error covariance of `n` observables from `items` (indices into the
/// observables) at the parameter values `values`: the same construction as [`build_covariance`]
/// but an observable with neither `sd` nor `var` has no measurement error (sd 0, spec §9), and a
/// `corr` item needs both errors' scales. Returns the matrix or every problem found.
pub fn build_measurement_covariance(
    n: usize,
    items: &[CovarianceItem],
    values: &[f64],
) -> Result<DMatrix<f64>, Vec<(usize, CovarianceProblem)>> {
    let scaled = |i: usize| {
        items
            .iter()
            .any(|it| it.kind != CovarianceKind::Corr && it.shocks.0 == i)
    };
    let mut problems: Vec<(usize, CovarianceProblem)> = items
        .iter()
        .enumerate()
        .filter(|(_, it)| {
            it.kind == CovarianceKind::Corr && !(scaled(it.shocks.0) && scaled(it.shocks.1))
        })
        .map(|(k, _)| (k, CovarianceProblem::CorrelationWithoutError))
        .collect();
    match build_scaled(n, items, values, 0.0) {
        Ok((sigma, _)) if problems.is_empty() => Ok(sigma),
        Ok(_) => Err(problems),
        Err(mut more) => {
            more.append(&mut problems);
            more.sort_by_key(|(k, _)| *k);
            Err(more)
        }
    }
}

/// [`build_covariance`] with `default_sd` for the entries no item scales.
fn build_scaled(
    n: usize,
    items: &[CovarianceItem],
    values: &[f64],
    default_sd: f64,
) -> Result<Covariance, Vec<(usize, CovarianceProblem)>> {
    let leaves = Values {
        parameters: values,
        steady: &[],
    };
    let mut sd = vec![default_sd; n];
    // Diagonal kept as given (a `var` item exactly, not sqrt(var)^2).
    let mut var = vec![default_sd * default_sd; n];
    let mut scale_item: Vec<Option<usize>> = vec![None; n];
    let mut corr = DMatrix::<f64>::identity(n, n);
    let mut corr_item: std::collections::HashMap<(usize, usize), usize> = Default::default();
    let mut problems = Vec::new();
    for (k, item) in items.iter().enumerate() {
        let v = item.expr.eval(&leaves);
        if !v.is_finite() {
            problems.push((k, CovarianceProblem::NotFinite(v)));
            continue;
        }
        let (a, b) = item.shocks;
        if a >= n || b >= n {
            continue; // ruled out by the checker
        }
        match item.kind {
            CovarianceKind::Sd | CovarianceKind::Var => {
                if let Some(first) = scale_item[a] {
                    problems.push((k, CovarianceProblem::DuplicateScale(first)));
                    continue;
                }
                scale_item[a] = Some(k);
                if item.kind == CovarianceKind::Sd {
                    if v < 0.0 {
                        problems.push((k, CovarianceProblem::NegativeSd(v)));
                    }
                    if !(v * v).is_finite() {
                        problems.push((k, CovarianceProblem::VarianceOverflow(v)));
                        continue;
                    }
                    sd[a] = v.abs();
                    var[a] = v * v;
                } else {
                    if v < 0.0 {
                        problems.push((k, CovarianceProblem::NegativeVar(v)));
                    }
                    sd[a] = v.abs().sqrt();
                    var[a] = v.abs();
                }
            }
            CovarianceKind::Corr => {
                if a == b {
                    problems.push((k, CovarianceProblem::SelfCorrelation));
                    continue;
                }
                let key = (a.min(b), a.max(b));
                if let Some(&first) = corr_item.get(&key) {
                    problems.push((k, CovarianceProblem::DuplicateCorrelation(first)));
                    continue;
                }
                corr_item.insert(key, k);
                if !(-1.0..=1.0).contains(&v) {
                    problems.push((k, CovarianceProblem::CorrelationOutOfRange(v)));
                    continue;
                }
                corr[(a, b)] = v;
                corr[(b, a)] = v;
            }
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    if let Some(&first_corr) = corr_item.values().min() {
        let eig = corr.clone().symmetric_eigenvalues();
        let largest = eig.iter().fold(1.0_f64, |m, &x| m.max(x.abs()));
        let smallest = eig.iter().fold(f64::INFINITY, |m, &x| m.min(x));
        if smallest < -PSD_TOLERANCE * largest {
            return Err(vec![(
                first_corr,
                CovarianceProblem::NotPositiveSemidefinite(smallest),
            )]);
        }
    }
    let mut sigma = DMatrix::<f64>::zeros(n, n);
    for i in 0..n {
        for j in 0..n {
            sigma[(i, j)] = if i == j {
                var[i]
            } else {
                sd[i] * corr[(i, j)] * sd[j]
            };
        }
    }
    Ok((sigma, scale_item.iter().map(Option::is_some).collect()))
}

/// Why `--set` overrides cannot be applied.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum OverrideError {
    #[error("unknown parameter `{name}`{}", suggestion.as_ref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default())]
    UnknownParameter {
        name: String,
        suggestion: Option<String>,
    },
    #[error("the value given for `{name}` is not a finite number ({value})")]
    NotFinite { name: String, value: f64 },
    #[error("with the overrides, parameter `{name}` evaluates to {value} (at `{expression}`)")]
    ParameterNotFinite {
        name: String,
        value: f64,
        expression: String,
    },
    #[error("with the overrides, covariance item `{item}`: {problem}")]
    Covariance {
        item: String,
        problem: CovarianceProblem,
    },
    #[error("with the overrides, option `{name}` is {value}; it must be a positive finite number")]
    Option { name: String, value: f64 },
    #[error("with the overrides, the objective's discount is {value}; it must lie in (0, 1]")]
    ObjectiveDiscount { value: f64 },
}

impl Model {
    /// The model with parameters replaced by values (`--set NAME=VALUE`): every parameter is
    /// re-evaluated in dependency order with the named ones replaced (an override of a derived
    /// parameter replaces its expression by the value, so parameters defined from it follow it),
    /// then the covariance matrix and `sd_given`, and the options are validated again. `self` is
    /// not changed. Later overrides of the same name win.
    pub fn with_overrides(&self, overrides: &[(String, f64)]) -> Result<Model, OverrideError> {
        let mut m = self.clone();
        for (name, value) in overrides {
            let Some(i) = m.parameter_index(name) else {
                let names: Vec<&str> = m.parameters.iter().map(|p| p.name.as_str()).collect();
                return Err(OverrideError::UnknownParameter {
                    name: name.clone(),
                    suggestion: super::check::did_you_mean(name, names.iter().copied())
                        .map(str::to_string),
                });
            };
            if !value.is_finite() {
                return Err(OverrideError::NotFinite {
                    name: name.clone(),
                    value: *value,
                });
            }
            m.parameters[i].expr = Expr::Number(*value);
        }
        let order = m.parameter_order.clone();
        if let Some(bad) = evaluate_parameters(&mut m.parameters, &order) {
            let values: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
            let leaves = Values {
                parameters: &values,
                steady: &[],
            };
            let names = super::print::Names::of(&m);
            let at = non_finite_source(&m.parameters[bad].expr, &leaves)
                .map(|e| super::print::expr_text(e, &names))
                .unwrap_or_default();
            return Err(OverrideError::ParameterNotFinite {
                name: m.parameters[bad].name.clone(),
                value: m.parameters[bad].value,
                expression: at,
            });
        }
        let values: Vec<f64> = m.parameters.iter().map(|p| p.value).collect();
        match build_covariance(m.exogenous.len(), &m.covariance_items, &values) {
            Ok((sigma, given)) => {
                m.covariance = sigma;
                m.sd_given = given;
            }
            Err(problems) => {
                let (k, problem) = problems[0].clone();
                let names = super::print::Names::of(&m);
                return Err(OverrideError::Covariance {
                    item: super::print::covariance_item_text(&m.covariance_items[k], &names),
                    problem,
                });
            }
        }
        match build_measurement_covariance(m.observables.len(), &m.measurement_items, &values) {
            Ok(sigma) => m.measurement_covariance = sigma,
            Err(problems) => {
                let (k, problem) = problems[0].clone();
                let names = super::print::Names::of(&m);
                return Err(OverrideError::Covariance {
                    item: super::print::measurement_item_text(&m.measurement_items[k], &names),
                    problem,
                });
            }
        }
        if let Some(e) = m.objective.as_ref().and_then(|o| o.discount.as_ref()) {
            let v = m.eval_parameters(e);
            if !(v > 0.0 && v <= 1.0) {
                return Err(OverrideError::ObjectiveDiscount { value: v });
            }
        }
        for (name, e) in [
            ("discount", &m.options.discount),
            ("threshold", &m.options.threshold),
        ] {
            if let Some(e) = e {
                let v = m.eval_parameters(e);
                if !(v.is_finite() && v > 0.0) {
                    return Err(OverrideError::Option {
                        name: name.to_string(),
                        value: v,
                    });
                }
            }
        }
        Ok(m)
    }
}
