import type { CsvRecord } from './csv-tokenizer.js';
import type { ImportKind } from '../store/imports-repo.js';
import { AMOUNT_VALUE_INDEX, isRowRejection, STORE_VALUE_INDEX, type RowConverter } from './row-converters.js';

type Value = string | number | null;

/** One rejected row: its line and why (a line of the import report). */
export interface RejectedRow {
  line: number;
  column: string;
  value: string;
  reason: string;
}

/**
 * The outcome of validating one batch of records: the accepted rows' values laid end to end
 * (`stride` values per row; a flat array of primitives is cheap to hand between threads) and
 * the rejected rows.
 */
export interface ValidatedBatch {
  values: Value[];
  accepted: number;
  rejected: RejectedRow[];
  rowsRead: number;
  /** Bytes of the file read so far. */
  bytes: number;
  /** Sum of the accepted rows' amounts in cents (0 for kinds without amounts). */
  amountCents: number;
  /** Store ids first seen in this file in this batch. */
  newStoreIds: string[];
}

export interface ValidationContext {
  convert: RowConverter;
  /** Column count of the header. */
  width: number;
  /** Values per accepted row. */
  stride: number;
  /** XLSX drops trailing empty cells: pad short rows instead of rejecting them. */
  padShortRows: boolean;
  delimiter: string | null;
  /** Where the store id and the amount sit in a row's values (-1: none; see row-converters.ts). */
  storeIndex?: number;
  amountIndex?: number;
  /** Store ids seen so far in the file (filled in as batches are validated). */
  seenStoreIds?: Set<string>;
}

/** The part of a file's validation context that gathers its amount total and store ids. */
export function fileTotalsContext(kind: ImportKind): Pick<ValidationContext, 'storeIndex' | 'amountIndex' | 'seenStoreIds'> {
  return { storeIndex: STORE_VALUE_INDEX[kind], amountIndex: AMOUNT_VALUE_INDEX[kind], seenStoreIds: new Set<string>() };
}

/** Values per accepted row of each kind (see row-converters.ts). */
export function strideOf(kind: 'receipts' | 'visits' | 'customers' | 'features', featureCount: number): number {
  return kind === 'receipts' ? 8 : kind === 'visits' ? 5 : kind === 'customers' ? 4 : 1 + featureCount;
}

/** Validates records: wrong column count, broken quoting and bad values become rejections. */
export function validateRecords(records: readonly CsvRecord[], context: ValidationContext, bytes: number): ValidatedBatch {
  const { convert, width, stride } = context;
  const storeIndex = context.storeIndex ?? -1;
  const amountIndex = context.amountIndex ?? -1;
  const seenStoreIds = context.seenStoreIds ?? new Set<string>();
  const values: Value[] = [];
  const rejected: RejectedRow[] = [];
  const newStoreIds: string[] = [];
  let amountCents = 0;
  let accepted = 0;
  for (const record of records) {
    let fields = record.fields;
    if (record.malformed) {
      rejected.push({ line: record.line, column: '', value: fields.join(context.delimiter ?? ',').slice(0, 200), reason: record.malformed });
      continue;
    }
    if (fields.length !== width) {
      if (context.padShortRows && fields.length < width) {
        fields = [...fields, ...new Array<string>(width - fields.length).fill('')];
      } else {
        rejected.push({
          line: record.line,
          column: '',
          value: fields.join(context.delimiter ?? ',').slice(0, 200),
          reason: `expected ${width} columns, found ${fields.length}`,
        });
        continue;
      }
    }
    const row = convert(fields);
    if (isRowRejection(row)) {
      rejected.push({ line: record.line, ...row });
      continue;
    }
    for (let index = 0; index < stride; index += 1) values.push(row[index]);
    if (amountIndex >= 0) amountCents += row[amountIndex] as number;
    if (storeIndex >= 0) {
      const storeId = row[storeIndex] as string | null;
      if (storeId !== null && !seenStoreIds.has(storeId)) {
        seenStoreIds.add(storeId);
        newStoreIds.push(storeId);
      }
    }
    accepted += 1;
  }
  return { values, accepted, rejected, rowsRead: records.length, bytes, amountCents, newStoreIds };
}
