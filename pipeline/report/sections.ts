/**
 * The report's sections, each a pure function of the run folder's files. Every string that comes
 * from data or config (column names, levels, learner names, file paths) passes through
 * escapeHtml; numbers pass through format.ts so the same figure always prints the same way.
 */
import type { MetricSet } from '../metrics/evaluate.js';
import type { DisparityTable } from '../disparity.js';
import { calibrationFigure, gainsFigure, modelColor, rocFigure, type Figure } from './charts.js';
import { count, escapeHtml, fixed, interval, NOT_AVAILABLE, percent, seconds, shortDigest } from './format.js';
import { num, table, text, type Cell, type Section } from './html.js';
import type { BinRow, RunFiles } from './read.js';

/** The budget the run evaluated at (config `evaluate.budget`). */
export function budgetOf(run: RunFiles): number {
  const stack = run.metrics.holdout.stack ?? run.metrics.oof.stack;
  return stack?.at?.[0]?.budget ?? NaN;
}

function stackOf(run: RunFiles): MetricSet {
  return run.metrics[run.sample.part].stack;
}

export function header(run: RunFiles): string {
  const m = run.manifest;
  return `<header class="run"><p class="kicker">foldstack run report</p><h1>${escapeHtml(m.name)}</h1><p class="meta">Run started ${escapeHtml(m.created)} · code version ${escapeHtml(m.code_version)} · seed ${escapeHtml(String(m.seed))}</p></header>`;
}

export function summarySection(run: RunFiles): Section {
  const m = run.manifest;
  const s = stackOf(run);
  const b = budgetOf(run);
  const part = run.sample.part === 'holdout' ? 'holdout' : 'out-of-fold (this run kept no holdout)';
  const facts: [string, string][] = [
    ['Run', escapeHtml(m.name)],
    ['Started (UTC)', escapeHtml(m.created)],
    ['Config', `<code>${escapeHtml(m.config_file)}</code>, digest <code>${escapeHtml(shortDigest(m.config_digest))}</code>`],
    ['Data', `<code>${escapeHtml(m.data.file)}</code>, digest <code>${escapeHtml(shortDigest(m.data.digest))}</code>`],
    ['Rows / events', `${count(m.data.rows)} rows, ${count(m.data.events)} events (${percent(m.data.rows > 0 ? m.data.events / m.data.rows : null, 2)})`],
    ['Split', `${count(m.split.dev_rows)} development rows in ${count(m.split.folds)} folds, ${count(m.split.holdout_rows)} holdout rows`],
    ['Review budget', `top ${percent(b)} of rows by score`],
  ];
  const figure = (label: string, value: string, note: string) => `<div><dt>${escapeHtml(label)}</dt><dd>${escapeHtml(value)}<small>${escapeHtml(note)}</small></dd></div>`;
  const figures = `<dl class="figures">
${figure(`Stack AUC (${run.sample.part})`, fixed(s.auc, 3), `95% CI ${interval(s.auc_ci, 3)} (DeLong)`)}
${figure(`Capture at ${percent(b)}`, percent(s.capture), `95% CI ${interval(pctCi(s.capture_ci), 1)} (bootstrap)`)}
${figure(`Partial AUC, FPR ≤ ${fixed(b, 2)}`, fixed(s.pauc, 3), 'McClish-standardised; 0.5 = random')}
${figure(`Lift at ${percent(b)}`, fixed(s.lift, 2), `precision ${percent(s.precision)} vs base ${percent(s.n > 0 ? s.events / s.n : null)}`)}
</dl>`;
  const body = `<dl class="facts">${facts.map(([k, v]) => `<dt>${escapeHtml(k)}</dt><dd>${v}</dd>`).join('')}</dl>
<p>Headline figures are for the stacked blend on the ${part} rows.</p>
${figures}
${CAUTIONS}`;
  return { id: 'summary', title: 'Summary', body };
}

function pctCi(ci: readonly [number, number] | null | undefined): [number, number] | null {
  return ci ? [100 * ci[0], 100 * ci[1]] : null;
}

const CAUTIONS = `<div class="cautions" role="note"><h3>Read before use</h3><ul>
<li><strong>Decision support only.</strong> These scores rank cases for human review; they decide nothing on their own.</li>
<li>Credit and fraud decisions are governed by fair-lending, anti-discrimination, privacy and model-risk rules. Whoever uses these scores is responsible for meeting them.</li>
<li>Protected characteristics never become features: foldstack keeps columns declared <code>protected</code> only to compute the disparity table.</li>
<li>Defer to local law and to licensed professional practice wherever they differ from anything shown here.</li>
<li>The figures in this report are statistical estimates from one data set; they are not a legal or compliance finding.</li>
</ul></div>`;

