//! Canonical pretty-printer: [`super::Model`] -> model-file text.
//!
//! Contract: `check_source(&print_model(&m)) == Ok(m)` for every checked model `m` (the round
//! trip). Sections come in a fixed order, one item a line, parentheses only where precedence
//! needs them, numbers in the shortest form that reads back to the same `f64`.

use super::{CovarianceItem, CovarianceKind, Expr, Model, Prior, PriorTarget, SteadyKind};
use crate::stats::Distribution;

/// Names of a model's declarations, for printing expressions.
pub struct Names<'a> {
    pub parameters: Vec<&'a str>,
    pub endogenous: Vec<&'a str>,
    pub exogenous: Vec<&'a str>,
    pub observables: Vec<&'a str>,
}

impl<'a> Names<'a> {
    pub fn of(m: &'a Model) -> Names<'a> {
        Names {
            parameters: m.parameters.iter().map(|p| p.name.as_str()).collect(),
            endogenous: m.endogenous.iter().map(|v| v.name.as_str()).collect(),
            exogenous: m.exogenous.iter().map(|v| v.name.as_str()).collect(),
            observables: m.observables.iter().map(|v| v.name.as_str()).collect(),
        }
    }
}

/// Precedence classes, loosest first.
const SUM: u8 = 1;
const PRODUCT: u8 = 2;
const UNARY: u8 = 3;
const POWER: u8 = 4;
const ATOM: u8 = 5;

fn precedence(e: &Expr) -> u8 {
    match e {
        Expr::Number(v) if *v < 0.0 || (*v == 0.0 && v.is_sign_negative()) => UNARY,
        Expr::Neg(_) => UNARY,
        Expr::Binary(op, _, _) => match op {
            super::BinaryOp::Add | super::BinaryOp::Sub => SUM,
            super::BinaryOp::Mul | super::BinaryOp::Div => PRODUCT,
            super::BinaryOp::Pow => POWER,
        },
        _ => ATOM,
    }
}

/// A number in the shortest text that reads back to the same `f64` (integers without a point).
pub fn number_text(v: f64) -> String {
    let a = v.abs();
    let body = if a.fract() == 0.0 && a < 1e15 {
        format!("{}", a as u64)
    } else {
        format!("{a:?}")
    };
    if v < 0.0 {
        format!("-{body}")
    } else {
        body
    }
}

fn time_index(offset: i32) -> String {
    match offset {
        0 => String::new(),
        k if k > 0 => format!("[t+{k}]"),
        k => format!("[t-{}]", -(k as i64)),
    }
}

fn name(list: &[&str], i: usize) -> String {
    list.get(i)
        .map_or_else(|| format!("<unknown #{i}>"), |s| s.to_string())
}

fn write_expr(e: &Expr, min: u8, names: &Names, out: &mut String) {
    let p = precedence(e);
    let paren = p < min;
    if paren {
        out.push('(');
    }
    match e {
        Expr::Number(v) => out.push_str(&number_text(*v)),
        Expr::Parameter(i) => out.push_str(&name(&names.parameters, *i)),
        Expr::Variable { index, offset } => {
            out.push_str(&name(&names.endogenous, *index));
            out.push_str(&time_index(*offset));
        }
        Expr::Innovation { index, offset } => {
            out.push_str(&name(&names.exogenous, *index));
            out.push_str(&time_index(*offset));
        }
        Expr::SteadyState(i) => {
            out.push_str(&name(&names.endogenous, *i));
            out.push_str("[ss]");
        }
        Expr::Neg(a) => {
            out.push('-');
            write_expr(a, UNARY, names, out);
        }
        Expr::Binary(op, a, b) => {
            let (l, r) = match op {
                super::BinaryOp::Add | super::BinaryOp::Sub => (SUM, PRODUCT),
                super::BinaryOp::Mul | super::BinaryOp::Div => (PRODUCT, UNARY),
                // A signed exponent is printed in parentheses, `c^(-sigma)`, for the reader.
                super::BinaryOp::Pow => (ATOM, POWER),
            };
            write_expr(a, l, names, out);
            match op {
                super::BinaryOp::Pow => out.push('^'),
                _ => {
                    out.push(' ');
                    out.push_str(op.symbol());
                    out.push(' ');
                }
            }
            write_expr(b, r, names, out);
        }
        Expr::Call(f, a) => {
            out.push_str(f.name());
            out.push('(');
            write_expr(a, SUM, names, out);
            out.push(')');
        }
        Expr::Call2(f, a, b) => {
            out.push_str(f.name());
            out.push('(');
            write_expr(a, SUM, names, out);
            out.push_str(", ");
            write_expr(b, SUM, names, out);
            out.push(')');
        }
    }
    if paren {
        out.push(')');
    }
}

/// An expression as model text (recursive; depth bounded by [`super::MAX_EXPR_DEPTH`]).
pub fn expr_text(e: &Expr, names: &Names) -> String {
    let mut s = String::new();
    write_expr(e, SUM, names, &mut s);
    s
}

/// A string literal with `"` and `\` escaped.
pub fn string_literal(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        if c == '"' || c == '\\' {
            out.push('\\');
        }
        out.push(c);
    }
    out.push('"');
    out
}

