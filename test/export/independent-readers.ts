/**
 * The independent readers the export tests check against: Debian's python3-openpyxl for
 * workbooks (through test/export/read_workbook.py) and csv-parse as a plain RFC 4180 reader.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { parse } from 'csv-parse/sync';

const script = fileURLToPath(new URL('./read_workbook.py', import.meta.url));

export interface ReadCell {
  v: string | number | boolean | null;
  /** openpyxl data type: n number, s string, d date, b boolean, f formula. */
  t: string;
  /** Number format. */
  f: string;
  /** The cell style's quote-prefix flag (text kept as text when edited); absent when off. */
  q?: boolean;
}

export interface ReadSheet {
  name: string;
  maxRow: number;
  maxColumn: number;
  frozen: string | null;
  autoFilter: string | null;
  widths: Record<string, number>;
  header: (string | number | null)[];
  rows?: ReadCell[][];
}

export interface ReadWorkbook {
  reader: string;
  sheets: ReadSheet[];
  formulaElements: number;
  definedNames: { name: string; localSheetId: number | null; hidden: boolean; value: string }[];
}

/** Debian installs openpyxl for /usr/bin/python3; another python3 first on PATH may lack it. */
function python(): string {
  return existsSync('/usr/bin/python3') ? '/usr/bin/python3' : 'python3';
}

export function readWorkbook(path: string, withValues = true): ReadWorkbook {
  const args = [script, path, ...(withValues ? ['--values'] : [])];
  const output = execFileSync(python(), args, { encoding: 'utf8', maxBuffer: 512 * 1024 * 1024 });
  return JSON.parse(output) as ReadWorkbook;
}

export function sheet(workbook: ReadWorkbook, name: string): ReadSheet {
  const found = workbook.sheets.find((candidate) => candidate.name === name);
  if (!found) throw new Error(`No sheet "${name}" in ${workbook.sheets.map((s) => s.name).join(', ')}`);
  return found;
}

/** Data rows of a table sheet as records keyed by header (cells with their types). */
export function tableRecords(table: ReadSheet): Record<string, ReadCell>[] {
  const rows = table.rows ?? [];
  const header = rows[0]?.map((cell) => String(cell.v)) ?? [];
  const records: Record<string, ReadCell>[] = [];
  for (const row of rows.slice(1)) {
    if (row.every((cell) => cell.v === null)) break; // the table ends at the first empty line
    records.push(Object.fromEntries(header.map((name, index) => [name, row[index] ?? { v: null, t: 'n', f: 'General' }])));
  }
  return records;
}

/** The two-column label/value lines of the overview, label → cell. */
export function overviewEntries(overview: ReadSheet): Map<string, ReadCell> {
  const entries = new Map<string, ReadCell>();
  for (const row of overview.rows ?? []) {
    if (typeof row[0]?.v === 'string' && row[1]) entries.set(row[0].v, row[1]);
  }
  return entries;
}

export interface ReadCsv {
  hasByteOrderMark: boolean;
  records: string[][];
  lineEnding: 'CRLF' | 'LF';
}

export function readCsv(path: string): ReadCsv {
  const bytes = readFileSync(path);
  const hasByteOrderMark = bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf;
  const text = bytes.toString('utf8');
  const records = parse(text, { bom: true, relax_quotes: false, skip_empty_lines: false }) as string[][];
  return { hasByteOrderMark, records, lineEnding: text.includes('\r\n') ? 'CRLF' : 'LF' };
}