export function dataSection(run: RunFiles): Section {
  const m = run.manifest;
  const row = (label: string, rows: number, events: number | null) => [
    text(label),
    num(count(rows)),
    num(count(events)),
    num(percent(events !== null && rows > 0 ? events / rows : null, 2)),
  ];
  const oof = run.metrics.oof.stack;
  const hold = run.metrics.holdout.stack;
  const counts = table(
    ['Sample', { html: 'Rows', num: true }, { html: 'Events', num: true }, { html: 'Event rate', num: true }],
    [
      row('Rows used (after exclusions)', m.data.rows, m.data.events),
      row('Development (out-of-fold)', oof?.n ?? m.split.dev_rows, oof?.events ?? null),
      row('Holdout', hold?.n ?? m.split.holdout_rows, hold?.events ?? null),
    ],
  );
  // Runs made before exclusions were recorded have no list: nothing to show, same as none.
  const rules = run.manifest.exclusions ?? [];
  const excl =
    rules.length === 0
      ? '<p>Exclusion rules: none.</p>'
      : `<h3>Exclusion rules</h3>${table(
          ['Reason', 'Column', 'Condition', { html: 'Rows excluded', num: true }, { html: 'Events', num: true }, { html: 'Event rate', num: true }],
          rules.map((r) => [text(r.reason), text(r.column), text(r.condition), num(count(r.rows)), num(count(r.events)), num(percent(r.event_rate, 2))]),
        )}<p class="note">${escapeHtml(count(m.data.rows_in_file))} rows in the file; each excluded row is counted under the first rule that matched it. The other figures in this report cover the ${escapeHtml(count(m.data.rows))} rows left.</p>`;
  return { id: 'data', title: 'Data and exclusions', body: `${counts}\n${excl}` };
}

export function chartsSection(run: RunFiles): Section {
  const stack = stackOf(run);
  const b = budgetOf(run);
  const holdBins = run.sample.part === 'holdout' ? (run.metrics.holdout.stack?.calibration.bins.quantile ?? []) : [];
  const oofBins = run.metrics.oof.stack?.calibration.bins.quantile ?? [];
  const figs = [rocFigure(run.sample, stack, b), gainsFigure(run.sample, stack, b), calibrationFigure(holdBins, oofBins, run.sample.part)];
  return { id: 'curves', title: 'Ranking and calibration curves', body: `<div class="figures-row">${figs.map(figureHtml).join('\n')}</div>` };
}

function figureHtml(f: Figure): string {
  const legend = f.legend.map((l) => `<li><span class="swatch" style="background:${l.color}"></span>${escapeHtml(l.name)}</li>`).join('');
  return `<figure><h3>${escapeHtml(f.title)}</h3>${f.svg}<ul class="legend">${legend}</ul><figcaption>${escapeHtml(f.caption)}</figcaption></figure>`;
}

export function modelsSection(run: RunFiles): Section {
  const b = budgetOf(run);
  const models = run.sample.models;
  const head: (string | Cell)[] = ['Model', ...[
    'Rows', 'AUC', '95% CI', 'Gini', `pAUC ≤ ${fixed(b, 2)}`, `Capture @${percent(b)}`, '95% CI', 'Precision', 'Lift', 'KS', 'Log loss', 'Brier', 'ECE',
  ].map((h) => ({ html: escapeHtml(h), num: true }))];
  const metricTable = (part: 'oof' | 'holdout', caption: string) => {
    const names = models.filter((name) => run.metrics[part][name] !== undefined);
    const rows = names.map((name): Cell[] => {
      const s = run.metrics[part][name];
      return [
        { html: `<span class="swatch" style="background:${modelColor(models, name)}"></span>${escapeHtml(name)}`, cls: 'name' },
        num(count(s.n)),
        num(fixed(s.auc, 3)),
        num(interval(s.auc_ci, 3), 'ci'),
        num(fixed(s.gini, 3)),
        num(fixed(s.pauc, 3)),
        num(percent(s.capture)),
        num(interval(pctCi(s.capture_ci), 1), 'ci'),
        num(percent(s.precision)),
        num(fixed(s.lift, 2)),
        num(fixed(s.ks, 3)),
        num(fixed(s.logloss, 4)),
        num(fixed(s.brier, 4)),
        num(fixed(s.ece, 4)),
      ];
    });
    return `<div class="wide">${table(head, rows, { caption, rowClass: names.map((n) => (n === 'stack' ? 'stack' : '')) })}</div>`;
  };
  const w = run.metrics.stack;
  const weights = table(
    ['Learner', { html: 'Weight', num: true }],
    [...Object.entries(w.weights).map(([k, v]) => [text(k), num(fixed(v, 4))]), [text('(intercept)'), num(fixed(w.intercept, 4))]],
  );
  const budgets = extraBudgets(run);
  return {
    id: 'models',
    title: 'Learners and stack',
    body: `${metricTable('oof', 'Out-of-fold predictions (development rows)')}
${metricTable('holdout', 'Holdout rows')}
<p class="note">Precision and lift are at the same budget as capture. AUC intervals are DeLong 95% intervals; capture intervals are stratified bootstrap 95% intervals. Partial AUC is McClish-standardised over FPR from 0 to the budget. ECE is the count-weighted expected calibration error over ten equal-width bins. Capture, precision and lift count rows tied at the cut fractionally.</p>
<h3>Stack weights</h3>
<p>Logistic blend on the logits of the learners' out-of-fold predictions${w.nonnegative ? ', weights constrained to be non-negative' : ''}.</p>
${weights}${budgets}`,
  };
}

