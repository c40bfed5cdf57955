/**
 * End to end on the committed demo sample (invented Larkmoor Fresh Markets data): load it through
 * the importer, run two monthly segmentations, record review decisions, export through the CLI,
 * and read the files back with openpyxl and csv-parse. Consent is taken from the sample's own
 * customers.csv, not from the database, so the suppression check does not trust what it checks.
 */
import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportRunInput } from '../../src/api/contract.js';
import { runLongTask } from '../../src/api/long-tasks.js';
import { cli } from '../support/run-cli.js';
import { importFile } from '../../src/ingest/import-file.js';
import type { MembershipRow } from '../../src/api/contract.js';
import { movementOf } from '../../src/runs/read/movement.js';
import { listSegments } from '../../src/runs/read/segments.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { allMemberships, decide, runMonth, wholeQueue } from '../support/core-calls.js';
import { readCsv, readWorkbook, sheet, tableRecords, type ReadWorkbook } from './independent-readers.js';

const sampleDir = new URL('../../demo-data/sample/', import.meta.url).pathname;

/** marketing_consent per customer as the sample file says (the generator writes no quoted fields). */
function sampleConsent(): Map<string, string> {
  const lines = readFileSync(join(sampleDir, 'customers.csv'), 'utf8').trim().split(/\r?\n/);
  const header = lines[0].split(',');
  const idColumn = header.indexOf('customer_id');
  const consentColumn = header.indexOf('marketing_consent');
  return new Map(lines.slice(1).map((line) => line.split(',')).map((cells) => [cells[idColumn], cells[consentColumn]]));
}

