//! Name resolution and the checks of spec §5: syntax tree -> [`super::Model`].
//!
//! Contract: [`check_source`] parses a model file and either returns the checked [`Model`] or
//! every diagnostic found (syntax errors first: when the file does not parse, only those are
//! reported, since checks on a half-read file mislead). The checks: names resolve (with a
//! did-you-mean), nothing is declared twice, time indices are `t`, `t+k`, `t-k` (integer literal
//! `k`) or `ss` and are used where they mean something (no index on a parameter, no lead on an
//! innovation), parameters form no cycle and evaluate to finite numbers in dependency order, the
//! number of equations equals the number of endogenous variables and each variable appears in
//! some equation, the covariance items form a valid covariance matrix, the `steady` values
//! resolve and evaluate, and the options are valid. Each variable's largest lead and lag are
//! recorded.

use std::collections::HashMap;

mod covariance;
mod equations;
mod lower;
mod options;
mod parameters;
mod resolve;
mod sections;
mod steady;
mod suggest;

use covariance::*;
pub use suggest::did_you_mean;

use super::calibrate::{self, CovarianceProblem, Values};
use super::print::{self, Names};
use super::{
    BinaryOp, CovarianceItem, CovarianceKind, Endogenous, Equation, Exogenous, Expr, Function,
    Function2, Model, ModelOptions, Parameter, SteadyItem, SteadyKind,
};
use crate::language::ast::{self, ExprKind, Func};
use crate::language::{self, Diagnostic, Span};

// The parser refuses trees deeper than the model's limit, and lowering never adds depth.
const _: () = assert!(language::parser::MAX_EXPR_DEPTH <= super::MAX_EXPR_DEPTH);

/// Largest lead or lag accepted in a time index. Each period of lead or lag adds an auxiliary
/// variable per variable to the solved system; a model needs a handful, and a hundred keeps a
/// mistyped `x[t+100000]` from building a system of millions of equations.
pub const MAX_TIME_OFFSET: i64 = 100;

/// Most candidate names compared, over a whole file, when looking for did-you-mean suggestions:
/// ample for any real model (fifty typos among ten thousand names) and a bound on the work
/// for hostile input (many unknown names among many declared ones would otherwise be quadratic).
pub const SUGGESTION_BUDGET: usize = 500_000;

/// Most innovations a model may declare. Their covariance matrix is stored in full (n^2
/// numbers) and checked by an eigenvalue decomposition (n^3 work); models have a few dozen.
pub const MAX_INNOVATIONS: usize = 1000;

/// Largest `options horizon` accepted (periods of impulse responses).
pub const MAX_HORIZON: u32 = 100_000;

/// Parses and checks `source`: the checked model, or every diagnostic (sorted by position).
pub fn check_source(source: &str) -> Result<Model, Vec<Diagnostic>> {
    let (file, diags) = language::parse(source);
    if diags.iter().any(Diagnostic::is_error) {
        return Err(diags);
    }
    check_file(&file)
}

/// Checks a parsed file: the checked model, or every diagnostic (sorted by position).
pub fn check_file(file: &ast::File<'_>) -> Result<Model, Vec<Diagnostic>> {
    let mut c = Checker::default();
    let model = c.run(file);
    if c.diags.iter().any(Diagnostic::is_error) {
        language::diagnostics::finish(&mut c.diags);
        return Err(c.diags);
    }
    model.ok_or_else(|| {
        vec![Diagnostic::error(
            "internal",
            "the model could not be built",
            Span::default(),
            "",
        )]
    })
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Symbol {
    Endogenous(usize),
    Exogenous(usize),
    Parameter(usize),
    Observable(usize),
}

impl Symbol {
    fn kind(self) -> &'static str {
        match self {
            Symbol::Endogenous(_) => "an endogenous variable",
            Symbol::Exogenous(_) => "an innovation",
            Symbol::Parameter(_) => "a parameter",
            Symbol::Observable(_) => "an observable",
        }
    }
}

/// Where an expression stands, which decides what its names may mean.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Place {
    /// The value of a parameter.
    Parameter,
    Equation,
    Steady,
    Covariance,
    Option,
    /// An observable's definition (spec §9): variables at `t` and lags, no innovations.
    Observable,
    /// The objective's loss (spec §11): variables at `t` and lags, no innovations.
    Loss,
    /// The objective's discount: parameters only.
    Discount,
    /// An argument of a prior's distribution (spec §10): numbers only.
    Prior,
}