/** The `at` table, when the config asked for more than one budget. */
function extraBudgets(run: RunFiles): string {
  const stack = run.metrics[run.sample.part].stack;
  if (!stack || stack.at.length < 2) return '';
  const rows = stack.at.map((p) => [num(percent(p.budget)), num(percent(p.capture)), num(percent(p.precision)), num(fixed(p.lift, 2)), num(fixed(p.pauc, 3)), num(fixed(p.fpr_at_budget, 3))]);
  return `<h3>Stack at other budgets (${escapeHtml(run.sample.part)})</h3>${table(['Budget', 'Capture', 'Precision', 'Lift', 'pAUC', 'FPR'].map((h) => ({ html: h, num: true })), rows)}`;
}

export function binsSection(run: RunFiles): Section {
  if (run.bins === null) return { id: 'bins', title: 'Bins, weight of evidence and information value', body: '<p>tree-bins did not run in this pipeline, so there are no bin tables.</p>' };
  const byColumn = new Map<string, BinRow[]>();
  for (const r of run.bins) {
    const list = byColumn.get(r.column) ?? [];
    list.push(r);
    byColumn.set(r.column, list);
  }
  const iv = new Map<string, number>();
  for (const [col, rows] of byColumn) {
    let sum = 0;
    for (const r of rows) sum += r.iv;
    iv.set(col, sum);
  }
  // Highest IV first; NaN (a bin with no events or no non-events) last; ties by name for stable output.
  const order = [...byColumn.keys()].sort((a, b) => rank(iv.get(b)) - rank(iv.get(a)) || (a < b ? -1 : a > b ? 1 : 0));
  const ivTable = table(['Column', { html: 'Bins', num: true }, { html: 'IV', num: true }], order.map((c) => [text(c), num(count(byColumn.get(c)?.length)), num(fixed(iv.get(c), 4))]));
  const maxAbs = Math.max(1e-12, ...run.bins.map((r) => (Number.isFinite(r.woe) ? Math.abs(r.woe) : 0)));
  const perColumn = order
    .map((c) => {
      const rows = (byColumn.get(c) ?? []).map((r) => [text(r.bin), text(shortInterval(r.interval), 'interval'), num(count(r.n)), num(count(r.events)), num(percent(r.eventRate, 2)), num(fixed(r.woe, 3)), { html: woeBar(r.woe, maxAbs), cls: 'bar-cell' }, num(fixed(r.iv, 4))]);
      return table(['Bin', 'Interval', { html: 'Rows', num: true }, { html: 'Events', num: true }, { html: 'Event rate', num: true }, { html: 'WoE', num: true }, '', { html: 'IV term', num: true }], rows, { caption: `${c} — IV ${fixed(iv.get(c), 4)}` });
    })
    .join('\n');
  return {
    id: 'bins',
    title: 'Bins, weight of evidence and information value',
    body: `<p>Bins fitted by tree-bins on all development rows (the final fit). <strong>Sign convention:</strong> WoE = ln(share of non-events in the bin / share of events in the bin), so a bin safer than average has positive WoE (blue bar) and a riskier bin negative WoE (orange bar). IV = Σ (share of non-events − share of events) × WoE. A bin with no events or no non-events has no finite WoE (shown as ${NOT_AVAILABLE}).</p>
<h3>Columns by information value</h3>
${ivTable}
<h3>Bin tables</h3>
<div class="bins">${perColumn}</div>`,
  };
}

