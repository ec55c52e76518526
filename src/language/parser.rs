//! The parser: tokens -> syntax tree, with every syntax error collected.
//!
//! Contract: [`parse`] never fails and never panics. It returns the statements that parsed and a
//! diagnostic for each problem (bad characters, unterminated strings, unexpected tokens, input
//! past the size limits). The lexer ends every statement with a newline token; the grammar's
//! `Statement` parser is run on each statement's tokens in turn, so a statement with an error is
//! reported once and skipped whole, and parsing goes on with the next: one pass over the tokens,
//! linear in the file's size whatever a broken statement holds. The generated LR parser keeps its stack on the heap, and the lexer's
//! limits ([`super::lexer::MAX_BRACKET_DEPTH`], [`super::lexer::MAX_STATEMENT_TOKENS`]) and the
//! expression-depth limit here ([`MAX_EXPR_DEPTH`]) bound every recursive pass after it.

use lalrpop_util::{lalrpop_mod, ParseError};

use super::ast::{BinOp, Expr, ExprKind, File, Func, Name};
use super::diagnostics::Diagnostic;
use super::lexer::{LexError, Lexer, Section, Tok};
use super::span::Span;

lalrpop_mod!(
    #[allow(
        clippy::all,
        clippy::pedantic,
        unused_parens,
        unused_imports,
        dead_code
    )]
    grammar,
    "/saddle.rs"
);

/// Deepest expression the parser builds. It equals the checked model's limit
/// (`model::MAX_EXPR_DEPTH`, asserted at compile time in `model::check`; the language module
/// does not import from the model, which comes after it on the data's path), and checking never
/// makes an expression deeper.
pub const MAX_EXPR_DEPTH: usize = 512;

/// Largest model file accepted, in bytes. A generated model of 100,000 equations is about 10 MB;
/// the limit keeps memory and time bounded for anything larger (which is not a model a person or
/// a generator means to write).
pub const MAX_SOURCE_BYTES: usize = 32 * 1024 * 1024;

/// Longest line accepted, in bytes. Long generated equations are a few kilobytes; a line of
/// megabytes is hostile or broken input and is refused before lexing.
pub const MAX_LINE_BYTES: usize = 1024 * 1024;

/// State shared with the grammar's actions: the diagnostics they add.
pub struct ParseContext<'input> {
    _source: std::marker::PhantomData<&'input str>,
    pub diagnostics: Vec<Diagnostic>,
}

impl<'input> ParseContext<'input> {
    fn new(_source: &'input str) -> Self {
        ParseContext {
            _source: std::marker::PhantomData,
            diagnostics: Vec::new(),
        }
    }

    /// A leaf expression.
    pub fn leaf(&mut self, kind: ExprKind<'input>, span: Span) -> Box<Expr<'input>> {
        Box::new(Expr {
            kind,
            span,
            depth: 1,
        })
    }

    /// A node over children of depth `depth - 1` at most; replaced by [`ExprKind::TooDeep`] (and
    /// reported) when it would exceed [`MAX_EXPR_DEPTH`]. A child that is already `TooDeep` makes
    /// the parent `TooDeep` without a second report, so a long chain is reported once.
    fn node(
        &mut self,
        kind: ExprKind<'input>,
        span: Span,
        child_depth: u32,
        any_too_deep: bool,
    ) -> Box<Expr<'input>> {
        if any_too_deep {
            return self.leaf(ExprKind::TooDeep, span);
        }
        let depth = child_depth + 1;
        if depth as usize > MAX_EXPR_DEPTH {
            self.diagnostics.push(
                Diagnostic::error(
                    "expression-too-deep",
                    format!("expression nested more than {MAX_EXPR_DEPTH} levels deep"),
                    span,
                    "this expression",
                )
                .with_help(
                    "long sums or products nest one level per operator; split the expression \
                     with helper parameters or variables",
                ),
            );
            return self.leaf(ExprKind::TooDeep, span);
        }
        Box::new(Expr { kind, span, depth })
    }

