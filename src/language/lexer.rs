//! Tokens of the model language and the line rules of spec §2.
//!
//! Contract: [`Lexer`] turns source text into the token stream the grammar reads, as
//! `(start, token, end)` triples with byte offsets. It never fails: a bad character, an
//! unterminated string or input past a size limit becomes a [`Diagnostic`] in
//! [`Lexer::diagnostics`] and (where the statement cannot make sense any more) one
//! [`Tok::Invalid`] token, after which the parser skips to the end of the statement.
//!
//! Line rules (spec §2): a statement ends at the end of its line, except that the line continues
//! when it ends inside an open `(` or `[` or its last token is `+ - * / ^ = , :`. The lexer emits
//! [`Tok::Newline`] exactly where a statement ends (never for blank or comment-only lines), and a
//! final one at the end of input. At the start of each statement it also emits a zero-width
//! *item marker* saying which section the statement belongs to ([`Tok::Item`]), unless the
//! statement starts with a section keyword. This keeps the grammar flat (one statement after
//! another), so the parser can recover at every line end without losing earlier sections.

use logos::Logos;

use super::diagnostics::Diagnostic;
use super::span::Span;

/// Deepest bracket nesting accepted. Brackets do not add tree nodes by themselves, but a person
/// never needs more than a few levels, and this refuses hostile input (200,000 open brackets)
/// before it reaches the parser.
pub const MAX_BRACKET_DEPTH: usize = 256;

/// Most tokens in one statement. A long equation has a few hundred; the limit bounds the parser's
/// stack for hostile input such as a million unary minus signs on one line.
pub const MAX_STATEMENT_TOKENS: usize = 100_000;
/// Longest name, in characters. No model needs more, and every table that prints a name pads its
/// column to the longest one: an unbounded name would make unbounded lines (and the formatter
/// refuses widths beyond 65,535).
pub const MAX_NAME_CHARS: usize = 255;

/// Raw tokens as logos sees them, before the line rules.
#[derive(Logos, Debug, Clone, Copy, PartialEq, Eq)]
#[logos(skip r"[ \t\r\f]+")]
#[logos(skip(r"#[^\n]*", allow_greedy = true))]
enum Raw {
    #[token("\n")]
    Newline,
    #[regex("[A-Za-z_][A-Za-z0-9_]*")]
    Word,
    #[regex(r"([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?")]
    Number,
    #[regex(r#""([^"\\\n]|\\[^\n])*""#, allow_greedy = true)]
    Str,
    #[regex(r#""([^"\\\n]|\\[^\n])*"#, allow_greedy = true)]
    UnterminatedStr,
    #[token("(")]
    LParen,
    #[token(")")]
    RParen,
    #[token("[")]
    LBracket,
    #[token("]")]
    RBracket,
    #[token(",")]
    Comma,
    #[token(":")]
    Colon,
    #[token("=")]
    Equals,
    #[token("+")]
    Plus,
    #[token("-")]
    Minus,
    #[token("*")]
    Star,
    #[token("/")]
    Slash,
    #[token("^")]
    Caret,
    #[token("~")]
    Tilde,
}

/// Which section a statement belongs to (the item marker the lexer puts in front of it).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Section {
    /// Before any section keyword, or after `title`.
    None,
    Endogenous,
    Exogenous,
    Parameters,
    Equations,
    Covariance,
    Steady,
    Options,
    Observables,
    Priors,
    Objective,
}

