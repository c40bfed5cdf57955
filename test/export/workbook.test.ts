/**
 * The workbook and the CSV list written from in-memory sources, read back by independent
 * readers: Debian's python3-openpyxl (test/export/read_workbook.py) and csv-parse (RFC 4180).
 */
import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { parse } from 'csv-parse/sync';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { csvNumber } from '../../src/export/csv-writer.js';
import { exportSource, type ExportResult } from '../../src/export/export-run.js';
import { excelMaxRows } from '../../src/export/xlsx-table.js';
import { cautions } from '../../src/export/cautions.js';
import type { ExportCustomerRow, ExportReviewRow } from '../../src/export/source.js';
import { customer, memorySource, segmentNames, variedCustomers } from './memory-source.js';
import { overviewEntries, readCsv, readWorkbook, sheet, tableRecords, type ReadWorkbook } from './independent-readers.js';

const customerHeader = [
  'Customer id',
  'Final segment',
  'Model segment',
  'Confidence',
  'Second segment',
  'Second probability',
  'Flags',
  'Review decision',
  'Marketing consent',
  'Spend in window (EUR)',
  'Spend per month (EUR per month)',
  'Visit rate (visits per month)',
  'Basket size (EUR)',
];

function folder(): string {
  return mkdtempSync(join(tmpdir(), 'spendmix-export-'));
}

/** The default list, spelled out: placed, not excluded by review, marketing consent yes. */
function expectedDefaultIds(rows: ExportCustomerRow[]): string[] {
  return rows.filter((row) => !row.tooNew && row.decision !== 'exclude' && row.marketingConsent === 1).map((row) => row.customerId);
}

const review: ExportReviewRow[] = [
  {
    customerId: 'C000005',
    reasons: ['borderline'],
    revenue: 812.25,
    topSegmentName: segmentNames[1],
    topProbability: 0.55,
    secondSegmentName: segmentNames[2],
    secondProbability: 0.41,
    decision: 'move',
    decidedSegmentName: segmentNames[2],
    note: '=shop rarely, keep an eye',
    reviewer: 'analyst',
    decidedAt: '2026-12-01T10:15:00.000Z',
    marketingConsent: 1,
  },
  {
    customerId: 'C000007',
    reasons: ['atypical'],
    revenue: 50,
    topSegmentName: segmentNames[0],
    topProbability: 0.9,
    secondSegmentName: segmentNames[1],
    secondProbability: 0.1,
    decision: null,
    decidedSegmentName: null,
    note: null,
    reviewer: null,
    decidedAt: null,
    marketingConsent: 0,
  },
];

