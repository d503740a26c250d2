// The report page's style: warm paper ground, deep-teal accents, ochre for the best values.
#include "report/html_style.h"

namespace credence::report {

std::string_view page_style() {
  return R"css(
:root {
  --paper: #f3efe5; --card: #fffdf8; --ink: #2b2a28; --muted: #6b665c; --rule: #e2d9c6;
  --teal: #1d6a75; --ochre: #d3962a; --best: #f5e6c4; --note: #eaf0f4; --note-edge: #5d7fb3;
  --warn: #f8e9e1; --warn-edge: #b4533a;
}
* { box-sizing: border-box; }
html { background: var(--paper); }
body {
  margin: 0 auto; max-width: 1160px; padding: 28px 28px 40px; color: var(--ink);
  font: 15px/1.5 system-ui, -apple-system, 'Segoe UI', 'Noto Sans', 'DejaVu Sans', sans-serif;
  font-variant-numeric: tabular-nums;
}
header.masthead { border-left: 6px solid var(--teal); padding: 2px 0 2px 16px; margin-bottom: 18px; }
header.masthead h1 { font-size: 25px; font-weight: 650; margin: 0; letter-spacing: 0.01em;
  overflow-wrap: anywhere; }
header.masthead p { margin: 4px 0 0; color: var(--muted); overflow-wrap: anywhere; }
nav.contents { margin: 0 0 18px; padding: 10px 16px; border: 1px solid var(--rule);
  border-radius: 6px; background: var(--card); }
nav.contents h2 { font-size: 12px; text-transform: uppercase; letter-spacing: 0.08em;
  color: var(--muted); margin: 0 0 4px; border: 0; padding: 0; }
nav.contents ol { margin: 0; padding: 0; list-style: none; columns: 3 220px; column-gap: 24px; }
nav.contents li { margin: 2px 0; break-inside: avoid; }
nav.contents a, section h2 .number { color: var(--teal); }
nav.contents a { text-decoration: none; }
nav.contents a:hover { text-decoration: underline; }
nav.contents .number { display: inline-block; min-width: 1.8em; color: var(--muted); }
section { background: var(--card); border: 1px solid var(--rule); border-radius: 6px;
  padding: 14px 22px 18px; margin: 0 0 18px; }
section h2 { font-size: 19px; font-weight: 620; margin: 0 0 12px; padding-bottom: 6px;
  border-bottom: 1px solid var(--rule); }
section h2 .number { margin-right: 0.5em; font-weight: 500; }
p { margin: 0 0 10px; max-width: 80ch; }
dl.pairs { display: grid; grid-template-columns: minmax(9em, max-content) 1fr; gap: 3px 20px;
  margin: 0 0 12px; }
dl.pairs dt { color: var(--muted); }
dl.pairs dd { margin: 0; overflow-wrap: anywhere; }
.table-wrap { overflow-x: auto; margin: 0 0 6px; }
table.data { border-collapse: collapse; font-size: 14px; }
table.data th { text-align: left; font-weight: 600; padding: 4px 12px 5px;
  border-bottom: 2px solid var(--teal); white-space: nowrap; }
table.data td { padding: 3px 12px; border-bottom: 1px solid var(--rule); }
table.data tbody tr:nth-child(even) td { background: #faf6ec; }
table.data .num { text-align: right; white-space: nowrap; }
table.data td.best { font-weight: 700; background: var(--best); box-shadow: inset 0 -2px 0 var(--ochre); }
p.caption, figcaption { font-size: 13px; color: var(--muted); margin: 4px 0 14px; }
div.figures { display: flex; flex-wrap: wrap; gap: 14px 22px; margin: 4px 0 8px; }
figure { margin: 0; flex: 0 1 auto; max-width: 100%; }
figure svg { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); border-radius: 4px; }
figcaption { max-width: 560px; }
div.note, div.warning { border-left: 4px solid var(--note-edge); background: var(--note);
  padding: 8px 14px; margin: 0 0 12px; border-radius: 0 4px 4px 0; max-width: 90ch; }
div.warning { border-left-color: var(--warn-edge); background: var(--warn); }
div.note strong, div.warning strong { margin-right: 0.4em; }
section.cautions { border-color: var(--ochre); border-left: 6px solid var(--ochre); }
footer { color: var(--muted); font-size: 12px; margin-top: 10px; }
/* Narrow windows and print: tighter cells and wrapping headers, so a wide table fits
   instead of scrolling sideways (tests/report/page_audit_test.cc checks at 800 px). */
@media (max-width: 1000px) {
  body { padding: 16px 10px 28px; }
  section { padding: 12px 12px 14px; }
  nav.contents ol { columns: 2; }
  table.data { font-size: 12px; }
  table.data th, table.data td { padding: 3px 5px; }
  table.data th { white-space: normal; }
  table.data .num { white-space: normal; }
}
@media print {
  html, section, nav.contents { background: #fff; }
  table.data { font-size: 11px; }
  section { break-inside: avoid-page; }
}
)css";
}

}  // namespace credence::report
