/** Plain-text tables of the run listing and of a comparison, for people (scripts use --json). */
import type { Comparison, MetricRow } from './compare.js';
import type { RunListing } from './list.js';

export function formatRunList(listing: RunListing): string {
  const header = ['', 'time', 'name', 'config', 'AUC', 'capture@b', 'pAUC', 'stack members'];
  const body = listing.runs.map((r) => [
    r.champion ? '*' : '',
    r.created.replace(/\.\d+Z$/, 'Z'),
    r.name,
    r.config_digest.slice(0, 12),
    num(r.auc),
    `${num(r.capture)}@${r.budget}`,
    num(r.pauc),
    Object.entries(r.weights)
      .map(([n, w]) => `${n} ${w.toFixed(3)}`)
      .join(', '),
  ]);
  const lines = listing.runs.length === 0 ? ['no finished runs'] : table([header, ...body]);
  if (listing.runs.some((r) => r.champion)) lines.push('* champion of its config name');
  for (const s of listing.skipped) lines.push(`skipped ${s.id}: ${s.reason}`);
  return lines.join('\n') + '\n';
}

export function formatComparison(c: Comparison): string {
  const out: string[] = [];
  out.push(`A: ${c.a.id}  (config ${c.a.config_digest.slice(0, 12)}, data ${c.a.data_digest.slice(0, 12)})`);
  out.push(`B: ${c.b.id}  (config ${c.b.config_digest.slice(0, 12)}, data ${c.b.data_digest.slice(0, 12)})`);
  if (c.budget_note) out.push(`note: ${c.budget_note}`);
  for (const part of ['holdout', 'oof'] as const) {
    out.push('', part === 'holdout' ? 'holdout' : 'out-of-fold (development rows)');
    out.push(...table([['model', 'metric', 'A', 'B', 'B − A'], ...c.rows.filter((r) => r.part === part).map(rowCells)]));
  }
  out.push('');
  if (!c.tests) {
    out.push(`UNPAIRED: ${c.pairing.reason}. The runs did not score the same holdout rows, so no paired test is shown; the differences above mix model change with sampling.`);
  } else {
    out.push('paired (same data, split and holdout rows): tests of the stack, B − A');
    const d = c.tests.delong;
    out.push(d ? `  DeLong AUC: ${signed(d.diff)} (A ${d.auc_a.toFixed(4)}, B ${d.auc_b.toFixed(4)}), z ${d.z.toFixed(3)}, two-sided p ${d.p.toPrecision(3)}` : `  DeLong AUC: ${c.tests.delong_note}`);
    const k = c.tests.capture;
    out.push(
      k
        ? `  capture@${k.budget}: ${k.estimate === null ? 'n/a' : signed(k.estimate)}, paired stratified bootstrap ${Math.round(k.level * 100)}% CI [${signed(k.low)}, ${signed(k.high)}] (${k.replicates} replicates, seeded)`
        : `  capture@${c.a.budget}: bootstrap undefined (one class on the holdout)`,
    );
  }
  return out.join('\n') + '\n';
}

function rowCells(r: MetricRow): string[] {
  return [r.model, r.metric, num(r.a), num(r.b), r.delta === null ? '—' : signed(r.delta)];
}

function num(x: number | null): string {
  return x === null ? '—' : x.toFixed(4);
}

function signed(x: number): string {
  return `${x >= 0 ? '+' : ''}${x.toFixed(4)}`;
}

/** Left-aligned columns separated by two spaces; trailing spaces trimmed. */
function table(rows: readonly (readonly string[])[]): string[] {
  const widths = rows[0].map((_, j) => Math.max(...rows.map((r) => r[j].length)));
  return rows.map((r) => r.map((cell, j) => cell.padEnd(widths[j])).join('  ').trimEnd());
}
