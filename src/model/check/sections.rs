//! Checks of the sections for data, estimation and policy (spec §9-§11): `observables`,
//! `objective` and `priors`, syntax tree -> [`Observable`], [`Objective`], [`Prior`].
//!
//! Contract: each function reports every problem it finds (with the item's span) and returns
//! what checked; the caller builds no model when any error was reported. Observables and the
//! loss may use endogenous variables at `t` and their lags, parameters and steady values; the
//! objective's discount is a parameter expression in (0, 1] at the calibration; a control is an
//! endogenous variable, and the label it replaces an equation's; a prior is on a parameter given
//! directly (not derived), or on `sd(x)` of an innovation or an observable's measurement error,
//! with valid arguments, a calibrated value inside its support and a non-empty truncation.

use std::collections::HashMap;

use super::{did_you_mean, number_or_word, CheckedCovariance, Checker, Place, Refs, Symbol};
use crate::language::ast::{self, PriorTargetDecl};
use crate::language::{Diagnostic, Span};
use crate::model::calibrate::Values;
use crate::model::{Control, Expr, Objective, Observable, Parameter, Prior, PriorTarget};
use crate::stats::Distribution;

/// The words an `objective` item may start with.
const OBJECTIVE_WORDS: [&str; 3] = ["loss", "discount", "control"];

/// The distributions of spec §10 and their argument forms.
const DISTRIBUTIONS: [(&str, &[&[&str]]); 6] = [
    ("normal", &[&["mean", "sd"]]),
    ("beta", &[&["mean", "sd"], &["a", "b"]]),
    ("gamma", &[&["mean", "sd"], &["shape", "scale"]]),
    ("invgamma", &[&["mean", "sd"], &["shape", "scale"]]),
    ("uniform", &[&["lo", "hi"]]),
    ("flat", &[&[]]),
];

fn forms_text(dist: &str, forms: &[&[&str]]) -> String {
    forms
        .iter()
        .map(|f| format!("`{dist}({})`", f.join(", ")))
        .collect::<Vec<_>>()
        .join(" or ")
}

impl<'a> Checker<'a> {
    /// The `observables` section: one [`Observable`] per item that checks.
    pub(super) fn check_observables(&mut self) -> Vec<Observable> {
        let mut out = Vec::with_capacity(self.observables.len());
        for k in 0..self.observables.len() {
            let o = self.observables[k];
            let mut refs = Refs::default();
            if let Some(expr) = self.lower(&o.value, Place::Observable, &mut refs) {
                out.push(Observable {
                    name: o.name.text.to_string(),
                    label: o.label.as_ref().map(|l| l.value.clone()),
                    expr,
                });
            }
        }
        out
    }

