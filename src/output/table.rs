//! Aligned plain-text tables: a header row, then rows; text columns left-aligned, numeric columns
//! right-aligned so decimal points line up when the cells share a format.

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Right,
}

/// A table under construction.
#[derive(Debug, Clone, Default)]
pub struct Table {
    header: Vec<String>,
    align: Vec<Align>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with the given column headers and alignments (`align` shorter than `header`
    /// pads with `Left`).
    pub fn new(header: &[&str], align: &[Align]) -> Self {
        let mut a = align.to_vec();
        a.resize(header.len(), Align::Left);
        Table {
            header: header.iter().map(|s| s.to_string()).collect(),
            align: a,
            rows: Vec::new(),
        }
    }

    /// Appends a row; missing cells are blank, extra cells are dropped.
    pub fn row(&mut self, cells: Vec<String>) {
        let mut cells = cells;
        cells.resize(self.header.len(), String::new());
        self.rows.push(cells);
    }

    /// Renders the table with two spaces between columns and a rule under the header, each line
    /// ending in a newline and without trailing spaces.
    pub fn render(&self) -> String {
        let ncol = self.header.len();
        let mut width = vec![0usize; ncol];
        for (j, h) in self.header.iter().enumerate() {
            width[j] = h.chars().count();
        }
        for r in &self.rows {
            for (j, c) in r.iter().enumerate() {
                width[j] = width[j].max(c.chars().count());
            }
        }
        let mut out = String::new();
        let line = |cells: &[String], out: &mut String| {
            let mut s = String::new();
            for (j, c) in cells.iter().enumerate() {
                if j > 0 {
                    s.push_str("  ");
                }
                let pad = width[j] - c.chars().count();
                match self.align[j] {
                    Align::Left => {
                        s.push_str(c);
                        s.push_str(&" ".repeat(pad));
                    }
                    Align::Right => {
                        s.push_str(&" ".repeat(pad));
                        s.push_str(c);
                    }
                }
            }
            out.push_str(s.trim_end());
            out.push('\n');
        };
        line(&self.header, &mut out);
        let rule: Vec<String> = width.iter().map(|w| "-".repeat(*w)).collect();
        line(&rule, &mut out);
        for r in &self.rows {
            line(r, &mut out);
        }
        out
    }
}

/// Formats a number for tables: fixed with `decimals` places when its magnitude is moderate,
/// scientific otherwise; `-0` printed as `0`.
pub fn number(x: f64, decimals: usize) -> String {
    if x.is_nan() {
        return "NaN".to_string();
    }
    if x.is_infinite() {
        return if x > 0.0 {
            "inf".to_string()
        } else {
            "-inf".to_string()
        };
    }
    let a = x.abs();
    let s = if a != 0.0 && !(1e-4..1e7).contains(&a) {
        format!("{x:.prec$e}", prec = decimals.min(6))
    } else {
        format!("{x:.decimals$}")
    };
    // Never print a negative zero such as "-0.0000".
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_align_and_lines_have_no_trailing_space() {
        let mut t = Table::new(&["name", "value"], &[Align::Left, Align::Right]);
        t.row(vec!["gap".into(), number(-0.5, 3)]);
        t.row(vec!["inflation".into(), number(12.25, 3)]);
        let s = t.render();
        let lines: Vec<&str> = s.lines().collect();
        assert_eq!(lines[0], "name        value");
        assert_eq!(lines[1], "---------  ------");
        assert_eq!(lines[2], "gap        -0.500");
        assert_eq!(lines[3], "inflation  12.250");
        assert!(s.lines().all(|l| !l.ends_with(' ')));
    }

    #[test]
    fn numbers_format_without_negative_zero() {
        assert_eq!(number(-0.00001, 3), "-1.000e-5");
        assert_eq!(number(-1e-9 * 0.0, 3), "0.000");
        assert_eq!(number(-0.00004, 2), "-4.00e-5");
        assert_eq!(number(-0.0004, 2), "0.00");
        assert_eq!(number(1e8, 2), "1.00e8");
    }
}
