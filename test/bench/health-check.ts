/**
 * Cost of the database health checks (src/store/health.ts) at 1 M customers / 20 M receipts,
 * against the reference of opening the database and counting its receipts (a plain
 * `SELECT count(*)`), in the same run. The OS cache is warmed by one untimed round first; each
 * figure is the best of `--repeat` rounds (default 3). Absolute times are for orientation only.
 *
 *   npx tsx test/bench/health-check.ts [--customers 1000000] [--rows 20000000] [--repeat 3]
 */
import BetterSqlite3 from 'better-sqlite3';
import { statSync } from 'node:fs';
import { FULL_CHECK_MAX_BYTES, headerProblems } from '../../src/store/health.js';
import { benchFlag, syntheticReceiptsDatabase } from './synthetic-receipts.js';

const customers = benchFlag('customers', 1_000_000);
const rows = benchFlag('rows', 20_000_000);
const repeat = benchFlag('repeat', 3);
const built = syntheticReceiptsDatabase(customers, rows);
const bytes = statSync(built.path).size;

function timed<T>(work: () => T): { seconds: number; value: T } {
  const started = performance.now();
  const value = work();
  return { seconds: (performance.now() - started) / 1000, value };
}

function openAndCount(): number {
  const db = new BetterSqlite3(built.path, { readonly: true });
  try {
    return (db.prepare('SELECT count(*) AS n FROM receipts').get() as { n: number }).n;
  } finally {
    db.close();
  }
}

function quickCheck(): string {
  const db = new BetterSqlite3(built.path, { readonly: true });
  try {
    return String(db.pragma('quick_check', { simple: true }));
  } finally {
    db.close();
  }
}

const measures: Record<string, () => unknown> = {
  'open + count(*)': openAndCount,
  'header checks': () => headerProblems(built.path).length,
  'PRAGMA quick_check': quickCheck,
};
const best: Record<string, number> = {};
for (let round = 0; round <= repeat; round++) {
  for (const [name, work] of Object.entries(measures)) {
    const { seconds, value } = timed(work);
    if (round > 0) best[name] = Math.min(best[name] ?? Infinity, seconds);
    else console.log(`warm-up ${name}: ${String(value)}`);
  }
}

const reference = best['open + count(*)'];
console.log(`${rows.toLocaleString('en-GB')} receipts, ${customers.toLocaleString('en-GB')} customers, ${(bytes / 2 ** 20).toFixed(0)} MiB; best of ${repeat}`);
for (const [name, seconds] of Object.entries(best)) {
  console.log(`${name.padEnd(20)} ${seconds.toFixed(4).padStart(9)} s   ratio to open + count ${(seconds / reference).toFixed(seconds < reference / 100 ? 5 : 2)}`);
}
console.log(
  `quick_check runs on open for files up to ${FULL_CHECK_MAX_BYTES / 2 ** 20} MiB; this one (${(bytes / 2 ** 20).toFixed(0)} MiB) ` +
    (bytes <= FULL_CHECK_MAX_BYTES ? 'gets it.' : 'gets the header checks only.'),
);
