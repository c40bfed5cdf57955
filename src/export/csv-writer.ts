/**
 * Campaign list as CSV for upload elsewhere: UTF-8 with a byte-order mark (so spreadsheet
 * programs read the encoding right), comma-separated, CRLF line ends and quoting as RFC 4180
 * §2.6–2.7. Text goes through the same formula neutralisation as the workbook; numbers are
 * written in full precision with a decimal point and never prefixed.
 */
import type { Writable } from 'node:stream';
import { once } from 'node:events';
import { customerColumns, type CellValue } from './columns.js';
import { streamListedCustomers, type ExportPlan, type PassOptions } from './passes.js';
import type { CampaignFilter } from './selection.js';
import type { ExportSource } from './source.js';
import { cellValue } from './xlsx-table.js';

export const byteOrderMark = '\uFEFF';

/** Buffered text written in one go (fewer, larger writes). */
const chunkCharacters = 64 * 1024;

/** One field: neutralised, then quoted when it holds a comma, quote, CR or LF (quotes doubled). */
export function csvField(value: CellValue): string {
  const safe = cellValue(value);
  if (safe === null) return '';
  if (typeof safe === 'number') return String(safe);
  const text = safe instanceof Date ? safe.toISOString() : safe;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function csvLine(values: readonly CellValue[]): string {
  return `${values.map(csvField).join(',')}\r\n`;
}

async function writeText(output: Writable, text: string): Promise<void> {
  if (!output.write(text, 'utf8')) await once(output, 'drain');
}

export interface CsvJob extends PassOptions {
  source: ExportSource;
  filter: CampaignFilter;
  plan: ExportPlan;
  output: Writable;
}

/** Writes the header and every listed customer, then ends the output and waits for it to finish. */
export async function writeCsvList(job: CsvJob): Promise<void> {
  const columns = customerColumns(job.source.customerFeatureColumns);
  let pending = byteOrderMark + csvLine(columns.map((column) => column.header));
  await streamListedCustomers(
    job.source,
    job.filter,
    job.plan,
    async (row) => {
      pending += csvLine(columns.map((column) => column.value(row)));
      if (pending.length >= chunkCharacters) {
        const text = pending;
        pending = '';
        await writeText(job.output, text);
      }
    },
    job,
  );
  await writeText(job.output, pending);
  const finished = once(job.output, 'finish');
  job.output.end();
  await finished;
}
