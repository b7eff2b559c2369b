"""The style sheet of the HTML report, inline in every report: readable on a laptop screen,
printable on A4 or Letter (sections kept whole where they fit, no shadows, links as text)."""

STYLE = """
:root { --ink: #1d2430; --muted: #5b6473; --line: #d5dae1; --limit: #d62828; --limit-bg: #fdecec;
        --warn: #a86f00; --head: #eef2f7; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue",
       Arial, sans-serif; background: #fff; }
main { max-width: 1240px; margin: 0 auto; padding: 12px 20px 40px; }
header h1 { font-size: 21px; margin: 4px 0 2px; }
.meta { color: var(--muted); margin: 0 0 8px; font-size: 12.5px; }
h2 { font-size: 17px; margin: 22px 0 8px; border-bottom: 1px solid var(--line); padding-bottom: 3px; }
h3 { font-size: 14.5px; margin: 12px 0 4px; }
.caution { background: #fff8e1; border-left: 4px solid #e0a800; padding: 6px 12px; font-size: 13px; }
.limits { border: 2px solid var(--limit); background: var(--limit-bg); padding: 2px 14px 8px; margin: 10px 0; }
.limits h2 { color: var(--limit); border: none; margin-top: 8px; }
.limits.none { border-color: #3a7d44; background: #eef7ef; }
.limits.none h2 { color: #2d6a36; }
.limits.warned { border-color: var(--warn); background: #fdf5e6; }
.limits.warned h2, .limits.warned a { color: var(--warn); }
.limits ul { margin: 4px 0; padding-left: 20px; }
.limits a { color: var(--limit); font-weight: 600; }
code { font-size: 12px; color: var(--muted); }
.cards { display: grid; grid-template-columns: repeat(auto-fill, minmax(220px, 1fr)); gap: 8px; }
.card { border: 1px solid var(--line); border-radius: 6px; padding: 6px 10px; }
.card span { display: block; color: var(--muted); font-size: 12px; }
.card b { font-size: 17px; }
figure { margin: 6px 0; }
svg.network, svg.figure { width: 100%; height: auto; display: block; }
.grid { display: grid; grid-template-columns: repeat(auto-fill, minmax(280px, 1fr)); gap: 8px; }
.note { color: var(--muted); font-size: 12.5px; margin: 2px 0 6px; }
.table { overflow-x: auto; margin: 10px 0 18px; }
table { border-collapse: collapse; font-size: 12.5px; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-weight: 600; padding: 4px 0; }
th, td { border-bottom: 1px solid var(--line); padding: 3px 8px; white-space: nowrap; }
td { text-align: right; }
thead th { background: var(--head); text-align: right; }
thead tr.units th { font-weight: normal; color: var(--muted); }
tbody th { text-align: left; }
tr.limit td, tr.limit th { background: var(--limit-bg); color: var(--limit); font-weight: 600; }
tr:target td, tr:target th { outline: 2px solid var(--limit); }
footer { color: var(--muted); font-size: 12px; margin-top: 20px; }
@media print {
  body { font-size: 11px; }
  main { max-width: none; padding: 0; }
  section, figure, .table { break-inside: avoid; }
  .table { overflow: visible; }
  a { color: inherit; text-decoration: none; }
}
"""