describe('workbook read back by openpyxl', () => {
  const rows = variedCustomers(400);
  const dir = folder();
  const out = join(dir, 'run 7.xlsx');
  let result: ExportResult;
  let book: ReadWorkbook;

  beforeAll(async () => {
    const movement = {
      parentRunId: 6,
      parentSegments: segmentNames,
      currentSegments: segmentNames,
      counts: [
        [100, 5, 0],
        [4, 90, 6],
        [0, 7, 80],
      ],
      entered: 30,
      left: 12,
      common: 292,
      adjustedRandIndex: 0.81,
    };
    result = await exportSource(memorySource({ customers: rows, review, movement }), { out });
    book = readWorkbook(out);
  });

  it('has the four sheets in order and reports them', () => {
    expect(book.sheets.map((s) => s.name)).toEqual(['Overview', 'Customers', 'Review', 'Movement']);
    expect(result.sheets).toEqual(['Overview', 'Customers', 'Review', 'Movement']);
    expect(result.out).toBe(out);
    expect(readdirSync(dir)).toEqual(['run 7.xlsx']);
  });

  it('lists exactly the placed, non-excluded customers with consent, in order', () => {
    const table = sheet(book, 'Customers');
    expect(table.header).toEqual(customerHeader);
    const ids = tableRecords(table).map((record) => record['Customer id'].v);
    expect(ids).toEqual(expectedDefaultIds(rows));
    expect(result.customersExported).toBe(ids.length);
    expect(table.maxRow).toBe(ids.length + 1);
  });

  it('never lists a customer whose consent is no or unknown, and counts them', () => {
    const noConsent = new Set(rows.filter((row) => row.marketingConsent !== 1).map((row) => row.customerId));
    for (const name of ['Customers', 'Review']) {
      for (const record of tableRecords(sheet(book, name))) expect(noConsent.has(String(record['Customer id'].v))).toBe(false);
    }
    const wouldBeListed = rows.filter((row) => !row.tooNew && row.decision !== 'exclude' && row.marketingConsent !== 1);
    expect(result.suppressedNoConsent).toBe(wouldBeListed.length);
    const entries = overviewEntries(sheet(book, 'Overview'));
    expect(entries.get('Suppressed: no marketing consent (refused or unknown)')?.v).toBe(wouldBeListed.length);
    expect(entries.get('of which refused')?.v).toBe(wouldBeListed.filter((row) => row.marketingConsent === 0).length);
    expect(entries.get('Review queue: suppressed (no or unknown consent)')?.v).toBe(1);
  });

  it('freezes the header, filters the whole table and sets widths on every table sheet', () => {
    const table = sheet(book, 'Customers');
    expect(table.frozen).toBe('A2');
    expect(table.autoFilter).toBe(`A1:M${table.maxRow}`);
    // openpyxl reports runs of equal widths under their first column.
    expect(table.widths.A).toBeGreaterThanOrEqual(16);
    expect(table.widths.B).toBeGreaterThanOrEqual(26);
    expect(sheet(book, 'Review').frozen).toBe('A2');
    expect(sheet(book, 'Review').autoFilter).toBe('A1:L2');
    expect(sheet(book, 'Movement').frozen).toBe('A2');
    expect(sheet(book, 'Movement').autoFilter).toBe('A1:E4');
  });

  it('stores numbers as numbers with formats, and dates as dates', () => {
    const first = tableRecords(sheet(book, 'Customers'))[0];
    expect(first.Confidence).toMatchObject({ t: 'n', f: '0.000' });
    expect(first['Second probability']).toMatchObject({ t: 'n', f: '0.000' });
    expect(first['Spend in window (EUR)']).toMatchObject({ t: 'n', f: '#,##0.00 "EUR"' });
    expect(first['Visit rate (visits per month)']).toMatchObject({ t: 'n', f: '0.00' });
    expect(first['Customer id'].t).toBe('s');
    const decided = tableRecords(sheet(book, 'Review'))[0]['Decided at'];
    expect(decided.t).toBe('d');
    expect(decided.v).toBe('2026-12-01T10:15:00');
    const entries = overviewEntries(sheet(book, 'Overview'));
    expect(entries.get('As-of date')).toMatchObject({ t: 'd', v: '2026-11-30T00:00:00', f: 'yyyy-mm-dd' });
    expect(entries.get('Window start')).toMatchObject({ t: 'd', v: '2025-12-01T00:00:00' });
  });

  it('round-trips segment, confidence and flags of every listed customer', () => {
    const byId = new Map(rows.map((row) => [row.customerId, row]));
    for (const record of tableRecords(sheet(book, 'Customers'))) {
      const stored = byId.get(String(record['Customer id'].v)) as ExportCustomerRow;
      expect(record['Final segment'].v).toBe(stored.finalSegmentName);
      expect(record['Model segment'].v).toBe(stored.modelSegmentName);
      expect(record.Confidence.v).toBe(stored.confidence);
      expect(record['Second probability'].v).toBe(stored.secondProbability);
      const flags = [stored.borderline ? 'borderline' : null, stored.atypical ? 'atypical' : null].filter(Boolean).join(', ');
      expect(record.Flags.v ?? '').toBe(flags);
      expect(record['Review decision'].v).toBe(stored.decision);
      expect(record['Marketing consent'].v).toBe('yes');
      expect(record['Basket size (EUR)'].v).toBe(stored.features.average_basket);
    }
  });

  it('keeps negative amounts as numbers', () => {
    const refunds = tableRecords(sheet(book, 'Customers')).filter((record) => Number(record['Spend in window (EUR)'].v) < 0);
    expect(refunds.length).toBeGreaterThan(0);
    for (const record of refunds) {
      expect(record['Spend in window (EUR)']).toMatchObject({ t: 'n', v: -12.5 });
      expect(record['Spend per month (EUR per month)']).toMatchObject({ t: 'n', v: -1.04 });
    }
  });

  it('puts run, segment table, counts and the cautions on the overview', () => {
    const overview = sheet(book, 'Overview');
    const entries = overviewEntries(overview);
    expect(entries.get('Chain')?.v).toBe('Larkmoor Fresh Markets');
    expect(entries.get('Run id')).toMatchObject({ v: 7, t: 'n' });
    expect(entries.get('Too new to place')?.v).toBe(rows.filter((row) => row.tooNew).length);
    expect(entries.get('Borderline')?.v).toBe(rows.filter((row) => !row.tooNew && row.borderline).length);
    expect(entries.get('Customers listed')?.v).toBe(result.customersExported);
    const texts = (overview.rows ?? []).map((row) => row[0]?.v);
    for (const paragraph of cautions) expect(texts).toContain(paragraph);
    const headerIndex = texts.indexOf('Segment');
    expect(overview.rows?.[headerIndex].map((cell) => cell.v)).toEqual([
      'Segment',
      'Customers',
      'Share of customers',
      'Revenue (EUR)',
      'Share of revenue',
      'Median Spend per month (EUR per month)',
      'Median Visit rate (visits per month)',
      'Median Basket size (EUR)',
    ]);
    const tier1 = overview.rows?.[headerIndex + 1] ?? [];
    expect(tier1[0].v).toBe(segmentNames[0]);
    expect(tier1[2]).toMatchObject({ t: 'n', f: '0.0%' });
    expect(tier1[3]).toMatchObject({ t: 'n', f: '#,##0.00 "EUR"' });
  });

  it('writes the movement matrix with totals, entered and left', () => {
    const movement = sheet(book, 'Movement');
    expect(movement.header).toEqual(['Last month \\ this month', ...segmentNames, 'Total']);
    const records = tableRecords(movement);
    expect(records.map((record) => record.Total.v)).toEqual([105, 100, 87]);
    const entries = overviewEntries(movement);
    expect(entries.get('Entered (placed now, not in the parent run)')?.v).toBe(30);
    expect(entries.get('Left (placed in the parent run, not now)')?.v).toBe(12);
  });

  it('writes no formula anywhere; text that starts like one is kept as it is, quote-prefixed', () => {
    expect(book.formulaElements).toBe(0);
    const note = tableRecords(sheet(book, 'Review'))[0].Note;
    expect(note).toEqual({ t: 's', v: '=shop rarely, keep an eye', f: '@', q: true });
    expect(tableRecords(sheet(book, 'Review'))[0]['Customer id'].q).toBeUndefined();
  });

  it('declares each auto-filter as a hidden _xlnm._FilterDatabase name of its sheet (LibreOffice shows the filter by it)', () => {
    const position = (name: string) => book.sheets.findIndex((candidate) => candidate.name === name);
    expect(book.definedNames).toEqual(
      ['Customers', 'Review', 'Movement'].map((name) => ({
        name: '_xlnm._FilterDatabase',
        localSheetId: position(name),
        hidden: true,
        value: `'${name}'!${sheet(book, name).autoFilter!.replace(/([A-Z]+)(\d+)/g, '$$$1$$$2')}`,
      })),
    );
  });
});

