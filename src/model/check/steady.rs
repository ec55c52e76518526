//! The `steady` section: fixed values and guesses, their names, and the values they give
//!
//! ```text
//!     steady x = f(params, earlier steady values)     guess x = g(params, ...)
//! ```

use super::*;

impl<'a> Checker<'a> {
    pub(super) fn check_steady(&mut self, parameters: &[Parameter]) -> Vec<SteadyItem> {
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
                    self.report_unknown(
                        "unknown-steady-name",
                        "name",
                        &s.name,
                        |s| matches!(s, Symbol::Endogenous(_)),
                        None,
                    );
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
                        "duplicate-steady",
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
                        "value-and-guess",
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
                        "steady-not-finite",
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
}

pub(super) fn items_var(items: &[SteadyItem], k: usize) -> usize {
    items.get(k).map_or(0, |s| s.variable)
}
