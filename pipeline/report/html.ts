/**
 * The page shell: one self-contained HTML document with its stylesheet inline. A
 * Content-Security-Policy that allows nothing but inline styles means the page cannot load or
 * run anything even if a hostile string slipped past escaping.
 */
import { escapeHtml } from './format.js';

export interface Section {
  readonly id: string;
  readonly title: string;
  readonly body: string;
}

export function page(title: string, header: string, sections: readonly Section[], footer: string): string {
  const toc = sections.map((s, i) => `<li><a href="#${s.id}">${i + 1}. ${escapeHtml(s.title)}</a></li>`).join('');
  const body = sections.map((s, i) => `<section id="${s.id}"><h2>${i + 1}. ${escapeHtml(s.title)}</h2>\n${s.body}\n</section>`).join('\n');
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<style>${STYLE}</style>
</head>
<body>
<main>
${header}
<nav class="toc" aria-label="Contents"><ol>${toc}</ol></nav>
${body}
${footer}
</main>
</body>
</html>
`;
}

export interface Cell {
  readonly html: string;
  /** Right-aligned, tabular figures. */
  readonly num?: boolean;
  readonly cls?: string;
}

/** Plain text cell (escaped). */
export function text(s: string, cls?: string): Cell {
  return { html: escapeHtml(s), cls };
}

/** A figure already formatted by format.ts (escaped anyway: formats are plain text too). */
export function num(s: string, cls?: string): Cell {
  return { html: escapeHtml(s), num: true, cls };
}

export interface TableOptions {
  readonly caption?: string;
  /** A class per body row (e.g. to set the stack's rows apart); '' for none. */
  readonly rowClass?: readonly string[];
}

export function table(headers: readonly (string | Cell)[], rows: readonly (readonly Cell[])[], opts: TableOptions = {}): string {
  const th = headers.map((h) => (typeof h === 'string' ? `<th>${escapeHtml(h)}</th>` : `<th${h.num ? ' class="n"' : ''}>${h.html}</th>`)).join('');
  const tr = rows
    .map((r, i) => {
      const cls = opts.rowClass?.[i] ?? '';
      return `<tr${cls === '' ? '' : ` class="${cls}"`}>${r.map((c) => `<td${attrs(c)}>${c.html}</td>`).join('')}</tr>`;
    })
    .join('\n');
  const caption = opts.caption;
  return `<table>${caption ? `<caption>${escapeHtml(caption)}</caption>` : ''}<thead><tr>${th}</tr></thead><tbody>\n${tr}\n</tbody></table>`;
}

function attrs(c: Cell): string {
  const cls = [c.num ? 'n' : '', c.cls ?? ''].filter((x) => x !== '').join(' ');
  return cls === '' ? '' : ` class="${cls}"`;
}

const STYLE = `
:root { --ink: #1d2327; --muted: #5d6670; --rule: #d5d9de; --soft: #f3f5f7; --accent: #2c5d8a; --warn: #8a4b00; --warn-bg: #fff6e8; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { margin: 0; color: var(--ink); background: #fff; font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; line-height: 1.45; }
main { max-width: 1180px; margin: 0 auto; padding: 28px 32px 64px; }
header.run { border-bottom: 3px solid var(--ink); padding-bottom: 10px; margin-bottom: 16px; }
header.run .kicker { text-transform: uppercase; letter-spacing: .08em; font-size: .75rem; color: var(--muted); margin: 0; }
header.run h1 { font-size: 1.9rem; margin: 2px 0 4px; font-weight: 650; }
header.run p.meta { margin: 0; color: var(--muted); font-size: .9rem; }
code, .mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace; font-size: .85em; }
nav.toc ol { list-style: none; display: flex; flex-wrap: wrap; gap: 4px 18px; padding: 0; margin: 0 0 18px; font-size: .9rem; }
nav.toc a { color: var(--accent); text-decoration: none; }
section { margin-top: 30px; }
h2 { font-size: 1.3rem; border-bottom: 1px solid var(--rule); padding-bottom: 4px; margin: 0 0 12px; font-weight: 620; }
h3 { font-size: 1.02rem; margin: 18px 0 6px; font-weight: 620; }
p { margin: 6px 0 10px; max-width: 75ch; }
.note { color: var(--muted); font-size: .88rem; }
.cautions { border-left: 4px solid var(--warn); background: var(--warn-bg); padding: 10px 16px; margin: 14px 0; }
.cautions h3 { margin: 0 0 4px; color: var(--warn); }
.cautions ul { margin: 4px 0; padding-left: 20px; }
.cautions li { margin: 3px 0; }
dl.figures { display: grid; grid-template-columns: repeat(auto-fill, minmax(210px, 1fr)); gap: 10px; margin: 12px 0; }
dl.figures div { background: var(--soft); padding: 8px 12px; border-radius: 4px; }
dl.figures dt { font-size: .78rem; color: var(--muted); text-transform: uppercase; letter-spacing: .04em; }
dl.figures dd { margin: 2px 0 0; font-size: 1.35rem; font-variant-numeric: tabular-nums; font-weight: 600; }
dl.figures dd small { display: block; font-size: .78rem; font-weight: 400; color: var(--muted); }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 3px 16px; margin: 8px 0; font-size: .92rem; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; }
table { border-collapse: collapse; margin: 6px 0 14px; font-size: .86rem; }
caption { text-align: left; font-weight: 600; padding-bottom: 4px; }
th { text-align: left; font-weight: 600; border-bottom: 1.5px solid var(--ink); padding: 4px 10px 4px 0; vertical-align: bottom; }
th.n { text-align: right; }
td { border-bottom: 1px solid var(--rule); padding: 3px 10px 3px 0; vertical-align: top; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.ci { color: var(--muted); }
tr.stack td { font-weight: 600; background: var(--soft); }
td.flag { color: #a01c1c; font-weight: 600; }
.wide { overflow-x: auto; }
.figures-row { display: grid; grid-template-columns: repeat(auto-fit, minmax(330px, 1fr)); gap: 18px; }
figure { margin: 0; }
figure h3 { margin-top: 4px; }
figcaption { font-size: .84rem; color: var(--muted); }
svg.chart { width: 100%; height: auto; display: block; }
svg.chart .plot-bg { fill: #fbfcfd; }
svg.chart .frame { fill: none; stroke: #9aa3ab; stroke-width: 1; }
svg.chart .grid { stroke: #e6e9ec; stroke-width: 1; }
svg.chart .tick { font-size: 11px; fill: var(--muted); }
svg.chart .axis-label { font-size: 12px; fill: var(--ink); }
svg.chart .guide { stroke: #7d868f; stroke-width: 1; stroke-dasharray: 4 3; }
svg.chart .guide-label { font-size: 11px; fill: #5d6670; }
svg.chart .mark { fill: #fff; stroke: #b3261e; stroke-width: 2; }
svg.chart .mark-label { font-size: 11px; fill: #b3261e; font-weight: 600; }
ul.legend { list-style: none; display: flex; flex-wrap: wrap; gap: 2px 14px; padding: 0; margin: 4px 0; font-size: .84rem; }
td.name { white-space: nowrap; }
td.name .swatch, ul.legend .swatch { display: inline-block; width: 18px; height: 4px; vertical-align: middle; margin-right: 5px; border-radius: 2px; }
.bins { display: grid; grid-template-columns: repeat(auto-fill, minmax(500px, 1fr)); gap: 4px 28px; }
.bins > * { min-width: 0; }
.bins table { width: 100%; table-layout: fixed; }
.bins th:nth-child(1) { width: 11%; } .bins th:nth-child(2) { width: 27%; } .bins th:nth-child(3), .bins th:nth-child(4) { width: 10%; }
.bins th:nth-child(5) { width: 12%; } .bins th:nth-child(6) { width: 9%; } .bins th:nth-child(7) { width: 12%; } .bins th:nth-child(8) { width: 9%; }
.bins td.interval { overflow: hidden; text-overflow: ellipsis; }
td.interval { white-space: nowrap; }
.bar { display: inline-block; height: 9px; vertical-align: middle; }
.bar.pos { background: #4f7fa8; }
.bar.neg { background: #c0772f; }
td.bar-cell { padding-right: 6px; }
td.bar-cell .axis { display: flex; width: 64px; margin: 0 auto; }
td.bar-cell .half { width: 32px; display: flex; align-items: center; }
td.bar-cell .half.left { justify-content: flex-end; border-right: 1px solid #9aa3ab; }
footer { margin-top: 40px; border-top: 1px solid var(--rule); padding-top: 8px; font-size: .8rem; color: var(--muted); }
@media print {
  html { font-size: 10pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  a { color: inherit; text-decoration: none; }
  section { break-before: auto; }
  h2, h3 { break-after: avoid; }
  figure, table, .cautions, dl.figures div { break-inside: avoid; }
  thead { display: table-header-group; }
  .figures-row { grid-template-columns: repeat(3, 1fr); gap: 8px; }
  .bins { grid-template-columns: 1fr 1fr; }
  .wide { overflow: visible; }
  dl.figures div, tr.stack td, svg.chart .plot-bg { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
@page { margin: 14mm; }
`;
