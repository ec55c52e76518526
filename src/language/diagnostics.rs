//! Diagnostics: what the front end tells a person about a model file.
//!
//! Contract: a [`Diagnostic`] is one problem with one primary source [`Span`] (the place to fix),
//! a short label drawn under it, optional secondary labels (for example "first declared here"),
//! and optional help text (for example "did you mean `infl`?"). It implements
//! [`miette::Diagnostic`]; [`render`] draws a list of them against the source text.

use std::fmt;

use super::span::Span;

/// How serious a diagnostic is. Only errors stop a model from being checked.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    Error,
    Warning,
}

/// A secondary label: a span with a note.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Label {
    pub span: Span,
    pub text: String,
}

/// One problem in a model file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    pub severity: Severity,
    /// A stable short name of the kind of problem (for example `unknown-name`), for tests and tools.
    pub code: &'static str,
    /// The sentence a person reads first.
    pub message: String,
    /// Where to look (primary label).
    pub span: Span,
    /// Text under the primary span.
    pub label: String,
    /// Other places that explain the problem.
    pub labels: Vec<Label>,
    pub help: Option<String>,
}

impl Diagnostic {
    /// An error of kind `code` at `span`, labelled `label`.
    pub fn error(
        code: &'static str,
        message: impl Into<String>,
        span: Span,
        label: impl Into<String>,
    ) -> Diagnostic {
        Diagnostic {
            severity: Severity::Error,
            code,
            message: message.into(),
            span,
            label: label.into(),
            labels: Vec::new(),
            help: None,
        }
    }

    /// Adds a secondary label; returns the diagnostic.
    pub fn with_label(mut self, span: Span, text: impl Into<String>) -> Diagnostic {
        self.labels.push(Label {
            span,
            text: text.into(),
        });
        self
    }

    /// Sets the help text; returns the diagnostic.
    pub fn with_help(mut self, help: impl Into<String>) -> Diagnostic {
        self.help = Some(help.into());
        self
    }

    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }

    /// Makes every span drawable in `source` (see [`Span::visible_in`]); returns the diagnostic.
    pub fn visible_in(mut self, source: &str) -> Diagnostic {
        self.span = self.span.visible_in(source);
        for l in &mut self.labels {
            l.span = l.span.visible_in(source);
        }
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Diagnostic {}

#[cfg(feature = "cli")]
impl miette::Diagnostic for Diagnostic {
    fn severity(&self) -> Option<miette::Severity> {
        Some(match self.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
        })
    }

    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help
            .as_ref()
            .map(|h| Box::new(h) as Box<dyn fmt::Display + 'a>)
    }

    fn labels(&self) -> Option<Box<dyn Iterator<Item = miette::LabeledSpan> + '_>> {
        let primary = miette::LabeledSpan::new_primary_with_span(
            (!self.label.is_empty()).then(|| self.label.clone()),
            self.span,
        );
        let rest = self
            .labels
            .iter()
            .map(|l| miette::LabeledSpan::new_with_span(Some(l.text.clone()), l.span));
        Some(Box::new(std::iter::once(primary).chain(rest)))
    }
}

/// Most diagnostics reported for one file; beyond this a single note says how many were left out
/// (a cascade of hundreds of errors helps nobody, and the limit bounds the output for hostile input).
pub const MAX_DIAGNOSTICS: usize = 50;

/// Sorts diagnostics by position and truncates the list to [`MAX_DIAGNOSTICS`], adding a note that
/// says how many were dropped. Overwrites `diags`.
pub fn finish(diags: &mut Vec<Diagnostic>) {
    diags.sort_by_key(|d| (d.span.start, d.span.end));
    diags.dedup_by(|a, b| a.span == b.span && a.message == b.message);
    if diags.len() > MAX_DIAGNOSTICS {
        let dropped = diags.len() - MAX_DIAGNOSTICS;
        diags.truncate(MAX_DIAGNOSTICS);
        let span = diags.last().map_or(Span::default(), |d| d.span);
        diags.push(Diagnostic::error(
            "too-many-errors",
            format!("{dropped} more errors not shown (the first {MAX_DIAGNOSTICS} are above)"),
            span,
            "",
        ));
    }
}

/// Whether to colour reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Colour {
    Never,
    Always,
}