/// Tokens the grammar reads.
#[derive(Debug, Clone, PartialEq)]
pub enum Tok<'a> {
    Ident(&'a str),
    Number(&'a str),
    /// A string literal with its escapes resolved.
    Str(String),
    /// End of a statement.
    Newline,
    /// Zero-width marker at the start of a statement inside a section.
    Item(Section),
    /// Stands for input the lexer already reported; the parser skips the rest of the statement.
    Invalid,
    LParen,
    RParen,
    LBracket,
    RBracket,
    Comma,
    Colon,
    Equals,
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    Tilde,
    // Reserved words (spec §2).
    Title,
    Endogenous,
    Exogenous,
    Parameters,
    Equations,
    Covariance,
    Steady,
    Options,
    Observables,
    Priors,
    Objective,
    Predetermined,
    Log,
    Guess,
    T,
    Ss,
    Sd,
    Var,
    Corr,
    Exp,
    Ln,
    Log10,
    Sqrt,
    Abs,
    Sign,
    NormCdf,
    NormPdf,
    Min,
    Max,
}

/// The reserved words of spec §2.
pub const RESERVED: [&str; 29] = [
    "title",
    "endogenous",
    "exogenous",
    "parameters",
    "equations",
    "covariance",
    "steady",
    "options",
    "observables",
    "priors",
    "objective",
    "predetermined",
    "log",
    "guess",
    "t",
    "ss",
    "sd",
    "var",
    "corr",
    "exp",
    "ln",
    "log10",
    "sqrt",
    "abs",
    "sign",
    "normcdf",
    "normpdf",
    "min",
    "max",
];

/// Whether `word` is reserved.
pub fn is_reserved(word: &str) -> bool {
    RESERVED.contains(&word)
}

fn keyword(word: &str) -> Option<Tok<'static>> {
    Some(match word {
        "title" => Tok::Title,
        "endogenous" => Tok::Endogenous,
        "exogenous" => Tok::Exogenous,
        "parameters" => Tok::Parameters,
        "equations" => Tok::Equations,
        "covariance" => Tok::Covariance,
        "steady" => Tok::Steady,
        "options" => Tok::Options,
        "observables" => Tok::Observables,
        "priors" => Tok::Priors,
        "objective" => Tok::Objective,
        "predetermined" => Tok::Predetermined,
        "log" => Tok::Log,
        "guess" => Tok::Guess,
        "t" => Tok::T,
        "ss" => Tok::Ss,
        "sd" => Tok::Sd,
        "var" => Tok::Var,
        "corr" => Tok::Corr,
        "exp" => Tok::Exp,
        "ln" => Tok::Ln,
        "log10" => Tok::Log10,
        "sqrt" => Tok::Sqrt,
        "abs" => Tok::Abs,
        "sign" => Tok::Sign,
        "normcdf" => Tok::NormCdf,
        "normpdf" => Tok::NormPdf,
        "min" => Tok::Min,
        "max" => Tok::Max,
        _ => return None,
    })
}

fn section_of(word: &str) -> Option<Section> {
    Some(match word {
        "title" => Section::None,
        "endogenous" => Section::Endogenous,
        "exogenous" => Section::Exogenous,
        "parameters" => Section::Parameters,
        "equations" => Section::Equations,
        "covariance" => Section::Covariance,
        "steady" => Section::Steady,
        "options" => Section::Options,
        "observables" => Section::Observables,
        "priors" => Section::Priors,
        "objective" => Section::Objective,
        _ => return None,
    })
}

impl Tok<'_> {
    /// Whether a line whose last token is this one continues onto the next (spec §2).
    fn continues_line(&self) -> bool {
        matches!(
            self,
            Tok::Plus
                | Tok::Minus
                | Tok::Star
                | Tok::Slash
                | Tok::Caret
                | Tok::Equals
                | Tok::Comma
                | Tok::Colon
                | Tok::LParen
                | Tok::LBracket
        )
    }

    /// How the token reads in a message ("`+`", "end of line", "reserved word `sd`").
    pub fn describe(&self) -> String {
        match self {
            Tok::Ident(s) => format!("name `{s}`"),
            Tok::Number(s) => format!("number `{s}`"),
            Tok::Str(_) => "a string".to_string(),
            Tok::Newline => "end of line".to_string(),
            Tok::Item(_) => "start of a line".to_string(),
            Tok::Invalid => "invalid input".to_string(),
            other => match other.reserved_word() {
                Some(w) => format!("reserved word `{w}`"),
                None => format!("`{}`", other.symbol()),
            },
        }
    }

    /// The reserved word this token is, if it is one.
    pub fn reserved_word(&self) -> Option<&'static str> {
        Some(match self {
            Tok::Title => "title",
            Tok::Endogenous => "endogenous",
            Tok::Exogenous => "exogenous",
            Tok::Parameters => "parameters",
            Tok::Equations => "equations",
            Tok::Covariance => "covariance",
            Tok::Steady => "steady",
            Tok::Options => "options",
            Tok::Observables => "observables",
            Tok::Priors => "priors",
            Tok::Objective => "objective",
            Tok::Predetermined => "predetermined",
            Tok::Log => "log",
            Tok::Guess => "guess",
            Tok::T => "t",
            Tok::Ss => "ss",
            Tok::Sd => "sd",
            Tok::Var => "var",
            Tok::Corr => "corr",
            Tok::Exp => "exp",
            Tok::Ln => "ln",
            Tok::Log10 => "log10",
            Tok::Sqrt => "sqrt",
            Tok::Abs => "abs",
            Tok::Sign => "sign",
            Tok::NormCdf => "normcdf",
            Tok::NormPdf => "normpdf",
            Tok::Min => "min",
            Tok::Max => "max",
            _ => return None,
        })
    }

    fn symbol(&self) -> &'static str {
        match self {
            Tok::LParen => "(",
            Tok::RParen => ")",
            Tok::LBracket => "[",
            Tok::RBracket => "]",
            Tok::Comma => ",",
            Tok::Colon => ":",
            Tok::Equals => "=",
            Tok::Plus => "+",
            Tok::Minus => "-",
            Tok::Star => "*",
            Tok::Slash => "/",
            Tok::Caret => "^",
            Tok::Tilde => "~",
            _ => "?",
        }
    }
}