/** Bin edges are stored at full double precision (0.10499999999999999); six significant digits read better and still tell edges apart. */
function shortInterval(s: string): string {
  // Only long decimals are touched, so level names with digits in them stay as they are.
  return s.replace(/-?\d+\.\d{7,}(?:e[-+]?\d+)?/gi, (n) => String(Number(Number(n).toPrecision(6))));
}

function rank(v: number | undefined): number {
  return v === undefined || !Number.isFinite(v) ? -Infinity : v;
}

/** A two-sided bar centred on zero, scaled to the largest |WoE| in the report. */
function woeBar(woe: number, maxAbs: number): string {
  if (!Number.isFinite(woe)) return '';
  const w = Math.round((Math.abs(woe) / maxAbs) * 30 * 10) / 10;
  const bar = `<span class="bar ${woe >= 0 ? 'pos' : 'neg'}" style="width:${w}px"></span>`;
  return `<div class="axis"><div class="half left">${woe < 0 ? bar : ''}</div><div class="half">${woe >= 0 ? bar : ''}</div></div>`;
}

export function disparitySection(run: RunFiles): Section {
  const title = 'Selection-rate disparity (screening only)';
  const tables = [
    { label: 'Holdout rows', d: run.metrics.disparity },
    { label: 'Development rows, out-of-fold scores', d: run.metrics.disparity_oof },
  ].filter((t): t is { label: string; d: DisparityTable } => t.d !== undefined);
  if (tables.length === 0 || tables.every((t) => t.d.columns.length === 0)) {
    return { id: 'disparity', title, body: '<p>Protected columns: none declared, so there is no disparity table.</p>' };
  }
  const body = tables.map(({ label, d }) => `<h3>${escapeHtml(label)} — selected: stack score ≥ ${escapeHtml(fixed(d.cut, 4))} (budget ${escapeHtml(percent(d.budget))})</h3>${d.columns.map((c) => disparityTable(c)).join('\n')}`).join('\n');
  return {
    id: 'disparity',
    title,
    body: `<p>For each column declared <code>protected</code> and each of its groups: the number of rows, the share selected at the budget cut, the event rate, and the ratio of the group's selection rate to that of the most-selected group. Ratios below 0.8 are flagged, following the four-fifths rule of thumb (EEOC Uniform Guidelines on Employee Selection Procedures, 29 CFR 1607.4(D)).</p>
<p><strong>This is a screening figure, not a legal finding.</strong> It makes no allowance for group size or sampling error. A flag calls for review by people qualified to judge it under the law that applies; the absence of a flag does not show that a model is fair.</p>
${body}`,
  };
}

function disparityTable(c: DisparityTable['columns'][number]): string {
  const rows = c.groups.map((g) => [text(g.group), num(count(g.n)), num(percent(g.selected_share)), num(percent(g.event_rate, 2)), num(fixed(g.ratio, 3)), g.flag ? { html: 'below 0.8', cls: 'flag' } : text('')]);
  return table(['Group', ...['Rows', 'Selected', 'Event rate', 'Ratio to most selected'].map((h) => ({ html: h, num: true })), 'Flag'], rows, { caption: c.column });
}

export function timingsSection(run: RunFiles): Section {
  const groups = new Map<string, { n: number; hits: number; seconds: number }>();
  for (const s of run.manifest.steps) {
    const kind = s.step.replace(/@.*$/, '');
    const g = groups.get(kind) ?? { n: 0, hits: 0, seconds: 0 };
    g.n++;
    if (s.hit) g.hits++;
    g.seconds += s.seconds;
    groups.set(kind, g);
  }
  let total = { n: 0, hits: 0, seconds: 0 };
  const rows = [...groups].map(([kind, g]) => {
    total = { n: total.n + g.n, hits: total.hits + g.hits, seconds: total.seconds + g.seconds };
    return [text(kind), num(count(g.n)), num(count(g.hits)), num(count(g.n - g.hits)), num(seconds(g.seconds))];
  });
  rows.push([{ html: '<strong>all steps</strong>' }, num(count(total.n)), num(count(total.hits)), num(count(total.n - total.hits)), num(seconds(total.seconds))]);
  const head = ['Step kind', ...['Steps', 'Cache hits', 'Misses', 'Total time'].map((h) => ({ html: h, num: true }))];
  return {
    id: 'timings',
    title: 'Stage timings and cache',
    body: `<p>Wall time of the whole run: ${escapeHtml(seconds(run.manifest.seconds))} with ${escapeHtml(count(run.manifest.workers))} worker thread(s). Step times are summed over fit contexts (${escapeHtml(count(run.manifest.split.folds))} outer folds and the final fit), which run in parallel, so they can exceed the wall time.</p>
${table(head, rows)}`,
  };
}
