/**
 * Seeded generator of the invented demo data: Hollin Vale Credit Cooperative, a made-up regional
 * lender, reviewing small-business credit-line applications. Every row, name and effect below is
 * invented; the planted effects are listed in data-demo/README.md so each stage's benefit can be
 * measured against a known truth.
 *
 * Rows are independent and each is drawn from one seeded stream in order, so the first k rows of
 * any run with a given seed are the same whatever `rows` is (data-demo/sample.csv is such a prefix).
 *
 * Run: node dist/data-demo/generate.js --rows 20000 --seed 7 --out data-demo/demo.csv
 */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { finished } from 'node:stream/promises';
import { pathToFileURL } from 'node:url';
import {
  civilInto,
  daysFromCivil,
  daysInMonth,
  daysToNearestHoliday,
  isoStringFromDays,
} from '../stages/core/calendar.js';
import type { Rng } from '../stages/types.js';

export interface DemoOptions {
  readonly rows: number;
  readonly seed: number;
  readonly out: string;
}

export const DEMO_COLUMNS = [
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
] as const;

/**
 * SplitMix32 (a 32-bit variant of Steele, Lea & Flood's SplitMix, "Fast splittable pseudorandom
 * number generators", OOPSLA 2014): a Weyl sequence passed through a mixing function. Small,
 * fast and plenty for synthetic data; not for cryptography.
 */
export class SplitMix32 implements Rng {
  private state: number;

  constructor(seed: number) {
    this.state = seed | 0;
  }

  next(): number {
    this.state = (this.state + 0x9e3779b9) | 0;
    let t = this.state ^ (this.state >>> 16);
    t = Math.imul(t, 0x21f0aaad);
    t ^= t >>> 15;
    t = Math.imul(t, 0x735a2d97);
    t ^= t >>> 15;
    return (t >>> 0) / 4294967296;
  }

  int(n: number): number {
    return Math.floor(this.next() * n);
  }
}

