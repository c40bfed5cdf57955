/**
 * Campaign list as CSV for upload elsewhere: UTF-8 with a byte-order mark (so spreadsheet
 * programs read the encoding right), CRLF line ends and quoting as RFC 4180 §2.6–2.7, in one of
 * two dialects: comma-separated with a decimal point, or semicolon-separated with a decimal comma
 * (what spreadsheet programs in locales that write 1.234,56 expect; a decimal point there is read
 * as a thousands separator, so 19.025 would become 19025).
 *
 * Numbers are rounded to what they mean (DESIGN.md §8): cents for money, 4 decimals for
 * probabilities, shares and other decimals, whole numbers for counts; they are never prefixed and
 * never grouped. Text goes through the formula neutralisation unless raw text is asked for.
 */
import type { Writable } from 'node:stream';
import { once } from 'node:events';
import { customerColumns, type CellValue } from './columns.js';
import { neutraliseFormulaText } from './formula-safety.js';
import { streamListedCustomers, type ExportPlan, type PassOptions } from './passes.js';
import type { CampaignFilter } from './selection.js';
import type { ExportSource, ValueKind } from './source.js';

export const byteOrderMark = '\uFEFF';

export type CsvDialect = 'comma' | 'semicolon';
export const csvDialects: readonly CsvDialect[] = ['comma', 'semicolon'];

export interface CsvFormat {
  separator: ',' | ';';
  decimalMark: '.' | ',';
  /** Text beginning like a formula is written as it is, without the apostrophe. */
  rawText: boolean;
}

export function csvFormat(dialect: CsvDialect = 'comma', rawText = false): CsvFormat {
  return dialect === 'semicolon' ? { separator: ';', decimalMark: ',', rawText } : { separator: ',', decimalMark: '.', rawText };
}

/** Buffered text written in one go (fewer, larger writes). */
const chunkCharacters = 64 * 1024;

/** Decimals a number of each kind keeps in a CSV. */
export function csvDecimals(kind: ValueKind, value: number): number {
  if (kind === 'eur') return 2;
  if (kind === 'count' && Number.isInteger(value)) return 0;
  return 4;
}

/** A number rounded for its kind, with the dialect's decimal mark; never `-0`. */
export function csvNumber(value: number, kind: ValueKind, decimalMark: '.' | ','): string {
  if (!Number.isFinite(value)) return '';
  let text = value.toFixed(csvDecimals(kind, value));
  if (/^-0(\.0+)?$/.test(text)) text = text.slice(1);
  return decimalMark === ',' ? text.replace('.', ',') : text;
}

/** One field: numbers rounded, text neutralised (unless raw), quoted when it holds the separator, a quote, CR or LF. */
export function csvField(value: CellValue, kind: ValueKind, format: CsvFormat): string {
  if (value === null) return '';
  if (typeof value === 'number') return csvNumber(value, kind, format.decimalMark);
  const text = value instanceof Date ? (Number.isNaN(value.getTime()) ? '' : value.toISOString()) : format.rawText ? value : neutraliseFormulaText(value);
  const needsQuotes = text.includes(format.separator) || /["\r\n]/.test(text);
  return needsQuotes ? `"${text.replace(/"/g, '""')}"` : text;
}

export function csvLine(values: readonly CellValue[], kinds: readonly ValueKind[], format: CsvFormat): string {
  let line = '';
  for (let index = 0; index < values.length; index += 1) {
    if (index > 0) line += format.separator;
    line += csvField(values[index], kinds[index], format);
  }
  return `${line}\r\n`;
}

/** Writes, waiting for the stream to drain; the signal (fired when the stream fails) ends the wait. */
async function writeText(output: Writable, text: string, signal: AbortSignal | undefined): Promise<void> {
  if (!output.write(text, 'utf8')) await once(output, 'drain', { signal });
}

export interface CsvJob extends PassOptions {
  source: ExportSource;
  filter: CampaignFilter;
  plan: ExportPlan;
  output: Writable;
  format?: CsvFormat;
}

/** Writes the header and every listed customer, then ends the output and waits for it to finish. */
export async function writeCsvList(job: CsvJob): Promise<void> {
  const format = job.format ?? csvFormat();
  const columns = customerColumns(job.source.customerFeatureColumns);
  const kinds = columns.map((column) => column.kind);
  let pending = byteOrderMark + csvLine(columns.map((column) => column.header), columns.map(() => 'text' as const), format);
  await streamListedCustomers(
    job.source,
    job.filter,
    job.plan,
    async (row) => {
      pending += csvLine(columns.map((column) => column.value(row)), kinds, format);
      if (pending.length >= chunkCharacters) {
        const text = pending;
        pending = '';
        await writeText(job.output, text, job.signal);
      }
    },
    job,
  );
  await writeText(job.output, pending, job.signal);
  const finished = once(job.output, 'finish', { signal: job.signal });
  job.output.end();
  await finished;
}