    /// The `objective` section, if the file has one.
    pub(super) fn check_objective(&mut self, parameters: &[Parameter]) -> Option<Objective> {
        if self.objective.is_empty() {
            if let Some(h) = self.objective_header {
                self.error(
                    Diagnostic::error(
                        "objective-empty",
                        "the objective section has no `loss = ...`",
                        h,
                        "empty objective",
                    )
                    .with_help("write the period loss, as in `loss = infl^2 + lambda * gap^2`"),
                );
            }
            return None;
        }
        let mut loss: Option<(Option<Expr>, Span)> = None;
        let mut discount: Option<(Option<Expr>, Span)> = None;
        let mut controls: Vec<Control> = Vec::new();
        let mut controlled: HashMap<usize, Span> = HashMap::new();
        let mut replaced: HashMap<usize, Span> = HashMap::new();
        let values: Vec<f64> = parameters.iter().map(|p| p.value).collect();
        let params_ok = values.iter().all(|v| v.is_finite());
        for k in 0..self.objective.len() {
            let item = self.objective[k];
            match item {
                ast::ObjectiveDecl::Assign { name, value, span } => {
                    let word = name.text;
                    let (slot, place) = match word {
                        "loss" => (&mut loss, Place::Loss),
                        "discount" => (&mut discount, Place::Discount),
                        _ => {
                            self.unknown_objective_word(name);
                            continue;
                        }
                    };
                    if let Some((_, first)) = slot {
                        let first = *first;
                        self.error(
                            Diagnostic::error(
                                "duplicate-objective-item",
                                format!("the objective gives `{word}` twice"),
                                *span,
                                "given again here",
                            )
                            .with_label(first, "first given here"),
                        );
                        continue;
                    }
                    *slot = Some((None, *span));
                    let mut refs = Refs::default();
                    let e = self.lower(value, place, &mut refs);
                    if place == Place::Discount && params_ok {
                        if let Some(e) = &e {
                            let v = e.eval(&Values {
                                parameters: &values,
                                steady: &[],
                            });
                            if !(v > 0.0 && v <= 1.0) {
                                self.error(
                                    Diagnostic::error(
                                        "bad-discount",
                                        format!(
                                            "the objective's discount is {} at the calibration; it must lie in (0, 1]",
                                            number_or_word(v)
                                        ),
                                        value.span,
                                        "this value",
                                    )
                                    .with_help(
                                        "the policymaker minimises E_0 sum_t discount^t loss_t; \
                                         a discount factor such as 0.99 is usual",
                                    ),
                                );
                            }
                        }
                    }
                    let slot = if place == Place::Loss {
                        &mut loss
                    } else {
                        &mut discount
                    };
                    *slot = Some((e, *span));
                }
                ast::ObjectiveDecl::Control {
                    keyword,
                    variable,
                    replaces,
                    span,
                } => {
                    if keyword.text != "control" {
                        self.unknown_objective_word(keyword);
                        continue;
                    }
                    let mut ok = true;
                    if let Some((word, _)) = replaces {
                        if word.text != "replaces" {
                            ok = false;
                            self.error(
                                Diagnostic::error(
                                    "expected-replaces",
                                    format!("expected `replaces`, found name `{}`", word.text),
                                    word.span,
                                    "expected `replaces` here",
                                )
                                .with_help("write `control NAME replaces LABEL` or `control NAME`"),
                            );
                        }
                    }
                    let var = self.control_variable(variable);
                    let rule = match replaces {
                        Some((_, label)) if ok => self.replaced_equation(label),
                        _ => None,
                    };
                    let (Some(var), true) = (var, ok) else {
                        continue;
                    };
                    if replaces.is_some() && rule.is_none() {
                        continue;
                    }
                    if let Some(first) = controlled.get(&var) {
                        self.error(
                            Diagnostic::error(
                                "duplicate-control",
                                format!("`{}` is declared a control twice", variable.text),
                                *span,
                                "declared again here",
                            )
                            .with_label(*first, "first declared here"),
                        );
                        continue;
                    }
                    controlled.insert(var, *span);
                    if let Some(eq) = rule {
                        if let Some(first) = replaced.get(&eq) {
                            self.error(
                                Diagnostic::error(
                                    "duplicate-replaced-equation",
                                    "two controls replace the same equation",
                                    *span,
                                    "replaced again here",
                                )
                                .with_label(*first, "first replaced here")
                                .with_help("each control's simple rule is its own equation"),
                            );
                            continue;
                        }
                        replaced.insert(eq, *span);
                    }
                    controls.push(Control {
                        variable: var,
                        replaces: rule,
                    });
                }
            }
        }
        let loss = match loss {
            Some((e, _)) => e,
            None => {
                let span = self
                    .objective_header
                    .or_else(|| self.objective.first().map(|o| o.span()))
                    .unwrap_or_default();
                self.error(
                    Diagnostic::error(
                        "objective-no-loss",
                        "the objective section has no `loss = ...`",
                        span,
                        "no loss in this objective",
                    )
                    .with_help("write the period loss, as in `loss = infl^2 + lambda * gap^2`"),
                );
                None
            }
        };
        let discount = match discount {
            Some((Some(e), _)) => Some(Some(e)),
            Some((None, _)) => None,
            None => Some(None),
        };
        Some(Objective {
            loss: loss?,
            discount: discount?,
            controls,
        })
    }

