//! Lowering: a syntax-tree expression to a resolved [`Expr`], operators and functions checked
//!
//! ```text
//!     ast::Expr (names as text, spans)  ->  Expr (indices and offsets, no spans)
//! ```

use super::*;

impl<'a> Checker<'a> {
    /// Lowers a syntax-tree expression to a model expression at `place`, collecting the names it
    /// depends on in `refs`. Returns `None` after reporting when any part is wrong (every wrong
    /// part is reported). Recursive; depth bounded by the parser's limit.
    pub(super) fn lower(
        &mut self,
        e: &ast::Expr<'a>,
        place: Place,
        refs: &mut Refs,
    ) -> Option<Expr> {
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
}

/// The integer of a call's single argument written as `+k`, `-k` or `k` (a lead or lag in a
/// notation other than ours), if it is one.
pub(super) fn offset_literal(args: &[ast::Expr<'_>]) -> Option<i64> {
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
