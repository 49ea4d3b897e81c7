/**
 * report.html: written by every run, self-contained, every section present, charts drawn from the
 * run's own scores, hostile names from the data escaped, and `foldstack report` rebuilding it
 * byte for byte from the run folder alone.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { readFileSync, writeFileSync, existsSync, mkdirSync, cpSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { buildReport, REPORT_FILE } from '../pipeline/report/build.js';
import { reportCommand } from '../pipeline/commands/report.js';
import { escapeHtml } from '../pipeline/report/format.js';
import type { Metrics } from '../pipeline/runner.js';

const HOSTILE_COLUMN = '<script>alert(1)</script>';
const HOSTILE_PROTECTED = '<img src=x onerror=alert(2)>';
const HOSTILE_LEVEL = '<b>band&"x"</b>';

const SECTIONS = ['Summary', 'Data and exclusions', 'Ranking and calibration curves', 'Learners and stack', 'Bins, weight of evidence and information value', 'Selection-rate disparity (screening only)', 'Stage timings and cache'];

const config = (csv: string) => `name: rep
seed: 5
data:
  file: ${csv}
  target: missed_payment_90d
  positive: "yes"
  id: application_id
  columns: {applied_on: date, registered_on: date, owner_age_band: protected, "${HOSTILE_PROTECTED}": protected}
exclude:
  - {reason: discontinued channel, column: channel, in: [phone]}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.3}}
features:
  rate-encode: {smoothing: 10}
  tree-bins: {max_depth: 2, min_leaf: 0.05}
learners:
  lr: {kind: logistic, l2: 1}
  lr_strong: {kind: logistic, l2: 50}
stack: {nonnegative: true}
evaluate: {budget: 0.1}
`;

/** Adds a numeric column with a hostile name (a noisy copy of utilisation) and a protected column with a hostile level. */
function addHostileColumns(csv: string): void {
  const lines = readFileSync(csv, 'utf8').trimEnd().split('\n');
  const header = lines[0].split(',');
  const u = header.indexOf('utilisation');
  const out = [`${lines[0]},${HOSTILE_COLUMN},${HOSTILE_PROTECTED}`];
  for (let i = 1; i < lines.length; i++) {
    const cells = lines[i].split(',');
    const v = Number(cells[u]);
    out.push(`${lines[i]},${Number.isFinite(v) ? (v * 1.5 + (i % 7) / 100).toFixed(4) : ''},${i % 3 === 0 ? `"${HOSTILE_LEVEL.replace(/"/g, '""')}"` : 'plain'}`);
  }
  writeFileSync(csv, out.join('\n') + '\n');
}

/** The SVG charts of the page, in order. */
function charts(html: string): string[] {
  return html.match(/<svg[\s\S]*?<\/svg>/g) ?? [];
}

/** Polyline points in data coordinates, using the chart's plot rectangle and axis range [0, 1]. */
function polylines(svg: string): [number, number][][] {
  const rect = /<rect x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)" class="plot-bg"\/>/.exec(svg);
  if (!rect) throw new Error('no plot rectangle');
  const [x0, y0, w, h] = rect.slice(1).map(Number);
  return [...svg.matchAll(/<polyline points="([^"]*)"/g)].map((m) =>
    m[1].split(' ').map((p) => {
      const [px, py] = p.split(',').map(Number);
      return [(px - x0) / w, (y0 + h - py) / h] as [number, number];
    }),
  );
}

function trapezoid(points: readonly [number, number][]): number {
  let a = 0;
  for (let i = 1; i < points.length; i++) a += ((points[i][0] - points[i - 1][0]) * (points[i][1] + points[i - 1][1])) / 2;
  return a;
}