impl Place {
    fn what(self) -> &'static str {
        match self {
            Place::Parameter => "a parameter's value",
            Place::Equation => "an equation",
            Place::Steady => "a steady-state value",
            Place::Covariance => "a covariance item",
            Place::Option => "an option",
            Place::Observable => "an observable",
            Place::Loss => "the loss",
            Place::Discount => "the objective's discount",
            Place::Prior => "a prior's arguments",
        }
    }
}

/// Names an expression refers to that matter for ordering.
#[derive(Default)]
struct Refs {
    parameters: Vec<(usize, Span)>,
    steady: Vec<(usize, Span)>,
}

/// A time index after classification.
enum Index {
    Offset(i32),
    Steady,
}

#[derive(Default)]
struct Checker<'a> {
    diags: Vec<Diagnostic>,
    names: HashMap<&'a str, (Symbol, Span)>,
    title: Option<(&'a ast::StringLit, Span)>,
    endogenous: Vec<&'a ast::EndogenousDecl<'a>>,
    exogenous: Vec<&'a ast::ExogenousDecl<'a>>,
    parameters: Vec<&'a ast::ParameterDecl<'a>>,
    equations: Vec<&'a ast::EquationDecl<'a>>,
    covariance: Vec<&'a ast::CovarianceDecl<'a>>,
    steady: Vec<&'a ast::SteadyDecl<'a>>,
    options: Vec<&'a ast::OptionDecl<'a>>,
    observables: Vec<&'a ast::ObservableDecl<'a>>,
    priors: Vec<&'a ast::PriorDecl<'a>>,
    objective: Vec<&'a ast::ObjectiveDecl<'a>>,
    objective_header: Option<Span>,
    endogenous_header: Option<Span>,
    equations_header: Option<Span>,
    /// Per endogenous variable: used in an equation at some date; largest lead; largest lag.
    used: Vec<bool>,
    max_lead: Vec<u32>,
    max_lag: Vec<u32>,
    exo_max_lag: Vec<u32>,
    /// Valueless parameters already reported at a use.
    reported_no_value: Vec<bool>,
    /// Every bare name used in an expression (collected on first need).
    used_names: Option<std::collections::HashSet<&'a str>>,
    /// Unknown names reported so far (suggestions are looked for only for the first few, since
    /// only [`language::diagnostics::MAX_DIAGNOSTICS`] are shown).
    unknown_reported: usize,
    /// Candidate names compared so far when looking for suggestions.
    suggestion_work: usize,
}

impl<'a> Checker<'a> {
    fn error(&mut self, d: Diagnostic) {
        self.diags.push(d);
    }

    fn run(&mut self, file: &'a ast::File<'a>) -> Option<Model> {
        self.collect(file);
        self.declare();
        let n_endo = self.endogenous.len();
        self.used = vec![false; n_endo];
        self.max_lead = vec![0; n_endo];
        self.max_lag = vec![0; n_endo];
        self.exo_max_lag = vec![0; self.exogenous.len()];
        self.reported_no_value = vec![false; self.parameters.len()];

        let (parameters, order) = self.check_parameters();
        let equations = self.check_equations();
        let observables = self.check_observables();
        let objective = self.check_objective(&parameters);
        let free_controls = objective.as_ref().map_or(0, |o| {
            o.controls.iter().filter(|c| c.replaces.is_none()).count()
        });
        self.check_counts(free_controls);
        if let Some(o) = &objective {
            self.check_objective_has_a_problem(o);
        }
        let cov = self.check_covariance(&parameters);
        let steady = self.check_steady(&parameters);
        let options = self.check_options(&parameters);
        let priors = self.check_priors(&parameters, &cov);

        if self.diags.iter().any(Diagnostic::is_error) {
            return None;
        }
        Some(Model {
            title: self.title.map(|(s, _)| s.value.clone()),
            endogenous: self
                .endogenous
                .iter()
                .enumerate()
                .map(|(i, d)| Endogenous {
                    name: d.name.text.to_string(),
                    label: d.label.as_ref().map(|l| l.value.clone()),
                    log: d.log.is_some(),
                    max_lead: self.max_lead[i],
                    max_lag: self.max_lag[i],
                    predetermined: d.predetermined.is_some(),
                })
                .collect(),
            exogenous: self
                .exogenous
                .iter()
                .enumerate()
                .map(|(i, d)| Exogenous {
                    name: d.name.text.to_string(),
                    label: d.label.as_ref().map(|l| l.value.clone()),
                    max_lag: self.exo_max_lag[i],
                })
                .collect(),
            parameters,
            parameter_order: order,
            equations,
            covariance_items: cov.items,
            covariance: cov.sigma,
            sd_given: cov.sd_given,
            steady,
            options,
            observables,
            measurement_items: cov.measurement_items,
            measurement_covariance: cov.measurement,
            priors,
            objective,
        })
    }

