//! Parameters: values resolved in dependency order, cycles reported with their path
//!
//! ```text
//!     p_i = f_i(p_j : p_j before p_i in a topological order of "p_i uses p_j")
//! ```

use super::*;

impl<'a> Checker<'a> {
    /// Resolves parameter values, orders them (reporting cycles) and evaluates them. Returns the
    /// parameters (value NaN where not computable) and a dependency order.
    pub(super) fn check_parameters(&mut self) -> (Vec<Parameter>, Vec<usize>) {
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
    pub(super) fn parameter_used_anywhere(&mut self, i: usize) -> bool {
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
    pub(super) fn order(
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

    pub(super) fn report_cycle(
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

    pub(super) fn names_for_print(&self) -> OwnedNames {
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
}
