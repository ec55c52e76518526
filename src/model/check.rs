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

mod sections;

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

/// The closest of `candidates` to `name` when it is close enough to be a likely typo (optimal
/// string alignment distance at most 1 for short names, 2 from 5 characters, 3 from 9).
pub fn did_you_mean<'c>(name: &str, candidates: impl Iterator<Item = &'c str>) -> Option<&'c str> {
    let n = name.chars().count();
    let limit = match n {
        0..=4 => 1,
        5..=8 => 2,
        _ => 3,
    };
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        if c == name || c.chars().count().abs_diff(n) > limit {
            continue;
        }
        let d = edit_distance(name, c);
        // At least one character must survive: `z` is no typo of `k`.
        if d <= limit && d < n && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

/// Optimal string alignment distance (Levenshtein with adjacent transpositions), by characters.
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let w = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * w];
    for i in 0..=a.len() {
        d[i * w] = i;
    }
    for (j, cell) in d.iter_mut().enumerate().take(w) {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[(i - 1) * w + j] + 1)
                .min(d[i * w + j - 1] + 1)
                .min(d[(i - 1) * w + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[(i - 2) * w + j - 2] + 1);
            }
            d[i * w + j] = v;
        }
    }
    d[a.len() * w + b.len()]
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
                                    "duplicate",
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
                    Diagnostic::error("duplicate", message, name.span, "declared again here")
                        .with_label(first_span, "first declared here")
                        .with_help("each name is declared once; rename or remove one of them"),
                );
            } else {
                self.names.insert(name.text, (sym, name.span));
            }
        }
    }

    fn suggest(&mut self, name: &str, filter: impl Fn(Symbol) -> bool) -> Option<String> {
        self.unknown_reported += 1;
        if self.unknown_reported > language::diagnostics::MAX_DIAGNOSTICS
            || self.suggestion_work > SUGGESTION_BUDGET
        {
            return None;
        }
        self.suggestion_work += self.names.len();
        // Candidates in declaration order, so that ties go to the name declared first (a hash
        // map's order would make the suggestion change from run to run).
        let mut candidates: Vec<(&str, Span)> = self
            .names
            .iter()
            .filter(|(_, (s, _))| filter(*s))
            .map(|(n, (_, span))| (*n, *span))
            .collect();
        candidates.sort_by_key(|(_, span)| span.start);
        let found = did_you_mean(name, candidates.iter().map(|(n, _)| *n));
        found.map(|s| format!("did you mean `{s}`?"))
    }

    fn unknown_name(&mut self, name: &str, span: Span, place: Place) {
        let filter = |s: Symbol| match place {
            Place::Equation => true,
            Place::Steady | Place::Observable | Place::Loss => {
                !matches!(s, Symbol::Exogenous(_) | Symbol::Observable(_))
            }
            Place::Prior => false,
            _ => matches!(s, Symbol::Parameter(_)),
        };
        let mut d = Diagnostic::error(
            "unknown-name",
            format!("unknown name `{name}`"),
            span,
            "not declared",
        );
        d = match self
            .suggest(name, filter)
            .or_else(|| self.suggest(name, |_| true))
        {
            Some(h) => d.with_help(h),
            None => d.with_help(
                "declare it under endogenous, exogenous or parameters (names are case-sensitive)",
            ),
        };
        self.error(d);
    }

    /// Classifies a time index; reports and returns `None` when it is not `t`, `t+k`, `t-k`
    /// (integer literal `k`) or `ss`.
    fn index(&mut self, index: &ast::Expr<'a>) -> Option<Index> {
        let offset_of = |c: &mut Self, sign: i64, k: &ast::Expr<'a>| -> Option<Index> {
            match &k.kind {
                ExprKind::Number {
                    value,
                    integer: true,
                } => {
                    if *value > MAX_TIME_OFFSET as f64 {
                        c.error(
                            Diagnostic::error(
                                "offset-too-large",
                                format!(
                                    "a time offset of {value} periods is beyond the limit of {MAX_TIME_OFFSET}"
                                ),
                                k.span,
                                "too far",
                            )
                            .with_help("leads and lags of more than a few periods are rarely meant"),
                        );
                        return None;
                    }
                    Some(Index::Offset((sign * (*value as i64)) as i32))
                }
                ExprKind::Number { .. } => {
                    c.error(
                        Diagnostic::error(
                            "non-integer-offset",
                            "a time offset must be a whole number of periods",
                            k.span,
                            "not an integer",
                        )
                        .with_help(
                            "write the offset as an integer literal, as in x[t+1] or x[t-2]",
                        ),
                    );
                    None
                }
                _ => {
                    c.error(
                        Diagnostic::error(
                            "non-literal-offset",
                            "a time offset must be an integer literal",
                            k.span,
                            "not a literal",
                        )
                        .with_help(
                            "offsets are fixed when the model is read: write x[t+1] or x[t-2], \
                             not a name or an expression",
                        ),
                    );
                    None
                }
            }
        };
        match &index.kind {
            ExprKind::Time => Some(Index::Offset(0)),
            ExprKind::SteadyMark => Some(Index::Steady),
            ExprKind::Binary(op @ (ast::BinOp::Add | ast::BinOp::Sub), a, k)
                if matches!(a.kind, ExprKind::Time) =>
            {
                let sign = if *op == ast::BinOp::Add { 1 } else { -1 };
                offset_of(self, sign, k)
            }
            _ => {
                self.error(
                    Diagnostic::error(
                        "bad-index",
                        "a time index must be `t`, `t+k`, `t-k` or `ss`",
                        index.span,
                        "not a time index",
                    )
                    .with_help(
                        "examples: x[t+1] (expected next period), x[t-1] (last period), x[ss] \
                         (steady state)",
                    ),
                );
                None
            }
        }
    }

    /// Resolves a name (possibly time-indexed) at `place`.
    fn resolve(
        &mut self,
        name: &str,
        span: Span,
        index: Option<(&ast::Expr<'a>, Index)>,
        place: Place,
        refs: &mut Refs,
    ) -> Option<Expr> {
        let Some(&(sym, decl_span)) = self.names.get(name) else {
            self.unknown_name(name, span, place);
            return None;
        };
        let constant_only = matches!(
            place,
            Place::Parameter | Place::Covariance | Place::Option | Place::Discount
        );
        if place == Place::Prior {
            self.error(
                Diagnostic::error(
                    "prior-argument-name",
                    format!("`{name}` cannot appear in a prior's arguments"),
                    span,
                    "not a number",
                )
                .with_label(decl_span, "declared here")
                .with_help(
                    "a prior's arguments are numbers (a prior is fixed before estimation; it \
                     does not move with the parameters)",
                ),
            );
            return None;
        }
        match sym {
            Symbol::Observable(_) => {
                self.error(
                    Diagnostic::error(
                        "observable-in-expression",
                        format!(
                            "`{name}` is an observable and cannot appear in {}",
                            place.what()
                        ),
                        span,
                        "an observable",
                    )
                    .with_label(decl_span, "declared as an observable here")
                    .with_help(
                        "observables are defined from the variables; use the variables they \
                         are made of",
                    ),
                );
                None
            }
            Symbol::Parameter(i) => {
                if let Some((ix, _)) = &index {
                    self.error(
                        Diagnostic::error(
                            "index-on-parameter",
                            format!("parameter `{name}` takes no time index"),
                            ix.span,
                            "time index on a parameter",
                        )
                        .with_label(decl_span, "declared as a parameter here")
                        .with_help(format!(
                            "parameters are constants: write `{name}` without brackets"
                        )),
                    );
                    return None;
                }
                if self.parameters[i].value.is_none() {
                    if !self.reported_no_value[i] {
                        self.reported_no_value[i] = true;
                        self.error(
                            Diagnostic::error(
                                "no-value",
                                format!("parameter `{name}` is used but never given a value"),
                                span,
                                "used here",
                            )
                            .with_label(decl_span, "declared without a value")
                            .with_help(format!("give it a value: `{name} = ...`")),
                        );
                    }
                    return None;
                }
                refs.parameters.push((i, span));
                Some(Expr::Parameter(i))
            }
            Symbol::Endogenous(i) => {
                if constant_only {
                    self.not_constant(name, span, sym, place, decl_span);
                    return None;
                }
                match (place, index) {
                    (Place::Steady, None) | (_, Some((_, Index::Steady))) => {
                        if place == Place::Steady {
                            refs.steady.push((i, span));
                        }
                        Some(Expr::SteadyState(i))
                    }
                    (Place::Steady, Some((ix, Index::Offset(_)))) => {
                        self.error(
                            Diagnostic::error(
                                "index-in-steady",
                                "a steady-state value has no date",
                                ix.span,
                                "time index in the steady section",
                            )
                            .with_help(format!(
                                "in the steady section `{name}` (or `{name}[ss]`) is its steady-state value"
                            )),
                        );
                        None
                    }
                    (Place::Observable | Place::Loss, index) => {
                        let (k, ix_span) = match index {
                            Some((ix, Index::Offset(k))) => (k, ix.span),
                            _ => (0, span),
                        };
                        if k > 0 {
                            let (code, what) = if place == Place::Observable {
                                ("lead-in-observable", "an observable")
                            } else {
                                ("lead-in-loss", "the loss")
                            };
                            self.error(
                                Diagnostic::error(
                                    code,
                                    format!("`{name}` appears with a lead in {what}"),
                                    ix_span,
                                    "a lead",
                                )
                                .with_help(
                                    if place == Place::Observable {
                                        "an observable is measured at t: use variables at t and \
                                     their lags (add a variable for an expectation if the data \
                                     measure one)"
                                    } else {
                                        "the period loss uses variables at t and their lags only"
                                    },
                                ),
                            );
                            return None;
                        }
                        Some(Expr::Variable {
                            index: i,
                            offset: k,
                        })
                    }
                    (_, index) => {
                        let k = match index {
                            Some((_, Index::Offset(k))) => k,
                            _ => 0,
                        };
                        self.used[i] = true;
                        if k > 0 {
                            self.max_lead[i] = self.max_lead[i].max(k as u32);
                        } else {
                            self.max_lag[i] = self.max_lag[i].max(k.unsigned_abs());
                        }
                        Some(Expr::Variable {
                            index: i,
                            offset: k,
                        })
                    }
                }
            }
            Symbol::Exogenous(i) => {
                if constant_only {
                    self.not_constant(name, span, sym, place, decl_span);
                    return None;
                }
                if matches!(place, Place::Observable | Place::Loss) {
                    let (code, what) = if place == Place::Observable {
                        ("innovation-in-observable", "an observable")
                    } else {
                        ("innovation-in-loss", "the loss")
                    };
                    self.error(
                        Diagnostic::error(
                            code,
                            format!("innovation `{name}` cannot appear in {what}"),
                            span,
                            "an innovation",
                        )
                        .with_label(decl_span, "declared as an innovation here")
                        .with_help(if place == Place::Observable {
                            "an observable is a function of the variables; measurement noise \
                             is given by `sd(observable)` in the covariance section"
                        } else {
                            "the period loss is a function of the variables at t and their lags"
                        }),
                    );
                    return None;
                }
                if place == Place::Steady {
                    self.error(
                        Diagnostic::error(
                            "innovation-in-steady",
                            format!("innovation `{name}` has no place in a steady-state value"),
                            span,
                            "innovations are zero in the steady state",
                        )
                        .with_help("write 0 or leave the term out"),
                    );
                    return None;
                }
                match index {
                    None => Some(Expr::Innovation {
                        index: i,
                        offset: 0,
                    }),
                    Some((ix, Index::Steady)) => {
                        self.error(
                            Diagnostic::error(
                                "steady-innovation",
                                format!("innovation `{name}` has no steady-state value"),
                                ix.span,
                                "`ss` on an innovation",
                            )
                            .with_help("innovations are zero in the steady state; write 0"),
                        );
                        None
                    }
                    Some((ix, Index::Offset(k))) if k > 0 => {
                        self.error(
                            Diagnostic::error(
                                "lead-on-innovation",
                                format!("innovation `{name}` appears with a lead"),
                                ix.span,
                                "lead of an innovation",
                            )
                            .with_label(decl_span, "declared as an innovation here")
                            .with_help(
                                "innovations are unpredictable: their expectation is zero; use \
                                 them at t or with a lag such as e[t-1]",
                            ),
                        );
                        None
                    }
                    Some((_, Index::Offset(k))) => {
                        self.exo_max_lag[i] = self.exo_max_lag[i].max(k.unsigned_abs());
                        Some(Expr::Innovation {
                            index: i,
                            offset: k,
                        })
                    }
                }
            }
        }
    }

    fn not_constant(&mut self, name: &str, span: Span, sym: Symbol, place: Place, decl: Span) {
        self.error(
            Diagnostic::error(
                "not-constant",
                format!(
                    "`{name}` is {} and cannot appear in {}",
                    sym.kind(),
                    place.what()
                ),
                span,
                "not a constant",
            )
            .with_label(decl, "declared here")
            .with_help(format!(
                "{} may use only numbers and parameters",
                capitalize(place.what())
            )),
        );
    }

    /// Lowers a syntax-tree expression to a model expression at `place`, collecting the names it
    /// depends on in `refs`. Returns `None` after reporting when any part is wrong (every wrong
    /// part is reported). Recursive; depth bounded by the parser's limit.
    fn lower(&mut self, e: &ast::Expr<'a>, place: Place, refs: &mut Refs) -> Option<Expr> {
        match &e.kind {
            ExprKind::Number { value, .. } => Some(Expr::Number(*value)),
            ExprKind::Name(n) => self.resolve(n, e.span, None, place, refs),
            ExprKind::Indexed { name, index } => {
                let ix = self.index(index)?;
                self.resolve(name.text, e.span, Some((index, ix)), place, refs)
            }
            ExprKind::Time | ExprKind::SteadyMark => {
                let word = if matches!(e.kind, ExprKind::Time) {
                    "t"
                } else {
                    "ss"
                };
                self.error(
                    Diagnostic::error(
                        "misplaced-time",
                        format!("`{word}` can only be used inside a time index"),
                        e.span,
                        "outside brackets",
                    )
                    .with_help("write it after a variable, as in x[t+1] or x[ss]"),
                );
                None
            }
            ExprKind::Neg(a) => {
                let a = self.lower(a, place, refs)?;
                Some(match a {
                    Expr::Number(v) => Expr::Number(-v),
                    other => Expr::Neg(Box::new(other)),
                })
            }
            ExprKind::Binary(op, a, b) => {
                let a = self.lower(a, place, refs);
                let b = self.lower(b, place, refs);
                let op = match op {
                    ast::BinOp::Add => BinaryOp::Add,
                    ast::BinOp::Sub => BinaryOp::Sub,
                    ast::BinOp::Mul => BinaryOp::Mul,
                    ast::BinOp::Div => BinaryOp::Div,
                    ast::BinOp::Pow => BinaryOp::Pow,
                };
                Some(Expr::binary(op, a?, b?))
            }
            ExprKind::Call {
                func,
                func_span,
                args,
            } => {
                let lowered: Vec<Option<Expr>> =
                    args.iter().map(|a| self.lower(a, place, refs)).collect();
                if args.len() != func.arity() {
                    let want = func.arity();
                    self.error(
                        Diagnostic::error(
                            "arity",
                            format!(
                                "`{}` takes {want} argument{}, found {}",
                                func.name(),
                                if want == 1 { "" } else { "s" },
                                args.len()
                            ),
                            e.span,
                            "wrong number of arguments",
                        )
                        .with_label(*func_span, "this function"),
                    );
                    return None;
                }
                let mut lowered = lowered.into_iter();
                let a = lowered.next().flatten();
                let f1 = |f: Function, a: Option<Expr>| Some(Expr::Call(f, Box::new(a?)));
                match func {
                    Func::Exp => f1(Function::Exp, a),
                    Func::Ln | Func::Log => f1(Function::Ln, a),
                    Func::Log10 => f1(Function::Log10, a),
                    Func::Sqrt => f1(Function::Sqrt, a),
                    Func::Abs => f1(Function::Abs, a),
                    Func::Sign => f1(Function::Sign, a),
                    Func::NormCdf => f1(Function::NormCdf, a),
                    Func::NormPdf => f1(Function::NormPdf, a),
                    Func::Min | Func::Max => {
                        let b = lowered.next().flatten();
                        let f = if *func == Func::Min {
                            Function2::Min
                        } else {
                            Function2::Max
                        };
                        Some(Expr::Call2(f, Box::new(a?), Box::new(b?)))
                    }
                }
            }
            ExprKind::UnknownCall { name, args } => {
                for a in args {
                    let _ = self.lower(a, place, refs);
                }
                const FUNCTIONS: [&str; 11] = [
                    "exp", "ln", "log", "log10", "sqrt", "abs", "sign", "normcdf", "normpdf",
                    "min", "max",
                ];
                let mut d = Diagnostic::error(
                    "unknown-function",
                    format!("unknown function `{}`", name.text),
                    name.span,
                    "not a function",
                );
                if let Some(f) = did_you_mean(name.text, FUNCTIONS.iter().copied()) {
                    d = d.with_help(format!("did you mean `{f}`?"));
                } else if let (true, Some(k)) =
                    (self.names.contains_key(name.text), offset_literal(args))
                {
                    // `y(+1)`, `y(-1)`: a lead or lag in another common notation.
                    let index = match k {
                        0 => "t".to_string(),
                        k if k > 0 => format!("t+{k}"),
                        k => format!("t-{}", -k),
                    };
                    d = d.with_help(format!(
                        "a lead or lag is written with a time index in square brackets: `{}[{index}]`",
                        name.text
                    ));
                } else if self.names.contains_key(name.text) {
                    d = d.with_help(format!(
                        "`{}` is declared as a name, not a function; a product needs `*`",
                        name.text
                    ));
                } else {
                    d = d.with_help(format!("the functions are {}", FUNCTIONS.join(", ")));
                }
                self.error(d);
                None
            }
            ExprKind::TooDeep => None,
        }
    }

    /// Resolves parameter values, orders them (reporting cycles) and evaluates them. Returns the
    /// parameters (value NaN where not computable) and a dependency order.
    fn check_parameters(&mut self) -> (Vec<Parameter>, Vec<usize>) {
        let n = self.parameters.len();
        let mut exprs: Vec<Option<Expr>> = Vec::with_capacity(n);
        let mut deps: Vec<Vec<(usize, Span)>> = Vec::with_capacity(n);
        for i in 0..n {
            let decl = self.parameters[i];
            let mut refs = Refs::default();
            let e = match &decl.value {
                Some(v) => self.lower(v, Place::Parameter, &mut refs),
                None => {
                    if !self.reported_no_value[i] && !self.parameter_used_anywhere(i) {
                        self.reported_no_value[i] = true;
                        self.error(
                            Diagnostic::error(
                                "no-value",
                                format!("parameter `{}` is never given a value", decl.name.text),
                                decl.name.span,
                                "declared without a value",
                            )
                            .with_help(format!("write `{} = ...`", decl.name.text)),
                        );
                    }
                    None
                }
            };
            exprs.push(e);
            deps.push(refs.parameters);
        }
        let order = self.order("parameter", &deps, |c, i| {
            c.parameters[i].name.text.to_string()
        });
        let mut values = vec![f64::NAN; n];
        let mut computable = vec![false; n];
        for &i in &order {
            let Some(e) = &exprs[i] else { continue };
            if !deps[i].iter().all(|(j, _)| computable[*j]) {
                continue;
            }
            let v = e.eval(&Values {
                parameters: &values,
                steady: &[],
            });
            values[i] = v;
            if v.is_finite() {
                computable[i] = true;
            } else {
                let leaves = Values {
                    parameters: &values,
                    steady: &[],
                };
                let decl = self.parameters[i];
                let span = decl.value.as_ref().map_or(decl.span, |v| v.span);
                let names = self.names_for_print();
                let at = calibrate::non_finite_source(e, &leaves)
                    .map(|s| print::expr_text(s, &names.view()))
                    .unwrap_or_default();
                self.error(
                    Diagnostic::error(
                        "not-finite",
                        format!(
                            "parameter `{}` is {} at the calibration",
                            decl.name.text,
                            describe_value(v)
                        ),
                        span,
                        format!("`{at}` is {}", describe_value(non_finite_value(e, &leaves, &at, &names.view()))),
                    )
                    .with_help("check the values this expression uses (division by zero, log or square root of a negative number)"),
                );
            }
        }
        let params = (0..n)
            .map(|i| {
                let d = self.parameters[i];
                Parameter {
                    name: d.name.text.to_string(),
                    label: d.label.as_ref().map(|l| l.value.clone()),
                    expr: exprs[i].clone().unwrap_or(Expr::Number(f64::NAN)),
                    value: values[i],
                }
            })
            .collect();
        (params, order)
    }

    /// Whether parameter `i`'s name occurs as a bare name in any expression of the file. The set
    /// of such names is collected once (so a file with many valueless parameters stays linear).
    fn parameter_used_anywhere(&mut self, i: usize) -> bool {
        if self.used_names.is_none() {
            let mut set: std::collections::HashSet<&'a str> = Default::default();
            let mut look = |e: &'a ast::Expr<'a>| {
                e.walk(&mut |x| {
                    if let ExprKind::Name(n) = &x.kind {
                        set.insert(*n);
                    }
                })
            };
            for p in &self.parameters {
                if let Some(v) = &p.value {
                    look(v);
                }
            }
            for q in &self.equations {
                look(&q.lhs);
                if let Some(r) = &q.rhs {
                    look(r);
                }
            }
            for c in &self.covariance {
                look(&c.value);
            }
            for st in &self.steady {
                look(&st.value);
            }
            for o in &self.options {
                look(&o.value);
            }
            for o in &self.observables {
                look(&o.value);
            }
            for o in &self.objective {
                if let ast::ObjectiveDecl::Assign { value, .. } = &**o {
                    look(value);
                }
            }
            self.used_names = Some(set);
        }
        let name = self.parameters[i].name.text;
        self.used_names
            .as_ref()
            .is_some_and(|set| set.contains(name))
    }

    /// A topological order of nodes `0..deps.len()` (each after the nodes it depends on), found
    /// by an iterative depth-first search in file order; each cycle is reported once, with the
    /// cycle shown.
    fn order(
        &mut self,
        what: &str,
        deps: &[Vec<(usize, Span)>],
        name: impl Fn(&Self, usize) -> String,
    ) -> Vec<usize> {
        let n = deps.len();
        let mut state = vec![0u8; n]; // 0 new, 1 on the stack, 2 done
        let mut in_reported_cycle = vec![false; n];
        let mut order = Vec::with_capacity(n);
        // Position of each node on the stack while it is there (keeps cycle extraction O(cycle)).
        let mut depth_of = vec![0usize; n];
        for root in 0..n {
            if state[root] != 0 {
                continue;
            }
            state[root] = 1;
            depth_of[root] = 0;
            let mut stack: Vec<(usize, usize)> = vec![(root, 0)];
            while let Some(&mut (v, ref mut next)) = stack.last_mut() {
                if *next < deps[v].len() {
                    let (w, _) = deps[v][*next];
                    *next += 1;
                    match state[w] {
                        0 => {
                            state[w] = 1;
                            depth_of[w] = stack.len();
                            stack.push((w, 0));
                        }
                        1 if !in_reported_cycle[w] => {
                            let pos = depth_of[w].min(stack.len() - 1);
                            let cycle: Vec<usize> = stack[pos..].iter().map(|(x, _)| *x).collect();
                            for &c in &cycle {
                                in_reported_cycle[c] = true;
                            }
                            self.report_cycle(what, &cycle, deps, &name);
                        }
                        _ => {}
                    }
                } else {
                    state[v] = 2;
                    order.push(v);
                    stack.pop();
                }
            }
        }
        order
    }

    fn report_cycle(
        &mut self,
        what: &str,
        cycle: &[usize],
        deps: &[Vec<(usize, Span)>],
        name: &impl Fn(&Self, usize) -> String,
    ) {
        // Long cycles are shown by their first links only.
        const SHOWN: usize = 12;
        let names: Vec<String> = cycle.iter().take(SHOWN).map(|&i| name(self, i)).collect();
        let mut path = names.join(" -> ");
        if cycle.len() > SHOWN {
            path.push_str(&format!(" -> ... ({} in the cycle)", cycle.len()));
        }
        path.push_str(&format!(" -> {}", names[0]));
        // The reference closing each edge u -> v of the cycle.
        let mut labels = Vec::new();
        for (k, &u) in cycle.iter().enumerate().take(SHOWN) {
            let v = cycle[(k + 1) % cycle.len()];
            if let Some((_, span)) = deps[u].iter().find(|(w, _)| *w == v) {
                labels.push((*span, format!("`{}` uses `{}`", names[k], name(self, v))));
            }
        }
        let (span, label) = labels
            .first()
            .cloned()
            .unwrap_or((Span::default(), String::new()));
        let mut d = Diagnostic::error(
            "cycle",
            format!("{what} values depend on each other in a cycle: {path}"),
            span,
            label,
        )
        .with_help("define one of them by a number, or break the chain another way");
        for (s, l) in labels.into_iter().skip(1) {
            d = d.with_label(s, l);
        }
        self.error(d);
    }

    fn names_for_print(&self) -> OwnedNames {
        OwnedNames {
            parameters: self
                .parameters
                .iter()
                .map(|p| p.name.text.to_string())
                .collect(),
            endogenous: self
                .endogenous
                .iter()
                .map(|p| p.name.text.to_string())
                .collect(),
            exogenous: self
                .exogenous
                .iter()
                .map(|p| p.name.text.to_string())
                .collect(),
            observables: self
                .observables
                .iter()
                .map(|p| p.name.text.to_string())
                .collect(),
        }
    }

    fn check_equations(&mut self) -> Vec<Equation> {
        let mut out = Vec::with_capacity(self.equations.len());
        for k in 0..self.equations.len() {
            let q = self.equations[k];
            let mut refs = Refs::default();
            let lhs = self.lower(&q.lhs, Place::Equation, &mut refs);
            let rhs = match &q.rhs {
                Some(r) => self.lower(r, Place::Equation, &mut refs),
                None => Some(Expr::Number(0.0)),
            };
            if let (Some(lhs), Some(rhs)) = (lhs, rhs) {
                out.push(Equation {
                    label: q.label.as_ref().map(|l| l.text.to_string()),
                    lhs,
                    rhs,
                });
            }
        }
        // Equation labels must be unique (they name equations in messages and output).
        let mut seen: HashMap<&str, Span> = HashMap::new();
        for q in &self.equations {
            if let Some(l) = &q.label {
                if let Some(first) = seen.get(l.text) {
                    let d = Diagnostic::error(
                        "duplicate",
                        format!("equation label `{}` is used twice", l.text),
                        l.span,
                        "used again here",
                    )
                    .with_label(*first, "first used here")
                    .with_help("each equation label names one equation");
                    self.diags.push(d);
                } else {
                    seen.insert(l.text, l.span);
                }
            }
        }
        out
    }

    /// The equation count: one equation per endogenous variable, less one per control without a
    /// rule (`free_controls`, spec §11).
    fn check_counts(&mut self, free_controls: usize) {
        let n_endo = self.endogenous.len();
        let n_eq = self.equations.len();
        if n_endo == 0 {
            let span = self
                .endogenous_header
                .or(self.equations_header)
                .unwrap_or_default();
            self.error(
                Diagnostic::error(
                    "no-variables",
                    "the model declares no endogenous variables",
                    span,
                    "",
                )
                .with_help("declare them in an `endogenous` section, one a line"),
            );
            return;
        }
        if n_eq + free_controls != n_endo {
            let list = |names: Vec<String>| {
                const SHOWN: usize = 12;
                let more = names.len().saturating_sub(SHOWN);
                let mut s = names.into_iter().take(SHOWN).collect::<Vec<_>>().join(", ");
                if more > 0 {
                    s.push_str(&format!(", ... ({more} more)"));
                }
                s
            };
            let vars = list(
                self.endogenous
                    .iter()
                    .map(|d| d.name.text.to_string())
                    .collect(),
            );
            let eqs = list(
                self.equations
                    .iter()
                    .enumerate()
                    .map(|(i, q)| match &q.label {
                        Some(l) => l.text.to_string(),
                        None => format!("#{}", i + 1),
                    })
                    .collect(),
            );
            let span = self
                .equations_header
                .or(self.endogenous_header)
                .unwrap_or_default();
            let controls = if free_controls == 0 {
                String::new()
            } else {
                format!(
                    " and {free_controls} control{} without a rule",
                    if free_controls == 1 { "" } else { "s" }
                )
            };
            let rule = if free_controls == 0 {
                "there must be one equation per endogenous variable"
            } else {
                "there must be one equation per endogenous variable, less one per `control NAME` \
                 without `replaces`"
            };
            let mut d = Diagnostic::error(
                "equation-count",
                format!(
                    "the model has {n_eq} equation{} for {n_endo} endogenous variable{}{controls}",
                    if n_eq == 1 { "" } else { "s" },
                    if n_endo == 1 { "" } else { "s" }
                ),
                span,
                format!("{n_eq} equations"),
            )
            .with_help(format!(
                "{rule}.\nendogenous ({n_endo}): {vars}\nequations ({n_eq}): {eqs}"
            ));
            if let (Some(h), Some(e)) = (self.endogenous_header, self.equations_header) {
                if h != e {
                    d = d.with_label(h, format!("{n_endo} endogenous variables"));
                }
            }
            self.error(d);
        }
        for i in 0..n_endo {
            if !self.used[i] {
                let d = self.endogenous[i];
                self.error(
                    Diagnostic::error(
                        "unused-variable",
                        format!("endogenous variable `{}` appears in no equation", d.name.text),
                        d.name.span,
                        "declared here, never used",
                    )
                    .with_help("each endogenous variable must be determined by the equations; use it or remove it"),
                );
            }
        }
    }

    /// Resolves a name in a covariance item: an innovation or an observable (its measurement
    /// error); anything else is reported.
    fn shock(&mut self, name: &ast::Name<'a>) -> Option<Scale> {
        match self.names.get(name.text).copied() {
            Some((Symbol::Exogenous(i), _)) => Some(Scale::Innovation(i)),
            Some((Symbol::Observable(i), _)) => Some(Scale::Measurement(i)),
            Some((sym, decl)) => {
                self.error(
                    Diagnostic::error(
                        "not-an-innovation",
                        format!(
                            "`{}` is {}, not an innovation or an observable",
                            name.text,
                            sym.kind()
                        ),
                        name.span,
                        "covariance items name innovations or observables",
                    )
                    .with_label(decl, "declared here"),
                );
                None
            }
            None => {
                let mut d = Diagnostic::error(
                    "unknown-name",
                    format!("unknown innovation `{}`", name.text),
                    name.span,
                    "not declared",
                );
                if let Some(h) = self.suggest(name.text, |s| {
                    matches!(s, Symbol::Exogenous(_) | Symbol::Observable(_))
                }) {
                    d = d.with_help(h);
                } else {
                    d = d.with_help(
                        "declare it in the exogenous section (or in observables for a \
                         measurement error)",
                    );
                }
                self.error(d);
                None
            }
        }
    }

    /// Reports the problems `build_covariance` found, each at its item's span.
    fn report_covariance_problems(
        &mut self,
        problems: Vec<(usize, CovarianceProblem)>,
        spans: &[Span],
    ) {
        for (k, p) in problems {
            let Some(&span) = spans.get(k) else { continue };
            let mut d = Diagnostic::error(
                "covariance",
                format!("invalid covariance item: {p}"),
                span,
                "here",
            );
            match p {
                CovarianceProblem::DuplicateScale(first)
                | CovarianceProblem::DuplicateCorrelation(first) => {
                    d.message = "covariance given twice for the same innovations".into();
                    if let Some(&f) = spans.get(first) {
                        d = d.with_label(f, "first given here");
                    }
                    d = d.with_help("give each sd (or var) and each correlation once");
                }
                CovarianceProblem::NotPositiveSemidefinite(_) => {
                    d.message = p.to_string();
                    d.label = "among these correlations".into();
                    d = d.with_help(
                        "some correlations contradict each other (for example a and b \
                         strongly positive, b and c too, but a and c strongly negative)",
                    );
                }
                CovarianceProblem::CorrelationWithoutError => {
                    d.code = "measurement-corr-without-error";
                    d.message = p.to_string();
                    d.label = "correlation of measurement errors".into();
                    d = d.with_help(
                        "an observable has a measurement error only when the covariance \
                         section gives its sd or var; give both, or drop the correlation",
                    );
                }
                _ => {}
            }
            self.error(d);
        }
    }

    /// The covariance section: innovations' items and matrix, and measurement errors' items and
    /// matrix (spec §9), each checked like the other (values, duplicates, PSD).
    fn check_covariance(&mut self, parameters: &[Parameter]) -> CheckedCovariance {
        let n = self.exogenous.len();
        let n_obs = self.observables.len();
        let mut out = CheckedCovariance {
            items: Vec::new(),
            sigma: nalgebra::DMatrix::identity(n.min(MAX_INNOVATIONS), n.min(MAX_INNOVATIONS)),
            sd_given: vec![false; n.min(MAX_INNOVATIONS)],
            measurement_items: Vec::new(),
            measurement: nalgebra::DMatrix::zeros(
                n_obs.min(MAX_INNOVATIONS),
                n_obs.min(MAX_INNOVATIONS),
            ),
        };
        if n > MAX_INNOVATIONS || n_obs > MAX_INNOVATIONS {
            let (span, what) = if n > MAX_INNOVATIONS {
                (self.exogenous[MAX_INNOVATIONS].name.span, "innovations")
            } else {
                (self.observables[MAX_INNOVATIONS].name.span, "observables")
            };
            let count = if n > MAX_INNOVATIONS { n } else { n_obs };
            self.error(
                Diagnostic::error(
                    "too-many-innovations",
                    format!("the model declares {count} {what}; the limit is {MAX_INNOVATIONS}"),
                    span,
                    "one too many",
                )
                .with_help("covariance matrices are stored in full"),
            );
            out.sigma = nalgebra::DMatrix::zeros(0, 0);
            out.sd_given = Vec::new();
            out.measurement = nalgebra::DMatrix::zeros(0, 0);
            return out;
        }
        let mut spans = Vec::new();
        let mut m_spans = Vec::new();
        let mut ok = true;
        for k in 0..self.covariance.len() {
            let c = self.covariance[k];
            let scales: Vec<Option<Scale>> = c.shocks.iter().map(|s| self.shock(s)).collect();
            let mut refs = Refs::default();
            let e = self.lower(&c.value, Place::Covariance, &mut refs);
            let Some(Some(a)) = scales.first().copied() else {
                ok = false;
                continue;
            };
            let b = match c.kind {
                ast::CovarianceKind::Corr => match scales.get(1).copied().flatten() {
                    Some(b) => b,
                    None => {
                        ok = false;
                        continue;
                    }
                },
                _ => a,
            };
            let kind = match c.kind {
                ast::CovarianceKind::Sd => CovarianceKind::Sd,
                ast::CovarianceKind::Var => CovarianceKind::Var,
                ast::CovarianceKind::Corr => CovarianceKind::Corr,
            };
            let pair = match (a, b) {
                (Scale::Innovation(a), Scale::Innovation(b)) => Ok((a, b)),
                (Scale::Measurement(a), Scale::Measurement(b)) => Err((a, b)),
                _ => {
                    let (innovation, observable) = if matches!(a, Scale::Innovation(_)) {
                        (&c.shocks[0], &c.shocks[1])
                    } else {
                        (&c.shocks[1], &c.shocks[0])
                    };
                    self.error(
                        Diagnostic::error(
                            "innovation-measurement-corr",
                            format!(
                                "a correlation between innovation `{}` and the measurement \
                                 error of `{}`",
                                innovation.text, observable.text
                            ),
                            c.span,
                            "not allowed",
                        )
                        .with_label(innovation.span, "an innovation")
                        .with_label(observable.span, "an observable")
                        .with_help(
                            "measurement errors are independent of the innovations; to let \
                             them co-move, add an innovation to the observable's definition \
                             through a variable",
                        ),
                    );
                    ok = false;
                    continue;
                }
            };
            let Some(e) = e else {
                ok = false;
                continue;
            };
            match pair {
                Ok(shocks) => {
                    out.items.push(CovarianceItem {
                        kind,
                        shocks,
                        expr: e,
                    });
                    spans.push(c.span);
                }
                Err(shocks) => {
                    out.measurement_items.push(CovarianceItem {
                        kind,
                        shocks,
                        expr: e,
                    });
                    m_spans.push(c.span);
                }
            }
        }
        let values: Vec<f64> = parameters.iter().map(|p| p.value).collect();
        if !values.iter().all(|v| v.is_finite()) {
            return out;
        }
        match calibrate::build_covariance(n, &out.items, &values) {
            Ok((sigma, given)) => {
                if ok {
                    out.sigma = sigma;
                    out.sd_given = given;
                }
            }
            Err(problems) => self.report_covariance_problems(problems, &spans),
        }
        match calibrate::build_measurement_covariance(n_obs, &out.measurement_items, &values) {
            Ok(m) => out.measurement = m,
            Err(problems) => self.report_covariance_problems(problems, &m_spans),
        }
        out
    }

    fn check_steady(&mut self, parameters: &[Parameter]) -> Vec<SteadyItem> {
        let n_endo = self.endogenous.len();
        let mut items: Vec<SteadyItem> = Vec::new();
        let mut item_refs: Vec<Vec<(usize, Span)>> = Vec::new();
        let mut item_decl: Vec<&ast::SteadyDecl<'a>> = Vec::new();
        let mut known_at: Vec<Option<usize>> = vec![None; n_endo];
        let mut guess_at: Vec<Option<usize>> = vec![None; n_endo];
        for k in 0..self.steady.len() {
            let s = self.steady[k];
            let mut refs = Refs::default();
            let e = self.lower(&s.value, Place::Steady, &mut refs);
            let var = match self.names.get(s.name.text).copied() {
                Some((Symbol::Endogenous(i), _)) => Some(i),
                Some((sym, decl)) => {
                    self.error(
                        Diagnostic::error(
                            "not-a-variable",
                            format!(
                                "`{}` is {}; the steady section gives values of endogenous variables",
                                s.name.text,
                                sym.kind()
                            ),
                            s.name.span,
                            "not an endogenous variable",
                        )
                        .with_label(decl, "declared here"),
                    );
                    None
                }
                None => {
                    let mut d = Diagnostic::error(
                        "unknown-name",
                        format!("unknown name `{}`", s.name.text),
                        s.name.span,
                        "not declared",
                    );
                    if let Some(h) =
                        self.suggest(s.name.text, |s| matches!(s, Symbol::Endogenous(_)))
                    {
                        d = d.with_help(h);
                    }
                    self.error(d);
                    None
                }
            };
            let (Some(e), Some(var)) = (e, var) else {
                continue;
            };
            let kind = if s.guess.is_some() {
                SteadyKind::Guess
            } else {
                SteadyKind::Known
            };
            let slot = match kind {
                SteadyKind::Known => &mut known_at,
                SteadyKind::Guess => &mut guess_at,
            };
            if let Some(first) = slot[var] {
                let first_span = item_decl[first].span;
                self.error(
                    Diagnostic::error(
                        "duplicate",
                        format!(
                            "the steady section gives {} `{}` twice",
                            if kind == SteadyKind::Guess {
                                "a guess for"
                            } else {
                                "a value of"
                            },
                            s.name.text
                        ),
                        s.span,
                        "given again here",
                    )
                    .with_label(first_span, "first given here"),
                );
                continue;
            }
            slot[var] = Some(items.len());
            items.push(SteadyItem {
                kind,
                variable: var,
                expr: e,
            });
            item_refs.push(refs.steady);
            item_decl.push(s);
        }
        // Both a value and a guess for one variable: the guess would never be used.
        for v in 0..n_endo {
            if let (Some(a), Some(b)) = (known_at[v], guess_at[v]) {
                let (first, second) = (a.min(b), a.max(b));
                self.error(
                    Diagnostic::error(
                        "duplicate",
                        format!(
                            "the steady section gives both a value of and a guess for `{}`",
                            self.endogenous[v].name.text
                        ),
                        item_decl[second].span,
                        "here",
                    )
                    .with_label(item_decl[first].span, "and here")
                    .with_help("a known value needs no guess; remove one of them"),
                );
            }
        }
        // Steady values may use only variables whose value is given.
        let mut deps: Vec<Vec<(usize, Span)>> = vec![Vec::new(); items.len()];
        let mut ok = true;
        for (k, refs) in item_refs.iter().enumerate() {
            for &(v, span) in refs {
                match known_at[v] {
                    Some(j) => deps[k].push((j, span)),
                    None => {
                        ok = false;
                        let name = self.endogenous[v].name.text.to_string();
                        self.error(
                            Diagnostic::error(
                                "steady-unknown",
                                format!("the steady-state value of `{name}` is not given"),
                                span,
                                "used here",
                            )
                            .with_help(format!(
                                "give `{name} = ...` in the steady section, or write this value \
                                 from parameters and given values only (guesses cannot be used)"
                            )),
                        );
                    }
                }
            }
        }
        let order = self.order("steady-state", &deps, |c, k| {
            c.endogenous[items_var(&items, k)].name.text.to_string()
        });
        let values: Vec<f64> = parameters.iter().map(|p| p.value).collect();
        if !ok || !values.iter().all(|v| v.is_finite()) {
            return items;
        }
        let mut steady = vec![f64::NAN; n_endo];
        for &k in &order {
            let leaves = Values {
                parameters: &values,
                steady: &steady,
            };
            let v = items[k].expr.eval(&leaves);
            if !deps[k]
                .iter()
                .all(|(j, _)| steady[items[*j].variable].is_finite())
            {
                continue;
            }
            let var = items[k].variable;
            if v.is_finite() && v <= 0.0 && self.endogenous[var].log.is_some() {
                let decl = item_decl[k];
                self.error(
                    Diagnostic::error(
                        "log-not-positive",
                        format!(
                            "`{}` is a log variable, but its steady {} is {}",
                            decl.name.text,
                            if items[k].kind == SteadyKind::Guess {
                                "guess"
                            } else {
                                "value"
                            },
                            number_or_word(v)
                        ),
                        decl.value.span,
                        "not positive",
                    )
                    .with_label(
                        self.endogenous[var].log.unwrap_or_default(),
                        "declared `log` here",
                    )
                    .with_help(
                        "a variable linearized in logs needs a positive steady state; drop `log` \
                         or fix the value",
                    ),
                );
            } else if v.is_finite() {
                if items[k].kind == SteadyKind::Known {
                    steady[var] = v;
                }
            } else {
                let names = self.names_for_print();
                let at = calibrate::non_finite_source(&items[k].expr, &leaves)
                    .map(|s| print::expr_text(s, &names.view()))
                    .unwrap_or_default();
                let decl = item_decl[k];
                self.error(
                    Diagnostic::error(
                        "not-finite",
                        format!(
                            "the steady {} `{}` is {} at the calibration",
                            if items[k].kind == SteadyKind::Guess {
                                "guess for"
                            } else {
                                "value of"
                            },
                            decl.name.text,
                            describe_value(v)
                        ),
                        decl.value.span,
                        format!("`{at}` is not finite"),
                    )
                    .with_help("check the values this expression uses"),
                );
            }
        }
        items
    }

    fn check_options(&mut self, parameters: &[Parameter]) -> ModelOptions {
        let mut options = ModelOptions::default();
        let mut seen: HashMap<&str, Span> = HashMap::new();
        let values: Vec<f64> = parameters.iter().map(|p| p.value).collect();
        let params_ok = values.iter().all(|v| v.is_finite());
        for k in 0..self.options.len() {
            let o = self.options[k];
            let name = o.name.text;
            const OPTIONS: [&str; 3] = ["discount", "threshold", "horizon"];
            if !OPTIONS.contains(&name) {
                let mut d = Diagnostic::error(
                    "unknown-option",
                    format!("unknown option `{name}`"),
                    o.name.span,
                    "not an option",
                );
                d = match did_you_mean(name, OPTIONS.iter().copied()) {
                    Some(s) => d.with_help(format!("did you mean `{s}`?")),
                    None => d.with_help("the options are discount, threshold and horizon"),
                };
                self.error(d);
                continue;
            }
            if let Some(first) = seen.get(name) {
                let d = Diagnostic::error(
                    "duplicate",
                    format!("option `{name}` is given twice"),
                    o.name.span,
                    "given again here",
                )
                .with_label(*first, "first given here");
                self.error(d);
                continue;
            }
            seen.insert(name, o.name.span);
            if name == "horizon" {
                match o.value.kind {
                    ExprKind::Number {
                        value,
                        integer: true,
                    } if value <= MAX_HORIZON as f64 => options.horizon = Some(value as u32),
                    _ => self.error(
                        Diagnostic::error(
                            "bad-option",
                            format!(
                                "option `horizon` must be a whole number of periods from 0 to {MAX_HORIZON}"
                            ),
                            o.value.span,
                            "not an integer literal in range",
                        )
                        .with_help("write it as a literal, as in `horizon = 40`"),
                    ),
                }
                continue;
            }
            let mut refs = Refs::default();
            let Some(e) = self.lower(&o.value, Place::Option, &mut refs) else {
                continue;
            };
            if params_ok {
                let v = e.eval(&Values {
                    parameters: &values,
                    steady: &[],
                });
                if !(v.is_finite() && v > 0.0) {
                    self.error(
                        Diagnostic::error(
                            "bad-option",
                            format!(
                                "option `{name}` is {} at the calibration; it must be a positive finite number",
                                number_or_word(v)
                            ),
                            o.value.span,
                            "this value",
                        )
                        .with_help(if name == "discount" {
                            "the discount factor b sets the stable-root threshold to 1/sqrt(b)"
                        } else {
                            "roots with modulus below the threshold count as stable"
                        }),
                    );
                    continue;
                }
            }
            if name == "discount" {
                options.discount = Some(e);
            } else {
                options.threshold = Some(e);
            }
        }
        options
    }
}

/// What a name in a covariance item stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Scale {
    Innovation(usize),
    Measurement(usize),
}

/// The checked `covariance` section.
struct CheckedCovariance {
    items: Vec<CovarianceItem>,
    sigma: nalgebra::DMatrix<f64>,
    sd_given: Vec<bool>,
    measurement_items: Vec<CovarianceItem>,
    measurement: nalgebra::DMatrix<f64>,
}

fn items_var(items: &[SteadyItem], k: usize) -> usize {
    items.get(k).map_or(0, |s| s.variable)
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

/// The integer of a call's single argument written as `+k`, `-k` or `k` (a lead or lag in a
/// notation other than ours), if it is one.
fn offset_literal(args: &[ast::Expr<'_>]) -> Option<i64> {
    let [arg] = args else { return None };
    let (negative, inner) = match &arg.kind {
        ast::ExprKind::Neg(e) => (true, &e.kind),
        k => (false, k),
    };
    match inner {
        ast::ExprKind::Number {
            value,
            integer: true,
        } if *value <= 100.0 => Some(if negative {
            -(*value as i64)
        } else {
            *value as i64
        }),
        _ => None,
    }
}
