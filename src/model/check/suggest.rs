//! Did-you-mean: the declared name nearest to an unknown one, by Levenshtein distance
//!
//! ```text
//!     d(a, b) = min edits (insert, delete, substitute) turning a into b;  suggest b when
//!     d(a, b) <= max(1, |a| / 3)
//! ```
//!
//! with a budget on the comparisons ([`super::SUGGESTION_BUDGET`]) so that a file with many
//! unknown names stays fast.

use super::*;

/// The closest of `candidates` to `name` when it is close enough to be a likely typo (optimal
/// string alignment distance at most 1 for short names, 2 from 5 characters, 3 from 9).
pub fn did_you_mean<'c>(name: &str, candidates: impl Iterator<Item = &'c str>) -> Option<&'c str> {
    let n = name.chars().count();
    let limit = match n {
        0..=4 => 1,
        5..=8 => 2,
        _ => 3,
    };
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        if c == name || c.chars().count().abs_diff(n) > limit {
            continue;
        }
        let d = edit_distance(name, c);
        // At least one character must survive: `z` is no typo of `k`.
        if d <= limit && d < n && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

/// Optimal string alignment distance (Levenshtein with adjacent transpositions), by characters.
pub(super) fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let w = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * w];
    for i in 0..=a.len() {
        d[i * w] = i;
    }
    for (j, cell) in d.iter_mut().enumerate().take(w) {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[(i - 1) * w + j] + 1)
                .min(d[i * w + j - 1] + 1)
                .min(d[(i - 1) * w + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[(i - 2) * w + j - 2] + 1);
            }
            d[i * w + j] = v;
        }
    }
    d[a.len() * w + b.len()]
}

impl<'a> Checker<'a> {
    pub(super) fn suggest(
        &mut self,
        name: &str,
        filter: impl Fn(Symbol) -> bool,
    ) -> Option<String> {
        self.unknown_reported += 1;
        if self.unknown_reported > language::diagnostics::MAX_DIAGNOSTICS
            || self.suggestion_work > SUGGESTION_BUDGET
        {
            return None;
        }
        self.suggestion_work += self.names.len();
        // Candidates in declaration order, so that ties go to the name declared first (a hash
        // map's order would make the suggestion change from run to run).
        let mut candidates: Vec<(&str, Span)> = self
            .names
            .iter()
            .filter(|(_, (s, _))| filter(*s))
            .map(|(n, (_, span))| (*n, *span))
            .collect();
        candidates.sort_by_key(|(_, span)| span.start);
        let found = did_you_mean(name, candidates.iter().map(|(n, _)| *n));
        found.map(|s| format!("did you mean `{s}`?"))
    }

    pub(super) fn unknown_name(&mut self, name: &str, span: Span, place: Place) {
        let filter = |s: Symbol| match place {
            Place::Equation => true,
            Place::Steady | Place::Observable | Place::Loss => {
                !matches!(s, Symbol::Exogenous(_) | Symbol::Observable(_))
            }
            Place::Prior => false,
            _ => matches!(s, Symbol::Parameter(_)),
        };
        let mut d = Diagnostic::error(
            "unknown-name",
            format!("unknown name `{name}`"),
            span,
            "not declared",
        );
        d = match self
            .suggest(name, filter)
            .or_else(|| self.suggest(name, |_| true))
        {
            Some(h) => d.with_help(h),
            None => d.with_help(
                "declare it under endogenous, exogenous or parameters (names are case-sensitive)",
            ),
        };
        self.error(d);
    }

    /// Reports `name` as an unknown `what` with diagnostic `code` (each caller its own): a
    /// did-you-mean among the symbols `filter` accepts as help, else `fallback_help` if given.
    pub(super) fn report_unknown(
        &mut self,
        code: &'static str,
        what: &str,
        name: &ast::Name<'a>,
        filter: impl Fn(Symbol) -> bool,
        fallback_help: Option<&str>,
    ) {
        let mut d = Diagnostic::error(
            code,
            format!("unknown {what} `{}`", name.text),
            name.span,
            "not declared",
        );
        let suggestion = self.suggest(name.text, filter);
        if let Some(h) = suggestion.or(fallback_help.map(str::to_string)) {
            d = d.with_help(h);
        }
        self.error(d);
    }
}