    pub fn binary(
        &mut self,
        op: BinOp,
        a: Box<Expr<'input>>,
        b: Box<Expr<'input>>,
    ) -> Box<Expr<'input>> {
        let span = a.span.join(b.span);
        let d = a.depth.max(b.depth);
        let deep = matches!(a.kind, ExprKind::TooDeep) || matches!(b.kind, ExprKind::TooDeep);
        self.node(ExprKind::Binary(op, a, b), span, d, deep)
    }

    pub fn negate(&mut self, start: usize, e: Box<Expr<'input>>) -> Box<Expr<'input>> {
        let span = Span::new(start, e.span.end);
        let d = e.depth;
        let deep = matches!(e.kind, ExprKind::TooDeep);
        self.node(ExprKind::Neg(e), span, d, deep)
    }

    /// Unary plus: the operand itself, its span widened to the sign.
    pub fn widen(&mut self, start: usize, mut e: Box<Expr<'input>>) -> Box<Expr<'input>> {
        e.span = Span::new(start, e.span.end);
        e
    }

    /// A parenthesized expression: the inner one with its span widened to the parentheses.
    pub fn group(&mut self, mut e: Box<Expr<'input>>, span: Span) -> Box<Expr<'input>> {
        e.span = span;
        e
    }

    pub fn indexed(
        &mut self,
        name: Name<'input>,
        index: Box<Expr<'input>>,
        end: usize,
    ) -> Box<Expr<'input>> {
        let span = Span::new(name.span.start, end);
        let d = index.depth;
        let deep = matches!(index.kind, ExprKind::TooDeep);
        self.node(ExprKind::Indexed { name, index }, span, d, deep)
    }

    pub fn call(
        &mut self,
        func: Func,
        func_span: Span,
        args: Vec<Box<Expr<'input>>>,
        span: Span,
    ) -> Box<Expr<'input>> {
        let args: Vec<Expr<'input>> = args.into_iter().map(|a| *a).collect();
        let d = args.iter().map(|a| a.depth).max().unwrap_or(0);
        let deep = args.iter().any(|a| matches!(a.kind, ExprKind::TooDeep));
        self.node(
            ExprKind::Call {
                func,
                func_span,
                args,
            },
            span,
            d,
            deep,
        )
    }

    pub fn unknown_call(
        &mut self,
        name: Name<'input>,
        args: Vec<Box<Expr<'input>>>,
        end: usize,
    ) -> Box<Expr<'input>> {
        let args: Vec<Expr<'input>> = args.into_iter().map(|a| *a).collect();
        let span = Span::new(name.span.start, end);
        let d = args.iter().map(|a| a.depth).max().unwrap_or(0);
        let deep = args.iter().any(|a| matches!(a.kind, ExprKind::TooDeep));
        self.node(ExprKind::UnknownCall { name, args }, span, d, deep)
    }

    /// A numeric literal; one too large for `f64` is reported.
    pub fn number(&mut self, text: &str, span: Span) -> Box<Expr<'input>> {
        let integer = text.bytes().all(|b| b.is_ascii_digit());
        let value = match text.parse::<f64>() {
            Ok(v) if v.is_finite() => v,
            _ => {
                self.diagnostics.push(Diagnostic::error(
                    "bad-number",
                    format!("number `{text}` is too large"),
                    span,
                    "beyond the range of a 64-bit float",
                ));
                0.0
            }
        };
        self.leaf(ExprKind::Number { value, integer }, span)
    }

    /// A reserved word where a name is being declared: reported, and kept as a name so the rest of
    /// the statement parses.
    pub fn reserved_name(&mut self, word: &'static str, span: Span) -> Name<'input> {
        self.diagnostics.push(
            Diagnostic::error(
                "reserved-word",
                format!("`{word}` is a reserved word and cannot be used as a name"),
                span,
                "reserved word",
            )
            .with_help(format!("choose another name, such as `{word}_`")),
        );
        Name { text: word, span }
    }
}

