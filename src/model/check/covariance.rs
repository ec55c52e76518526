//! The innovation covariance from `sd`, `var`, `corr` and `cov` items
//!
//! ```text
//!     Sigma_ii = sd_i^2 (or var_i),   Sigma_ij = corr_ij sd_i sd_j (or cov_ij),   Sigma >= 0
//! ```

use super::*;

impl<'a> Checker<'a> {
    /// Reports `name` as an unknown innovation, with a did-you-mean among innovations and
    /// observables, else `fallback_help` if given.
    pub(super) fn unknown_innovation(&mut self, name: &ast::Name<'a>, fallback_help: Option<&str>) {
        self.report_unknown(
            "unknown-innovation",
            "innovation",
            name,
            |s| matches!(s, Symbol::Exogenous(_) | Symbol::Observable(_)),
            fallback_help,
        );
    }

    /// Resolves a name in a covariance item: an innovation or an observable (its measurement
    /// error); anything else is reported.
    pub(super) fn shock(&mut self, name: &ast::Name<'a>) -> Option<Scale> {
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
                self.unknown_innovation(
                    name,
                    Some(
                        "declare it in the exogenous section (or in observables for a \
                         measurement error)",
                    ),
                );
                None
            }
        }
    }

    /// Reports the problems `build_covariance` found, each at its item's span.
    pub(super) fn report_covariance_problems(
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
    pub(super) fn check_covariance(&mut self, parameters: &[Parameter]) -> CheckedCovariance {
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
}

/// What a name in a covariance item stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Scale {
    Innovation(usize),
    Measurement(usize),
}

/// The checked `covariance` section.
pub(super) struct CheckedCovariance {
    pub(super) items: Vec<CovarianceItem>,
    pub(super) sigma: nalgebra::DMatrix<f64>,
    pub(super) sd_given: Vec<bool>,
    pub(super) measurement_items: Vec<CovarianceItem>,
    pub(super) measurement: nalgebra::DMatrix<f64>,
}