/// What the last token of an open statement says about the line rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Last {
    /// An operator, `=`, `,`, `:` or an opening bracket: the statement continues.
    Continues,
    /// Anything else: a line end ends the statement.
    Ends,
    /// A [`Tok::Invalid`]: the rest of the statement is being skipped.
    Invalid,
}

/// The lexer never hands an error to the parser (problems go to [`Lexer::diagnostics`]); this
/// type exists because the parser's interface asks for one.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct LexError;

/// A token with its byte range, as the parser consumes it.
pub type Spanned<'a> = Result<(usize, Tok<'a>, usize), LexError>;

/// The token stream with the line rules applied (see the module documentation).
pub struct Lexer<'a> {
    source: &'a str,
    raw: logos::SpannedIter<'a, Raw>,
    /// Open brackets, innermost last.
    brackets: Vec<Span>,
    /// Section of the statements that follow.
    section: Section,
    /// Tokens decided but not yet handed out.
    queue: std::collections::VecDeque<(usize, Tok<'a>, usize)>,
    /// The last token handed out (or queued) in the current statement; `None` at a statement start.
    last: Option<Last>,
    /// Tokens in the current statement.
    statement_tokens: usize,
    /// End offset of the last token handed out (where a statement's newline token is placed, so
    /// that "expected ... found the end of the line" points at the statement, not at a comment).
    last_end: usize,
    /// The rest of the statement is being skipped after an error that makes it meaningless.
    skipping: bool,
    /// While skipping: the last skipped token continues the line.
    skip_continues: bool,
    /// A raw line break was seen since the last token (used to spot a section keyword that starts
    /// a line while a bracket is still open).
    at_line_start: bool,
    finished: bool,
    /// Every problem found so far.
    pub diagnostics: Vec<Diagnostic>,
}

