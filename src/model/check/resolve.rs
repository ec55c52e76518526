//! Name resolution inside expressions: a name with its time index becomes a variable at an
//! offset, an innovation, a parameter or a steady-state value, checked against where it stands
//!
//! ```text
//!     x[t+k] -> Variable { index, offset: k },   x[ss] -> SteadyState(index),   p -> Parameter
//! ```

use super::*;

impl<'a> Checker<'a> {
    /// Classifies a time index; reports and returns `None` when it is not `t`, `t+k`, `t-k`
    /// (integer literal `k`) or `ss`.
    pub(super) fn index(&mut self, index: &ast::Expr<'a>) -> Option<Index> {
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
    pub(super) fn resolve(
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
                                "no-value-at-use",
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

    pub(super) fn not_constant(
        &mut self,
        name: &str,
        span: Span,
        sym: Symbol,
        place: Place,
        decl: Span,
    ) {
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
}
