import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_COLUMNS, PHONE_CLOSED_ON, generateDemo } from '../data-demo/generate.js';
import { daysFromIsoString } from '../stages/core/calendar.js';

const dir = mkdtempSync(join(tmpdir(), 'foldstack-demo-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function generate(rows: number, seed: number, name: string): Promise<string> {
  const out = join(dir, name);
  await generateDemo({ rows, seed, out });
  return readFileSync(out, 'utf8');
}

/** The generator writes no quoted fields (no value contains a comma), so a plain split parses it. */
function parse(text: string): { header: string[]; rows: string[][] } {
  const lines = text.split('\n');
  expect(lines.pop()).toBe('');
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',')) };
}

/**
 * Pearson's chi-square statistic of independence for a table of (group → [events, non-events]).
 * df = groups − 1 for a 2-column table.
 */
function chiSquare(table: Map<string, [number, number]>): number {
  let events = 0;
  let total = 0;
  for (const [e, ne] of table.values()) {
    events += e;
    total += e + ne;
  }
  const p = events / total;
  let stat = 0;
  for (const [e, ne] of table.values()) {
    const n = e + ne;
    stat += (e - n * p) ** 2 / (n * p) + (ne - n * (1 - p)) ** 2 / (n * (1 - p));
  }
  return stat;
}

// Chi-square upper 0.001 critical values, from memory (standard tables), each checked by the closed form
// for odd df: P(X > x) = erfc(√(x/2)) + √(2x/π)·e^(−x/2)·Σ_{k=1}^{(df−1)/2} x^(k−1) / (1·3·…·(2k−1)):
// df 3 at 16.266 → 0.0010001, df 7 at 24.322 → 0.00099995.
const CHI2_CRIT_001 = { 3: 16.266, 7: 24.322 } as const;

