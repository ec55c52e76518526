//! Byte spans into the model source, and their line/column for people.
//!
//! Contract: a [`Span`] is the half-open byte range `start..end` of the source text it came from;
//! `start <= end <= source.len()` and both fall on UTF-8 character boundaries.

/// A half-open byte range `start..end` in the source text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, PartialOrd, Ord)]
pub struct Span {
    pub start: usize,
    pub end: usize,
}

impl Span {
    pub fn new(start: usize, end: usize) -> Span {
        Span { start, end }
    }

    /// The smallest span covering both.
    pub fn join(self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end.max(other.end))
    }

    pub fn len(self) -> usize {
        self.end.saturating_sub(self.start)
    }

    pub fn is_empty(self) -> bool {
        self.end <= self.start
    }

    /// A span miette can draw a label under: a zero-width span is widened to the character at
    /// (or, at the end of input, just before) its position, because miette draws no label for a
    /// zero-width span at the end of the input. Returns the span unchanged when it is not empty.
    pub fn visible_in(self, source: &str) -> Span {
        if !self.is_empty() || source.is_empty() {
            return self;
        }
        let at = self.start.min(source.len());
        if let Some(c) = source[at..].chars().next() {
            if c != '\n' {
                return Span::new(at, at + c.len_utf8());
            }
        }
        // At a line end or the end of input: point at the last character before it.
        match source[..at].char_indices().next_back() {
            Some((i, c)) => Span::new(i, i + c.len_utf8()),
            None => self,
        }
    }
}

#[cfg(feature = "cli")]
impl From<Span> for miette::SourceSpan {
    fn from(s: Span) -> miette::SourceSpan {
        miette::SourceSpan::new(s.start.into(), s.len())
    }
}

/// One-based line and column (counted in characters) of byte `offset` in `source`, as people
/// and miette's report headers count them.
pub fn line_col(source: &str, offset: usize) -> (usize, usize) {
    let offset = offset.min(source.len());
    let before = &source.as_bytes()[..offset];
    let line = 1 + before.iter().filter(|&&b| b == b'\n').count();
    let line_start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |i| i + 1);
    let col = 1 + source
        .get(line_start..offset)
        .map_or(offset - line_start, |s| s.chars().count());
    (line, col)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_and_column_are_one_based() {
        let s = "ab\ncd\n\u{e9}x";
        assert_eq!(line_col(s, 0), (1, 1));
        assert_eq!(line_col(s, 4), (2, 2));
        assert_eq!(line_col(s, 8), (3, 2)); // after a two-byte character: one column
    }

    #[test]
    fn empty_span_at_end_points_at_last_character() {
        let s = "x = (";
        assert_eq!(Span::new(5, 5).visible_in(s), Span::new(4, 5));
        assert_eq!(Span::new(2, 2).visible_in(s), Span::new(2, 3));
    }
}
