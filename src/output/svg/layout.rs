//! Where things go: the number of columns of a panel grid, the default chart width, legend rows
//! and wrapped notes. Pure arithmetic on pixel sizes.

use super::text::text_width;

/// Narrowest panel worth drawing: room for tick labels and a readable line (common practice for
/// small multiples; below this the period labels crowd).
pub const MIN_PANEL_WIDTH: f64 = 190.0;

/// Columns for `n` panels: a near-square arrangement that keeps panels wider than tall, at most
/// `max_columns`. 1, 2, 3 panels sit in one row; 4 as 2 x 2; 5-6 as 3 x 2; 7-8 as 4 x 2; 9 as
/// 3 x 3; more in rows of 4.
pub fn grid_columns(n: usize, max_columns: usize) -> usize {
    let c = match n {
        0 | 1 => 1,
        2 => 2,
        3 => 3,
        4 => 2,
        5 | 6 => 3,
        7 | 8 => 4,
        9 => 3,
        _ => 4,
    };
    c.clamp(1, max_columns.max(1))
}

/// Default width of a grid with `columns` columns: a single panel at a comfortable reading size,
/// wider grids up to a page-wide 960 pixels.
pub fn default_width(columns: usize) -> f64 {
    match columns {
        0 | 1 => 640.0,
        2 => 820.0,
        _ => 960.0,
    }
}

/// One legend entry placed at `(x, row)`.
#[derive(Debug, Clone, PartialEq)]
pub struct LegendSlot {
    pub x: f64,
    pub row: usize,
}

/// Places legend entries of estimated widths `widths` (swatch included) left to right, wrapping
/// into a new row when the next would pass `max_width`; `gap` pixels between entries.
pub fn legend_rows(widths: &[f64], max_width: f64, gap: f64) -> Vec<LegendSlot> {
    let mut out = Vec::with_capacity(widths.len());
    let (mut x, mut row) = (0.0, 0usize);
    for &w in widths {
        if x > 0.0 && x + w > max_width {
            x = 0.0;
            row += 1;
        }
        out.push(LegendSlot { x, row });
        x += w + gap;
    }
    out
}

/// Splits `s` into lines of at most `max_width` pixels at `size` (at spaces; a word longer than
/// a line stays whole on its own line).
pub fn wrap(s: &str, size: f64, max_width: f64) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in s.split_whitespace() {
        let candidate = if line.is_empty() {
            word.to_string()
        } else {
            format!("{line} {word}")
        };
        if !line.is_empty() && text_width(&candidate, size, false) > max_width {
            lines.push(std::mem::take(&mut line));
            line = word.to_string();
        } else {
            line = candidate;
        }
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_are_near_square() {
        assert_eq!(grid_columns(1, 5), 1);
        assert_eq!(grid_columns(4, 5), 2);
        assert_eq!(grid_columns(6, 5), 3);
        assert_eq!(grid_columns(9, 5), 3);
        assert_eq!(grid_columns(30, 5), 4);
        assert_eq!(grid_columns(30, 2), 2);
        assert_eq!(grid_columns(0, 0), 1);
    }

    #[test]
    fn legend_wraps_and_text_wraps() {
        let slots = legend_rows(&[100.0, 100.0, 100.0], 250.0, 10.0);
        assert_eq!(slots[0], LegendSlot { x: 0.0, row: 0 });
        assert_eq!(slots[1], LegendSlot { x: 110.0, row: 0 });
        assert_eq!(slots[2], LegendSlot { x: 0.0, row: 1 });
        let lines = wrap("one two three four five six seven", 12.0, 60.0);
        assert!(lines.len() > 2);
        assert_eq!(lines.join(" "), "one two three four five six seven");
        assert!(wrap("", 12.0, 60.0).is_empty());
    }
}