impl<'a> Lexer<'a> {
    pub fn new(source: &'a str) -> Lexer<'a> {
        Lexer {
            source,
            raw: Raw::lexer(source).spanned(),
            brackets: Vec::new(),
            section: Section::None,
            queue: std::collections::VecDeque::new(),
            last: None,
            statement_tokens: 0,
            last_end: 0,
            skipping: false,
            skip_continues: false,
            at_line_start: true,
            finished: false,
            diagnostics: Vec::new(),
        }
    }

    /// Queues `tok`, first opening a statement (its item marker) when none is open.
    fn push(&mut self, start: usize, tok: Tok<'a>, end: usize) {
        if self.last.is_none() {
            let is_header = matches!(
                &tok,
                Tok::Title
                    | Tok::Endogenous
                    | Tok::Exogenous
                    | Tok::Parameters
                    | Tok::Equations
                    | Tok::Covariance
                    | Tok::Steady
                    | Tok::Options
                    | Tok::Observables
                    | Tok::Priors
                    | Tok::Objective
            );
            if is_header {
                if let Some(w) = tok.reserved_word() {
                    self.section = section_of(w).unwrap_or(Section::None);
                }
            } else {
                self.queue
                    .push_back((start, Tok::Item(self.section), start));
            }
        }
        self.statement_tokens += 1;
        self.last_end = end;
        if self.statement_tokens > MAX_STATEMENT_TOKENS {
            self.diagnostics.push(
                Diagnostic::error(
                    "statement-too-long",
                    format!("statement has more than {MAX_STATEMENT_TOKENS} tokens"),
                    Span::new(start, end),
                    "the limit is reached here",
                )
                .with_help("split the expression with helper variables or parameters"),
            );
            self.invalidate(start);
            return;
        }
        self.last = Some(if tok.continues_line() {
            Last::Continues
        } else {
            Last::Ends
        });
        self.queue.push_back((start, tok, end));
    }

    /// Emits one [`Tok::Invalid`] and skips the rest of the statement.
    fn invalidate(&mut self, at: usize) {
        if self.last.is_none() {
            self.queue.push_back((at, Tok::Item(self.section), at));
        }
        self.queue.push_back((at, Tok::Invalid, at));
        self.last = Some(Last::Invalid);
        self.skipping = true;
    }

    /// Ends the current statement (if one is open) with a zero-width newline token right after
    /// its last token.
    fn end_statement(&mut self) {
        if self.last.is_some() {
            let at = self.last_end;
            self.queue.push_back((at, Tok::Newline, at));
        }
        self.last = None;
        self.statement_tokens = 0;
        self.skipping = false;
        self.brackets.clear();
    }

    fn error_char(&mut self, span: Span) {
        let text = &self.source[span.start..span.end];
        // Merge a run of bad characters into one diagnostic.
        if let Some(d) = self.diagnostics.last_mut() {
            if d.code == "bad-character" && d.span.end == span.start {
                d.span.end = span.end;
                d.message = format!(
                    "unexpected characters `{}`",
                    &self.source[d.span.start..d.span.end]
                );
                return;
            }
        }
        let shown: String = text.chars().flat_map(char::escape_default).collect();
        self.diagnostics.push(
            Diagnostic::error(
                "bad-character",
                format!("unexpected character `{shown}`"),
                span,
                "not part of the language",
            )
            .with_help("names are letters, digits and `_`; operators are + - * / ^"),
        );
        if !self.skipping {
            self.invalidate(span.start);
        }
    }

    fn string(&mut self, span: Span, terminated: bool) -> Tok<'a> {
        let body_end = if terminated { span.end - 1 } else { span.end };
        let body = &self.source[span.start + 1..body_end];
        let mut value = String::with_capacity(body.len());
        let mut chars = body.char_indices();
        let mut control_reported = false;
        while let Some((i, c)) = chars.next() {
            if c.is_control() {
                // A control character (an escape sequence, a bell) would go raw to the terminal
                // wherever the title or label is printed.
                if !control_reported {
                    let at = span.start + 1 + i;
                    self.diagnostics.push(
                        Diagnostic::error(
                            "control-in-string",
                            format!("a control character (U+{:04X}) in a string", c as u32),
                            Span::new(at, at + c.len_utf8()),
                            "not printable",
                        )
                        .with_help("titles and labels hold printable text only"),
                    );
                    control_reported = true;
                }
                value.push(' ');
                continue;
            }
            if c != '\\' {
                value.push(c);
                continue;
            }
            match chars.next() {
                Some((_, '"')) => value.push('"'),
                Some((_, '\\')) => value.push('\\'),
                Some((j, other)) => {
                    let at = span.start + 1 + i;
                    self.diagnostics.push(
                        Diagnostic::error(
                            "bad-escape",
                            format!("unknown escape `\\{other}` in a string"),
                            Span::new(at, span.start + 1 + j + other.len_utf8()),
                            "not an escape",
                        )
                        .with_help("strings know only `\\\"` (a quote) and `\\\\` (a backslash)"),
                    );
                    value.push(other);
                }
                None => value.push('\\'),
            }
        }
        if !terminated {
            self.diagnostics.push(
                Diagnostic::error(
                    "unterminated-string",
                    "unterminated string",
                    span,
                    "this string has no closing `\"` on its line",
                )
                .with_help("strings end on the line they start; close it with `\"`"),
            );
        }
        Tok::Str(value)
    }

