/**
 * Benchmark: the Segments screen's paint time at 1,000,000 customers against 10,000, in one run
 * (DESIGN.md §11: required ≤ 1.5×). Both databases are built here from a seeded synthetic
 * feature table (kind `features`, four spend groups), imported and fitted through the CLI
 * (k = 4, full covariance, one restart), then each is served by the browser host
 * (`spendmix serve`) and Segments is opened in Debian's Chromium with a fresh user-data-dir
 * (both through the end-to-end test's harness).
 *
 * The figure is the time from the start of navigation to the moment the screen reports that its
 * cards and both charts have painted (the `segments:painted` performance mark, set once ECharts
 * fires `finished` for the scatter and the distribution). It includes loading the page, every
 * API call the screen makes, and drawing. Loads alternate between the two sizes; medians.
 *
 *   npx tsx test/bench/segments-paint.ts [--small 10000] [--large 1000000] [--loads 5] [--keep]
 *
 * --keep reuses databases left in the temporary folder by an earlier run of the same sizes.
 */
import { execFileSync } from 'node:child_process';
import { createWriteStream, existsSync, mkdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { once } from 'node:events';
import { fileURLToPath } from 'node:url';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { collectPageErrors, openBrowser, serve, type ServedApp } from '../e2e/harness.js';

const root = fileURLToPath(new URL('../..', import.meta.url));

function flag(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  if (at < 0) return fallback;
  const value = Number(process.argv[at + 1]);
  if (!Number.isInteger(value) || value < 1) throw new Error(`--${name} needs a positive whole number.`);
  return value;
}
const small = flag('small', 10_000);
const large = flag('large', 1_000_000);
const loads = flag('loads', 5);
const keep = process.argv.includes('--keep');
const folder = join(tmpdir(), 'spendmix-segments-paint');
mkdirSync(folder, { recursive: true });

const cli = (args: string[]) =>
  JSON.parse(execFileSync(process.execPath, ['--import', 'tsx', join(root, 'src/cli/main.ts'), ...args, '--json'], { cwd: root, encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 }));

/** Invented customers in four spend groups, log-normal around each group's centre. */
async function writeFeatureTable(path: string, customers: number): Promise<void> {
  const generator = xoroshiro128plus(customers);
  const uniform = () => uniformFloat64(generator);
  const normal = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  const centres = [
    { spend: 620, visits: 11 },
    { spend: 310, visits: 8 },
    { spend: 140, visits: 5 },
    { spend: 52, visits: 2.4 },
  ];
  const out = createWriteStream(path);
  out.write('customer_id,spend_per_month,visits_per_month,average_basket\n');
  let chunk = '';
  for (let i = 0; i < customers; i++) {
    const centre = centres[Math.min(3, Math.floor(uniform() * 4))];
    const spend = centre.spend * Math.exp(0.3 * normal());
    const visits = centre.visits * Math.exp(0.3 * normal());
    chunk += `C${String(i).padStart(8, '0')},${spend.toFixed(2)},${visits.toFixed(2)},${(spend / visits).toFixed(2)}\n`;
    if (chunk.length > 1 << 20) {
      if (!out.write(chunk)) await once(out, 'drain');
      chunk = '';
    }
  }
  out.end(chunk);
  await once(out, 'finish');
}

async function buildDatabase(customers: number): Promise<string> {
  const db = join(folder, `segments-${customers}.db`);
  if (keep && existsSync(db)) {
    console.log(`${customers} customers: reusing ${db}`);
    return db;
  }
  for (const suffix of ['', '-wal', '-shm']) rmSync(db + suffix, { force: true });
  const csv = join(folder, `features-${customers}.csv`);
  const started = performance.now();
  await writeFeatureTable(csv, customers);
  cli(['import', '--db', db, '--features', csv]);
  const run = cli(['refresh', '--db', db, '--as-of', '2026-11-30', '--k', '4', '--covariance', 'full', '--restarts', '1', '--seed', '1']);
  rmSync(csv, { force: true });
  console.log(`${customers} customers: built in ${((performance.now() - started) / 1000).toFixed(1)} s (run ${run.runId}, ${run.customers} placed)`);
  return db;
}

const median = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
};

if (!existsSync(join(root, 'dist/renderer/index.html')) || process.argv.includes('--build')) {
  execFileSync('npm', ['run', '-s', 'build:renderer'], { cwd: root, stdio: 'inherit' });
}

const sizes = [small, large];
const databases = new Map<number, string>();
for (const size of sizes) databases.set(size, await buildDatabase(size));
const hosts = new Map<number, ServedApp>();
for (const size of sizes) hosts.set(size, await serve(databases.get(size)!));

const browser = await openBrowser();
const page = browser.page;
const pageErrors = collectPageErrors(page);

/** One cold load of Segments: ms from navigation start to painted, and the screen's own measure. */
async function loadSegments(size: number): Promise<{ toPainted: number; screen: number; caption: string }> {
  const { url } = hosts.get(size)!;
  await page.goto('about:blank');
  await page.goto(`${url}#/segments`);
  await page.waitForSelector('[data-testid="screen-segments"][data-painted="true"]', { timeout: 300_000 });
  const marks = await page.evaluate(() => ({
    toPainted: performance.getEntriesByName('segments:painted')[0].startTime,
    screen: performance.getEntriesByName('segments:paint')[0].duration,
  }));
  return { ...marks, caption: (await page.textContent('[data-testid="scatter-caption"]')) ?? '' };
}

const results = new Map<number, { toPainted: number[]; screen: number[]; caption: string }>(sizes.map((size) => [size, { toPainted: [], screen: [], caption: '' }]));
try {
  for (const size of sizes) await loadSegments(size); // warm-up: page cache, SQLite pages, JIT
  for (let round = 0; round < loads; round++) {
    for (const size of round % 2 ? [...sizes].reverse() : sizes) {
      const measured = await loadSegments(size);
      const entry = results.get(size)!;
      entry.toPainted.push(measured.toPainted);
      entry.screen.push(measured.screen);
      entry.caption = measured.caption;
    }
  }
} finally {
  await browser.close();
  for (const host of hosts.values()) await host.stop();
}

const summary = sizes.map((size) => {
  const entry = results.get(size)!;
  return { customers: size, medianMs: median(entry.toPainted), screenMedianMs: median(entry.screen), loadsMs: entry.toPainted.map(Math.round), caption: entry.caption.split('.')[0] };
});
for (const row of summary) {
  console.log(
    `${row.customers.toLocaleString('en-GB')} customers: painted ${row.medianMs.toFixed(0)} ms after navigation (median of ${loads}; loads ${row.loadsMs.join(', ')} ms), ` +
      `screen mount to painted ${row.screenMedianMs.toFixed(0)} ms; chart says "${row.caption}"`,
  );
}
const ratio = summary[1].medianMs / summary[0].medianMs;
const screenRatio = summary[1].screenMedianMs / summary[0].screenMedianMs;
console.log(`ratio ${large.toLocaleString('en-GB')} / ${small.toLocaleString('en-GB')}: ${ratio.toFixed(2)} (navigation to painted), ${screenRatio.toFixed(2)} (screen mount to painted); required ≤ 1.5`);
if (pageErrors.length) console.log(pageErrors.join('\n'));