    /// An objective in a model with no forward-looking variable and no control leaves the
    /// policymaker nothing to choose (issue 12, "Bad input"): an error at the objective's header.
    pub(super) fn check_objective_has_a_problem(&mut self, objective: &Objective) {
        let forward = self.max_lead.iter().any(|&l| l > 0);
        if forward || !objective.controls.is_empty() {
            return;
        }
        let span = self
            .objective_header
            .or_else(|| self.objective.first().map(|o| o.span()))
            .unwrap_or_default();
        self.error(
            Diagnostic::error(
                "objective-no-problem",
                "the objective has no control and the model has no forward-looking variable, so there is no policy to choose",
                span,
                "this objective",
            )
            .with_help(
                "name the policymaker's instrument with `control NAME replaces LABEL` (or `control NAME` for one without a simple rule)",
            ),
        );
    }

    fn unknown_objective_word(&mut self, name: &ast::Name<'a>) {
        let mut d = Diagnostic::error(
            "unknown-objective-item",
            format!("`{}` is not an objective item", name.text),
            name.span,
            "not an objective item",
        );
        d = match did_you_mean(name.text, OBJECTIVE_WORDS.iter().copied()) {
            Some(s) => d.with_help(format!("did you mean `{s}`?")),
            None => d.with_help(
                "the objective's items are `loss = expr`, `discount = expr`, \
                 `control NAME replaces LABEL` and `control NAME`",
            ),
        };
        self.error(d);
    }

    /// The endogenous variable a `control` names, or `None` after reporting.
    fn control_variable(&mut self, name: &ast::Name<'a>) -> Option<usize> {
        match self.names.get(name.text).copied() {
            Some((Symbol::Endogenous(i), _)) => Some(i),
            Some((sym, decl)) => {
                self.error(
                    Diagnostic::error(
                        "control-not-variable",
                        format!(
                            "`{}` is {}; a control is an endogenous variable",
                            name.text,
                            sym.kind()
                        ),
                        name.span,
                        "not an endogenous variable",
                    )
                    .with_label(decl, "declared here")
                    .with_help(
                        "the policymaker sets an endogenous variable, such as the policy rate",
                    ),
                );
                None
            }
            None => {
                self.report_unknown(
                    "unknown-control",
                    "variable",
                    name,
                    |s| matches!(s, Symbol::Endogenous(_)),
                    Some("a control is a variable of the endogenous section"),
                );
                None
            }
        }
    }

    /// The equation labelled `label`, or `None` after reporting.
    fn replaced_equation(&mut self, label: &ast::Name<'a>) -> Option<usize> {
        let found = self
            .equations
            .iter()
            .position(|q| q.label.as_ref().is_some_and(|l| l.text == label.text));
        if found.is_none() {
            let labels: Vec<&str> = self
                .equations
                .iter()
                .filter_map(|q| q.label.as_ref().map(|l| l.text))
                .collect();
            let mut d = Diagnostic::error(
                "unknown-label",
                format!("no equation is labelled `{}`", label.text),
                label.span,
                "not an equation label",
            );
            d = match did_you_mean(label.text, labels.iter().copied()) {
                Some(s) => d.with_help(format!("did you mean `{s}`?")),
                None if labels.is_empty() => d.with_help(
                    "label the control's simple rule in the equations section, as in \
                     `policy: rate = ...`",
                ),
                None => d.with_help(format!("the equation labels are {}", labels.join(", "))),
            };
            self.error(d);
        }
        found
    }

