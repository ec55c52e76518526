//! Equations and the counting rule of spec §5
//!
//! ```text
//!     #equations = #endogenous (with free controls of an objective counted), every variable used
//! ```

use super::*;

impl<'a> Checker<'a> {
    pub(super) fn check_equations(&mut self) -> Vec<Equation> {
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
                        "duplicate-label",
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
    pub(super) fn check_counts(&mut self, free_controls: usize) {
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
}
