/**
 * Benchmark: the Certainty screen's live counts at 10,000 and 1,000,000 customers, before and
 * after the cached per-run summary, in one command. "Before" is the direct rule the view used to
 * apply on each call (read every placed membership, run computeFlags over all of them; also
 * timed with the columns already in memory, as the old view kept them for its last run). "After"
 * is the view as it is: the first call builds the summary, later calls read it. Each size's
 * answers are compared for equality. Figures are ratios against the "before" run of the same size
 * in this command, with absolute times beside them. databaseInfo's counts are timed the old way
 * (count(*) per table) and the new way beside them. The borderline table's first page (its total
 * from the same summary as the counts, then 100 rows by spend at stake) is timed under the same
 * slider positions, and its total checked against the counts.
 *   npx tsx test/bench/certainty-scale.ts [--small 10000] [--large 1000000] [--calls 20] [--keep]
 *     [--receipts-db FILE]  also time databaseInfo's counts on a big receipts database (read only)
 */
import { createWriteStream, existsSync, mkdirSync, rmSync } from 'node:fs';
import { once } from 'node:events';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Sqlite from 'better-sqlite3';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { startRunInput } from '../../src/api/contract.js';
import { runSettingsFor } from '../../src/api/long-tasks.js';
import { borderlinePage } from '../../src/runs/read/borderline.js';
import { certaintySummary as certaintyView } from '../../src/runs/read/certainty.js';
import { databaseCounts } from '../../src/store/database-counts.js';
import { dataRange } from '../../src/features/compute.js';
import { importFile } from '../../src/ingest/import-file.js';
import { runSegmentation } from '../../src/runs/run.js';
import { tableCounts } from '../../src/store/customers-repo.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { certaintyByRule, readColumnsByRule } from '../api/certainty-reference.js';
import { benchFlag } from './synthetic-receipts.js';

const small = benchFlag('small', 10_000);
const large = benchFlag('large', 1_000_000);
const calls = benchFlag('calls', 20);
const keep = process.argv.includes('--keep');
const receiptsDbAt = process.argv.indexOf('--receipts-db');
const receiptsDb = receiptsDbAt >= 0 ? process.argv[receiptsDbAt + 1] : null;
const folder = join(tmpdir(), 'spendmix-certainty-scale');
mkdirSync(folder, { recursive: true });

/** Writes a CSV file from lines made one at a time, in 1 MB chunks. */
async function writeLines(path: string, header: string, count: number, line: (i: number) => string): Promise<void> {
  const out = createWriteStream(path);
  out.write(`${header}\n`);
  let chunk = '';
  for (let i = 0; i < count; i++) {
    chunk += `${line(i)}\n`;
    if (chunk.length > 1 << 20) {
      if (!out.write(chunk)) await once(out, 'drain');
      chunk = '';
    }
  }
  out.end(chunk);
  await once(out, 'finish');
}

const customerId = (i: number) => `K${String(i).padStart(8, '0')}`;

/** Invented customers' imported features in four overlapping spend groups (log-normal). */
async function writeFeatures(path: string, customers: number): Promise<void> {
  const generator = xoroshiro128plus(customers);
  const uniform = () => uniformFloat64(generator);
  const normal = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  const centres = [600, 300, 150, 60].map((spend, g) => ({ spend, visits: [10, 7, 5, 2.5][g] }));
  await writeLines(path, 'customer_id,spend_per_month,visits_per_month,average_basket', customers, (i) => {
    const centre = centres[Math.floor(uniform() * 4)];
    const spend = centre.spend * Math.exp(0.45 * normal());
    const visits = centre.visits * Math.exp(0.4 * normal());
    return `${customerId(i)},${spend.toFixed(2)},${visits.toFixed(2)},${(spend / visits).toFixed(2)}`;
  });
}