    /// Sorts the statements into their kinds, in file order.
    fn collect(&mut self, file: &'a ast::File<'a>) {
        for st in &file.statements {
            match st {
                ast::Statement::Title { keyword, text } => {
                    if let Some(t) = text {
                        if let Some((_, first)) = self.title {
                            self.error(
                                Diagnostic::error(
                                    "duplicate-title",
                                    "the title is given twice",
                                    *keyword,
                                    "second title",
                                )
                                .with_label(first, "first title")
                                .with_help("a model has at most one title"),
                            );
                        } else {
                            self.title = Some((t, *keyword));
                        }
                    }
                }
                ast::Statement::SectionHeader { section, keyword } => match section {
                    language::lexer::Section::Endogenous => {
                        self.endogenous_header.get_or_insert(*keyword);
                    }
                    language::lexer::Section::Equations => {
                        self.equations_header.get_or_insert(*keyword);
                    }
                    language::lexer::Section::Objective => {
                        self.objective_header.get_or_insert(*keyword);
                    }
                    _ => {}
                },
                ast::Statement::Endogenous(v) => self.endogenous.extend(v.iter()),
                ast::Statement::Exogenous(v) => self.exogenous.extend(v.iter()),
                ast::Statement::Parameter(p) => self.parameters.push(p),
                ast::Statement::Equation(e) => self.equations.push(e),
                ast::Statement::Covariance(c) => self.covariance.push(c),
                ast::Statement::Steady(s) => self.steady.push(s),
                ast::Statement::Option(o) => self.options.push(o),
                ast::Statement::Observable(o) => self.observables.push(o),
                ast::Statement::Prior(p) => self.priors.push(p),
                ast::Statement::Objective(o) => self.objective.push(o),
                ast::Statement::Error => {}
            }
        }
    }

    /// Enters every declared name, reporting names declared twice (both places shown).
    fn declare(&mut self) {
        let mut decls: Vec<(&'a ast::Name<'a>, Symbol)> = Vec::new();
        decls.extend(
            self.endogenous
                .iter()
                .enumerate()
                .map(|(i, d)| (&d.name, Symbol::Endogenous(i))),
        );
        decls.extend(
            self.exogenous
                .iter()
                .enumerate()
                .map(|(i, d)| (&d.name, Symbol::Exogenous(i))),
        );
        decls.extend(
            self.parameters
                .iter()
                .enumerate()
                .map(|(i, d)| (&d.name, Symbol::Parameter(i))),
        );
        decls.extend(
            self.observables
                .iter()
                .enumerate()
                .map(|(i, d)| (&d.name, Symbol::Observable(i))),
        );
        decls.sort_by_key(|(n, _)| n.span.start);
        for (name, sym) in decls {
            if let Some(&(first_sym, first_span)) = self.names.get(name.text) {
                let message = if first_sym.kind() == sym.kind() {
                    format!("`{}` is declared twice", name.text)
                } else {
                    format!(
                        "`{}` is declared twice: as {} and as {}",
                        name.text,
                        first_sym.kind(),
                        sym.kind()
                    )
                };
                self.error(
                    Diagnostic::error("duplicate-name", message, name.span, "declared again here")
                        .with_label(first_span, "first declared here")
                        .with_help("each name is declared once; rename or remove one of them"),
                );
            } else {
                self.names.insert(name.text, (sym, name.span));
            }
        }
    }
}

/// Names owned by the checker for printing sub-expressions in messages.
struct OwnedNames {
    parameters: Vec<String>,
    endogenous: Vec<String>,
    exogenous: Vec<String>,
    observables: Vec<String>,
}

impl OwnedNames {
    fn view(&self) -> Names<'_> {
        Names {
            parameters: self.parameters.iter().map(String::as_str).collect(),
            endogenous: self.endogenous.iter().map(String::as_str).collect(),
            exogenous: self.exogenous.iter().map(String::as_str).collect(),
            observables: self.observables.iter().map(String::as_str).collect(),
        }
    }
}

fn non_finite_value(e: &Expr, leaves: &Values, at: &str, names: &Names) -> f64 {
    match calibrate::non_finite_source(e, leaves) {
        Some(s) if print::expr_text(s, names) == at => s.eval(leaves),
        _ => e.eval(leaves),
    }
}

fn describe_value(v: f64) -> &'static str {
    if v.is_nan() {
        "NaN (not a number)"
    } else if v > 0.0 {
        "infinite"
    } else {
        "minus infinity"
    }
}

fn number_or_word(v: f64) -> String {
    if v.is_finite() {
        let s = format!("{v:.6}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        describe_value(v).to_string()
    }
}

fn capitalize(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests;