describe('report.html', () => {
  let runDir: string;
  let html: string;
  let metrics: Metrics;

  beforeAll(async () => {
    const dir = tempDir('report');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 2500, seed: 21, out: csv });
    addHostileColumns(csv);
    const outcome = await runYaml(dir, config(csv), { workers: 2 });
    runDir = outcome.runDir;
    metrics = outcome.metrics;
    html = readFileSync(join(runDir, REPORT_FILE), 'utf8');
  });

  it('is written by the run and has every section', () => {
    expect(existsSync(join(runDir, REPORT_FILE))).toBe(true);
    for (const [i, title] of SECTIONS.entries()) expect(html).toContain(`<h2>${i + 1}. ${escapeHtml(title)}</h2>`);
  });

  it('is self-contained: no scripts, no network references, a restrictive CSP', () => {
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/https?:/i);
    expect(html).not.toMatch(/<link|<img|@import|url\(/i);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it('states the cautions', () => {
    for (const phrase of ['Decision support only', 'fair-lending, anti-discrimination, privacy and model-risk rules', 'Protected characteristics never become features', 'Defer to local law and to licensed professional practice', 'not a legal or compliance finding', 'screening figure, not a legal finding', '29 CFR 1607.4(D)']) {
      expect(html).toContain(phrase);
    }
  });

  it('draws three SVG charts with non-empty curves; the drawn ROC of the stack has the holdout AUC from metrics.json', () => {
    const svgs = charts(html);
    expect(svgs.length).toBe(3);
    for (const svg of svgs) {
      const lines = polylines(svg);
      expect(lines.length).toBeGreaterThan(0);
      for (const l of lines) expect(l.length).toBeGreaterThanOrEqual(5); // calibration has 10 quantile bins; curves have hundreds of points
    }
    // ROC: lr, lr_strong, stack (drawn last). Area under the drawn (thinned, 0.01 px rounded) curve
    // equals the Mann-Whitney AUC up to the thinning error — checks orientation and data source.
    const roc = polylines(svgs[0]);
    expect(roc.length).toBe(3);
    const stackAuc = metrics.holdout.stack.auc as number;
    expect(Math.abs(trapezoid(roc[2]) - stackAuc)).toBeLessThan(0.005);
    expect(roc[2][0]).toEqual([0, 0]);
    expect(roc[2][roc[2].length - 1]).toEqual([1, 1]);
    // Gains: the stack's curve passes through (budget, capture) as reported in metrics.json.
    const gains = polylines(svgs[1])[2];
    const b = 0.1;
    const k = gains.findIndex((p) => p[0] >= b);
    const [xa, ya] = gains[k - 1];
    const [xb, yb] = gains[k];
    const atBudget = ya + ((yb - ya) * (b - xa)) / (xb - xa);
    expect(Math.abs(atBudget - (metrics.holdout.stack.capture as number))).toBeLessThan(0.01);
  });

  it('lists exclusions, learners, stack weights, bins and timings from the run files', () => {
    expect(html).toContain('discontinued channel');
    expect(html).toContain('in [phone]');
    expect(html).not.toContain('Exclusion rules: none');
    for (const name of ['lr', 'lr_strong']) expect(html).toContain(`</span>${name}</td>`);
    expect(html).toContain(metrics.holdout.stack.auc?.toFixed(3));
    expect(html).toContain(`>${metrics.stack.weights.lr.toFixed(4)}<`);
    expect(html).toContain('WoE = ln(share of non-events in the bin / share of events in the bin)');
    expect(html).toContain('utilisation');
    expect(html).toMatch(/<td>learner:lr<\/td><td class="n">4<\/td>/); // 3 outer folds + final
  });

  it('escapes column names and levels from the data', () => {
    expect(html).not.toContain(HOSTILE_COLUMN);
    expect(html).not.toContain(HOSTILE_PROTECTED);
    expect(html).not.toContain('<b>band');
    expect(html).toContain(escapeHtml(HOSTILE_COLUMN)); // in the bin tables
    expect(html).toContain(escapeHtml(HOSTILE_PROTECTED)); // disparity table caption
    expect(html).toContain(escapeHtml(HOSTILE_LEVEL)); // disparity group
    expect(escapeHtml(`<a href="x">'&`)).toBe('&lt;a href=&quot;x&quot;&gt;&#39;&amp;');
  });

  it('shows the disparity table with the four-fifths flag where the ratio is below 0.8', () => {
    const d = metrics.disparity;
    expect(d).toBeDefined();
    const ages = d!.columns.find((c) => c.column === 'owner_age_band');
    expect(ages).toBeDefined();
    for (const g of ages!.groups) expect(html).toContain(`<td>${escapeHtml(g.group)}</td><td class="n">${g.n.toLocaleString('en-US')}</td>`);
    const flags = (h: string) => (h.match(/class="flag">below 0\.8</g) ?? []).length;
    const flagged = [...d!.columns, ...(metrics.disparity_oof?.columns ?? [])].flatMap((c) => c.groups).filter((g) => g.flag).length;
    expect(flags(html)).toBe(flagged);
  });

  it('flags exactly the groups metrics.json flags (one planted flag in a copied run folder)', async () => {
    const copy = join(tempDir('report-flag'), 'run');
    cpSync(runDir, copy, { recursive: true });
    const m = JSON.parse(readFileSync(join(copy, 'metrics.json'), 'utf8')) as { disparity: { columns: { groups: { flag: boolean; ratio: number }[] }[] }; disparity_oof?: unknown };
    delete m.disparity_oof;
    for (const c of m.disparity.columns) for (const g of c.groups) g.flag = false;
    m.disparity.columns[0].groups[0].flag = true;
    m.disparity.columns[0].groups[0].ratio = 0.75;
    writeFileSync(join(copy, 'metrics.json'), JSON.stringify(m));
    const page = await buildReport(copy);
    expect((page.match(/class="flag">below 0\.8</g) ?? []).length).toBe(1);
    expect(page).toContain('<td class="n">0.750</td><td class="flag">below 0.8</td>');
  });

  it('foldstack report RUN rebuilds it byte for byte, from a copied folder and to --out', async () => {
    expect(await buildReport(runDir)).toBe(html);
    const copy = join(tempDir('report-copy'), 'moved-run');
    mkdirSync(copy);
    cpSync(runDir, copy, { recursive: true });
    const out = join(copy, 'again.html');
    const code = await reportCommand.run({ values: { out }, positionals: [copy] });
    expect(code).toBe(0);
    expect(readFileSync(out)).toEqual(readFileSync(join(runDir, REPORT_FILE)));
    expect(existsSync(`${out}.tmp-${process.pid}`)).toBe(false);
  });

  it('fails with a typed error on a folder that is not a run', async () => {
    const empty = tempDir('report-empty');
    await expect(buildReport(empty)).rejects.toMatchObject({ name: 'ReportInputError', file: 'manifest.json', runDir: empty });
  });
});