    /// The `priors` section (spec §10), given the checked parameters and covariances (for the
    /// calibrated values that must lie inside each prior's support).
    pub(super) fn check_priors(
        &mut self,
        parameters: &[Parameter],
        cov: &CheckedCovariance,
    ) -> Vec<Prior> {
        let mut out = Vec::with_capacity(self.priors.len());
        let mut seen: Vec<(PriorTarget, Span)> = Vec::new();
        for k in 0..self.priors.len() {
            let p = self.priors[k];
            let target = self.prior_target(&p.target, parameters, cov);
            let dist = self.prior_distribution(p);
            let truncation = match &p.truncation {
                Some(t) => self.prior_truncation(t).map(Some),
                None => Some(None),
            };
            let (Some((target, calibrated)), Some(dist), Some(truncation)) =
                (target, dist, truncation)
            else {
                continue;
            };
            if let Some((_, first)) = seen.iter().find(|(t, _)| *t == target) {
                self.error(
                    Diagnostic::error(
                        "duplicate-prior",
                        "two priors for the same quantity",
                        p.span,
                        "given again here",
                    )
                    .with_label(*first, "first given here")
                    .with_help("each estimated quantity has one prior"),
                );
                continue;
            }
            seen.push((target, p.span));
            let (lo, hi) = dist.support();
            let open_ends = !matches!(dist, Distribution::Uniform { .. });
            if let Some((tlo, thi)) = truncation {
                if thi < lo || tlo > hi || (open_ends && (thi <= lo || tlo >= hi)) {
                    self.error(
                        Diagnostic::error(
                            "prior-truncation-outside",
                            format!(
                                "the truncation [{}, {}] lies outside the support of the distribution",
                                number_or_word(tlo),
                                number_or_word(thi)
                            ),
                            p.span,
                            "this prior",
                        )
                        .with_label(p.truncation.as_ref().map_or(p.span, |t| t.span), "truncation")
                        .with_help(format!(
                            "the distribution's support is {}",
                            support_text(&dist)
                        )),
                    );
                    continue;
                }
            }
            if let Some(v) = calibrated.filter(|v| v.is_finite()) {
                let inside_dist = if open_ends {
                    v > lo && v < hi
                } else {
                    v >= lo && v <= hi
                };
                let inside_trunc = truncation.is_none_or(|(a, b)| v >= a && v <= b);
                if !(inside_dist && inside_trunc) {
                    let what = match &p.target {
                        PriorTargetDecl::Name(n) => format!("`{}`", n.text),
                        PriorTargetDecl::Scale { name, .. } => format!("`sd({})`", name.text),
                    };
                    let mut d = Diagnostic::error(
                        "prior-calibration-outside",
                        format!(
                            "the calibrated value of {what}, {}, lies outside its prior's support",
                            number_or_word(v)
                        ),
                        p.span,
                        "this prior",
                    );
                    d = if !inside_dist {
                        d.with_help(format!(
                            "the distribution's support is {}; the calibrated value starts the \
                             estimation, so it must have positive prior density",
                            support_text(&dist)
                        ))
                    } else {
                        d.with_help(
                            "the calibrated value lies outside the truncation interval; widen \
                             the interval or change the calibration",
                        )
                    };
                    self.error(d);
                    continue;
                }
            }
            out.push(Prior {
                target,
                distribution: dist,
                truncation,
            });
        }
        out
    }