#[cfg(feature = "cli")]
/// Draws each diagnostic as a miette report against `source` (named `file_name` in the report
/// headers, which read `[file:line:column]`); returns the text, reports separated by a blank line.
pub fn render(diags: &[Diagnostic], file_name: &str, source: &str, colour: Colour) -> String {
    let theme = match colour {
        Colour::Always => miette::GraphicalTheme::unicode(),
        Colour::Never => miette::GraphicalTheme::unicode_nocolor(),
    };
    let handler = miette::GraphicalReportHandler::new_themed(theme)
        .with_width(100)
        .with_wrap_lines(false)
        .with_links(false);
    let named = std::sync::Arc::new(miette::NamedSource::new(file_name, source.to_string()));
    let mut out = String::new();
    for d in diags {
        let d = d.clone().visible_in(source);
        if !drawable(&d, source) {
            out.push_str(&render_plain(&d, file_name, source));
            out.push('\n');
            continue;
        }
        let report = miette::Report::new(d).with_source_code(named.clone());
        let mut one = String::new();
        if handler.render_report(&mut one, report.as_ref()).is_err() {
            one = format!("error: {report}\n");
        }
        out.push_str(&one);
        out.push('\n');
    }
    out
}

/// Widest source line (in display columns, a tab counted as [`TAB_COLUMNS`]) that a report draws
/// with the graphical renderer; a diagnostic on a wider line is printed in the plain form of
/// [`render_plain`]. The renderer cannot draw beyond display column 65,535 (it panics there), and
/// a line thousands of columns wide helps nobody anyway.
pub const MAX_DRAWN_LINE: usize = 500;
/// Display columns a tab may take, counted at its widest.
#[cfg(feature = "cli")]
const TAB_COLUMNS: usize = 8;
/// Characters of source shown on each side of the span in the plain form.
const PLAIN_CONTEXT: usize = 40;

/// Whether every line that `d` points into is narrow enough to draw and free of control
/// characters (the plain form replaces them).
#[cfg(feature = "cli")]
fn drawable(d: &Diagnostic, source: &str) -> bool {
    std::iter::once(d.span)
        .chain(d.labels.iter().map(|l| l.span))
        .all(|span| line_width(source, span) <= MAX_DRAWN_LINE)
}

/// Display width of the lines `span` touches: the widest of them, counting every character from
/// the start of its first line to the end of its last.
#[cfg(feature = "cli")]
fn line_width(source: &str, span: Span) -> usize {
    let start = span.start.min(source.len());
    let end = span.end.clamp(start, source.len());
    let bytes = source.as_bytes();
    let line_start = bytes[..start]
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |i| i + 1);
    let line_end = bytes[end..]
        .iter()
        .position(|&b| b == b'\n')
        .map_or(source.len(), |i| end + i);
    let mut widest = 0;
    let mut width = 0;
    for c in source.get(line_start..line_end).unwrap_or("").chars() {
        match c {
            '\n' => width = 0,
            '\t' => width += TAB_COLUMNS,
            // A control character would reach the terminal raw in the excerpt: not drawable.
            c if c.is_control() && c != '\r' => return usize::MAX,
            _ => width += 1,
        }
        widest = widest.max(width);
    }
    widest
}

/// The plain form of a report, which needs no terminal renderer (also for embedders): a header
/// with the position, a bounded excerpt of the line around the span (control characters shown
/// as spaces), the label and the help. Returns the text.
pub fn render_plain(d: &Diagnostic, file_name: &str, source: &str) -> String {
    let kind = match d.severity {
        Severity::Error => "error",
        Severity::Warning => "warning",
    };
    let (line, col) = super::span::line_col(source, d.span.start);
    // The same first line as the graphical form (`× message`), so tools read both alike.
    let mut out = format!(
        "  \u{d7} {}\n  at [{file_name}:{line}:{col}] ({kind}: {})\n",
        d.message, d.code
    );
    let start = d.span.start.min(source.len());
    let end = d.span.end.clamp(start, source.len());
    let before: String = source
        .get(..start)
        .unwrap_or("")
        .chars()
        .rev()
        .take_while(|&c| c != '\n')
        .take(PLAIN_CONTEXT)
        .collect::<Vec<_>>()
        .into_iter()
        .rev()
        .collect();
    let inside: String = source
        .get(start..end)
        .unwrap_or("")
        .chars()
        .take(PLAIN_CONTEXT)
        .collect();
    let after: String = source
        .get(end..)
        .unwrap_or("")
        .chars()
        .take_while(|&c| c != '\n')
        .take(PLAIN_CONTEXT)
        .collect();
    let clean = |s: &str| -> String {
        s.chars()
            .map(|c| if c.is_control() { ' ' } else { c })
            .collect()
    };
    out.push_str(&format!(
        "  | ...{}{}{}...\n",
        clean(&before),
        clean(&inside),
        clean(&after)
    ));
    // The excerpt line opens with `  | ...` (7 columns).
    let pad = 7 + before.chars().count();
    let marks = inside.chars().count().max(1);
    out.push_str(&format!(
        "{}{} {}\n",
        " ".repeat(pad),
        "^".repeat(marks),
        d.label
    ));
    for l in &d.labels {
        let (line, col) = super::span::line_col(source, l.span.start);
        out.push_str(&format!("  note at {line}:{col}: {}\n", l.text));
    }
    if let Some(h) = &d.help {
        out.push_str(&format!("  help: {h}\n"));
    }
    out
}
