import { InputError } from '../errors.js';
import type { CsvRecord } from './csv-tokenizer.js';
import { csvRecordBatches, readTextStart, sniffDelimiter, CANDIDATE_DELIMITERS } from './csv-reader.js';
import type { FileProbe } from './file-probe.js';
import { openXlsxSource } from './xlsx-reader.js';

export interface SourceOptions {
  /** XLSX: the sheet to read (default the first). */
  sheet?: string;
  /** CSV: force a delimiter instead of sniffing. */
  delimiter?: string;
  decimalComma: boolean;
  signal?: AbortSignal;
  onBytes?: (bytes: number) => void;
}

/** The records of a CSV file or an XLSX sheet, the same shape either way. */
export interface RecordSource {
  header: string[];
  /** Data records after the header, in batches. */
  batches: AsyncGenerator<CsvRecord[]>;
  /** XLSX rows drop trailing empty cells, so short rows are padded rather than rejected. */
  padShortRows: boolean;
  delimiter: string | null;
  sheet: string | null;
  sheetNames: () => string[];
  /** Said after a missing-columns message: for XLSX, which sheet was read and which exist. */
  context: () => string;
  /** Releases the file (safe to call at any point, and more than once). */
  close: () => Promise<void>;
}

/** Opens the file, reads up to the header (the first non-blank record), and leaves the rest streaming. */
export async function openRecordSource(probe: FileProbe, options: SourceOptions): Promise<RecordSource> {
  if (options.sheet !== undefined && probe.format !== 'xlsx') {
    throw new InputError(`--sheet applies to XLSX workbooks; ${probe.path} is a text (CSV) file.`);
  }
  let raw: AsyncGenerator<CsvRecord[]>;
  let delimiter: string | null = null;
  let sheetNames = (): string[] => [];
  let sheetName = (): string | undefined => undefined;
  if (probe.format === 'xlsx') {
    const source = openXlsxSource(probe.path, options);
    raw = source.batches;
    sheetNames = source.sheetNames;
    sheetName = source.sheetName;
  } else {
    if (options.delimiter !== undefined && !(CANDIDATE_DELIMITERS as readonly string[]).includes(options.delimiter)) {
      throw new InputError(`The delimiter must be one of comma, semicolon, tab or |; got "${options.delimiter}".`);
    }
    delimiter = options.delimiter ?? sniffDelimiter(await readTextStart(probe));
    raw = csvRecordBatches(probe, delimiter, options.signal, options.onBytes);
  }
  let first: CsvRecord[] = [];
  for (;;) {
    const next = await raw.next();
    if (next.done) break;
    if (next.value.length > 0) {
      first = next.value;
      break;
    }
  }
  if (first.length === 0) {
    throw new InputError(
      probe.format === 'xlsx'
        ? `The sheet "${sheetName() ?? options.sheet ?? '(first)'}" is empty. The workbook's sheets: ${quoteList(sheetNames())}; pass --sheet NAME.`
        : `${probe.path} has no header row (it holds only blank lines).`,
    );
  }
  const header = first[0].fields.map((cell) => cell.replace(/^\uFEFF/, '').trim());
  const rest = first.slice(1);
  async function* batches(): AsyncGenerator<CsvRecord[]> {
    if (rest.length > 0) yield rest;
    yield* raw;
  }
  const context = (): string =>
    probe.format === 'xlsx'
      ? `Read sheet "${sheetName() ?? '(first)'}"; the workbook's sheets: ${quoteList(sheetNames())} (choose one with --sheet NAME).`
      : '';
  return {
    header,
    batches: batches(),
    padShortRows: probe.format === 'xlsx',
    delimiter,
    sheet: sheetName() ?? null,
    sheetNames,
    context,
    close: async () => {
      await raw.return(undefined);
    },
  };
}

function quoteList(names: string[]): string {
  return names.length === 0 ? '(none)' : names.map((name) => `"${name}"`).join(', ');
}
