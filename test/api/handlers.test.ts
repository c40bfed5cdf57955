import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiInput, ApiMethod, ApiOutput, LongTaskMethod, TaskResults, TaskStarted } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { ApiSession } from '../../src/api/session.js';
import { CancelledError } from '../../src/errors.js';
import { openDatabase } from '../../src/store/database.js';

/**
 * The handler map on the real core, with long tasks on real worker threads: the committed demo
 * sample (500 invented customers, demo-data/sample) imported, one file under other column names
 * through a field → column mapping, a run, and the reads the screens make of it.
 */
const sample = fileURLToPath(new URL('../../demo-data/sample/', import.meta.url));

describe('handlers on the core, tasks on worker threads', () => {
  let folder: string;
  let session: ApiSession;
  const call = <M extends ApiMethod>(method: M, input: ApiInput<M>) => callApi(session, method, input) as Promise<ApiOutput<M>>;
  const finish = <M extends LongTaskMethod>(started: TaskStarted<M>) => session.tasks.wait(started) as Promise<TaskResults[M]>;

  beforeAll(() => {
    folder = mkdtempSync(join(tmpdir(), 'spendmix-handlers-'));
    session = new ApiSession({ dbPath: join(folder, 'handlers.db'), shell: 'cli' });
  });
  afterAll(() => session.close());

  it('previews a file under other column names, offers what it can, and names what is missing', async () => {
    const lines = readFileSync(join(sample, 'receipts.csv'), 'utf8').split('\n').slice(0, 201);
    lines[0] = 'Receipt,Card No,Shop,When,Department,Total';
    lines[50] = lines[50].replace(/,[^,]*$/, ',twelve euros');
    writeFileSync(join(folder, 'renamed.csv'), `${lines.join('\n')}\n`);

    const automatic = await call('previewFile', { path: join(folder, 'renamed.csv'), kind: 'receipts', rows: 5 });
    expect(automatic.mappingSource).toBe('automatic');
    expect(automatic.columns).toEqual(['Receipt', 'Card No', 'Shop', 'When', 'Department', 'Total']);
    expect(automatic.missingFields.sort()).toEqual(['customer_id', 'date']);
    // Synonyms still found the rest, reported field → column.
    expect(automatic.mapping).toMatchObject({ amount: 'Total', receipt_id: 'Receipt', store_id: 'Shop', category: 'Department' });

    const mapping = { customer_id: 'Card No', date: 'When', amount: 'Total', receipt_id: 'Receipt', store_id: 'Shop', category: 'Department' };
    const given = await call('previewFile', { path: join(folder, 'renamed.csv'), kind: 'receipts', mapping, rows: 60 });
    expect(given.mappingSource).toBe('given');
    expect(given.missingFields).toEqual([]);
    expect(given.rows[0].parsed).toMatchObject({ customer_id: lines[1].split(',')[1], date: lines[1].split(',')[3].slice(0, 10) });
    expect(given.rows[49].problem).toMatch(/amount/);
  });

  it('imports through a mapping on a worker thread, keeps the mapping for next month, and pages the report', async () => {
    copyFileSync(join(sample, 'customers.csv'), join(folder, 'customers.csv'));
    const customers = await finish(await call('importFile', { path: join(folder, 'customers.csv'), kind: 'customers' }));
    expect(customers).toMatchObject({ kind: 'customers', rowsImported: 500, rowsRejected: 0 });

    const mapping = { customer_id: 'Card No', date: 'When', amount: 'Total', receipt_id: 'Receipt', store_id: 'Shop', category: 'Department' };
    const progress: string[] = [];
    const unsubscribe = session.tasks.onEvent((event) => {
      if (event.type === 'progress') progress.push(event.phase);
    });
    const result = await finish(await call('importFile', { path: join(folder, 'renamed.csv'), kind: 'receipts', mapping }));
    unsubscribe();
    expect(progress[0]).toBe('starting');
    expect(result).toMatchObject({ rowsRead: 200, rowsImported: 199, rowsRejected: 1, alreadyImported: false });
    expect(result.importId).toEqual(expect.any(Number));

    expect(await call('savedMapping', { kind: 'receipts' })).toEqual({ kind: 'receipts', mapping });
    const history = await call('listImports', {});
    expect(history.find((entry) => entry.importId === result.importId)?.mapping).toEqual(mapping);
    const report = await call('importReport', { importId: result.importId!, limit: 10 });
    expect(report.total).toBe(1);
    expect(report.rows[0]).toMatchObject({ line: 51, column: 'Total', value: 'twelve euros' });

    const again = await finish(await call('importFile', { path: join(folder, 'renamed.csv'), kind: 'receipts', mapping }));
    expect(again).toMatchObject({ alreadyImported: true, importId: null });
  });

  it('a cancelled demo load leaves the database as it was', async () => {
    const before = await call('databaseInfo', {});
    const started = await call('loadDemo', { customers: 2000 });
    await new Promise<void>((resolve) => {
      const off = session.tasks.onEvent((event) => {
        if (event.taskId === started.taskId && event.type === 'progress' && event.phase === 'generating') {
          off();
          resolve();
        }
      });
    });
    expect(await call('cancelTask', { taskId: started.taskId })).toEqual({ taskId: started.taskId, cancelled: true });
    await expect(finish(started)).rejects.toBeInstanceOf(CancelledError);
    expect(await call('taskStatus', { taskId: started.taskId })).toMatchObject({ state: 'cancelled' });
    const after = await call('databaseInfo', {});
    expect({ customers: after.customers, receipts: after.receipts, imports: after.imports }).toEqual({
      customers: before.customers,
      receipts: before.receipts,
      imports: before.imports,
    });
  });

  it('runs a segmentation and answers every read of it in the contract shapes', async () => {
    for (const kind of ['receipts', 'visits'] as const) {
      copyFileSync(join(sample, `${kind}.csv`), join(folder, `${kind}.csv`));
      await finish(await call('importFile', { path: join(folder, `${kind}.csv`), kind }));
    }
    const summary = await finish(await call('startRun', { asOf: '2026-11-30', kMin: 2, kMax: 3, covariance: 'diag', restarts: 2 }));
    const runId = summary.runId;
    expect(summary.customers).toBeGreaterThan(400);

    const detail = await call('runSummary', { runId });
    expect(detail.settings).toMatchObject({ asOf: '2026-11-30', kMin: 2, kMax: 3, covariance: 'diag' });
    // No features asked for: the run takes the database's default set.
    const options = await call('modelOptions', {});
    expect(detail.features.map((feature) => feature.feature)).toEqual(options.features.filter((feature) => feature.inDefaultSet).map((feature) => feature.name));

    const segments = await call('segments', { runId });
    expect(segments.segments).toHaveLength(summary.segmentCount);
    expect(segments.components).toHaveLength(summary.k);
    expect(segments.segments.flatMap((segment) => segment.components).sort()).toEqual(segments.components.map((shape) => shape.component).sort());
    const d = segments.features.length;
    for (const segment of segments.segments) {
      expect(segment.mean).toHaveLength(d);
      expect(segment.covariance).toHaveLength(d * d);
    }
    for (const shape of segments.components) {
      expect(segments.segments.find((segment) => segment.segment === shape.segment)!.components).toContain(shape.component);
      // A diagonal structure: each component's off-diagonal covariances are zero.
      expect(shape.covariance[1]).toBe(0);
    }
    expect(segments.segments.reduce((sum, segment) => sum + segment.customers, 0)).toBe(summary.customers);

    const sweep = await call('sweepTable', { runId });
    expect(sweep.filter((row) => row.chosen)).toHaveLength(1);
    expect(sweep.find((row) => row.chosen)).toMatchObject({ k: summary.k, covariance: 'diag' });

    // The Certainty counts at the run's own thresholds equal the stored flags (same rule).
    const certainty = await call('certainty', { runId, borderlineConfidence: 0.7, borderlineMargin: 0.2, atypicalPercentile: 1 });
    expect({ borderline: certainty.borderline, atypical: certainty.atypical }).toEqual({ borderline: summary.borderline, atypical: summary.atypical });
    expect(certainty.confidenceHistogram.reduce((sum, bin) => sum + bin.customers, 0)).toBe(summary.customers);
    const stricter = await call('certainty', { runId, borderlineConfidence: 0.95, borderlineMargin: 0.2, atypicalPercentile: 1 });
    expect(stricter.borderline).toBeGreaterThanOrEqual(certainty.borderline);
    expect((await call('borderline', { runId, limit: 5 })).total).toBe(summary.borderline);
    expect((await call('borderline', { runId, limit: 5, borderlineConfidence: 0.95 })).total).toBe(stricter.borderline);

    const sample500 = await call('segmentSample', { runId, limit: 100 });
    expect(sample500.points.length).toBeLessThanOrEqual(100);
    expect(sample500.points[0].model).toHaveLength(d);

    const queue = await call('reviewQueue', { runId, limit: 3 });
    expect(queue.done).toBe(0);
    const target = segments.segments.find((segment) => segment.segment !== queue.rows[1].segment)!.segment;
    const moved = await call('decideReview', { runId, customerId: queue.rows[1].customerId, action: 'move', segment: target, note: 'checked by hand' });
    expect(moved).toMatchObject({ customerId: queue.rows[1].customerId, finalSegment: target, decision: { action: 'move', note: 'checked by hand' } });
    expect((await call('reviewQueue', { runId, status: 'done' })).total).toBe(1);

    const renamed = await call('renameSegment', { runId, segment: segments.segments[0].segment, name: 'Weekend families' });
    expect(renamed.name).toBe('Weekend families');
    expect(renamed.covariance).toHaveLength(d * d);

    expect(await call('movement', { runId })).toMatchObject({ parentRunId: null, matrix: [], stability: null });

    // While another writer holds the database, a rename says so plainly (and changes nothing).
    const other = openDatabase(join(folder, 'handlers.db'));
    other.exec('BEGIN IMMEDIATE');
    try {
      await expect(call('renameSegment', { runId, segment: segments.segments[0].segment, name: 'Never saved' })).rejects.toThrow(
        /could not be saved just now: another program is writing/,
      );
    } finally {
      other.exec('ROLLBACK');
      other.close();
    }
    expect((await call('segments', { runId })).segments[0].name).toBe('Weekend families');

    const out = join(folder, 'list.xlsx');
    const exported = await finish(await call('exportRun', { runId, out }));
    expect(exported).toMatchObject({ out, sheets: expect.arrayContaining(['Overview', 'Customers']) });
    expect(exported.customersExported + exported.suppressedNoConsent).toBeGreaterThan(0);
  });
});
