import type { Database } from 'better-sqlite3';
import type { FilePreview as ContractFilePreview } from '../api/contract.js';
import { InputError } from '../errors.js';
import { isoDateFromDay } from '../store/days.js';
import { savedMapping, type ImportKind } from '../store/imports-repo.js';
import { FIELD_DESCRIPTIONS, KIND_FIELDS } from './fields.js';
import { probeFile, type EncodingChoice } from './file-probe.js';
import { resolveMapping, type ColumnMapping } from './mapping.js';
import { openRecordSource } from './record-source.js';
import { makeRowConverter, type RowValues } from './row-converters.js';
import { validateRecords } from './record-validator.js';
import { checkDateRange, type DateFormat, type DateRange } from './values.js';

export interface PreviewRequest {
  path: string;
  kind: ImportKind;
  mapping?: ColumnMapping;
  rows?: number;
  sheet?: string;
  dateFormat?: DateFormat;
  decimalComma?: boolean;
  encoding?: EncodingChoice;
  plausibleDates?: DateRange;
}

/** The first rows of a file as the importer would read them (the Sources screen's preview), its mapping column → field. */
export type FilePreview = Omit<ContractFilePreview, 'mapping'> & { mapping: ColumnMapping };

const PREVIEW_BYTES = 1 << 20;

/** Converter values → field names (the order of row-converters.ts). */
function namedValues(kind: ImportKind, values: RowValues, featureNames: string[]): Record<string, string | number | null> {
  const money = (cents: number) => cents / 100;
  const date = (day: number | null) => (day === null ? null : isoDateFromDay(day));
  switch (kind) {
    case 'receipts': {
      const [receiptId, customerId, day, time, amountCents, storeId, category, items] = values;
      return { receipt_id: receiptId, customer_id: customerId, date: date(day as number), time, amount: money(amountCents as number), store_id: storeId, category, items };
    }
    case 'visits': {
      const [customerId, day, time, storeId, channel] = values;
      return { customer_id: customerId, date: date(day as number), time, store_id: storeId, channel };
    }
    case 'customers': {
      const [customerId, joined, consent, homeStore] = values;
      return { customer_id: customerId, joined, marketing_consent: consent === null ? null : consent === 1 ? 'yes' : 'no', home_store: homeStore };
    }
    case 'features':
      return Object.fromEntries([['customer_id', values[0]], ...featureNames.map((name, index) => [name, values[index + 1]])]);
  }
}

/**
 * Reads the start of a file with the given (or saved, or automatic) mapping and reports each of
 * the first rows: raw cells, the parsed values, or why the row would be rejected. Missing
 * required fields are listed instead of refused, so the user can map them.
 */
export async function previewFile(db: Database | undefined, request: PreviewRequest): Promise<FilePreview> {
  const limit = request.rows ?? 20;
  if (!Number.isInteger(limit) || limit < 1 || limit > 1000) throw new InputError(`Preview rows must be 1 to 1000; got ${limit}.`);
  const probe = await probeFile(request.path, undefined, undefined, PREVIEW_BYTES, request.encoding);
  const settings = {
    dateFormat: request.dateFormat ?? 'iso',
    decimalComma: request.decimalComma ?? false,
    plausibleDates: request.plausibleDates ? checkDateRange(request.plausibleDates) : undefined,
  };
  const source = await openRecordSource(probe, { sheet: request.sheet, decimalComma: settings.decimalComma });
  try {
    const saved = db ? savedMapping(db, request.kind) : undefined;
    const explicit = request.mapping && Object.keys(request.mapping).length > 0 ? request.mapping : undefined;
    const resolved = resolveMapping({ kind: request.kind, header: source.header, explicit, saved, allowMissing: true });
    const rows: FilePreview['rows'] = [];
    const featureNames = resolved.featureColumns.map(([, name]) => name);
    const convert = resolved.missing.length === 0 ? makeRowConverter(request.kind, resolved, source.header, settings) : undefined;
    const width = source.header.length;
    for await (const batch of source.batches) {
      for (const record of batch) {
        if (rows.length >= limit) break;
        const cells = Object.fromEntries(source.header.map((column, index) => [column, record.fields[index] ?? '']));
        if (!convert) {
          rows.push({ line: record.line, cells, parsed: null, problem: `required field${resolved.missing.length > 1 ? 's' : ''} ${resolved.missing.join(', ')} not mapped` });
          continue;
        }
        const checked = validateRecords([record], { convert, width, stride: 0, padShortRows: source.padShortRows, delimiter: source.delimiter }, 0);
        if (checked.rejected.length > 0) {
          const rejection = checked.rejected[0];
          rows.push({ line: record.line, cells, parsed: null, problem: `${rejection.column ? `${rejection.column}: ` : ''}${rejection.reason}` });
        } else {
          const fields = record.fields.length < width ? [...record.fields, ...new Array<string>(width - record.fields.length).fill('')] : record.fields;
          rows.push({ line: record.line, cells, parsed: namedValues(request.kind, convert(fields) as RowValues, featureNames), problem: null });
        }
      }
      if (rows.length >= limit) break;
    }
    return {
      path: request.path,
      kind: request.kind,
      columns: source.header,
      sheets: source.sheetNames(),
      delimiter: source.delimiter,
      encoding: probe.format === 'xlsx' ? 'xlsx' : probe.encoding,
      fields: KIND_FIELDS[request.kind].map((spec) => ({ field: spec.name, required: spec.required, description: FIELD_DESCRIPTIONS[spec.name] ?? '' })),
      mapping: resolved.mapping,
      mappingSource: explicit ? 'given' : resolved.usedSaved ? 'saved' : 'automatic',
      missingFields: resolved.missing,
      rows,
    };
  } finally {
    await source.close();
  }
}
