import ExcelJS from 'exceljs';
import { createReadStream } from 'node:fs';
import { InputError, throwIfAborted } from '../errors.js';
import type { CsvRecord } from './csv-tokenizer.js';

const BATCH_ROWS = 2000;

export interface XlsxSource {
  /** Record batches of the chosen sheet, header row first; `line` is the sheet's row number. */
  batches: AsyncGenerator<CsvRecord[]>;
  /** The workbook's sheet names in workbook order (known once the workbook part has been read). */
  sheetNames: () => string[];
  /** The name of the sheet being read, once found. */
  sheetName: () => string | undefined;
}

interface WorkbookModel {
  model?: { sheets?: Array<{ name: string; id: number }> };
}

/**
 * Streams one sheet of a workbook through exceljs's streaming reader (memory does not grow with
 * the sheet). The first sheet in workbook order, or the one named. Cells become text in the form
 * the CSV path reads: numbers with the chosen decimal mark, dates as ISO date or date-time.
 */
export function openXlsxSource(
  path: string,
  options: { sheet?: string; decimalComma: boolean; signal?: AbortSignal; onBytes?: (bytes: number) => void },
): XlsxSource {
  const stream = createReadStream(path, { highWaterMark: 1 << 20 });
  let bytesRead = 0;
  stream.on('data', (chunk) => {
    bytesRead += chunk.length;
    options.onBytes?.(bytesRead);
  });
  const reader = new ExcelJS.stream.xlsx.WorkbookReader(stream, {
    worksheets: 'emit',
    sharedStrings: 'cache',
    styles: 'cache', // needed to tell date cells from numbers
    hyperlinks: 'ignore',
    entries: 'ignore',
  });
  const sheetNames = (): string[] => {
    const sheets = (reader as unknown as WorkbookModel).model?.sheets ?? [];
    return [...sheets].sort((a, b) => a.id - b.id).map((sheet) => sheet.name);
  };
  let chosen: string | undefined;

  async function* batches(): AsyncGenerator<CsvRecord[]> {
    let found = false;
    try {
      for await (const worksheet of reader) {
        throwIfAborted(options.signal);
        const name = (worksheet as unknown as { name: string }).name;
        const wanted = options.sheet ?? sheetNames()[0] ?? name;
        if (found || name !== wanted) continue;
        found = true;
        chosen = name;
        let batch: CsvRecord[] = [];
        for await (const row of worksheet as AsyncIterable<ExcelJS.Row>) {
          const values = row.values as unknown[];
          const fields: string[] = [];
          for (let column = 1; column < values.length; column += 1) fields.push(cellText(values[column], options.decimalComma));
          while (fields.length > 0 && fields[fields.length - 1] === '') fields.pop();
          if (fields.length === 0) continue;
          batch.push({ fields, line: row.number });
          if (batch.length >= BATCH_ROWS) {
            yield batch;
            batch = [];
            throwIfAborted(options.signal);
          }
        }
        if (batch.length > 0) yield batch;
      }
    } catch (error) {
      if (error instanceof InputError || (error as Error).name === 'CancelledError') throw error;
      throw new InputError(`${path} could not be read as an XLSX workbook (damaged or truncated?): ${(error as Error).message}`);
    } finally {
      stream.destroy();
    }
    if (!found) {
      const names = sheetNames();
      throw new InputError(
        options.sheet
          ? `The workbook has no sheet "${options.sheet}". Its sheets: ${names.map((n) => `"${n}"`).join(', ') || '(none)'}; pass --sheet NAME.`
          : `The workbook has no worksheets to read.`,
      );
    }
  }

  return { batches: batches(), sheetNames, sheetName: () => chosen };
}

function pad(value: number, width = 2): string {
  return String(value).padStart(width, '0');
}

/** One cell → text. Formula cells give their cached result; rich text its plain text. */
export function cellText(value: unknown, decimalComma: boolean): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'string') return value;
  if (typeof value === 'number') {
    const text = Number.isInteger(value) ? String(value) : String(Math.round(value * 1e9) / 1e9);
    return decimalComma ? text.replace('.', ',') : text;
  }
  if (typeof value === 'boolean') return value ? 'yes' : 'no';
  if (value instanceof Date) {
    // Excel dates carry no zone; exceljs returns them as UTC instants of the wall-clock time.
    const date = `${pad(value.getUTCFullYear(), 4)}-${pad(value.getUTCMonth() + 1)}-${pad(value.getUTCDate())}`;
    const seconds = value.getUTCHours() * 3600 + value.getUTCMinutes() * 60 + value.getUTCSeconds();
    return seconds === 0 ? date : `${date}T${pad(value.getUTCHours())}:${pad(value.getUTCMinutes())}:${pad(value.getUTCSeconds())}`;
  }
  if (typeof value === 'object') {
    const cell = value as { richText?: Array<{ text: string }>; result?: unknown; text?: unknown; error?: string };
    if (Array.isArray(cell.richText)) return cell.richText.map((part) => part.text).join('');
    if ('result' in cell) return cellText(cell.result, decimalComma);
    if (typeof cell.text === 'string') return cell.text;
    if (typeof cell.error === 'string') return cell.error;
  }
  return String(value);
}