async function storedRun(customers: number): Promise<{ db: Database; runId: number }> {
  const path = join(folder, `certainty-${customers}.db`);
  if (keep && existsSync(path)) {
    const db = openDatabase(path);
    const runId = db.prepare('SELECT max(run_id) FROM runs').pluck().get() as number | null;
    if (runId !== null) {
      console.log(`${customers} customers: reusing ${path} (run ${runId})`);
      return { db, runId };
    }
    db.close();
  }
  for (const suffix of ['', '-wal', '-shm']) rmSync(path + suffix, { force: true });
  const started = performance.now();
  const csv = join(folder, `features-${customers}.csv`);
  await writeFeatures(csv, customers);
  const db = openDatabase(path);
  await importFile(db, { path: csv, kind: 'features', options: { reportDir: folder } });
  // The customers table too, so databaseInfo counts a full-size one.
  await writeLines(csv, 'customer_id,joined,marketing_consent,home_store', customers, (i) => `${customerId(i)},2024-0${1 + (i % 9)}-15,${i % 4 ? 'yes' : 'no'},S0${i % 8}`);
  await importFile(db, { path: csv, kind: 'customers', options: { reportDir: folder } });
  rmSync(csv, { force: true });
  const settings = startRunInput.parse({ asOf: '2026-11-30', windowMonths: 12, mode: 'refit', parentRunId: null, k: 4, covariance: 'diag', restarts: 1, seed: 1, maxIterations: 40 });
  const run = await runSegmentation(db, runSettingsFor(db, settings));
  console.log(`${customers} customers: built in ${((performance.now() - started) / 1000).toFixed(1)} s (run ${run.runId}, ${run.customers} placed)`);
  return { db, runId: run.runId };
}

/** Slider positions as the screen sends them, moving the way an analyst drags (on the 0.01 / 0.1 steps). */
function sliderMoves(count: number): { borderlineConfidence: number; borderlineMargin: number; atypicalPercentile: number }[] {
  return Array.from({ length: count }, (_, i) => ({
    borderlineConfidence: Number((0.5 + (i % 40) / 100).toFixed(2)),
    borderlineMargin: Number((0.1 + (i % 25) / 100).toFixed(2)),
    atypicalPercentile: Number((0.5 + (i % 30) / 10).toFixed(1)),
  }));
}

/** Thresholds between the grid's edges (the API accepts any), answered by scanning the cut cells. */
function offGridMoves(count: number) {
  return sliderMoves(count).map((move, i) => ({ ...move, borderlineConfidence: move.borderlineConfidence + 0.00337 * ((i % 3) + 1), borderlineMargin: move.borderlineMargin + 0.00511 }));
}

const ms = (start: number) => performance.now() - start;
const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];
const show = (value: number) => (value >= 100 ? value.toFixed(0) : value >= 1 ? value.toFixed(1) : value.toFixed(3));

interface SizeFigures {
  customers: number;
  beforeFirst: number;
  beforeRepeat: number;
  afterFirst: number;
  afterRepeat: number;
  afterOffGrid: number;
  /** The borderline table's first page (total and 100 rows) under each slider position: first call and median of the later ones. */
  tableFirst: number;
  tableRepeat: number;
}

async function measure(customers: number): Promise<SizeFigures> {
  const { db, runId } = await storedRun(customers);
  const moves = sliderMoves(calls);
  const bins = 20;

  // Before: each call read everything and applied the rule to every membership.
  let started = performance.now();
  const columns = readColumnsByRule(db, runId);
  const firstBefore = certaintyByRule(runId, columns, { ...moves[0], bins });
  const beforeFirst = ms(started);
  const beforeAnswers = [firstBefore];
  const beforeTimes: number[] = [];
  for (const move of moves.slice(1)) {
    started = performance.now();
    beforeAnswers.push(certaintyByRule(runId, columns, { ...move, bins }));
    beforeTimes.push(ms(started));
  }

  // After: the view itself (its first call on the run builds the summary).
  started = performance.now();
  const afterAnswers = [certaintyView(db, { runId, ...moves[0], bins })];
  const afterFirst = ms(started);
  const afterTimes: number[] = [];
  for (const move of moves.slice(1)) {
    started = performance.now();
    afterAnswers.push(certaintyView(db, { runId, ...move, bins }));
    afterTimes.push(ms(started));
  }
  const offGrid = offGridMoves(calls);
  const offGridTimes: number[] = [];
  let offGridSame = true;
  for (const move of offGrid) {
    started = performance.now();
    const answer = certaintyView(db, { runId, ...move, bins });
    offGridTimes.push(ms(started));
    offGridSame &&= JSON.stringify(answer) === JSON.stringify(certaintyByRule(runId, columns, { ...move, bins }));
  }
  // The borderline table under the same sliders: its total comes from the same summary as the counts.
  const tableTimes: number[] = [];
  let tableSame = true;
  for (const [i, move] of moves.entries()) {
    started = performance.now();
    const page = borderlinePage(db, { runId, offset: 0, limit: 100, borderlineConfidence: move.borderlineConfidence, borderlineMargin: move.borderlineMargin });
    tableTimes.push(ms(started));
    tableSame &&= page.total === afterAnswers[i].borderline;
  }
  const same = JSON.stringify(afterAnswers) === JSON.stringify(beforeAnswers) && tableSame;
  console.log(
    `${customers.toLocaleString('en-GB')} customers (${columns.confidence.length.toLocaleString('en-GB')} placed): answers equal to the rule's: ` +
      `${same && offGridSame ? 'yes' : 'NO'} (${calls} slider positions, ${calls} off-grid thresholds)`,
  );
  db.close();
  return {
    customers,
    beforeFirst,
    beforeRepeat: median(beforeTimes),
    afterFirst,
    afterRepeat: median(afterTimes),
    afterOffGrid: median(offGridTimes),
    tableFirst: tableTimes[0],
    tableRepeat: median(tableTimes.slice(1)),
  };
}

