/**
 * Campaign filters, bad input and failures: unknown segments list the valid ones, unusable
 * output paths say why, a file held open elsewhere is refused, and a cancelled or failed export
 * leaves no file behind (neither the target nor the temporary).
 */
import { mkdirSync, mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../src/errors.js';
import { exportSource } from '../../src/export/export-run.js';
import { nodeFileOperations } from '../../src/export/atomic-file.js';
import { neutraliseFormulaText } from '../../src/export/formula-safety.js';
import type { ExportSource } from '../../src/export/source.js';
import { customer, memorySource, segmentNames, variedCustomers } from './memory-source.js';
import { readCsv, readWorkbook, sheet, tableRecords } from './independent-readers.js';

function folder(): string {
  return mkdtempSync(join(tmpdir(), 'spendmix-export-'));
}

async function failure(promise: Promise<unknown>): Promise<Error> {
  try {
    await promise;
  } catch (error) {
    return error as Error;
  }
  throw new Error('expected the export to fail');
}

const rows = variedCustomers(300);

describe('campaign lists', () => {
  it('lists the chosen final segments above the minimum confidence, reviewed customers left out on request', async () => {
    const out = join(folder(), 'tier2.csv');
    const result = await exportSource(memorySource({ customers: rows }), {
      out,
      segments: [' Tier 2 '],
      minConfidence: 0.8,
      includeReviewed: false,
    });
    // The rule, spelled out: final segment Tier 2, no decision at all, confidence ≥ 0.8, consent yes.
    const wanted = rows.filter((row) => !row.tooNew && row.finalSegmentName === 'Tier 2' && row.decision === null && (row.confidence ?? 0) >= 0.8);
    const ids = readCsv(out).records.slice(1).map((record) => record[0]);
    expect(ids).toEqual(wanted.filter((row) => row.marketingConsent === 1).map((row) => row.customerId));
    expect(result.suppressedNoConsent).toBe(wanted.filter((row) => row.marketingConsent !== 1).length);
    expect(ids.length).toBeGreaterThan(0);
  });

  it('includes reviewed customers by their final segment (moves count where they were moved), never "exclude"', async () => {
    const out = join(folder(), 'reviewed.xlsx');
    await exportSource(memorySource({ customers: rows }), { out, segments: [segmentNames[2]], minConfidence: 0.99 });
    const listed = tableRecords(sheet(readWorkbook(out), 'Customers'));
    const wanted = rows.filter(
      (row) =>
        !row.tooNew &&
        row.decision !== 'exclude' &&
        row.finalSegmentName === segmentNames[2] &&
        (row.decision !== null || (row.confidence ?? 0) >= 0.99) &&
        row.marketingConsent === 1,
    );
    expect(listed.map((record) => record['Customer id'].v)).toEqual(wanted.map((row) => row.customerId));
    expect(listed.some((record) => record['Review decision'].v === 'move')).toBe(true);
    expect(listed.some((record) => record['Review decision'].v === 'exclude')).toBe(false);
    for (const record of listed) expect(record['Final segment'].v).toBe(segmentNames[2]);
  });

  it('refuses a segment that does not exist, listing the valid ones', async () => {
    const dir = folder();
    const error = await failure(exportSource(memorySource({ customers: rows }), { out: join(dir, 'x.xlsx'), segments: ['Tier 2', 'Gold'] }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toContain('No segment named "Gold"');
    for (const name of segmentNames) expect(error.message).toContain(`"${name}"`);
    expect((error as InputError).details?.validSegments).toEqual(segmentNames);
    expect(readdirSync(dir)).toEqual([]);
  });

  it('refuses a minimum confidence outside 0..1 and a format that does not match the file name', async () => {
    const source = memorySource({ customers: rows });
    const dir = folder();
    await expect(exportSource(source, { out: join(dir, 'x.xlsx'), minConfidence: 1.5 })).rejects.toThrow(/between 0 and 1/);
    await expect(exportSource(source, { out: join(dir, 'x.xlsx'), format: 'csv' })).rejects.toThrow(/must end in \.csv/);
    await expect(exportSource(source, { out: join(dir, 'x.txt') })).rejects.toThrow(/must end in \.xlsx/);
    await expect(exportSource(source, { out: '  ' })).rejects.toBeInstanceOf(InputError);
    expect(readdirSync(dir)).toEqual([]);
  });
});

describe('formula neutralisation rule', () => {
  it('prefixes exactly the OWASP trigger characters (ASVS 5.0 1.2.10 plus CR and LF)', () => {
    for (const text of ['=A1', '+1', '-2', '@SUM(A1)', '\tx', '\rx', '\nx', '\0x']) expect(neutraliseFormulaText(text)).toBe(`'${text}`);
    for (const text of ['', 'A=1', ' =1', "'=1", 'Tier 1 — highest spend', '1-2', '€5']) expect(neutraliseFormulaText(text)).toBe(text);
  });
});

describe('unusable output paths', () => {
  const source = memorySource({ customers: rows.slice(0, 20) });

  it('says the folder does not exist', async () => {
    const error = await failure(exportSource(source, { out: join(folder(), 'missing', 'x.xlsx') }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toMatch(/the folder .*missing does not exist/);
  });

  it('says a folder was given instead of a file', async () => {
    const dir = folder();
    mkdirSync(join(dir, 'list.xlsx'));
    const error = await failure(exportSource(source, { out: join(dir, 'list.xlsx') }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toMatch(/is a folder/);
  });

  it('says part of the path is a file', async () => {
    const dir = folder();
    writeFileSync(join(dir, 'notes'), 'x');
    const error = await failure(exportSource(source, { out: join(dir, 'notes', 'x.csv') }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toMatch(/is a file, not a folder/);
  });

  it('refuses a target held open by another program before any work, and leaves it alone', async () => {
    const dir = folder();
    const out = join(dir, 'open.xlsx');
    writeFileSync(out, 'the spreadsheet program has this');
    const busy = Object.assign(new Error('resource busy or locked'), { code: 'EBUSY' });
    const files = { ...nodeFileOperations, probeWritable: async () => Promise.reject(busy) };
    const error = await failure(exportSource(source, { out, files }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toMatch(/is open in another program/);
    expect(readdirSync(dir)).toEqual(['open.xlsx']);
  });

  it('turns a lock met at the final rename (EPERM) into a clear message and removes the temporary file', async () => {
    const dir = folder();
    const out = join(dir, 'locked.csv');
    const locked = Object.assign(new Error('operation not permitted'), { code: 'EPERM' });
    const files = { ...nodeFileOperations, rename: async () => Promise.reject(locked) };
    const error = await failure(exportSource(source, { out, files }));
    expect(error).toBeInstanceOf(InputError);
    expect(error.message).toMatch(/permission denied, or the file is open in another program/);
    expect(readdirSync(dir)).toEqual([]);
  });
});

describe('cancel and failure leave no file', () => {
  /** A source of many rows that can fail or change between passes. */
  function largeSource(count: number, options: { failAt?: number; changeOnSecondPass?: boolean } = {}): ExportSource {
    const base = memorySource({ customers: [] });
    let passes = 0;
    return {
      ...base,
      customers: function* () {
        passes++;
        const extra = options.changeOnSecondPass && passes === 2 ? 1 : 0;
        for (let index = 0; index < count + extra; index++) {
          if (options.failAt !== undefined && passes === 2 && index === options.failAt) throw new Error('disk read failed');
          yield customer(`L${index}`);
        }
      },
    };
  }

  it('a cancel during the customer sheet stops with CancelledError and no file', async () => {
    const dir = folder();
    const controller = new AbortController();
    const phases: string[] = [];
    const error = await failure(
      exportSource(largeSource(60_000), {
        out: join(dir, 'big.xlsx'),
        signal: controller.signal,
        onProgress: (progress) => {
          phases.push(progress.phase);
          if (progress.phase === 'customers' && progress.done >= 20_000) controller.abort();
        },
      }),
    );
    expect(error).toBeInstanceOf(CancelledError);
    expect(phases).toContain('counting');
    expect(readdirSync(dir)).toEqual([]);
  });

  it('a source failing mid-way rethrows its error and leaves no file', async () => {
    const dir = folder();
    const error = await failure(exportSource(largeSource(5_000, { failAt: 3_000 }), { out: join(dir, 'fail.csv') }));
    expect(error.message).toBe('disk read failed');
    expect(readdirSync(dir)).toEqual([]);
  });

  it('a run that changes between the counting and the writing pass is refused', async () => {
    const dir = folder();
    const error = await failure(exportSource(largeSource(2_000, { changeOnSecondPass: true }), { out: join(dir, 'moved.xlsx') }));
    expect(error.message).toMatch(/changed while it was being exported/);
    expect(readdirSync(dir)).toEqual([]);
  });

  it('an existing file is replaced only when the new export is complete', async () => {
    const dir = folder();
    const out = join(dir, 'monthly.csv');
    writeFileSync(out, 'last month');
    const controller = new AbortController();
    controller.abort();
    await expect(exportSource(largeSource(10), { out, signal: controller.signal })).rejects.toBeInstanceOf(CancelledError);
    expect(readCsv(out).records).toEqual([['last month']]);
    await exportSource(largeSource(10), { out });
    expect(readCsv(out).records).toHaveLength(11);
    expect(readdirSync(dir)).toEqual(['monthly.csv']);
  });
});
