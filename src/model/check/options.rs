//! The `options` section: threshold, discount, horizon, each checked at the calibration
//!
//! ```text
//!     threshold > 0,   0 < discount <= 1,   horizon a positive integer
//! ```

use super::*;

impl<'a> Checker<'a> {
    pub(super) fn check_options(&mut self, parameters: &[Parameter]) -> ModelOptions {
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
                    "duplicate-option",
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
                            "bad-horizon",
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
