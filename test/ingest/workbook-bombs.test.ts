/**
 * Crafted workbooks that inflate to gigabytes from a few megabytes, imported by the CLI in a child
 * process whose peak memory is measured (process.resourceUsage, through peak-memory-cli.ts): each
 * is refused with exit code 2 and a message saying why, inside the 400 MB import budget of
 * DESIGN.md §11.
 */
import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { MAX_SHARED_STRINGS, MAX_SHARED_STRING_BYTES, SharedStringTable } from '../../src/ingest/xlsx-shared-strings.js';
import { sharedStringsBomb, sheetXmlBomb, type CraftedWorkbook } from './crafted-workbooks.js';
import { temporaryFolder } from './support.js';

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
const childScript = fileURLToPath(new URL('./peak-memory-cli.ts', import.meta.url));
const IMPORT_BUDGET_BYTES = 400 * 1024 * 1024;

interface ChildOutcome {
  code: number | null;
  signal: NodeJS.Signals | null;
  stderr: string;
  peakRssBytes: number | null;
}

function importInChild(file: string, folder: string): Promise<ChildOutcome> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, ['--import', 'tsx', childScript, 'import', '--db', join(folder, 'bomb.db'), '--receipts', file], {
      cwd: projectRoot,
      stdio: ['ignore', 'ignore', 'pipe'],
      timeout: 240_000,
    });
    let stderr = '';
    child.stderr.on('data', (chunk: Buffer) => {
      stderr = (stderr + chunk.toString('utf8')).slice(-20_000);
    });
    child.on('close', (code, signal) => {
      const peak = /peak-rss-bytes (\d+)\s*$/.exec(stderr);
      resolve({ code, signal, stderr, peakRssBytes: peak ? Number(peak[1]) : null });
    });
  });
}

function megabytes(bytes: number): string {
  return `${(bytes / 1e6).toFixed(1)} MB`;
}

describe('workbooks built to exhaust memory', () => {
  const folder = temporaryFolder('spendmix-bombs-');
  let strings: CraftedWorkbook;
  let sheet: CraftedWorkbook;
  let understated: CraftedWorkbook;

  beforeAll(() => {
    strings = sharedStringsBomb(join(folder, 'shared-strings-3gb.xlsx'), 3e9);
    sheet = sheetXmlBomb(join(folder, 'sheet-xml-3gb.xlsx'), 3e9);
    // Declares 400 MB (under the part limit, compressing only ~45 times) but inflates to 3 GB:
    // only the shared-strings table's own limits can stop it.
    understated = sharedStringsBomb(join(folder, 'shared-strings-understated.xlsx'), 3e9, 400e6);
  });

  it('a shared-strings part of 3 GB from a few MB: refused at once, exit 2, inside the budget', async () => {
    expect(strings.bytes).toBeLessThan(12e6);
    expect(strings.inflatedBytes).toBeGreaterThan(2.9e9);
    const outcome = await importInChild(strings.path, folder);
    expect(outcome.stderr).toContain('The workbook part "/xl/sharedStrings.xml" inflates to 3.0 GB, more than the 536.9 MB this importer reads from such a part.');
    expect(outcome.code).toBe(2);
    expect(outcome.peakRssBytes, `peak ${megabytes(outcome.peakRssBytes ?? 0)}`).toBeLessThan(IMPORT_BUDGET_BYTES);
  });

  it('a sheet part of 3 GB from a few MB: refused for its compression ratio, exit 2, inside the budget', async () => {
    expect(sheet.bytes).toBeLessThan(12e6);
    const outcome = await importInChild(sheet.path, folder);
    expect(outcome.stderr).toMatch(/The workbook part "\/xl\/worksheets\/sheet1.xml" inflates \d+ times \([\d.]+ MB to 3.0 GB\)/);
    expect(outcome.code).toBe(2);
    expect(outcome.peakRssBytes, `peak ${megabytes(outcome.peakRssBytes ?? 0)}`).toBeLessThan(IMPORT_BUDGET_BYTES);
  });

  it('a shared-strings part that understates its size: the string table stops it, exit 2, inside the budget', async () => {
    const outcome = await importInChild(understated.path, folder);
    expect(outcome.stderr).toContain(`holds more than ${MAX_SHARED_STRING_BYTES / 1024 / 1024} MiB of text in its strings`);
    expect(outcome.stderr).toContain('Save the sheet as CSV (UTF-8) and import the CSV');
    expect(outcome.code).toBe(2);
    expect(outcome.peakRssBytes, `peak ${megabytes(outcome.peakRssBytes ?? 0)}`).toBeLessThan(IMPORT_BUDGET_BYTES);
  });
});

describe('the shared-strings table holds at most its stated count and bytes', () => {
  const refuse = (message: string): never => {
    throw new InputError(message);
  };

  it(`refuses string ${(MAX_SHARED_STRINGS + 1).toLocaleString('en-GB')}, and reads back what it holds`, () => {
    const table = new SharedStringTable(refuse);
    for (let index = 0; index < MAX_SHARED_STRINGS; index += 1) table.add(index % 1000 === 0 ? `é${index}` : 'x');
    expect(() => table.add('one more')).toThrow(`holds more than ${MAX_SHARED_STRINGS.toLocaleString('en-GB')} different strings`);
    expect([table.get(0), table.get(1), table.get(3_999_000), table.get(MAX_SHARED_STRINGS - 1), table.get(MAX_SHARED_STRINGS)]).toEqual(['é0', 'x', 'é3999000', 'x', undefined]);
  });

  it('refuses more text than its byte limit, and a string longer than any cell', () => {
    const table = new SharedStringTable(refuse);
    const piece = 'y'.repeat(200 * 1024);
    const fits = Math.floor(MAX_SHARED_STRING_BYTES / piece.length);
    for (let index = 0; index < fits; index += 1) table.add(piece);
    expect(() => table.add(piece)).toThrow(/MiB of text in its strings/);
    expect(() => new SharedStringTable(refuse).add('z'.repeat(300 * 1024))).toThrow(/longer than any cell can hold/);
  });
});