    /// What a prior is about and its calibrated value (`None` when not computable), or `None`
    /// after reporting.
    fn prior_target(
        &mut self,
        target: &PriorTargetDecl<'a>,
        parameters: &[Parameter],
        cov: &CheckedCovariance,
    ) -> Option<(PriorTarget, Option<f64>)> {
        match target {
            PriorTargetDecl::Name(n) => match self.names.get(n.text).copied() {
                Some((Symbol::Parameter(i), decl)) => {
                    let derived = self.parameters[i].value.as_ref().is_some_and(|v| {
                        let mut uses = false;
                        v.walk(&mut |x| {
                            if matches!(x.kind, ast::ExprKind::Name(_)) {
                                uses = true;
                            }
                        });
                        uses
                    });
                    if derived {
                        self.error(
                            Diagnostic::error(
                                "prior-on-derived",
                                format!(
                                    "`{}` is derived from other parameters and cannot have a prior",
                                    n.text
                                ),
                                n.span,
                                "a derived parameter",
                            )
                            .with_label(decl, "defined from other parameters here")
                            .with_help(
                                "put priors on the parameters it is made of; it is recomputed \
                                 from them at every draw",
                            ),
                        );
                        return None;
                    }
                    Some((
                        PriorTarget::Parameter(i),
                        parameters.get(i).map(|p| p.value),
                    ))
                }
                Some((sym, decl)) => {
                    self.error(
                        Diagnostic::error(
                            "prior-target",
                            format!(
                                "`{}` is {}; a prior is on a parameter or on `sd(...)`",
                                n.text,
                                sym.kind()
                            ),
                            n.span,
                            "cannot have a prior",
                        )
                        .with_label(decl, "declared here")
                        .with_help(match sym {
                            Symbol::Exogenous(_) | Symbol::Observable(_) => {
                                format!("for the size of its shocks write `sd({})`", n.text)
                            }
                            _ => "priors are on parameters and standard deviations".to_string(),
                        }),
                    );
                    None
                }
                None => {
                    self.report_unknown(
                        "unknown-prior-parameter",
                        "parameter",
                        n,
                        |s| matches!(s, Symbol::Parameter(_)),
                        Some("a prior names a parameter of the parameters section"),
                    );
                    None
                }
            },
            PriorTargetDecl::Scale { kind, name, span } => {
                if *kind != ast::CovarianceKind::Sd {
                    self.error(
                        Diagnostic::error(
                            "prior-on-var",
                            "a prior is on `sd(...)`, not on `var(...)`",
                            *span,
                            "write sd here",
                        )
                        .with_help(format!(
                            "write `sd({})`; the prior is the distribution of the standard deviation itself",
                            name.text
                        )),
                    );
                    return None;
                }
                match self.names.get(name.text).copied() {
                    Some((Symbol::Exogenous(i), _)) => Some((
                        PriorTarget::ShockSd(i),
                        cov.sigma.get((i, i)).map(|v| v.sqrt()),
                    )),
                    Some((Symbol::Observable(i), _)) => Some((
                        PriorTarget::MeasurementSd(i),
                        cov.measurement.get((i, i)).map(|v| v.sqrt()),
                    )),
                    Some((sym, decl)) => {
                        self.error(
                            Diagnostic::error(
                                "prior-sd-target",
                                format!(
                                    "`{}` is {}; `sd(...)` names an innovation or an observable",
                                    name.text,
                                    sym.kind()
                                ),
                                name.span,
                                "not an innovation or an observable",
                            )
                            .with_label(decl, "declared here"),
                        );
                        None
                    }
                    None => {
                        self.unknown_innovation(name, None);
                        None
                    }
                }
            }
        }
    }