/// The diagnostic for a syntax error; `None` when the error is at input the lexer already
/// reported ([`Tok::Invalid`]).
fn syntax_diagnostic(
    source: &str,
    error: ParseError<usize, Tok<'_>, LexError>,
) -> Option<Diagnostic> {
    let (span, found, expected) = match error {
        ParseError::UnrecognizedToken {
            token: (l, tok, r),
            expected,
        } => (Span::new(l, r), Some(tok), expected),
        ParseError::UnrecognizedEof { location, expected } => {
            (Span::new(location, location), None, expected)
        }
        ParseError::InvalidToken { location } => (Span::new(location, location), None, Vec::new()),
        ParseError::ExtraToken { token: (l, tok, r) } => (Span::new(l, r), Some(tok), Vec::new()),
        ParseError::User { .. } => return None,
    };
    match &found {
        Some(Tok::Invalid) => return None,
        Some(Tok::Item(Section::None)) => {
            let line_end = source[span.start..]
                .find('\n')
                .map_or(source.len(), |i| span.start + i);
            let span = Span::new(span.start, line_end.max(span.start));
            return Some(
                Diagnostic::error(
                    "outside-section",
                    "this line is not inside any section",
                    span,
                    "no section keyword before this line",
                )
                .with_help(
                    "start a section with its keyword on a line of its own: endogenous, \
                     exogenous, parameters, equations, covariance, steady, options, \
                     observables, priors or objective",
                ),
            );
        }
        _ => {}
    }
    let (found_text, span) = match &found {
        None => ("the end of the file".to_string(), span),
        Some(Tok::Newline) => {
            // Point at the last character of the statement, where something is missing.
            let at = span.start;
            let prev = source[..at]
                .char_indices()
                .next_back()
                .map_or(at, |(i, _)| i);
            ("the end of the line".to_string(), Span::new(prev, at))
        }
        Some(t) => (t.describe(), span),
    };
    let expected_text = describe_expected(&expected);
    let message = match &expected_text {
        Some(e) => format!("expected {e}, found {found_text}"),
        None => format!("unexpected {found_text}"),
    };
    let label = match &expected_text {
        Some(e) => format!("expected {e} here"),
        None => "unexpected here".to_string(),
    };
    let mut d = Diagnostic::error("syntax", message, span, label);
    if let Some(word) = found.as_ref().and_then(Tok::reserved_word) {
        d = d.with_help(format!(
            "`{word}` is a reserved word; it cannot be used as a name"
        ));
    } else if matches!(found, Some(Tok::Ident(_)) | Some(Tok::Number(_)))
        && expected.iter().any(|e| e == "\"*\"")
    {
        // `beta pi[t+1]`: two factors side by side.
        let before = source[..span.start].trim_end();
        let prev = before
            .rsplit(|c: char| c.is_whitespace())
            .next()
            .unwrap_or("");
        d = d.with_help(format!(
            "two factors side by side need `*` between them: `{prev} * {}`",
            &source[span.start..span.end]
        ));
    } else if matches!(found, Some(Tok::Newline)) {
        d = d.with_help(
            "a statement ends at the end of its line unless the line ends inside brackets or \
             with an operator, `=`, `,` or `:`",
        );
    }
    Some(d)
}

/// Tokens that can start an expression.
const EXPRESSION_STARTS: [&str; 17] = [
    "Ident",
    "Num",
    "\"(\"",
    "\"-\"",
    "\"+\"",
    "\"t\"",
    "\"ss\"",
    "\"exp\"",
    "\"ln\"",
    "\"log\"",
    "\"log10\"",
    "\"sqrt\"",
    "\"abs\"",
    "\"sign\"",
    "\"normcdf\"",
    "\"normpdf\"",
    "\"min\"",
];

/// Turns lalrpop's list of expected terminals into words ("an expression, `)` or `,`").
fn describe_expected(expected: &[String]) -> Option<String> {
    let has = |t: &str| expected.iter().any(|e| e == t);
    let mut words: Vec<String> = Vec::new();
    let expression = has("Ident") && has("Num") && has("\"(\"");
    if expression {
        words.push("an expression".to_string());
    }
    let operators = ["\"+\"", "\"-\"", "\"*\"", "\"/\""].iter().all(|o| has(o));
    if operators {
        words.push("an operator".to_string());
    }
    let sections = has("\"endogenous\"") && has("\"parameters\"");
    if sections {
        words.push("a section keyword".to_string());
    }
    for e in expected {
        let e = e.as_str();
        if expression && (EXPRESSION_STARTS.contains(&e) || e == "\"max\"") {
            continue;
        }
        if operators && ["\"+\"", "\"-\"", "\"*\"", "\"/\"", "\"^\""].contains(&e) {
            continue;
        }
        if sections
            && matches!(
                e,
                "\"title\""
                    | "\"endogenous\""
                    | "\"exogenous\""
                    | "\"parameters\""
                    | "\"equations\""
                    | "\"covariance\""
                    | "\"steady\""
                    | "\"options\""
                    | "\"observables\""
                    | "\"priors\""
                    | "\"objective\""
            )
        {
            continue;
        }
        let w = match e {
            "Ident" => "a name".to_string(),
            "Num" => "a number".to_string(),
            "Str" => "a string".to_string(),
            "NL" => "the end of the line".to_string(),
            "ENDO" | "EXO" | "PARAM" | "EQN" | "COV" | "STEADY" | "OPT" | "OBS" | "PRIOR"
            | "OBJ" | "OUTSIDE" | "INVALID" => continue,
            quoted => format!("`{}`", quoted.trim_matches('"')),
        };
        if !words.contains(&w) {
            words.push(w);
        }
    }
    if words.is_empty() {
        return None;
    }
    const SHOWN: usize = 6;
    let extra = words.len().saturating_sub(SHOWN);
    words.truncate(SHOWN);
    let mut s = match words.len() {
        1 => words[0].clone(),
        n => format!("{} or {}", words[..n - 1].join(", "), words[n - 1]),
    };
    if extra > 0 {
        s.push_str(&format!(" (or {extra} more)"));
    }
    Some(s)
}

