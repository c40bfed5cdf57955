/**
 * Our exports as LibreOffice Calc reads them, in an English (en-US) and a German (de-DE) locale,
 * compared cell by cell with what we wrote: the workbook against openpyxl's reading of it, the
 * CSV lists against their own text (each dialect opened in the locale it is for). Every number
 * must arrive as the same number, every text as the same text, nothing as a formula; the
 * auto-filters must be there and the settings must be numbers.
 *
 * LibreOffice writes numbers with 15 significant digits when it saves (observed), so workbook
 * numbers are compared to 15 significant digits; the CSV numbers, rounded to at most 4 decimals,
 * exactly. Run on the committed demo sample (invented data) through the importer and a real run.
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportRun, exportSource } from '../../src/export/export-run.js';
import { importFile } from '../../src/ingest/import-file.js';
import { runMonth } from '../support/core-calls.js';
import { openDatabase } from '../../src/store/database.js';
import { readWorkbook, sheet, tableRecords } from './independent-readers.js';
import { compareCsv, compareWorkbooks, libreOfficeVersion, readWithLibreOffice, type OfficeLocale } from './libreoffice.js';
import { customer, memorySource } from './memory-source.js';

const sampleDir = new URL('../../demo-data/sample/', import.meta.url).pathname;
const version = libreOfficeVersion();

describe.skipIf(version === null && !process.env.CI)(`exports read by LibreOffice (${version ?? 'not installed'})`, () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-lo-export-'));
  const files = { xlsx: join(folder, 'run.xlsx'), comma: join(folder, 'run.csv'), semicolon: join(folder, 'run-semicolon.csv') };

  beforeAll(async () => {
    const db = openDatabase(join(folder, 'larkmoor.db'));
    for (const kind of ['customers', 'receipts', 'visits'] as const) await importFile(db, { path: join(sampleDir, `${kind}.csv`), kind, options: { reportDir: folder } });
    const settings = { windowMonths: 12, mode: 'refit' as const, k: 3, covariance: 'diag' as const, restarts: 2, seed: 5 };
    await runMonth(db, { ...settings, asOf: '2026-10-31' });
    await runMonth(db, { ...settings, asOf: '2026-11-30' });
    await exportRun(db, { run: 'latest', out: files.xlsx });
    await exportRun(db, { run: 'latest', out: files.comma });
    await exportRun(db, { run: 'latest', out: files.semicolon, csvDialect: 'semicolon' });
    db.close();
  });

  for (const locale of ['en-US', 'de-DE'] as OfficeLocale[]) {
    it(`${locale}: the workbook's every number, date and text as written; filters shown; settings are numbers`, () => {
      const ours = readWorkbook(files.xlsx);
      const theirs = readWithLibreOffice(files.xlsx, locale);
      const comparison = compareWorkbooks(ours, theirs);
      expect(comparison.mismatches).toEqual([]);
      expect(comparison.numbers).toBeGreaterThan(2000);
      // LibreOffice keeps an auto-filter only when it recognised it; it saves it back as the sheet's filter.
      for (const name of ['Customers', 'Review', 'Movement']) expect(sheet(theirs, name).autoFilter, name).toBe(sheet(ours, name).autoFilter);
      const overview = new Map((sheet(theirs, 'Overview').rows ?? []).map((row) => [row[0]?.v, row[1]]));
      expect(overview.get('Convergence tolerance')).toMatchObject({ t: 'n', v: 0.001 });
      expect(overview.get('Covariance regularisation')).toMatchObject({ t: 'n', v: 1e-6 });
    });
  }

  it('en-US: the comma dialect, every field as written', () => {
    const comparison = compareCsv(files.comma, ',', readWithLibreOffice(files.comma, 'en-US', ',').sheets[0]);
    expect(comparison.mismatches).toEqual([]);
    expect(comparison.numbers).toBeGreaterThan(1000);
  });

  it('de-DE: the semicolon dialect (decimal comma), every field as written', () => {
    const comparison = compareCsv(files.semicolon, ';', readWithLibreOffice(files.semicolon, 'de-DE', ';').sheets[0]);
    expect(comparison.mismatches).toEqual([]);
    expect(comparison.numbers).toBeGreaterThan(1000);
  });

  it('de-DE misreads the comma dialect, which is why the semicolon dialect exists', () => {
    const comparison = compareCsv(files.comma, ',', readWithLibreOffice(files.comma, 'de-DE', ',').sheets[0]);
    expect(comparison.mismatches.length).toBeGreaterThan(100);
  });

  describe('ids that look like formulas', () => {
    const ids = ['=1+2', '-4x', '+49 30 1234', '@handle', '=HYPERLINK("http://example.invalid","x")'];
    const rows = [...ids.map((id) => customer(id)), customer('plain-1')];
    const out = join(folder, 'ids.xlsx');
    const csv = join(folder, 'ids.csv');

    beforeAll(async () => {
      await exportSource(memorySource({ customers: rows }), { out });
      await exportSource(memorySource({ customers: rows }), { out: csv });
    });

    it('XLSX: arrive unchanged, as text, never formulas, in openpyxl and in LibreOffice', () => {
      const mine = readWorkbook(out);
      expect(mine.formulaElements).toBe(0);
      const openpyxlIds = tableRecords(sheet(mine, 'Customers')).map((record) => record['Customer id']);
      expect(openpyxlIds.map((cell) => [cell.v, cell.t, cell.q ?? false])).toEqual([...ids.map((id) => [id, 's', true]), ['plain-1', 's', false]]);
      for (const locale of ['en-US', 'de-DE'] as OfficeLocale[]) {
        const theirs = readWithLibreOffice(out, locale);
        expect(theirs.formulaElements, locale).toBe(0);
        const loIds = tableRecords(sheet(theirs, 'Customers')).map((record) => [record['Customer id'].v, record['Customer id'].t]);
        expect(loIds, locale).toEqual([...ids, 'plain-1'].map((id) => [id, 's']));
      }
    });

    it('CSV (default, for people): LibreOffice shows them as text with the apostrophe, and runs no formula', () => {
      const theirs = readWithLibreOffice(csv, 'en-US', ',');
      expect(theirs.formulaElements).toBe(0);
      const loIds = (theirs.sheets[0].rows ?? []).slice(1).map((row) => row[0].v);
      expect(loIds).toEqual([...ids.map((id) => `'${id}`), 'plain-1']);
    });
  });
});
