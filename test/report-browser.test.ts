/**
 * The report in a real browser (Debian's headless Chromium): the page renders with no console
 * messages (no CSP violations, no failed loads), the DOM holds every section and chart, and a
 * full-page screenshot is a real picture, not a blank or single-colour canvas.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { inflateSync } from 'node:zlib';
import { generateDemo } from '../data-demo/generate.js';
import { runYaml, tempDir } from './helpers/run-fixture.js';
import { REPORT_FILE } from '../pipeline/report/build.js';

const CHROMIUM = '/usr/bin/chromium';
const present = existsSync(CHROMIUM);
if (!present) console.warn(`report-browser: ${CHROMIUM} is missing, so the browser checks are skipped (apt-get install -y chromium; .ci/run installs it)`);

const FLAGS = ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--disable-quic', '--hide-scrollbars'];

interface BrowserRun {
  readonly stdout: string;
  readonly stderr: string;
  readonly status: number | null;
}

function chromium(args: readonly string[], page: string): BrowserRun {
  const profile = tempDir('chromium-profile');
  const r = spawnSync(CHROMIUM, [...FLAGS, `--user-data-dir=${profile}`, ...args, pathToFileURL(page).href], { encoding: 'utf8', timeout: 90_000, maxBuffer: 64 * 1024 * 1024 });
  return { stdout: r.stdout, stderr: r.stderr, status: r.status };
}

/** Page console output: Chromium logs every console message and CSP violation as "CONSOLE" with --enable-logging=stderr. */
function consoleLines(stderr: string): string[] {
  return stderr.split('\n').filter((l) => /CONSOLE/.test(l));
}

interface Image {
  readonly width: number;
  readonly height: number;
  /** RGB triples packed as 0xRRGGBB, row-major. */
  readonly pixels: Uint32Array;
}

/** Minimal PNG decoder for 8-bit RGB/RGBA, non-interlaced images (what Chromium writes); PNG spec (W3C, 2003), sections 9 and 11. */
function decodePng(buf: Buffer): Image {
  expect(buf.subarray(0, 8).toString('hex')).toBe('89504e470d0a1a0a');
  let off = 8;
  let width = 0;
  let height = 0;
  let colorType = -1;
  const idat: Buffer[] = [];
  while (off < buf.length) {
    const len = buf.readUInt32BE(off);
    const type = buf.toString('latin1', off + 4, off + 8);
    const data = buf.subarray(off + 8, off + 8 + len);
    if (type === 'IHDR') {
      width = data.readUInt32BE(0);
      height = data.readUInt32BE(4);
      expect(data[8]).toBe(8); // bit depth
      colorType = data[9];
      expect(data[12]).toBe(0); // not interlaced
    } else if (type === 'IDAT') idat.push(data);
    else if (type === 'IEND') break;
    off += 12 + len;
  }
  expect([2, 6]).toContain(colorType);
  const bpp = colorType === 6 ? 4 : 3;
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  expect(raw.length).toBe(height * (stride + 1));
  const cur = new Uint8Array(stride);
  const prev = new Uint8Array(stride);
  const pixels = new Uint32Array(width * height);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    const line = raw.subarray(y * (stride + 1) + 1, (y + 1) * (stride + 1));
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? cur[i - bpp] : 0;
      const b = prev[i];
      const c = i >= bpp ? prev[i - bpp] : 0;
      let pred = 0;
      if (filter === 1) pred = a;
      else if (filter === 2) pred = b;
      else if (filter === 3) pred = (a + b) >> 1;
      else if (filter === 4) {
        const p = a + b - c;
        const pa = Math.abs(p - a);
        const pb = Math.abs(p - b);
        const pc = Math.abs(p - c);
        pred = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      }
      cur[i] = (line[i] + pred) & 255;
    }
    for (let x = 0; x < width; x++) pixels[y * width + x] = (cur[x * bpp] << 16) | (cur[x * bpp + 1] << 8) | cur[x * bpp + 2];
    prev.set(cur);
  }
  return { width, height, pixels };
}

describe.skipIf(!present)('report.html in headless Chromium', () => {
  let page: string;
  let dir: string;

  beforeAll(async () => {
    dir = tempDir('report-browser');
    const csv = join(dir, 'data.csv');
    await generateDemo({ rows: 2000, seed: 4, out: csv });
    const outcome = await runYaml(
      dir,
      `name: browser
seed: 9
data: {file: ${csv}, target: missed_payment_90d, positive: "yes", id: application_id, columns: {applied_on: date, registered_on: date, owner_age_band: protected}}
split: {folds: 3, inner_folds: 3, holdout: {fraction: 0.3}}
features:
  rate-encode: {smoothing: 10}
  tree-bins: {max_depth: 2, min_leaf: 0.05}
learners:
  lr: {kind: logistic, l2: 1}
  lr_strong: {kind: logistic, l2: 50}
stack: {nonnegative: true}
`,
      { workers: 2 },
    );
    page = join(outcome.runDir, REPORT_FILE);
  });

  it('the console scan catches a CSP violation (negative control)', () => {
    const bad = join(dir, 'bad.html');
    writeFileSync(bad, `<!DOCTYPE html><html><head><meta http-equiv="Content-Security-Policy" content="default-src 'none'"></head><body><script>console.error("x")</script></body></html>`);
    const r = chromium(['--enable-logging=stderr', '--v=0', '--dump-dom'], bad);
    expect(r.status).toBe(0);
    expect(consoleLines(r.stderr).length).toBeGreaterThan(0);
  });

  it('renders with no console messages, and the DOM holds every section and three drawn charts', () => {
    const r = chromium(['--enable-logging=stderr', '--v=0', '--dump-dom'], page);
    expect(r.status).toBe(0);
    expect(consoleLines(r.stderr)).toEqual([]);
    const dom = r.stdout;
    expect((dom.match(/<section id="/g) ?? []).length).toBe(7);
    expect((dom.match(/<svg /g) ?? []).length).toBe(3);
    expect((dom.match(/<polyline points="\d/g) ?? []).length).toBeGreaterThanOrEqual(3 + 3 + 2);
    expect(dom).toContain('Decision support only');
    expect(dom).not.toMatch(/<script/i);
  });

  it('takes a full screenshot that is a real picture', () => {
    const png = join(dir, 'report.png');
    const r = chromium([`--screenshot=${png}`, '--window-size=1280,2400'], page);
    expect(r.status).toBe(0);
    expect(existsSync(png)).toBe(true);
    expect(statSync(png).size).toBeGreaterThan(50_000); // a blank 1280x2400 PNG compresses to a few kB
    const img = decodePng(readFileSync(png));
    expect([img.width, img.height]).toEqual([1280, 2400]);
    const colours = new Set<number>();
    let ink = 0;
    for (const p of img.pixels) {
      colours.add(p);
      if (p !== 0xffffff) ink++;
    }
    expect(colours.size).toBeGreaterThan(100); // text anti-aliasing, chart lines, tinted boxes
    const share = ink / img.pixels.length;
    expect(share).toBeGreaterThan(0.02);
    expect(share).toBeLessThan(0.9);
  });
});
