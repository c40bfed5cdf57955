/**
 * Import benchmark (DESIGN.md §11): our `import` of a receipts CSV (validating, de-duplicating,
 * one transaction) against the sqlite3 shell's `.import` of the same file into a plain table, in
 * the same run. The figure is the ratio of rows/s (required ≥ 0.5, aim ≥ 1.0); absolute times are
 * printed for orientation only (the machine is slow and shared). Peak memory of each side comes
 * from /usr/bin/time -v (required under 400 MB for ours whatever the size).
 *
 *   npx tsx test/bench/import-vs-sqlite-shell.ts [--rows 10000000] [--customers N] [--pairs 1] [--keep DIR]
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeReceiptsFile } from './import-receipts-file.js';

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  if (at < 0) return fallback;
  const value = Number(process.argv[at + 1]);
  if (!Number.isSafeInteger(value) || value <= 0) throw new Error(`--${name} needs a positive whole number`);
  return value;
}

const rows = option('rows', 10_000_000);
const customers = option('customers', Math.max(1, Math.round(rows / 10)));
const pairs = option('pairs', 1);
const keepAt = process.argv.indexOf('--keep');
const folder = keepAt >= 0 ? resolve(process.argv[keepAt + 1]) : mkdtempSync(join(tmpdir(), 'spendmix-import-bench-'));
mkdirSync(folder, { recursive: true });

interface Timed {
  seconds: number;
  peakMegabytes: number;
  output: string;
}

/** Runs a command under /usr/bin/time -v; wall time and peak resident memory from its report. */
function timed(command: string, args: string[]): Timed {
  const result = spawnSync('/usr/bin/time', ['-v', command, ...args], { cwd: projectRoot, encoding: 'utf8', maxBuffer: 1 << 26 });
  if (result.status !== 0) throw new Error(`${command} failed (${result.status}): ${result.stderr}`);
  const wall = /Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (?:(\d+):)?(\d+):([\d.]+)/.exec(result.stderr);
  const peak = /Maximum resident set size \(kbytes\): (\d+)/.exec(result.stderr);
  if (!wall || !peak) throw new Error(`could not read /usr/bin/time output:\n${result.stderr}`);
  const seconds = Number(wall[1] ?? 0) * 3600 + Number(wall[2]) * 60 + Number(wall[3]);
  return { seconds, peakMegabytes: Number(peak[1]) / 1024, output: result.stdout };
}

const fmt = (value: number, digits = 0) => value.toLocaleString('en-GB', { maximumFractionDigits: digits, minimumFractionDigits: digits });

const csvPath = join(folder, `receipts-${rows}.csv`);
if (!existsSync(csvPath)) {
  const started = performance.now();
  const written = writeReceiptsFile(csvPath, { rows, customers });
  console.log(`wrote ${fmt(written.rows)} rows (${fmt(statSync(csvPath).size / 2 ** 20, 1)} MiB, ${fmt(customers)} customers) in ${fmt((performance.now() - started) / 1000, 1)} s`);
}
console.log(`sqlite3 shell ${execFileSync('sqlite3', ['--version'], { encoding: 'utf8' }).split(' ')[0]}; ${pairs} pair(s), shell first`);

const ratios: number[] = [];
for (let pair = 1; pair <= pairs; pair += 1) {
  const shellDb = join(folder, 'shell.db');
  const oursDb = join(folder, 'ours.db');
  for (const path of [shellDb, oursDb]) for (const suffix of ['', '-wal', '-shm']) rmSync(path + suffix, { force: true });
  const shell = timed('sqlite3', [shellDb, '.mode csv', `.import ${csvPath} receipts`]);
  // The package's own command (`spendmix`, src/cli/bin.mjs), as a user runs it.
  const ours = timed(process.execPath, ['src/cli/bin.mjs', 'import', '--db', oursDb, '--receipts', csvPath, '--json']);
  const result = JSON.parse(ours.output) as { rowsImported: number; rowsRead: number };
  if (result.rowsRead !== rows || result.rowsImported !== rows) throw new Error(`ours read ${result.rowsRead}, imported ${result.rowsImported}`);
  const shellRate = rows / shell.seconds;
  const oursRate = rows / ours.seconds;
  ratios.push(oursRate / shellRate);
  console.log(
    `pair ${pair}: sqlite3 .import ${fmt(shellRate)} rows/s (${fmt(shell.seconds, 1)} s, peak ${fmt(shell.peakMegabytes)} MB); ` +
      `spendmix import ${fmt(oursRate)} rows/s (${fmt(ours.seconds, 1)} s, peak ${fmt(ours.peakMegabytes)} MB); ` +
      `ratio ${fmt(oursRate / shellRate, 2)}`,
  );
}
const sorted = [...ratios].sort((a, b) => a - b);
console.log(`ratio of rows/s (spendmix / sqlite3 shell), median of ${ratios.length}: ${fmt(sorted[Math.floor(sorted.length / 2)], 2)} (required ≥ 0.5, aim ≥ 1.0)`);
if (keepAt < 0) rmSync(folder, { recursive: true, force: true });