describe('customer sheets split at the row limit', () => {
  it("uses Excel's limit of 1,048,576 rows per sheet, header included", () => {
    // Excel specifications and limits: 1,048,576 rows per worksheet (from memory).
    expect(excelMaxRows).toBe(1_048_576);
  });

  it('continues on "Customers 2", "Customers 3" with a header, frozen pane and filter each', async () => {
    const rows = Array.from({ length: 120 }, (_, index) => customer(`K${String(index).padStart(4, '0')}`));
    const out = join(folder(), 'split.xlsx');
    const result = await exportSource(memorySource({ customers: rows }), { out, rowsPerSheet: 50 });
    expect(result.sheets).toEqual(['Overview', 'Customers', 'Customers 2', 'Customers 3', 'Review', 'Movement']);
    const book = readWorkbook(out);
    const parts = ['Customers', 'Customers 2', 'Customers 3'].map((name) => sheet(book, name));
    expect(parts.map((part) => part.maxRow)).toEqual([50, 50, 23]);
    for (const part of parts) {
      expect(part.header).toEqual(customerHeader);
      expect(part.frozen).toBe('A2');
      expect(part.autoFilter).toBe(`A1:M${part.maxRow}`);
    }
    const ids = parts.flatMap((part) => tableRecords(part).map((record) => record['Customer id'].v));
    expect(ids).toEqual(rows.map((row) => row.customerId));
  });

  it('keeps an empty list as a header-only sheet', async () => {
    const rows = [customer('N1', { marketingConsent: 0 }), customer('N2', { marketingConsent: null })];
    const out = join(folder(), 'empty.xlsx');
    const result = await exportSource(memorySource({ customers: rows }), { out });
    expect(result).toMatchObject({ customersExported: 0, suppressedNoConsent: 2 });
    const table = sheet(readWorkbook(out), 'Customers');
    expect(table.maxRow).toBe(1);
    expect(table.header).toEqual(customerHeader);
  });
});

