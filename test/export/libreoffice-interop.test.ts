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
import { parse } from 'csv-parse/sync';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportRun, exportSource } from '../../src/export/export-run.js';
import { importFile } from '../../src/ingest/import-file.js';
import { runSegmentation } from '../../src/runs/run.js';
import { openDatabase } from '../../src/store/database.js';
import { readWorkbook, sheet, tableRecords, type ReadCell, type ReadSheet, type ReadWorkbook } from './independent-readers.js';
import { libreOfficeVersion, readWithLibreOffice, type OfficeLocale } from './libreoffice.js';
import { customer, memorySource } from './memory-source.js';

const sampleDir = new URL('../../demo-data/sample/', import.meta.url).pathname;
const version = libreOfficeVersion();

/** Equal as LibreOffice keeps numbers: to 15 significant digits. */
function sameNumber(ours: number, theirs: number): boolean {
  return ours === theirs || Math.abs(ours - theirs) <= 1e-14 * Math.abs(ours);
}

interface Comparison {
  numbers: number;
  texts: number;
  mismatches: string[];
}

/** Every cell of our sheets against LibreOffice's reading of them. */
function compareWorkbooks(ours: ReadWorkbook, theirs: ReadWorkbook): Comparison {
  const result: Comparison = { numbers: 0, texts: 0, mismatches: [] };
  for (const mine of ours.sheets) {
    const other = sheet(theirs, mine.name);
    (mine.rows ?? []).forEach((row, r) =>
      row.forEach((cell, c) => {
        const seen: ReadCell = other.rows?.[r]?.[c] ?? { v: null, t: 'n', f: 'General' };
        const where = `${mine.name}!R${r + 1}C${c + 1}`;
        if (typeof cell.v === 'number') {
          result.numbers += 1;
          if (typeof seen.v !== 'number' || !sameNumber(cell.v, seen.v)) result.mismatches.push(`${where}: ${cell.v} read as ${JSON.stringify(seen.v)}`);
        } else if (cell.t === 'd') {
          if (seen.t !== 'd' || String(seen.v).slice(0, 19) !== String(cell.v).slice(0, 19)) result.mismatches.push(`${where}: date ${cell.v} read as ${JSON.stringify(seen.v)}`);
        } else if (cell.v !== null) {
          result.texts += 1;
          if (seen.t !== 's' || seen.v !== cell.v) result.mismatches.push(`${where}: text ${JSON.stringify(cell.v)} read as ${JSON.stringify(seen.v)} (${seen.t})`);
        }
      }),
    );
  }
  return result;
}

/** Every field of a CSV list against LibreOffice's reading of it: numbers as numbers, exactly. */
function compareCsv(path: string, separator: ',' | ';', theirs: ReadSheet): Comparison {
  const records = parse(readFileSync(path, 'utf8'), { bom: true, delimiter: separator }) as string[][];
  const number = separator === ';' ? /^-?\d+(,\d+)?$/ : /^-?\d+(\.\d+)?$/;
  const result: Comparison = { numbers: 0, texts: 0, mismatches: [] };
  records.forEach((record, r) =>
    record.forEach((field, c) => {
      const seen = theirs.rows?.[r]?.[c] ?? { v: null, t: 'n', f: 'General' };
      const where = `R${r + 1}C${c + 1}`;
      if (field === '') {
        if (seen.v !== null) result.mismatches.push(`${where}: empty read as ${JSON.stringify(seen.v)}`);
      } else if (number.test(field)) {
        result.numbers += 1;
        if (seen.v !== Number(field.replace(',', '.'))) result.mismatches.push(`${where}: ${field} read as ${JSON.stringify(seen.v)}`);
      } else {
        result.texts += 1;
        if (seen.t !== 's' || seen.v !== field) result.mismatches.push(`${where}: text ${JSON.stringify(field)} read as ${JSON.stringify(seen.v)} (${seen.t})`);
      }
    }),
  );
  return result;
}

describe.skipIf(version === null && !process.env.CI)(`exports read by LibreOffice (${version ?? 'not installed'})`, () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-lo-export-'));
  const files = { xlsx: join(folder, 'run.xlsx'), comma: join(folder, 'run.csv'), semicolon: join(folder, 'run-semicolon.csv') };

  beforeAll(async () => {
    const db = openDatabase(join(folder, 'larkmoor.db'));
    for (const kind of ['customers', 'receipts', 'visits'] as const) await importFile(db, { path: join(sampleDir, `${kind}.csv`), kind, options: { reportDir: folder } });
    const settings = { windowMonths: 12, mode: 'refit' as const, k: 3, covariance: 'diag' as const, restarts: 2, seed: 5 };
    await runSegmentation(db, { ...settings, asOf: '2026-10-31' });
    await runSegmentation(db, { ...settings, asOf: '2026-11-30' });
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