const figures = [await measure(small), await measure(large)];
console.log('\nCertainty call, ms (ratio = after / before at the same size; median of the later calls):');
for (const f of figures) {
  console.log(
    `  ${f.customers.toLocaleString('en-GB').padStart(9)} customers: ` +
      `first call ${show(f.beforeFirst)} → ${show(f.afterFirst)} ms (× ${(f.afterFirst / f.beforeFirst).toFixed(2)}); ` +
      `later calls ${show(f.beforeRepeat)} → ${show(f.afterRepeat)} ms (× ${(f.afterRepeat / f.beforeRepeat).toFixed(4)}, ${(f.beforeRepeat / f.afterRepeat).toFixed(0)} times faster); ` +
      `off-grid thresholds ${show(f.afterOffGrid)} ms; borderline table page ${show(f.tableFirst)} ms first, ${show(f.tableRepeat)} ms later`,
  );
}
const [s, l] = figures;
console.log(
  `  growth ${l.customers / s.customers}× customers: later calls before × ${(l.beforeRepeat / s.beforeRepeat).toFixed(1)}, after × ${(l.afterRepeat / s.afterRepeat).toFixed(1)}`,
);

/** databaseInfo's counts, the old way (count(*) of each table) against the new (the importer's counts where they check out). */
function timeCounts(label: string, db: Database) {
  let started = performance.now();
  const old = tableCounts(db);
  const oldMs = ms(started);
  started = performance.now();
  const now = databaseCounts(db);
  const newMs = ms(started);
  console.log(
    `  ${label}: count(*) ${show(oldMs)} ms → ${show(newMs)} ms (× ${(newMs / oldMs).toFixed(3)}); ` +
      `count(*) says ${old.customers} customers, ${old.receipts} receipts, ${old.visits} visits; new ${now.customers}, ${now.receipts}, ${now.visits}`,
  );
}
console.log('\ndatabaseInfo counts:');
for (const customers of [small, large]) {
  const db = openDatabase(join(folder, `certainty-${customers}.db`));
  timeCounts(`${customers.toLocaleString('en-GB')} customers, features and customers imported`, db);
  db.close();
}
if (receiptsDb) {
  const db = new Sqlite(receiptsDb, { readonly: true, fileMustExist: true });
  timeCounts(`${receiptsDb} (read only)`, db);
  // A hand-built file's imports row may not record its rows (then the table is counted, as above);
  // what the quick path costs on a file this size is its lookups.
  let started = performance.now();
  const recorded = db.prepare("SELECT sum(rows_imported) FROM imports WHERE kind = 'receipts'").pluck().get();
  const largestId = db.prepare('SELECT max(row_id) FROM receipts').pluck().get();
  console.log(`    its quick-path lookups alone: ${show(ms(started))} ms (imports record ${recorded} receipts, largest row id ${largestId})`);
  started = performance.now();
  dataRange(db);
  console.log(`    databaseInfo's first/last data day (dataRange, not changed here): ${show(ms(started))} ms`);
  db.close();
}
if (!keep) for (const customers of [small, large]) for (const suffix of ['', '-wal', '-shm']) rmSync(join(folder, `certainty-${customers}.db${suffix}`), { force: true });