/// One equation as text: `lhs = rhs` (without its label).
pub fn equation_text(m: &Model, i: usize) -> String {
    let names = Names::of(m);
    match m.equations.get(i) {
        Some(eq) => format!(
            "{} = {}",
            expr_text(&eq.lhs, &names),
            expr_text(&eq.rhs, &names)
        ),
        None => String::new(),
    }
}

/// A covariance item as text, for example `corr(e_rate, e_cost) = 0`.
pub fn covariance_item_text(item: &CovarianceItem, names: &Names) -> String {
    let (a, b) = item.shocks;
    let lhs = match item.kind {
        CovarianceKind::Sd => format!("sd({})", name(&names.exogenous, a)),
        CovarianceKind::Var => format!("var({})", name(&names.exogenous, a)),
        CovarianceKind::Corr => format!(
            "corr({}, {})",
            name(&names.exogenous, a),
            name(&names.exogenous, b)
        ),
    };
    format!("{lhs} = {}", expr_text(&item.expr, names))
}

/// A measurement-error item as text, for example `sd(output_growth) = 0.1`.
pub fn measurement_item_text(item: &CovarianceItem, names: &Names) -> String {
    let (a, b) = item.shocks;
    let lhs = match item.kind {
        CovarianceKind::Sd => format!("sd({})", name(&names.observables, a)),
        CovarianceKind::Var => format!("var({})", name(&names.observables, a)),
        CovarianceKind::Corr => format!(
            "corr({}, {})",
            name(&names.observables, a),
            name(&names.observables, b)
        ),
    };
    format!("{lhs} = {}", expr_text(&item.expr, names))
}

/// A distribution as text in its natural parameters, for example `beta(a = 2, b = 3)`.
pub fn distribution_text(d: &Distribution) -> String {
    let n = number_text;
    match *d {
        Distribution::Normal { mean, sd } => format!("normal(mean = {}, sd = {})", n(mean), n(sd)),
        Distribution::Beta { a, b } => format!("beta(a = {}, b = {})", n(a), n(b)),
        Distribution::Gamma { shape, scale } => {
            format!("gamma(shape = {}, scale = {})", n(shape), n(scale))
        }
        Distribution::InvGamma { shape, scale } => {
            format!("invgamma(shape = {}, scale = {})", n(shape), n(scale))
        }
        Distribution::Uniform { lo, hi } => format!("uniform(lo = {}, hi = {})", n(lo), n(hi)),
        Distribution::Flat => "flat()".to_string(),
    }
}

/// A prior item as text, for example `rho ~ beta(a = 3, b = 2) in [0.1, 0.9]`.
pub fn prior_text(p: &Prior, names: &Names) -> String {
    let target = match p.target {
        PriorTarget::Parameter(i) => name(&names.parameters, i),
        PriorTarget::ShockSd(i) => format!("sd({})", name(&names.exogenous, i)),
        PriorTarget::MeasurementSd(i) => format!("sd({})", name(&names.observables, i)),
    };
    let mut s = format!("{target} ~ {}", distribution_text(&p.distribution));
    if let Some((lo, hi)) = p.truncation {
        s.push_str(&format!(" in [{}, {}]", number_text(lo), number_text(hi)));
    }
    s
}

