import { parse } from 'csv-parse/sync';
import { InputError } from '../errors.js';
import type { DataMatrix, Memberships } from './types.js';

const DELIMITERS = [',', ';', '\t', '|'] as const;

/** The delimiter among , ; tab | that occurs most often in the header line (comma on a tie). */
function detectDelimiter(text: string): string {
  const firstLine = text.slice(0, text.search(/\r?\n|$/));
  let best: string = ',';
  let bestCount = 0;
  for (const delimiter of DELIMITERS) {
    const count = firstLine.split(delimiter).length - 1;
    if (count > bestCount) {
      best = delimiter;
      bestCount = count;
    }
  }
  return best;
}

/** Decimal numbers as written by spreadsheets and scripts: 12, -3.5, 1e-3, .5 (no thousands separators). */
const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

export interface NumericCsv {
  data: DataMatrix;
  /** Header names of the columns that were left out because none of their cells is a number. */
  skippedColumns: string[];
}

/**
 * Reads a CSV with a header row into an n × d matrix of its numeric columns (a column with no
 * number in it at all, such as an id or a label, is left out and named in `skippedColumns`).
 * Any other cell that is not a number — empty ones included — is bad input, reported with its
 * row (1-based, header not counted), line and column.
 */
export function parseNumericCsv(text: string, source = 'the file'): NumericCsv {
  if (text.replace(/^\uFEFF/, '').trim() === '') throw new InputError(`${source} is empty: it needs a header row and at least one data row.`);
  let records: string[][];
  try {
    records = parse(text, { bom: true, delimiter: detectDelimiter(text.replace(/^\uFEFF/, '')), skip_empty_lines: true, trim: true });
  } catch (error) {
    throw new InputError(`${source} is not valid CSV: ${error instanceof Error ? error.message : String(error)}`);
  }
  if (records.length < 2) throw new InputError(`${source} has a header row but no data rows.`);
  const header = records[0];
  const rows = records.length - 1;
  const numericColumns: number[] = [];
  const skippedColumns: string[] = [];
  header.forEach((name, column) => {
    let anyNumber = false;
    for (let row = 1; row <= rows && !anyNumber; row++) anyNumber = NUMBER.test(records[row][column] ?? '');
    if (anyNumber) numericColumns.push(column);
    else skippedColumns.push(name || `column ${column + 1}`);
  });
  if (numericColumns.length === 0) throw new InputError(`${source} has no numeric column.`);
  const cols = numericColumns.length;
  const values = new Float64Array(rows * cols);
  for (let row = 1; row <= rows; row++) {
    const record = records[row];
    if (record.length !== header.length) {
      throw new InputError(`Row ${row} of ${source} has ${record.length} cells but the header has ${header.length}.`);
    }
    numericColumns.forEach((column, index) => {
      const cell = record[column];
      if (!NUMBER.test(cell)) {
        const shown = cell === '' ? 'an empty cell' : `"${cell.length > 40 ? `${cell.slice(0, 40)}…` : cell}"`;
        throw new InputError(
          `Non-numeric value ${shown} at row ${row}, column "${header[column]}" (column ${column + 1}) of ${source}; every cell of a numeric column must be a number.`,
          { row, column: column + 1, columnName: header[column] },
        );
      }
      values[(row - 1) * cols + index] = Number(cell);
    });
  }
  return { data: { values, rows, cols, columnNames: numericColumns.map((column) => header[column]) }, skippedColumns };
}

/** Header of the memberships CSV for k segments. */
export function membershipsHeader(k: number): string {
  const posteriors = Array.from({ length: k }, (_, c) => `posterior_${c + 1}`);
  return ['row', 'segment', ...posteriors, 'confidence', 'margin', 'log_density'].join(',');
}

/**
 * CSV lines (no header) of rows [start, end): 1-based row and segment, posteriors, confidence,
 * margin and log density, numbers in shortest round-trip form.
 */
export function membershipsLines(memberships: Memberships, start: number, end: number): string {
  const k = memberships.components;
  const lines: string[] = [];
  for (let row = start; row < end; row++) {
    const cells: (string | number)[] = [row + 1, memberships.topSegment[row] + 1];
    for (let c = 0; c < k; c++) cells.push(memberships.posteriors[row * k + c]);
    cells.push(memberships.confidence[row], memberships.margin[row], memberships.logDensity[row]);
    lines.push(cells.join(','));
  }
  return lines.length > 0 ? `${lines.join('\n')}\n` : '';
}