describe('demo data generator', () => {
  let big: { header: string[]; rows: string[][] };
  const col = (name: (typeof DEMO_COLUMNS)[number]): number => DEMO_COLUMNS.indexOf(name);

  beforeAll(async () => {
    big = parse(await generate(20_000, 7, 'big.csv'));
  });

  it('same seed → identical bytes; another seed → different data', async () => {
    const a = await generate(5_000, 11, 'a.csv');
    const b = await generate(5_000, 11, 'b.csv');
    const c = await generate(5_000, 12, 'c.csv');
    expect(a.length).toBeGreaterThan(100_000);
    expect(a === b).toBe(true);
    expect(a === c).toBe(false);
  });

  it('the committed sample is the first 300 rows of seed 7', async () => {
    const sample = readFileSync(new URL('../data-demo/sample.csv', import.meta.url), 'utf8');
    expect(await generate(300, 7, 'sample.csv')).toBe(sample);
    const prefix = big.rows.slice(0, 300).map((r) => r.join(','));
    expect([big.header.join(','), ...prefix].join('\n') + '\n').toBe(sample);
  });

  it('header is exactly the documented column list', () => {
    expect(big.header).toEqual([
      'application_id',
      'applied_on',
      'registered_on',
      'requested_amount',
      'months_trading',
      'utilisation',
      'prior_enquiries',
      'annual_turnover',
      'director_changes',
      'sector',
      'region',
      'channel',
      'owner_age_band',
      'missed_payment_90d',
    ]);
    expect(big.rows.length).toBe(20_000);
    expect(big.rows.every((r) => r.length === 14)).toBe(true);
    expect(big.rows[0][0]).toBe('HV-000001');
    expect(big.rows[19_999][0]).toBe('HV-020000');
  });

  it('base rate of missed_payment_90d is within [0.06, 0.10] on 20k rows', () => {
    const y = big.rows.map((r) => r[col('missed_payment_90d')]);
    expect(new Set(y)).toEqual(new Set(['yes', 'no']));
    const rate = y.filter((v) => v === 'yes').length / y.length;
    expect(rate).toBeGreaterThanOrEqual(0.06);
    expect(rate).toBeLessThanOrEqual(0.1);
  });

  it('the discontinued phone channel appears only before 2024-07-01', () => {
    const phone = big.rows.filter((r) => r[col('channel')] === 'phone');
    expect(phone.length).toBeGreaterThan(100);
    expect(phone.every((r) => daysFromIsoString(r[col('applied_on')]) < PHONE_CLOSED_ON)).toBe(true);
    const late = big.rows.filter((r) => daysFromIsoString(r[col('applied_on')]) >= PHONE_CLOSED_ON);
    expect(late.length).toBeGreaterThan(5_000);
    expect(new Set(big.rows.map((r) => r[col('channel')]))).toEqual(new Set(['branch', 'broker', 'web', 'partner', 'phone']));
  });

  it('dates: applied_on within 2023-01-02..2026-06-30, registered_on always before it, ~4% missing', () => {
    const lo = daysFromIsoString('2023-01-02');
    const hi = daysFromIsoString('2026-06-30');
    let missing = 0;
    for (const r of big.rows) {
      const applied = daysFromIsoString(r[col('applied_on')]);
      expect(applied >= lo && applied <= hi, r[0]).toBe(true);
      if (r[col('registered_on')] === '') {
        missing++;
        continue;
      }
      const registered = daysFromIsoString(r[col('registered_on')]);
      if (!(registered < applied)) throw new Error(`${r[0]}: registered_on ${r[2]} is not before applied_on ${r[1]}`);
    }
    expect(missing / big.rows.length).toBeGreaterThan(0.03);
    expect(missing / big.rows.length).toBeLessThan(0.05);
  });

  it('owner_age_band event rates do not differ beyond chance (Pearson chi-square, df 3, α = 0.001)', () => {
    const table = (name: (typeof DEMO_COLUMNS)[number]): Map<string, [number, number]> => {
      const t = new Map<string, [number, number]>();
      for (const r of big.rows) {
        const cell = t.get(r[col(name)]) ?? [0, 0];
        if (r[col('missed_payment_90d')] === 'yes') cell[0]++;
        else cell[1]++;
        t.set(r[col(name)], cell);
      }
      return t;
    };
    const age = table('owner_age_band');
    expect([...age.keys()].sort()).toEqual(['18-29', '30-44', '45-59', '60+']);
    expect(chiSquare(age)).toBeLessThan(CHI2_CRIT_001[3]);
    // The same test does detect a planted categorical effect, so a pass above is not for lack of power.
    const region = table('region');
    expect(region.size).toBe(8);
    expect(chiSquare(region)).toBeGreaterThan(CHI2_CRIT_001[7]);
  });

  it('planted signals show up: short trading history, U-shaped utilisation, missing utilisation', () => {
    const rate = (keep: (r: string[]) => boolean): number => {
      const rs = big.rows.filter(keep);
      return rs.filter((r) => r[col('missed_payment_90d')] === 'yes').length / rs.length;
    };
    const months = (r: string[]): number => (r[col('months_trading')] === '' ? NaN : Number(r[col('months_trading')]));
    const util = (r: string[]): number => (r[col('utilisation')] === '' ? NaN : Number(r[col('utilisation')]));
    expect(rate((r) => months(r) < 18)).toBeGreaterThan(2 * rate((r) => months(r) >= 18));
    const middle = rate((r) => util(r) >= 0.3 && util(r) <= 0.8);
    expect(rate((r) => util(r) < 0.1)).toBeGreaterThan(1.5 * middle);
    expect(rate((r) => util(r) > 1.1)).toBeGreaterThan(2 * middle);
    expect(rate((r) => Number.isNaN(util(r)))).toBeGreaterThan(1.5 * middle);
    const u = big.rows.map(util).filter((v) => !Number.isNaN(v));
    expect(Math.min(...u)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...u)).toBeLessThanOrEqual(1.6);
  });
});