/// The whole model as canonical model text.
pub fn print_model(m: &Model) -> String {
    let names = Names::of(m);
    let mut out = String::new();
    let label = |l: &Option<String>| match l {
        Some(s) => format!("  {}", string_literal(s)),
        None => String::new(),
    };
    if let Some(t) = &m.title {
        out.push_str(&format!("title {}\n\n", string_literal(t)));
    }
    out.push_str("endogenous\n");
    for v in &m.endogenous {
        let log = if v.log { "log " } else { "" };
        let pre = if v.predetermined {
            "predetermined "
        } else {
            ""
        };
        out.push_str(&format!("  {log}{pre}{}{}\n", v.name, label(&v.label)));
    }
    if !m.exogenous.is_empty() {
        out.push_str("\nexogenous\n");
        for v in &m.exogenous {
            out.push_str(&format!("  {}{}\n", v.name, label(&v.label)));
        }
    }
    if !m.parameters.is_empty() {
        out.push_str("\nparameters\n");
        for p in &m.parameters {
            out.push_str(&format!(
                "  {} = {}{}\n",
                p.name,
                expr_text(&p.expr, &names),
                label(&p.label)
            ));
        }
    }
    out.push_str("\nequations\n");
    for (i, eq) in m.equations.iter().enumerate() {
        let l = eq
            .label
            .as_ref()
            .map_or(String::new(), |l| format!("{l}: "));
        out.push_str(&format!("  {l}{}\n", equation_text(m, i)));
    }
    if !m.observables.is_empty() {
        out.push_str("\nobservables\n");
        for o in &m.observables {
            out.push_str(&format!(
                "  {} = {}{}\n",
                o.name,
                expr_text(&o.expr, &names),
                label(&o.label)
            ));
        }
    }
    if !m.covariance_items.is_empty() || !m.measurement_items.is_empty() {
        out.push_str("\ncovariance\n");
        for item in &m.covariance_items {
            out.push_str(&format!("  {}\n", covariance_item_text(item, &names)));
        }
        for item in &m.measurement_items {
            out.push_str(&format!("  {}\n", measurement_item_text(item, &names)));
        }
    }
    if !m.steady.is_empty() {
        out.push_str("\nsteady\n");
        for s in &m.steady {
            let g = if s.kind == SteadyKind::Guess {
                "guess "
            } else {
                ""
            };
            out.push_str(&format!(
                "  {g}{} = {}\n",
                name(&names.endogenous, s.variable),
                expr_text(&s.expr, &names)
            ));
        }
    }
    let o = &m.options;
    if o.discount.is_some() || o.threshold.is_some() || o.horizon.is_some() {
        out.push_str("\noptions\n");
        if let Some(e) = &o.discount {
            out.push_str(&format!("  discount = {}\n", expr_text(e, &names)));
        }
        if let Some(e) = &o.threshold {
            out.push_str(&format!("  threshold = {}\n", expr_text(e, &names)));
        }
        if let Some(h) = o.horizon {
            out.push_str(&format!("  horizon = {h}\n"));
        }
    }
    if let Some(obj) = &m.objective {
        out.push_str("\nobjective\n");
        out.push_str(&format!("  loss = {}\n", expr_text(&obj.loss, &names)));
        if let Some(d) = &obj.discount {
            out.push_str(&format!("  discount = {}\n", expr_text(d, &names)));
        }
        for c in &obj.controls {
            let v = name(&names.endogenous, c.variable);
            match c
                .replaces
                .and_then(|i| m.equations.get(i))
                .and_then(|e| e.label.as_ref())
            {
                Some(l) => out.push_str(&format!("  control {v} replaces {l}\n")),
                None => out.push_str(&format!("  control {v}\n")),
            }
        }
    }
    if !m.priors.is_empty() {
        out.push_str("\npriors\n");
        for p in &m.priors {
            out.push_str(&format!("  {}\n", prior_text(p, &names)));
        }
    }
    out
}