describe('formula injection (OWASP ASVS 5.0 requirement 1.2.10; OWASP "CSV Injection")', () => {
  const hostile = ['=HYPERLINK("http://example.invalid","x")', '+1', '-2', '@SUM(A1)', '\tTAB', '\rCR', '\nLF', '=1+1'];
  const rows = [
    ...hostile.map((id) => customer(id, { revenue: -42.75, features: { spend_per_month: -3.5, visits_per_month: 2, average_basket: -1 } })),
    customer('plain-id'),
  ];

  it('XLSX: hostile ids are kept exactly, as quote-prefixed text, never formulas; negative numbers stay numbers', async () => {
    const out = join(folder(), 'hostile.xlsx');
    await exportSource(memorySource({ customers: rows }), { out });
    const book = readWorkbook(out);
    expect(book.formulaElements).toBe(0);
    const records = tableRecords(sheet(book, 'Customers'));
    // A raw CR inside XML text reads back as LF (XML 1.0 §2.11 end-of-line handling).
    const expected = [...hostile.map((id) => id.replace(/\r/g, '\n')), 'plain-id'];
    expect(records.map((record) => record['Customer id'].v)).toEqual(expected);
    for (const record of records) {
      expect(record['Customer id'].t).toBe('s');
      for (const cell of Object.values(record)) expect(cell.t).not.toBe('f');
    }
    expect(records.map((record) => record['Customer id'].q ?? false)).toEqual([...hostile.map(() => true), false]);
    for (const record of records.slice(0, hostile.length)) {
      expect(record['Spend in window (EUR)']).toMatchObject({ t: 'n', v: -42.75 });
      expect(record['Basket size (EUR)']).toMatchObject({ t: 'n', v: -1 });
    }
  });

  it('XLSX: a NUL-led id loses the NUL (XML 1.0 cannot hold it) and stays quote-prefixed text', async () => {
    const out = join(folder(), 'nul.xlsx');
    await exportSource(memorySource({ customers: [customer('\0=cmd')] }), { out });
    const records = tableRecords(sheet(readWorkbook(out), 'Customers'));
    expect(records[0]['Customer id']).toMatchObject({ v: '=cmd', t: 's', q: true });
  });

  it('CSV: the same ids carry the apostrophe, numbers are written bare', async () => {
    const out = join(folder(), 'hostile.csv');
    await exportSource(memorySource({ customers: [...rows, customer('\0NUL')] }), { out });
    const csv = readCsv(out);
    const ids = csv.records.slice(1).map((record) => record[0]);
    expect(ids).toEqual([...hostile.map((id) => `'${id}`), 'plain-id', "'\0NUL"]);
    const revenueColumn = customerHeader.indexOf('Spend in window (EUR)');
    expect(csv.records[1][revenueColumn]).toBe('-42.75');
  });

  it('CSV with raw ids (for lists another system reads by id): the ids exactly as stored', async () => {
    const out = join(folder(), 'raw.csv');
    await exportSource(memorySource({ customers: rows }), { out, csvRawIds: true });
    expect(readCsv(out).records.slice(1).map((record) => record[0])).toEqual([...hostile, 'plain-id']);
  });
});

