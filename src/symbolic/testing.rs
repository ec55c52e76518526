//! Builders for models written directly in Rust (unit tests of the numerics only).

use nalgebra::DMatrix;

use crate::model::{
    BinaryOp, Endogenous, Equation, Exogenous, Expr, Function, Model, ModelOptions, Parameter,
    SteadyItem,
};

pub fn v(i: usize, o: i32) -> Expr {
    Expr::Variable {
        index: i,
        offset: o,
    }
}
pub fn e(i: usize, o: i32) -> Expr {
    Expr::Innovation {
        index: i,
        offset: o,
    }
}
pub fn p(i: usize) -> Expr {
    Expr::Parameter(i)
}
pub fn n(x: f64) -> Expr {
    Expr::Number(x)
}
pub fn add(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Add, a, b)
}
pub fn sub(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Sub, a, b)
}
pub fn mul(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Mul, a, b)
}
pub fn div(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Div, a, b)
}
pub fn pow(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Pow, a, b)
}
pub fn ln(a: Expr) -> Expr {
    Expr::Call(Function::Ln, Box::new(a))
}

/// A model with the given variables (name, log), shocks, parameters and equations `lhs = rhs`.
/// Leads and lags are computed from the equations; every shock has sd 1.
pub fn model(
    vars: &[(&str, bool)],
    shocks: &[&str],
    params: &[(&str, f64)],
    eqs: Vec<(Expr, Expr)>,
    steady: Vec<SteadyItem>,
) -> Model {
    let mut endogenous: Vec<Endogenous> = vars
        .iter()
        .map(|(name, log)| Endogenous {
            name: name.to_string(),
            label: None,
            log: *log,
            max_lead: 0,
            max_lag: 0,
            predetermined: false,
        })
        .collect();
    let mut exogenous: Vec<Exogenous> = shocks
        .iter()
        .map(|name| Exogenous {
            name: name.to_string(),
            label: None,
            max_lag: 0,
        })
        .collect();
    crate::model::record_leads_and_lags(&mut endogenous, &mut exogenous, &eqs);
    let parameters: Vec<Parameter> = params
        .iter()
        .map(|(name, value)| Parameter {
            name: name.to_string(),
            label: None,
            expr: Expr::Number(*value),
            value: *value,
        })
        .collect();
    let k = shocks.len();
    Model {
        title: Some("test model".into()),
        endogenous,
        exogenous,
        parameter_order: (0..parameters.len()).collect(),
        parameters,
        equations: eqs
            .into_iter()
            .map(|(lhs, rhs)| Equation {
                label: None,
                lhs,
                rhs,
            })
            .collect(),
        covariance_items: Vec::new(),
        covariance: DMatrix::identity(k, k),
        sd_given: vec![false; k],
        steady,
        options: ModelOptions::default(),
        observables: Vec::new(),
        measurement_items: Vec::new(),
        measurement_covariance: DMatrix::zeros(0, 0),
        priors: Vec::new(),
        objective: None,
    }
}