describe('export of a real run of the demo sample', () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-export-e2e-'));
  const dbPath = join(folder, 'larkmoor.db');
  const outDir = mkdtempSync(join(tmpdir(), 'spendmix-export-out-'));
  const consent = sampleConsent();
  let db: Database;
  let runId: number;
  const decided: { excluded: string; moved: string; movedTo: string; kept: string } = { excluded: '', moved: '', movedTo: '', kept: '' };
  let book: ReadWorkbook;
  let workbookResult: { out: string; sheets: string[]; customersExported: number; suppressedNoConsent: number };

  beforeAll(async () => {
    db = openDatabase(dbPath);
    for (const kind of ['customers', 'receipts', 'visits'] as const) {
      await importFile(db, { path: join(sampleDir, `${kind}.csv`), kind, options: { reportDir: folder } });
    }
    const settings = { windowMonths: 12, mode: 'refit' as const, k: 3, covariance: 'diag' as const, restarts: 2, seed: 5 };
    await runMonth(db, { ...settings, asOf: '2026-10-31' });
    runId = (await runMonth(db, { ...settings, asOf: '2026-11-30' })).runId;

    // Three decisions on consenting queued customers: exclude one, move one, keep one.
    const queue = wholeQueue(db, runId).filter((item) => consent.get(item.customerId) === 'yes');
    expect(queue.length).toBeGreaterThanOrEqual(3);
    const segments = listSegments(db, runId).segments;
    decided.excluded = queue[0].customerId;
    decided.moved = queue[1].customerId;
    decided.movedTo = segments.find((segment) => segment.name !== queue[1].segmentName)?.name as string;
    decided.kept = queue[2].customerId;
    decide(db, { runId, customerId: decided.excluded, action: 'exclude', note: 'staff card', reviewer: 'analyst' });
    decide(db, { runId, customerId: decided.moved, action: 'move', segment: decided.movedTo, reviewer: 'analyst' });
    decide(db, { runId, customerId: decided.kept, action: 'keep', reviewer: 'analyst' });

    const out = join(outDir, 'run.xlsx');
    const result = await cli('export', '--db', dbPath, '--run', 'latest', '--out', out, '--json');
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    workbookResult = JSON.parse(result.stdout);
    book = readWorkbook(out);
  });

  afterAll(() => db?.close());

  it('prints the JSON of DESIGN.md §10 and writes the sheets it names', () => {
    expect(Object.keys(workbookResult).sort()).toEqual(['customersExported', 'out', 'sheets', 'suppressedNoConsent']);
    expect(workbookResult.sheets).toEqual(['Overview', 'Customers', 'Review', 'Movement']);
    expect(book.sheets.map((s) => s.name)).toEqual(workbookResult.sheets);
    expect(book.formulaElements).toBe(0);
    expect(sheet(book, 'Customers').frozen).toBe('A2');
  });

  it('round trip: every listed customer has the stored final segment, model segment, confidence and flags', () => {
    const stored = new Map(allMemberships(db, runId).map((membership) => [membership.customerId, membership]));
    const records = tableRecords(sheet(book, 'Customers'));
    expect(records.length).toBe(workbookResult.customersExported);
    for (const record of records) {
      const membership = stored.get(String(record['Customer id'].v)) as MembershipRow;
      expect(membership).toBeDefined();
      expect(record['Final segment'].v).toBe(membership.finalSegmentName);
      expect(record['Model segment'].v).toBe(membership.segmentName);
      expect(record.Confidence.v).toBe(membership.confidence);
      expect(record['Second segment'].v).toBe(membership.secondSegmentName);
      expect(record['Second probability'].v).toBe(membership.secondProbability);
      const flags = [membership.borderline ? 'borderline' : null, membership.atypical ? 'atypical' : null].filter(Boolean).join(', ');
      expect(record.Flags.v ?? '').toBe(flags);
      expect(record['Review decision'].v).toBe(membership.decision?.action ?? null);
      expect(record['Spend in window (EUR)'].v).toBeCloseTo(membership.revenue, 9);
    }
    // Every placed, consenting, not-excluded customer is there: the default list is complete.
    const expected = [...stored.values()].filter((m) => !m.tooNew && !m.excluded && consent.get(m.customerId) === 'yes').map((m) => m.customerId);
    expect(records.map((record) => record['Customer id'].v)).toEqual(expected);
    expect(workbookResult.suppressedNoConsent).toBe([...stored.values()].filter((m) => !m.tooNew && !m.excluded && consent.get(m.customerId) !== 'yes').length);
  });

  it('applies the review decisions: excluded out, moved in the target segment, kept listed', () => {
    const byId = new Map(tableRecords(sheet(book, 'Customers')).map((record) => [String(record['Customer id'].v), record]));
    expect(byId.has(decided.excluded)).toBe(false);
    expect(byId.get(decided.moved)?.['Final segment'].v).toBe(decided.movedTo);
    expect(byId.get(decided.moved)?.['Review decision'].v).toBe('move');
    expect(byId.get(decided.kept)?.['Review decision'].v).toBe('keep');
    const review = new Map(tableRecords(sheet(book, 'Review')).map((record) => [String(record['Customer id'].v), record]));
    expect(review.get(decided.excluded)?.Decision.v).toBe('exclude');
    expect(review.get(decided.excluded)?.Note.v).toBe('staff card');
    expect(review.get(decided.excluded)?.['Decided at'].t).toBe('d');
  });

  it('writes the stored movement matrix', () => {
    const movement = movementOf(db, runId);
    expect(movement.parentRunId).not.toBeNull();
    const records = tableRecords(sheet(book, 'Movement'));
    expect(records.map((record) => record['Last month \\ this month'].v)).toEqual(movement.parentSegments.map((s) => s.name));
    records.forEach((record, i) => {
      movement.currentSegments.forEach((segment, j) => expect(record[segment.name].v).toBe(movement.matrix[i][j]));
    });
  });

  it('suppression over the whole demo: no customer with consent "no" in any campaign list', async () => {
    const refused = new Set([...consent].filter(([, value]) => value !== 'yes').map(([id]) => id));
    expect(refused.size).toBeGreaterThan(0);
    const segments = listSegments(db, runId).segments.map((segment) => segment.name);
    const lists: { segments: string[]; format: 'xlsx' | 'csv'; extra: string[] }[] = [
      { segments: [], format: 'xlsx', extra: ['--min-confidence', '0.9'] },
      { segments: [], format: 'csv', extra: [] },
      { segments: [], format: 'csv', extra: ['--no-include-reviewed'] },
      { segments: segments.slice(0, 2), format: 'xlsx', extra: [] },
      ...segments.map((name) => ({ segments: [name], format: 'csv' as const, extra: [] })),
    ];
    let listed = 0;
    for (const [index, list] of lists.entries()) {
      const out = join(outDir, `list-${index}.${list.format}`);
      const args = ['export', '--db', dbPath, '--run', String(runId), '--out', out, '--json', ...list.extra];
      if (list.segments.length > 0) args.push('--segments', list.segments.join(','));
      const result = await cli(...args);
      expect(result.code, result.stderr).toBe(0);
      let customerIds: string[];
      let otherIds: string[] = [];
      if (list.format === 'csv') {
        customerIds = readCsv(out).records.slice(1).map((record) => record[0]);
      } else {
        const read = readWorkbook(out);
        const ids = (name: string) => tableRecords(sheet(read, name)).map((record) => String(record['Customer id'].v));
        customerIds = ids('Customers');
        otherIds = ids('Review');
      }
      for (const id of [...customerIds, ...otherIds]) expect(refused.has(id)).toBe(false);
      expect(JSON.parse(result.stdout).customersExported).toBe(customerIds.length);
      listed += customerIds.length;
    }
    expect(listed).toBeGreaterThan(0);
  });

  it('the overview stores the convergence tolerance and the regularisation as numbers', () => {
    const entries = new Map((sheet(book, 'Overview').rows ?? []).map((row) => [row[0]?.v, row[1]]));
    expect(entries.get('Convergence tolerance')).toMatchObject({ t: 'n', v: 0.001, f: 'General' });
    expect(entries.get('Covariance regularisation')).toMatchObject({ t: 'n', v: 1e-6, f: 'General' });
  });

  it('--csv-dialect semicolon and --csv-raw-ids through the CLI, and the same through the API task', async () => {
    const out = join(outDir, 'semicolon.csv');
    const result = await cli('export', '--db', dbPath, '--run', 'latest', '--out', out, '--csv-dialect', 'semicolon', '--csv-raw-ids', '--json');
    expect(result.code, result.stderr).toBe(0);
    const lines = readFileSync(out, 'utf8').split('\r\n');
    expect(lines[0]).toBe('\uFEFFCustomer id;Final segment;Model segment;Confidence;Second segment;Second probability;Flags;Review decision;Marketing consent;Spend in window (EUR);Spend per month (EUR per month);Visit rate (visits per month);Basket size (EUR)');
    expect(lines[1].split(';')[3]).toMatch(/^0,\d{4}$/);
    expect(lines[1].split(';')[9]).toMatch(/^-?\d+,\d\d$/);
    const viaTask = join(outDir, 'task.csv');
    await runLongTask({ method: 'exportRun', dbPath, input: exportRunInput.parse({ runId, out: viaTask, format: 'csv', csvDialect: 'semicolon', csvRawIds: true }) }, { signal: new AbortController().signal, onProgress: () => {} });
    expect(readFileSync(viaTask, 'utf8')).toBe(readFileSync(out, 'utf8'));
    const bad = await cli('export', '--db', dbPath, '--run', 'latest', '--out', join(outDir, 'x.csv'), '--csv-dialect', 'tab');
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('(csvDialect, --csv-dialect) must be one of comma, semicolon (got "tab")');
  });

  it('refuses bad input with exit code 2, a clear message and no file', async () => {
    const before = readdirSync(outDir).length;
    const unknownRun = await cli('export', '--db', dbPath, '--run', '99', '--out', join(outDir, 'x.xlsx'));
    expect(unknownRun.code).toBe(2);
    expect(unknownRun.stderr).toMatch(/There is no run 99; runs in this database: 1, 2/);
    const unknownSegment = await cli('export', '--db', dbPath, '--run', 'latest', '--out', join(outDir, 'x.xlsx'), '--segments', 'Platinum');
    expect(unknownSegment.code).toBe(2);
    expect(unknownSegment.stderr).toMatch(/No segment named "Platinum" in this run\. The segments are: "Tier 1 — highest spend"/);
    const missingFolder = await cli('export', '--db', dbPath, '--run', 'latest', '--out', join(outDir, 'no', 'x.xlsx'));
    expect(missingFolder.code).toBe(2);
    expect(missingFolder.stderr).toMatch(/does not exist/);
    const badConfidence = await cli('export', '--db', dbPath, '--run', 'latest', '--out', join(outDir, 'x.xlsx'), '--min-confidence', '2');
    expect(badConfidence.code).toBe(2);
    const noDatabase = await cli('export', '--db', join(folder, 'none.db'), '--run', 'latest', '--out', join(outDir, 'x.xlsx'));
    expect(noDatabase.code).toBe(2);
    expect(noDatabase.stderr).toMatch(/does not exist/);
    expect(readdirSync(outDir).length).toBe(before);
  });
});
