//! The table widget of the report: typed, sortable HTML tables, share and matrix tables,
//! collapsible details, anchors.

#[allow(unused_imports)]
use super::*;

/// Shares (fractions) as a sortable table in percent, each cell with a bar of its size.
pub(super) fn shares_table(
    shares: &[Vec<f64>],
    rows: &[String],
    columns: &[String],
    id: &str,
) -> String {
    let mut head: Vec<(&str, Kind)> = vec![("variable", Kind::Text)];
    for c in columns {
        head.push((c.as_str(), Kind::Number));
    }
    let mut t = HtmlTable::new(&head);
    for (i, r) in rows.iter().enumerate() {
        let mut row = vec![Cell::code(r)];
        for j in 0..columns.len() {
            let v = shares.get(i).and_then(|s| s.get(j)).copied();
            row.push(match v {
                Some(x) if x.is_finite() => {
                    let pct = 100.0 * x;
                    Cell {
                        html: escape(&fixed(pct, 1)),
                        sort: Some(format!("{x}")),
                        numeric: true,
                        class: "share",
                        style: format!("--w:{:.1}%", pct.clamp(0.0, 100.0)),
                    }
                }
                _ => Cell::text(""),
            });
        }
        t.row(row);
    }
    t.render(id)
}

/// A labelled matrix; `tinted` colours cells from blue (-1) through white to orange (+1), for
/// correlations.
pub(super) fn matrix_table(
    a: &DMatrix<f64>,
    rows: &[String],
    columns: &[String],
    tinted: bool,
) -> String {
    let scale = a
        .iter()
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let mut out =
        String::from("<div class=\"scroll\"><table class=\"matrix\">\n<thead><tr><th></th>");
    for c in columns.iter().take(a.ncols()) {
        out.push_str(&format!(
            "<th scope=\"col\"><code>{}</code></th>",
            escape(c)
        ));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for (i, r) in rows.iter().enumerate().take(a.nrows()) {
        out.push_str(&format!(
            "<tr><th scope=\"row\"><code>{}</code></th>",
            escape(r)
        ));
        for j in 0..columns.len().min(a.ncols()) {
            let v = a[(i, j)];
            if !v.is_finite() {
                out.push_str("<td class=\"n\"></td>");
                continue;
            }
            if tinted && i == j {
                out.push_str(&format!(
                    "<td class=\"n diag\">{}</td>",
                    escape(&fixed(v, 2))
                ));
                continue;
            }
            let style = if tinted {
                let t = v.clamp(-1.0, 1.0);
                // Okabe-Ito blue (0,114,178) for -1 and orange (230,159,0) for +1, mixed with white.
                let (r0, g0, b0) = if t < 0.0 {
                    (0.0, 114.0, 178.0)
                } else {
                    (230.0, 159.0, 0.0)
                };
                let w = 0.55 * t.abs();
                let mix = |c: f64| (255.0 + (c - 255.0) * w).round() as u8;
                format!(
                    " style=\"background:#{:02x}{:02x}{:02x}\"",
                    mix(r0),
                    mix(g0),
                    mix(b0)
                )
            } else {
                String::new()
            };
            let text = if tinted {
                fixed(v, 2)
            } else if v.abs() <= NEGLIGIBLE_COEFFICIENT * scale {
                "0".to_string()
            } else {
                sig(v, 4)
            };
            out.push_str(&format!("<td class=\"n\"{style}>{}</td>", escape(&text)));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table></div>\n");
    out
}

pub(super) fn details(summary: &str, body: &str, open: bool) -> String {
    format!(
        "<details{}><summary>{}</summary>\n{}</details>\n",
        if open { " open" } else { "" },
        escape(summary),
        body
    )
}

/// A fragment safe for an id: letters, digits, `-` and `_`.
pub(super) fn slug(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect()
}

/// Column kinds: numbers are right-aligned and sort by value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Kind {
    Text,
    Number,
}

/// One table cell: its markup and the key it sorts by.
#[derive(Debug, Clone)]
pub(super) struct Cell {
    pub(super) html: String,
    /// Sort key (a number for numeric cells); `None` sorts last.
    pub(super) sort: Option<String>,
    pub(super) numeric: bool,
    /// Extra class and inline style of the `<td>` (e.g. the bar of a share).
    pub(super) class: &'static str,
    pub(super) style: String,
}

impl Cell {
    pub(super) fn text(s: &str) -> Cell {
        Cell {
            html: escape(s),
            sort: (!s.is_empty()).then(|| s.to_string()),
            numeric: false,
            class: "",
            style: String::new(),
        }
    }
    pub(super) fn code(s: &str) -> Cell {
        Cell {
            html: format!("<code>{}</code>", escape(s)),
            sort: Some(s.to_string()),
            numeric: false,
            class: "",
            style: String::new(),
        }
    }
    /// A number to four significant digits; NaN (undefined) as a muted dash.
    pub(super) fn num(x: f64) -> Cell {
        if x.is_nan() {
            return Cell {
                html: "<span class=\"na\" title=\"undefined\">\u{2014}</span>".to_string(),
                sort: None,
                numeric: true,
                class: "",
                style: String::new(),
            };
        }
        Cell {
            html: escape(&sig(x, 4)),
            sort: x.is_finite().then(|| format!("{x}")),
            numeric: true,
            class: "",
            style: String::new(),
        }
    }
    pub(super) fn int(n: i64) -> Cell {
        Cell {
            html: crate::output::svg::ticks::signed(&n.to_string()),
            sort: Some(n.to_string()),
            numeric: true,
            class: "",
            style: String::new(),
        }
    }
}

/// A table with typed columns; rendered sortable (a class the page's script picks up).
pub(super) struct HtmlTable {
    pub(super) head: Vec<(String, Kind)>,
    pub(super) rows: Vec<Vec<Cell>>,
}

impl HtmlTable {
    pub(super) fn new(head: &[(&str, Kind)]) -> HtmlTable {
        HtmlTable {
            head: head.iter().map(|(n, k)| (n.to_string(), *k)).collect(),
            rows: Vec::new(),
        }
    }
    pub(super) fn row(&mut self, cells: Vec<Cell>) {
        self.rows.push(cells);
    }
    pub(super) fn render(&self, id: &str) -> String {
        self.render_with(id, self.rows.len() > 1)
    }
    pub(super) fn render_plain(&self, id: &str) -> String {
        self.render_with(id, false)
    }
    pub(super) fn render_with(&self, id: &str, sortable: bool) -> String {
        let mut out = format!(
            "<div class=\"scroll\"><table id=\"t-{}\" class=\"data{}\">\n<thead><tr>",
            escape(&slug(id)),
            if sortable { " sortable" } else { "" }
        );
        for (name, kind) in &self.head {
            let class = if *kind == Kind::Number {
                " class=\"n\""
            } else {
                ""
            };
            out.push_str(&format!("<th scope=\"col\"{class}>{}</th>", escape(name)));
        }
        out.push_str("</tr></thead>\n<tbody>\n");
        for r in &self.rows {
            out.push_str("<tr>");
            for (j, c) in r.iter().enumerate() {
                let numeric =
                    c.numeric || self.head.get(j).is_some_and(|(_, k)| *k == Kind::Number);
                let key = match &c.sort {
                    Some(k) => format!(" data-sort=\"{}\"", escape(k)),
                    None => String::new(),
                };
                let classes: Vec<&str> = [if numeric { "n" } else { "" }, c.class]
                    .into_iter()
                    .filter(|c| !c.is_empty())
                    .collect();
                let class = if classes.is_empty() {
                    String::new()
                } else {
                    format!(" class=\"{}\"", classes.join(" "))
                };
                let style = if c.style.is_empty() {
                    String::new()
                } else {
                    format!(" style=\"{}\"", escape(&c.style))
                };
                out.push_str(&format!("<td{class}{style}{key}>{}</td>", c.html));
            }
            out.push_str("</tr>\n");
        }
        out.push_str("</tbody>\n</table></div>\n");
        out
    }
}
