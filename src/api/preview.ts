import { readFile } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { tokenizeCsv } from '../ingest/csv-tokenizer.js';
import { KIND_FIELDS } from '../ingest/fields.js';
import { probeFile } from '../ingest/file-probe.js';
import { resolveMapping, type ResolvedMapping } from '../ingest/mapping.js';
import { openRecordSource } from '../ingest/record-source.js';
import { isRowRejection, makeRowConverter, type RowValues } from '../ingest/row-converters.js';
import type { Database } from '../store/database.js';
import { isoDateFromDay } from '../store/days.js';
import { savedMapping } from '../store/imports-repo.js';
import type { ApiParsedInput, FilePreview, ImportKind, ImportReportPage } from './contract.js';

/** What each field of the importer's typed row values is (order documented in row-converters.ts). */
const valueLayout: Record<Exclude<ImportKind, 'features'>, { field: string; as: 'text' | 'day' | 'cents' | 'number' | 'consent' }[]> = {
  receipts: [
    { field: 'receipt_id', as: 'text' },
    { field: 'customer_id', as: 'text' },
    { field: 'date', as: 'day' },
    { field: 'time', as: 'text' },
    { field: 'amount', as: 'cents' },
    { field: 'store_id', as: 'text' },
    { field: 'category', as: 'text' },
    { field: 'items', as: 'number' },
  ],
  visits: [
    { field: 'customer_id', as: 'text' },
    { field: 'date', as: 'day' },
    { field: 'time', as: 'text' },
    { field: 'store_id', as: 'text' },
    { field: 'channel', as: 'text' },
  ],
  customers: [
    { field: 'customer_id', as: 'text' },
    { field: 'joined', as: 'text' },
    { field: 'marketing_consent', as: 'consent' },
    { field: 'home_store', as: 'text' },
  ],
};

function readable(values: RowValues, kind: ImportKind, resolved: ResolvedMapping): Record<string, string | number | null> {
  if (kind === 'features') {
    const parsed: Record<string, string | number | null> = { customer_id: values[0] };
    resolved.featureColumns.forEach(([, name], j) => {
      parsed[name] = values[j + 1];
    });
    return parsed;
  }
  const parsed: Record<string, string | number | null> = {};
  valueLayout[kind].forEach(({ field, as }, j) => {
    const value = values[j];
    if (value === null || value === undefined) parsed[field] = null;
    else if (as === 'day') parsed[field] = isoDateFromDay(Number(value));
    else if (as === 'cents') parsed[field] = Number(value) / 100;
    else if (as === 'consent') parsed[field] = value === 1 ? 'yes' : value === 0 ? 'no' : null;
    else parsed[field] = value;
  });
  return parsed;
}

/**
 * The first rows of a file as the importer would read them: the raw cells, and for each row its
 * typed values or the reason it would be rejected — with the mapping that would be used (given,
 * saved for this kind, or by column names) and the required fields it leaves unmapped. Reads
 * only the start of the file (the importer itself, with its checks, runs on import).
 */
export async function previewFile(db: Database, input: ApiParsedInput<'previewFile'>): Promise<FilePreview> {
  const { kind } = input;
  const decimalComma = input.decimalSeparator === ',';
  const probe = await probeFile(input.path);
  const source = await openRecordSource(probe, { sheet: input.sheet, decimalComma });
  const saved = savedMapping(db, kind);
  let resolved: ResolvedMapping | null = null;
  let partialMapping: Record<string, string> = {};
  let missingFields: string[] = [];
  try {
    resolved = resolveMapping({ kind, header: source.header, explicit: input.mapping, saved, context: source.context() });
  } catch (error) {
    const missing = error instanceof InputError ? (error.details?.missing as string[] | undefined) : undefined;
    if (!missing) throw error;
    missingFields = missing;
    // Still offer what the importer would match: resolve again with a stand-in column named as
    // each missing field, then leave the stand-ins out.
    const standIns = resolveMapping({ kind, header: [...source.header, ...missing], explicit: input.mapping, saved });
    partialMapping = Object.fromEntries(Object.entries(standIns.mapping).filter(([column]) => source.header.includes(column)));
  }
  const mappingSource: FilePreview['mappingSource'] = input.mapping
    ? 'given'
    : saved && Object.keys(saved).some((column) => source.header.includes(column))
      ? 'saved'
      : 'automatic';
  const convert = resolved ? makeRowConverter(kind, resolved, source.header, { dateFormat: input.dateOrder, decimalComma }) : null;

  const rows: FilePreview['rows'] = [];
  for await (const batch of source.batches) {
    for (const record of batch) {
      if (rows.length >= input.rows) break;
      const cells = Object.fromEntries(source.header.map((column, j) => [column, record.fields[j] ?? '']));
      let parsed: Record<string, string | number | null> | null = null;
      let problem: string | null = null;
      if (record.fields.length !== source.header.length && !source.padShortRows) {
        problem = `the row has ${record.fields.length} fields; the header has ${source.header.length}`;
      } else if (convert && resolved) {
        const fields = source.padShortRows ? [...record.fields, ...new Array(Math.max(0, source.header.length - record.fields.length)).fill('')] : record.fields;
        const values = convert(fields);
        if (isRowRejection(values)) problem = `${values.column}: ${values.reason}`;
        else parsed = readable(values, kind, resolved);
      } else {
        problem = `required field${missingFields.length > 1 ? 's' : ''} ${missingFields.join(', ')} not mapped`;
      }
      rows.push({ line: record.line, cells, parsed, problem });
    }
    if (rows.length >= input.rows) break;
  }
  await source.batches.return(undefined);

  return {
    path: probe.path,
    kind,
    columns: source.header,
    sheets: source.sheetNames(),
    delimiter: source.delimiter,
    encoding: probe.format === 'xlsx' ? 'xlsx' : probe.encoding,
    fields: KIND_FIELDS[kind].map((field) => ({
      field: field.name,
      required: field.required,
      description: field.synonyms.length ? `also read from: ${field.synonyms.slice(0, 4).join(', ')}` : '',
    })),
    mapping: resolved?.mapping ?? partialMapping,
    mappingSource,
    missingFields,
    rows,
  };
}

/** One page of an import's rejection report (line, column, value, reason), for the Sources screen. */
export async function importReportPage(reportPath: string | null, input: ApiParsedInput<'importReport'>): Promise<ImportReportPage> {
  if (!reportPath) return { importId: input.importId, total: 0, rows: [] };
  let text: string;
  try {
    text = await readFile(reportPath, 'utf8');
  } catch (error) {
    throw new InputError(`The report of import ${input.importId} (${reportPath}) cannot be read: ${(error as Error).message}`);
  }
  const body = tokenizeCsv(text).slice(1).filter((record) => record.fields.length >= 4);
  return {
    importId: input.importId,
    total: body.length,
    rows: body.slice(input.offset, input.offset + input.limit).map(({ fields: [line, column, value, reason] }) => ({
      line: Number(line),
      column,
      // The report neutralises formula-like text with a leading apostrophe; show the value as read.
      value: /^'[=+\-@\t\r]/.test(value) ? value.slice(1) : value,
      reason,
    })),
  };
}