/// Parses `source`: the statements that parsed and every diagnostic, in source order.
pub fn parse(source: &str) -> (File<'_>, Vec<Diagnostic>) {
    if let Some(d) = size_diagnostic(source) {
        return (File::default(), vec![d]);
    }
    let mut lexer = Lexer::new(source);
    let mut ctx = ParseContext::new(source);
    let parser = grammar::StatementParser::new();
    let mut statements = Vec::new();
    let mut syntax = Vec::new();
    let mut tokens = Vec::new();
    // One statement at a time: its tokens up to and including the newline the lexer ends it with.
    loop {
        tokens.clear();
        for t in lexer.by_ref() {
            let end = matches!(t, Ok((_, Tok::Newline, _)));
            tokens.push(t);
            if end {
                break;
            }
        }
        if tokens.is_empty() {
            break;
        }
        if !matches!(tokens.last(), Some(Ok((_, Tok::Newline, _)))) {
            // The lexer closes every statement at the end of the input; keep the guarantee here.
            tokens.push(Ok((source.len(), Tok::Newline, source.len())));
        }
        match parser.parse(&mut ctx, tokens.drain(..)) {
            Ok(statement) => statements.push(statement),
            Err(e) => {
                if let Some(d) = syntax_diagnostic(source, e) {
                    syntax.push(d);
                }
            }
        }
    }
    let file = File { statements };
    let mut diags = std::mem::take(&mut lexer.diagnostics);
    diags.append(&mut ctx.diagnostics);
    diags.append(&mut syntax);
    super::diagnostics::finish(&mut diags);
    (file, diags)
}

/// A diagnostic when `source` is past [`MAX_SOURCE_BYTES`] or has a line past [`MAX_LINE_BYTES`].
fn size_diagnostic(source: &str) -> Option<Diagnostic> {
    if source.len() > MAX_SOURCE_BYTES {
        return Some(Diagnostic::error(
            "too-large",
            format!(
                "model file is {} bytes; the limit is {MAX_SOURCE_BYTES} bytes",
                source.len()
            ),
            Span::new(0, 0),
            "",
        ));
    }
    let mut start = 0;
    for line in source.split('\n') {
        if line.len() > MAX_LINE_BYTES {
            let mut cut = start + MAX_LINE_BYTES;
            while !source.is_char_boundary(cut) {
                cut -= 1;
            }
            return Some(
                Diagnostic::error(
                    "line-too-long",
                    format!(
                        "line is {} bytes long; the limit is {MAX_LINE_BYTES} bytes",
                        line.len()
                    ),
                    Span::new(start, start),
                    "this line",
                )
                .with_help("a statement may continue over several lines after an operator or inside brackets"),
            );
        }
        start += line.len() + 1;
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parser_symbols_stay_small() {
        // Every value the grammar's actions return sits on the LR parser's stack and is moved
        // several times; keeping the large ones boxed is what makes parsing fast (see
        // docs/performance.md). These are the largest symbol types.
        let sizes = [
            ("Tok", std::mem::size_of::<Tok>()),
            ("Name", std::mem::size_of::<Name>()),
            (
                "StringLit",
                std::mem::size_of::<super::super::ast::StringLit>(),
            ),
            (
                "Statement",
                std::mem::size_of::<super::super::ast::Statement>(),
            ),
            (
                "EndogenousDecl",
                std::mem::size_of::<super::super::ast::EndogenousDecl>(),
            ),
        ];
        eprintln!("{sizes:?}, Expr {}", std::mem::size_of::<Expr>());
        for (name, size) in sizes {
            assert!(size <= 96, "{name} is {size} bytes");
        }
    }

    #[test]
    fn parse_recovers_at_each_line_end() {
        let (file, diags) =
            parse("endogenous\n  x y\n  z\nequations\n  x = )\n  z = 1 +* 2\n  x = z\n");
        assert_eq!(diags.len(), 3, "{diags:#?}");
        // The good statements on either side of the bad ones survive.
        let names: usize = file
            .statements
            .iter()
            .map(|s| match s {
                super::super::ast::Statement::Endogenous(v) => v.len(),
                _ => 0,
            })
            .sum();
        assert_eq!(names, 1);
        assert!(file
            .statements
            .iter()
            .any(|s| matches!(s, super::super::ast::Statement::Equation(_))));
    }
}