/** Standard normal by Box-Muller; 1 − u keeps the logarithm away from zero. */
function normal(rng: Rng): number {
  const u = 1 - rng.next();
  const v = rng.next();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

/** Poisson by inversion of the CDF: fine for the small means used here. */
function poisson(rng: Rng, mean: number): number {
  const u = rng.next();
  let p = Math.exp(-mean);
  let cdf = p;
  let k = 0;
  while (u > cdf && k < 100) {
    k++;
    p *= mean / k;
    cdf += p;
  }
  return k;
}

interface Level {
  readonly name: string;
  readonly weight: number;
  /** Additive effect on the log-odds of a missed payment. */
  readonly logit: number;
}

function pick(rng: Rng, levels: readonly Level[]): Level {
  let u = rng.next();
  for (const level of levels) {
    u -= level.weight;
    if (u < 0) return level;
  }
  return levels[levels.length - 1];
}

// Two rare sectors with strong and opposite effects: rate encoding must smooth them, not trust them.
const SECTORS: readonly Level[] = [
  { name: 'retail_goods', weight: 0.17, logit: 0 },
  { name: 'hospitality', weight: 0.14, logit: 0.45 },
  { name: 'construction_trades', weight: 0.13, logit: 0.35 },
  { name: 'professional_services', weight: 0.12, logit: -0.45 },
  { name: 'transport_haulage', weight: 0.09, logit: 0.2 },
  { name: 'health_care', weight: 0.08, logit: -0.35 },
  { name: 'agriculture', weight: 0.08, logit: 0.1 },
  { name: 'manufacturing', weight: 0.07, logit: -0.1 },
  { name: 'creative_media', weight: 0.05, logit: 0.25 },
  { name: 'personal_care', weight: 0.04, logit: 0.3 },
  { name: 'marine_boatyards', weight: 0.02, logit: 0.9 },
  { name: 'heritage_crafts', weight: 0.01, logit: -0.6 },
];

const REGIONS: readonly Level[] = [
  { name: 'Ashby Moor', weight: 0.18, logit: 0 },
  { name: 'Brackenridge', weight: 0.16, logit: 0.15 },
  { name: 'Coldwater Fens', weight: 0.14, logit: 0.35 },
  { name: 'Dunmere Coast', weight: 0.13, logit: -0.2 },
  { name: 'Eldham Valley', weight: 0.12, logit: 0.05 },
  { name: 'Farrow Downs', weight: 0.11, logit: -0.3 },
  { name: 'Greyholm', weight: 0.09, logit: 0.5 },
  { name: 'Hollin Vale', weight: 0.07, logit: -0.15 },
];

const CHANNELS_WITH_PHONE: readonly Level[] = [
  { name: 'branch', weight: 0.3, logit: 0 },
  { name: 'broker', weight: 0.25, logit: 0.25 },
  { name: 'web', weight: 0.25, logit: 0.15 },
  { name: 'partner', weight: 0.1, logit: -0.1 },
  { name: 'phone', weight: 0.1, logit: 0.2 },
];
// After the phone line closed its share went to the other channels.
const CHANNELS_AFTER_PHONE: readonly Level[] = [
  { name: 'branch', weight: 0.3, logit: 0 },
  { name: 'broker', weight: 0.27, logit: 0.25 },
  { name: 'web', weight: 0.31, logit: 0.15 },
  { name: 'partner', weight: 0.12, logit: -0.1 },
];

// The protected attribute: drawn independently of every other column and absent from the risk
// formula, so it must NOT influence the target. The disparity table should find no real gap.
const AGE_BANDS: readonly Level[] = [
  { name: '18-29', weight: 0.16, logit: 0 },
  { name: '30-44', weight: 0.35, logit: 0 },
  { name: '45-59', weight: 0.32, logit: 0 },
  { name: '60+', weight: 0.17, logit: 0 },
];

const DIRECTOR_CHANGE_PROBS = [0.62, 0.22, 0.09, 0.04, 0.02, 0.01] as const;

const FIRST_APPLICATION = daysFromCivil(2023, 1, 2);
const LAST_APPLICATION = daysFromCivil(2026, 6, 30);
/** The phone channel was discontinued from this day on. */
export const PHONE_CLOSED_ON = daysFromCivil(2024, 7, 1);

/** Tuned so the event rate is about 8% (measured: see data-demo/README.md). */
const INTERCEPT = -4.33;
const DAYS_PER_MONTH = 30.4375;

function sigmoid(x: number): number {
  return 1 / (1 + Math.exp(-x));
}

function clamp(x: number, lo: number, hi: number): number {
  return x < lo ? lo : x > hi ? hi : x;
}

/** U-shaped: risky near zero (unused or new lines) and above 0.95 (over the limit); flat between 0.2 and 0.95. */
function utilisationEffect(u: number): number {
  return (1.3 * Math.max(0, 0.2 - u)) / 0.2 + 1.6 * clamp((u - 0.95) / 0.4, 0, 1);
}

function row(rng: Rng, index: number, civil: Int32Array): string {
  const applied = FIRST_APPLICATION + rng.int(LAST_APPLICATION - FIRST_APPLICATION + 1);

  // Business age at application: a fifth are new businesses, the rest lognormal around six years.
  const gapDays =
    rng.next() < 0.2
      ? 20 + rng.int(520)
      : Math.max(30, Math.min(14_600, Math.round(2200 * Math.exp(0.7 * normal(rng)))));
  const registered = applied - gapDays;
  const registeredMissing = rng.next() < 0.04;

  // Trading usually starts some months after registration.
  const monthsTrading = Math.max(0, Math.round(gapDays / DAYS_PER_MONTH - 8 * rng.next()));
  const monthsMissing = rng.next() < 0.06;

  const requested = Math.round(clamp(40_000 * Math.exp(0.85 * normal(rng)), 5_000, 500_000) / 100) * 100;
  const turnover = Math.max(1_000, Math.round((requested * Math.exp(Math.log(4) + 0.6 * normal(rng))) / 1000) * 1000);

  const utilisation = rng.next() < 0.08 ? 0.03 * rng.next() : clamp(0.55 + 0.38 * normal(rng), 0, 1.6);
  const utilisationMissing = rng.next() < 0.09;

  const enquiries = Math.min(15, poisson(rng, 1.4));
  let directorChanges = 0;
  let du = rng.next();
  while (directorChanges < 5 && du >= DIRECTOR_CHANGE_PROBS[directorChanges]) {
    du -= DIRECTOR_CHANGE_PROBS[directorChanges];
    directorChanges++;
  }

  const sectorMissing = rng.next() < 0.03;
  const sector = pick(rng, SECTORS);
  const region = pick(rng, REGIONS);
  const channel = pick(rng, applied < PHONE_CLOSED_ON ? CHANNELS_WITH_PHONE : CHANNELS_AFTER_PHONE);
  const ageBand = pick(rng, AGE_BANDS);

  civilInto(applied, civil);
  const monthEnd = daysInMonth(civil[0], civil[1]) - civil[2] < 3;
  const nearHoliday = Math.abs(daysToNearestHoliday(applied)) <= 7;

  // Effects use the true values even when a column is blanked out, except utilisation, where
  // a blank stands for an undisclosed line and carries its own (higher) risk.
  const logit =
    INTERCEPT +
    (utilisationMissing ? 0.9 : utilisationEffect(utilisation)) +
    (monthsTrading < 18 ? 1.0 : 0) +
    0.9 * Math.exp(-gapDays / 150) +
    0.5 * Math.log(requested / turnover / 0.25) +
    0.15 * enquiries +
    0.3 * directorChanges +
    (sectorMissing ? 0.3 : sector.logit) +
    region.logit +
    channel.logit +
    (monthEnd ? 0.4 : 0) +
    (nearHoliday ? 0.3 : 0);
  const missed = rng.next() < sigmoid(logit);

  return [
    `HV-${String(index + 1).padStart(6, '0')}`,
    isoStringFromDays(applied),
    registeredMissing ? '' : isoStringFromDays(registered),
    String(requested),
    monthsMissing ? '' : String(monthsTrading),
    utilisationMissing ? '' : utilisation.toFixed(3),
    String(enquiries),
    String(turnover),
    String(directorChanges),
    sectorMissing ? '' : sector.name,
    region.name,
    channel.name,
    ageBand.name,
    missed ? 'yes' : 'no',
  ].join(',');
}

/** Lines buffered per write: big enough to be fast, small enough to stream. */
const CHUNK_ROWS = 2048;

export async function generateDemo(opts: DemoOptions): Promise<void> {
  if (!Number.isInteger(opts.rows) || opts.rows < 0) throw new RangeError(`rows must be a non-negative integer, got ${opts.rows}`);
  if (!Number.isInteger(opts.seed)) throw new RangeError(`seed must be an integer, got ${opts.seed}`);
  const rng = new SplitMix32(opts.seed);
  const civil = new Int32Array(3);
  const stream = createWriteStream(opts.out, { encoding: 'utf8' });
  let chunk = DEMO_COLUMNS.join(',') + '\n';
  for (let i = 0; i < opts.rows; i++) {
    chunk += row(rng, i, civil) + '\n';
    if ((i + 1) % CHUNK_ROWS === 0) {
      if (!stream.write(chunk)) await once(stream, 'drain');
      chunk = '';
    }
  }
  stream.end(chunk);
  await finished(stream);
}

function parseArgs(argv: readonly string[]): DemoOptions {
  const opts: Record<string, string> = { rows: '20000', seed: '7', out: 'data-demo/demo.csv' };
  for (let i = 0; i < argv.length; i += 2) {
    const key = argv[i].replace(/^--/, '');
    if (!(key in opts) || argv[i + 1] === undefined) {
      throw new Error(`usage: generate.js [--rows N] [--seed S] [--out FILE] (bad argument '${argv[i]}')`);
    }
    opts[key] = argv[i + 1];
  }
  return { rows: Number(opts.rows), seed: Number(opts.seed), out: opts.out };
}

async function main(): Promise<void> {
  const opts = parseArgs(process.argv.slice(2));
  const t0 = performance.now();
  await generateDemo(opts);
  const seconds = (performance.now() - t0) / 1000;
  process.stdout.write(`wrote ${opts.rows} rows to ${opts.out} (seed ${opts.seed}) in ${seconds.toFixed(2)} s\n`);
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((err: unknown) => {
    process.stderr.write(`${err instanceof Error ? err.message : String(err)}\n`);
    process.exitCode = 1;
  });
}