    /// Reads raw tokens until at least one output token is queued or the input ends.
    fn advance(&mut self) {
        while self.queue.is_empty() {
            let Some((raw, range)) = self.raw.next() else {
                if !self.finished {
                    self.finished = true;
                    if let Some(open) = self.brackets.last().copied() {
                        if !self.skipping {
                            self.unclosed(open);
                        }
                    }
                    self.end_statement();
                }
                return;
            };
            let span = Span::new(range.start, range.end);
            let raw = match raw {
                Ok(r) => r,
                Err(()) => {
                    self.at_line_start = false;
                    self.error_char(span);
                    continue;
                }
            };
            if raw == Raw::Newline {
                self.at_line_start = true;
                let continues = !self.brackets.is_empty()
                    || if self.skipping {
                        self.skip_continues
                    } else {
                        self.last == Some(Last::Continues)
                    };
                if !continues {
                    self.end_statement();
                }
                continue;
            }
            let line_start = std::mem::replace(&mut self.at_line_start, false);
            let text = &self.source[span.start..span.end];
            // A section keyword at the start of a line while a bracket is open: the bracket was
            // almost surely left unclosed. Say so and start the section.
            if raw == Raw::Word
                && line_start
                && !self.brackets.is_empty()
                && section_of(text).is_some()
            {
                {
                    let open = self.brackets[self.brackets.len() - 1];
                    if !self.skipping {
                        self.unclosed(open);
                    }
                    self.end_statement();
                }
            }
            // A section keyword at the start of a line always ends the statement before it, even
            // when that statement's last line ends with an operator (`a = 0.5 *`): the parser
            // then reports the dangling operator where it is, and the section is read as one.
            if raw == Raw::Word
                && line_start
                && self.brackets.is_empty()
                && section_of(text).is_some()
                && (self.last == Some(Last::Continues) || (self.skipping && self.skip_continues))
            {
                if !self.skipping {
                    let at = self.last_end;
                    let start = self.source[..at]
                        .char_indices()
                        .next_back()
                        .map_or(at, |(i, _)| i);
                    let op = Span::new(start, at);
                    self.diagnostics.push(
                        Diagnostic::error(
                            "dangling-operator",
                            format!(
                                "the statement ends with `{}`, but the next line starts the section `{text}`",
                                &self.source[op.start..op.end]
                            ),
                            op,
                            "nothing follows this operator",
                        )
                        .with_help("finish the expression, or remove the operator; a section keyword always starts a new statement"),
                    );
                    self.queue.push_back((op.start, Tok::Invalid, op.start));
                    self.last = Some(Last::Invalid);
                }
                self.end_statement();
            }
            if self.skipping {
                match raw {
                    Raw::LParen | Raw::LBracket => self.brackets.push(span),
                    Raw::RParen | Raw::RBracket => {
                        self.brackets.pop();
                    }
                    _ => {}
                }
                // Keep the line rule working while skipping: remember whether the line continues.
                self.skip_continues = matches!(
                    raw,
                    Raw::Plus
                        | Raw::Minus
                        | Raw::Star
                        | Raw::Slash
                        | Raw::Caret
                        | Raw::Equals
                        | Raw::Comma
                        | Raw::Colon
                );
                continue;
            }
            let tok = match raw {
                Raw::Newline => continue,
                Raw::Word
                    if text.len() > MAX_NAME_CHARS && text.chars().count() > MAX_NAME_CHARS =>
                {
                    self.diagnostics.push(
                        Diagnostic::error(
                            "name-too-long",
                            format!(
                                "a name of {} characters, above the limit of {MAX_NAME_CHARS}",
                                text.chars().count()
                            ),
                            Span::new(
                                span.start,
                                span.start
                                    + text.chars().take(16).map(char::len_utf8).sum::<usize>(),
                            ),
                            "this name",
                        )
                        .with_help(
                            "use a shorter name; a label in quotes may carry the description",
                        ),
                    );
                    self.invalidate(span.start);
                    continue;
                }
                Raw::Word => keyword(text).unwrap_or(Tok::Ident(text)),
                Raw::Number => Tok::Number(text),
                Raw::Str => self.string(span, true),
                Raw::UnterminatedStr => self.string(span, false),
                Raw::LParen | Raw::LBracket => {
                    if self.brackets.len() >= MAX_BRACKET_DEPTH {
                        self.diagnostics.push(
                            Diagnostic::error(
                                "brackets-too-deep",
                                format!("brackets nested more than {MAX_BRACKET_DEPTH} deep"),
                                span,
                                "too deep here",
                            )
                            .with_help("split the expression with helper parameters or variables"),
                        );
                        self.brackets.push(span);
                        self.invalidate(span.start);
                        continue;
                    }
                    self.brackets.push(span);
                    if raw == Raw::LParen {
                        Tok::LParen
                    } else {
                        Tok::LBracket
                    }
                }
                Raw::RParen | Raw::RBracket => {
                    self.brackets.pop();
                    if raw == Raw::RParen {
                        Tok::RParen
                    } else {
                        Tok::RBracket
                    }
                }
                Raw::Comma => Tok::Comma,
                Raw::Colon => Tok::Colon,
                Raw::Equals => Tok::Equals,
                Raw::Plus => Tok::Plus,
                Raw::Minus => Tok::Minus,
                Raw::Star => Tok::Star,
                Raw::Slash => Tok::Slash,
                Raw::Caret => Tok::Caret,
                Raw::Tilde => Tok::Tilde,
            };
            self.push(span.start, tok, span.end);
        }
    }