describe('CSV campaign list read by an RFC 4180 reader (csv-parse)', () => {
  const rows = variedCustomers(200);

  it('is UTF-8 with a BOM and CRLF, one header and exactly the listed customers', async () => {
    const out = join(folder(), 'list.csv');
    const result = await exportSource(memorySource({ customers: rows }), { out });
    const csv = readCsv(out);
    expect(csv.hasByteOrderMark).toBe(true);
    expect(csv.lineEnding).toBe('CRLF');
    expect(csv.records[0]).toEqual(customerHeader);
    expect(csv.records.slice(1).map((record) => record[0])).toEqual(expectedDefaultIds(rows));
    expect(result).toMatchObject({ sheets: [], customersExported: csv.records.length - 1 });
    const byId = new Map(rows.map((row) => [row.customerId, row]));
    for (const record of csv.records.slice(1)) {
      const stored = byId.get(record[0]) as ExportCustomerRow;
      expect(record[1]).toBe(stored.finalSegmentName);
      // Rounded to what they mean: 4 decimals for probabilities, cents for money, 4 for rates.
      expect(record[3]).toBe((stored.confidence as number).toFixed(4));
      expect(record[9]).toBe(stored.revenue.toFixed(2));
      expect(record[10]).toBe(stored.features.spend_per_month!.toFixed(2));
      expect(record[11]).toBe(stored.features.visits_per_month!.toFixed(4));
    }
  });

  it('rounds numbers to what they mean and never writes -0 or an exponent', () => {
    expect(csvNumber(144.26083333333335, 'eur', '.')).toBe('144.26');
    expect(csvNumber(6.038009820934736e-7, 'probability', '.')).toBe('0.0000');
    expect(csvNumber(-0.00001, 'share', '.')).toBe('0.0000');
    expect(csvNumber(0.123456, 'share', ',')).toBe('0,1235');
    expect(csvNumber(12, 'count', '.')).toBe('12');
    expect(csvNumber(1234567.891, 'eur', ',')).toBe('1234567,89');
  });

  it('semicolon dialect: semicolons between fields, decimal commas, text holding ; quoted', async () => {
    const out = join(folder(), 'semicolon.csv');
    const tricky = [customer('a;b', { revenue: 1234.5, confidence: 0.87654 }), customer('c,d', { revenue: -3.1 })];
    await exportSource(memorySource({ customers: tricky }), { out, csvDialect: 'semicolon' });
    const text = readFileSync(out, 'utf8');
    expect(text.split('\r\n')[1]).toMatch(/^"a;b";/);
    const records = parse(text, { bom: true, delimiter: ';' }) as string[][];
    expect(records[0]).toEqual(customerHeader);
    expect(records.slice(1).map((record) => [record[0], record[3], record[9]])).toEqual([
      ['a;b', '0,8765', '1234,50'],
      ['c,d', '0,9500', '-3,10'],
    ]);
  });

  it('quotes fields holding commas, quotes and line breaks', async () => {
    const out = join(folder(), 'quoted.csv');
    const tricky = [customer('a,b'), customer('say "hi"'), customer('two\nlines')];
    await exportSource(memorySource({ customers: tricky }), { out });
    expect(readCsv(out).records.slice(1).map((record) => record[0])).toEqual(['a,b', 'say "hi"', 'two\nlines']);
  });
});