    /// The distribution of a prior item, or `None` after reporting.
    fn prior_distribution(&mut self, p: &'a ast::PriorDecl<'a>) -> Option<Distribution> {
        let dname = p.distribution.text;
        let Some(&(_, forms)) = DISTRIBUTIONS.iter().find(|(n, _)| *n == dname) else {
            let mut d = Diagnostic::error(
                "unknown-distribution",
                format!("unknown distribution `{dname}`"),
                p.distribution.span,
                "not a distribution",
            );
            d = match did_you_mean(dname, DISTRIBUTIONS.iter().map(|(n, _)| *n)) {
                Some(s) => d.with_help(format!("did you mean `{s}`?")),
                None => d.with_help(
                    "the distributions are normal, beta, gamma, invgamma, uniform and flat",
                ),
            };
            self.error(d);
            return None;
        };
        // Arguments by name, each once.
        let mut given: Vec<(&str, Option<f64>, Span)> = Vec::new();
        let mut ok = true;
        for a in &p.args {
            let arg_span = a.name.span.join(a.value.span);
            if let Some((_, _, first)) = given.iter().find(|(n, _, _)| *n == a.name.text) {
                let first = *first;
                self.error(
                    Diagnostic::error(
                        "duplicate-argument",
                        format!("argument `{}` is given twice", a.name.text),
                        arg_span,
                        "given again here",
                    )
                    .with_label(first, "first given here"),
                );
                ok = false;
                continue;
            }
            let mut refs = Refs::default();
            let v = self.lower(&a.value, Place::Prior, &mut refs).map(|e| {
                e.eval(&Values {
                    parameters: &[],
                    steady: &[],
                })
            });
            if v.is_none() {
                ok = false;
            }
            given.push((a.name.text, v, arg_span));
        }
        if !ok {
            return None;
        }
        let names: Vec<&str> = given.iter().map(|(n, _, _)| *n).collect();
        let form = forms
            .iter()
            .find(|f| f.len() == names.len() && f.iter().all(|w| names.contains(w)));
        let Some(form) = form else {
            let unknown = given
                .iter()
                .find(|(n, _, _)| !forms.iter().any(|f| f.contains(n)));
            let (span, message) = match unknown {
                Some((n, _, s)) => (*s, format!("`{dname}` has no argument `{n}`")),
                None => (
                    p.call_span,
                    format!("the arguments of `{dname}` do not match any of its forms"),
                ),
            };
            self.error(
                Diagnostic::error("prior-arguments", message, span, "here").with_help(format!(
                    "write {}, with the arguments named",
                    forms_text(dname, forms)
                )),
            );
            return None;
        };
        let arg = |w: &str| {
            given
                .iter()
                .find(|(n, _, _)| *n == w)
                .and_then(|(_, v, _)| *v)
                .unwrap_or(f64::NAN)
        };
        let result = match (dname, form.first().copied()) {
            ("normal", _) => Distribution::normal(arg("mean"), arg("sd")),
            ("beta", Some("mean")) => Distribution::beta_from_moments(arg("mean"), arg("sd")),
            ("beta", _) => Distribution::beta(arg("a"), arg("b")),
            ("gamma", Some("mean")) => Distribution::gamma_from_moments(arg("mean"), arg("sd")),
            ("gamma", _) => Distribution::gamma(arg("shape"), arg("scale")),
            ("invgamma", Some("mean")) => {
                Distribution::inv_gamma_from_moments(arg("mean"), arg("sd"))
            }
            ("invgamma", _) => Distribution::inv_gamma(arg("shape"), arg("scale")),
            ("uniform", _) => Distribution::uniform(arg("lo"), arg("hi")),
            _ => Ok(Distribution::Flat),
        };
        match result {
            Ok(d) => Some(d),
            Err(e) => {
                self.error(
                    Diagnostic::error(
                        "prior-invalid",
                        format!("invalid prior: {e}"),
                        p.span,
                        "this prior",
                    )
                    .with_label(p.call_span, "these arguments")
                    .with_help(format!(
                        "{}; the moments form matches the mean and standard deviation given",
                        forms_text(dname, forms)
                    )),
                );
                None
            }
        }
    }

    /// The bounds of `in [lo, hi]`, or `None` after reporting.
    fn prior_truncation(&mut self, t: &'a ast::Truncation<'a>) -> Option<(f64, f64)> {
        if t.word.text != "in" {
            self.error(
                Diagnostic::error(
                    "expected-in",
                    format!("expected `in`, found name `{}`", t.word.text),
                    t.word.span,
                    "expected `in` here",
                )
                .with_help("a truncated prior reads `name ~ dist(...) in [lo, hi]`"),
            );
            return None;
        }
        let mut refs = Refs::default();
        let leaves = Values {
            parameters: &[],
            steady: &[],
        };
        let lo = self
            .lower(&t.lo, Place::Prior, &mut refs)
            .map(|e| e.eval(&leaves));
        let hi = self
            .lower(&t.hi, Place::Prior, &mut refs)
            .map(|e| e.eval(&leaves));
        let (lo, hi) = (lo?, hi?);
        if !(lo.is_finite() && hi.is_finite() && lo < hi) {
            self.error(
                Diagnostic::error(
                    "prior-truncation-empty",
                    format!(
                        "the truncation interval [{}, {}] is empty",
                        number_or_word(lo),
                        number_or_word(hi)
                    ),
                    t.span,
                    "lower bound not below the upper bound",
                )
                .with_help("write `in [lo, hi]` with finite lo < hi"),
            );
            return None;
        }
        Some((lo, hi))
    }
}

fn support_text(d: &Distribution) -> String {
    match *d {
        Distribution::Normal { .. } | Distribution::Flat => "the whole real line".to_string(),
        Distribution::Beta { .. } => "(0, 1)".to_string(),
        Distribution::Gamma { .. } | Distribution::InvGamma { .. } => "(0, infinity)".to_string(),
        Distribution::Uniform { lo, hi } => {
            format!("[{}, {}]", number_or_word(lo), number_or_word(hi))
        }
    }
}