    fn unclosed(&mut self, open: Span) {
        let what = &self.source[open.start..open.end];
        let closer = if what == "(" { ")" } else { "]" };
        self.diagnostics.push(
            Diagnostic::error(
                "unclosed-bracket",
                format!("this `{what}` is never closed"),
                open,
                "opened here",
            )
            .with_help(format!(
                "add the missing `{closer}`; inside brackets a statement continues onto the next line"
            )),
        );
        if self.last.is_some() && self.last != Some(Last::Invalid) {
            self.queue.push_back((open.start, Tok::Invalid, open.start));
            self.last = Some(Last::Invalid);
        }
    }
}

impl<'a> Iterator for Lexer<'a> {
    type Item = Spanned<'a>;

    fn next(&mut self) -> Option<Spanned<'a>> {
        if self.queue.is_empty() {
            self.advance();
        }
        self.queue.pop_front().map(Ok)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn toks(s: &str) -> Vec<Tok<'_>> {
        Lexer::new(s).map(|t| t.unwrap().1).collect()
    }

    #[test]
    fn newlines_only_where_statements_end() {
        let t = toks("equations\n  x = a +\n  b\n\n  # c\n  y = (1,\n 2)\n");
        let nl = t.iter().filter(|t| **t == Tok::Newline).count();
        assert_eq!(nl, 3, "{t:?}");
        assert_eq!(t[2], Tok::Item(Section::Equations));
    }

    #[test]
    fn strings_unescape_and_unterminated_is_reported() {
        let mut lx = Lexer::new("title \"a \\\"b\\\\\"\n");
        let t: Vec<_> = lx.by_ref().map(|t| t.unwrap().1).collect();
        assert_eq!(t[1], Tok::Str("a \"b\\".to_string()));
        assert!(lx.diagnostics.is_empty());
        let mut lx = Lexer::new("title \"abc\n");
        let _ = lx.by_ref().count();
        assert_eq!(lx.diagnostics[0].code, "unterminated-string");
        assert_eq!(lx.diagnostics[0].span, Span::new(6, 10));
    }

    #[test]
    fn bad_characters_merge_and_invalidate_once() {
        let mut lx = Lexer::new("equations\n x = a $$ b\n");
        let t: Vec<_> = lx.by_ref().map(|t| t.unwrap().1).collect();
        assert_eq!(lx.diagnostics.len(), 1);
        assert_eq!(lx.diagnostics[0].span, Span::new(17, 19));
        assert_eq!(t.iter().filter(|t| **t == Tok::Invalid).count(), 1);
    }

    #[test]
    fn deep_brackets_are_refused_without_recursion() {
        let src = format!("equations\n x = {}1\n", "(".repeat(200_000));
        let mut lx = Lexer::new(&src);
        let n = lx.by_ref().count();
        assert!(n < 1000);
        assert_eq!(lx.diagnostics[0].code, "brackets-too-deep");
    }

    #[test]
    fn numbers_in_all_spellings() {
        let t = toks("12 0.5 .5 1e-3 2.5E+4");
        let nums: Vec<_> = t
            .iter()
            .filter_map(|t| match t {
                Tok::Number(s) => Some(*s),
                _ => None,
            })
            .collect();
        assert_eq!(nums, ["12", "0.5", ".5", "1e-3", "2.5E+4"]);
    }
}
