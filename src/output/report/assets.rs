//! The page's inline style sheet and its few lines of script (sorting tables).

/// The page's style: system fonts, a readable measure, tabular figures, print-friendly.
pub(super) const CSS: &str = r#":root { --ink: #1a1a1a; --muted: #595959; --rule: #d9d9d9; --soft: #f5f6f7; --accent: #0072B2; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; color: var(--ink); background: #fff; font: 15px/1.5 -apple-system, "Segoe UI", Helvetica, Arial, "Liberation Sans", sans-serif; }
.page { max-width: 1000px; margin: 0 auto; padding: 28px 24px 48px; }
h1 { font-size: 26px; line-height: 1.25; margin: 0 0 4px; }
h2 { font-size: 20px; margin: 40px 0 10px; padding-bottom: 6px; border-bottom: 1px solid var(--rule); }
h2 .num { color: var(--muted); font-weight: 400; margin-right: 4px; }
h3 { font-size: 15.5px; margin: 22px 0 8px; }
p { margin: 8px 0; max-width: 75ch; }
code { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace; font-size: 0.92em; }
.meta { color: var(--muted); margin: 0 0 14px; max-width: none; }
.status { display: flex; gap: 12px; align-items: flex-start; border-left: 5px solid var(--status); background: var(--soft); padding: 10px 14px; margin: 12px 0; }
.status p { margin: 0; }
.badge { flex: none; background: var(--status); color: #fff; font-weight: 700; font-size: 12.5px; padding: 2px 8px; border-radius: 3px; margin-top: 2px; }
.caveat { border: 1px solid #e4d3a6; background: #fff9e8; padding: 10px 14px; margin: 12px 0; max-width: none; }
nav ol { columns: 2; margin: 12px 0 0; padding-left: 22px; color: var(--muted); }
nav a { color: var(--accent); text-decoration: none; }
nav a:hover { text-decoration: underline; }
.settings { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 10px 0; }
.settings dt { color: var(--muted); }
.settings dd { margin: 0; }
.scroll { overflow-x: auto; margin: 8px 0 14px; }
table { border-collapse: collapse; font-size: 14px; font-variant-numeric: tabular-nums; }
table.data th, table.data td, table.matrix th, table.matrix td { padding: 4px 12px; text-align: left; vertical-align: top; }
table.data thead th, table.matrix thead th { border-bottom: 2px solid #9a9a9a; font-weight: 600; white-space: nowrap; }
table.data tbody tr:nth-child(even) { background: #fafafa; }
table.data tbody td { border-bottom: 1px solid #eeeeee; }
table.data .n, table.matrix .n { text-align: right; white-space: nowrap; }
table.matrix td { text-align: right; border: 1px solid #eeeeee; min-width: 4.5em; }
table.matrix tbody th { text-align: left; font-weight: 400; border-right: 1px solid #cfcfcf; }
table.matrix td.diag { color: var(--muted); background: var(--soft); }
table.sortable thead th { cursor: pointer; user-select: none; }
table.sortable thead th:hover { color: var(--accent); }
table.sortable thead th[aria-sort="ascending"]::after { content: " \25B2"; font-size: 10px; }
table.sortable thead th[aria-sort="descending"]::after { content: " \25BC"; font-size: 10px; }
td.share { min-width: 6.5em; background-image: linear-gradient(90deg, #cfe3f1 var(--w), transparent var(--w)); background-repeat: no-repeat; background-size: 100% 70%; background-position: 0 50%; }
.tag { display: inline-block; font-size: 11.5px; color: var(--muted); border: 1px solid var(--rule); border-radius: 3px; padding: 0 5px; }
.tag.set { color: #8a4b00; border-color: #e6b566; background: #fff4e0; }
table.eq { border-collapse: collapse; margin: 6px 0 12px; }
table.eq td { padding: 3px 6px; vertical-align: top; }
table.eq td.lhs { white-space: nowrap; text-align: right; }
table.eq td.op { color: var(--muted); }
ol.equations { padding-left: 28px; }
ol.equations li { margin: 3px 0; }
.split { display: flex; flex-wrap: wrap; gap: 16px 32px; align-items: flex-start; }
.split > div { flex: 1 1 360px; }
.diagnosis { border-left: 4px solid var(--status); padding-left: 10px; }
.warnings { color: #7a4a00; }
.absent { color: var(--muted); font-style: italic; }
.na { color: #9a9a9a; }
.note { color: var(--muted); }
figure { margin: 12px 0 18px; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { color: var(--muted); font-size: 13px; margin-top: 4px; max-width: 360px; }
.roots-figure { flex: 0 1 360px; margin: 0; }
details { margin: 8px 0 14px; }
summary { cursor: pointer; color: var(--accent); }
footer { margin-top: 48px; padding-top: 12px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 13px; }
@media print {
  .page { max-width: none; padding: 0; }
  nav, summary { display: none; }
  details > * { display: block; }
  h2 { break-after: avoid; }
  figure, table { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"#;

/// Sorting by clicking a header: numbers by `data-sort` value, text alphabetically, blanks last;
/// a second click reverses. Without script the tables simply stay in model order.
pub(super) const SCRIPT: &str = r#"(function () {
  'use strict';
  var tables = document.querySelectorAll('table.sortable');
  Array.prototype.forEach.call(tables, function (table) {
    var heads = table.tHead ? table.tHead.rows[0].cells : [];
    Array.prototype.forEach.call(heads, function (th, col) {
      th.tabIndex = 0;
      th.title = 'Sort by this column';
      var sort = function () {
        var asc = th.getAttribute('aria-sort') !== 'ascending';
        Array.prototype.forEach.call(heads, function (h) { h.removeAttribute('aria-sort'); });
        th.setAttribute('aria-sort', asc ? 'ascending' : 'descending');
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        var numeric = th.classList.contains('n');
        rows.sort(function (a, b) {
          var x = a.cells[col] ? a.cells[col].getAttribute('data-sort') : null;
          var y = b.cells[col] ? b.cells[col].getAttribute('data-sort') : null;
          if (x === null || y === null) { return (x === null) - (y === null); }
          var d = numeric ? parseFloat(x) - parseFloat(y) : x.localeCompare(y);
          return asc ? d : -d;
        });
        rows.forEach(function (r) { body.appendChild(r); });
      };
      th.addEventListener('click', sort);
      th.addEventListener('keydown', function (e) { if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); sort(); } });
    });
  });
})();
"#;
