import { InputError } from '../errors.js';
import type { ImportKind } from '../store/imports-repo.js';
import { KIND_FIELDS, normaliseHeader } from './fields.js';

/** Map a column to this to leave it out (useful for extra columns in a features file). */
export const IGNORE_FIELD = 'ignore';

/** How the columns of one file are read: source column name → field, as saved per kind. */
export type ColumnMapping = Record<string, string>;

export interface ResolvedMapping {
  /** field → column index in the header. */
  fieldIndex: Map<string, number>;
  /** The mapping in its saved form (source column → field), including feature columns. */
  mapping: ColumnMapping;
  /** For the features kind: [column index, feature name] of every numeric column. */
  featureColumns: Array<[number, string]>;
  /** Header columns read by nothing (shown by the preview). */
  unusedColumns: string[];
  /** Required fields without a column (only non-empty with `allowMissing`). */
  missing: string[];
  /** Whether any entry of the saved mapping was used. */
  usedSaved: boolean;
}

export interface MappingInput {
  kind: ImportKind;
  header: readonly string[];
  /** From `--map column=field` or the UI; wins over everything. */
  explicit?: ColumnMapping;
  /** The mapping saved for this kind by an earlier import; used where its columns exist. */
  saved?: ColumnMapping;
  /** Appended to the missing-columns message (e.g. the workbook's sheet names). */
  context?: string;
  /** Report missing required fields in the result instead of throwing (the preview). */
  allowMissing?: boolean;
}

/** Parses `column=field` pairs from the command line. */
export function parseMapOptions(pairs: readonly string[]): ColumnMapping {
  const mapping: ColumnMapping = {};
  for (const pair of pairs) {
    const at = pair.lastIndexOf('=');
    if (at <= 0 || at === pair.length - 1) {
      throw new InputError(`--map expects COLUMN=FIELD (e.g. --map "Card No=customer_id"); got "${pair}".`);
    }
    mapping[pair.slice(0, at).trim()] = pair.slice(at + 1).trim();
  }
  return mapping;
}

/**
 * Decides which column feeds which field: explicit choices first, then the saved mapping (where
 * those columns exist in this file), then columns named as the field, then English synonyms.
 * Throws InputError naming missing required fields and the columns found.
 */
export function resolveMapping(input: MappingInput): ResolvedMapping {
  const { kind, header } = input;
  const specs = KIND_FIELDS[kind];
  const known = new Set(specs.map((spec) => spec.name));
  refuseDuplicateColumns(header);
  const byHeader = new Map<string, number>();
  header.forEach((column, index) => {
    const key = normaliseHeader(column);
    if (!byHeader.has(key)) byHeader.set(key, index);
  });
  const fieldIndex = new Map<string, number>();
  const assignedColumns = new Map<number, string>();
  const assign = (index: number, field: string): void => {
    fieldIndex.set(field, index);
    assignedColumns.set(index, field);
  };

  for (const [column, field] of Object.entries(input.explicit ?? {})) {
    const index = byHeader.get(normaliseHeader(column));
    if (index === undefined) {
      throw new InputError(`--map names column "${column}", which is not in the file. Columns found: ${listColumns(header)}.`);
    }
    if (field !== IGNORE_FIELD && !known.has(field) && kind !== 'features') {
      throw new InputError(`--map ${column}=${field}: "${field}" is not a ${kind} field. Fields: ${[...known, IGNORE_FIELD].join(', ')}.`);
    }
    if (field !== IGNORE_FIELD && fieldIndex.has(field)) {
      throw new InputError(`--map gives field "${field}" two columns; map each field once.`);
    }
    if (assignedColumns.has(index)) throw new InputError(`--map names column "${column}" twice.`);
    if (field === IGNORE_FIELD) assignedColumns.set(index, IGNORE_FIELD);
    else assign(index, field);
  }
  let usedSaved = false;
  for (const [column, field] of Object.entries(input.saved ?? {})) {
    const index = byHeader.get(normaliseHeader(column));
    if (index === undefined || assignedColumns.has(index)) continue;
    if (field === IGNORE_FIELD) assignedColumns.set(index, IGNORE_FIELD);
    else if (known.has(field) && !fieldIndex.has(field)) assign(index, field);
    else continue;
    usedSaved = true;
  }
  for (const spec of specs) {
    if (fieldIndex.has(spec.name)) continue;
    for (const name of [spec.name, ...spec.synonyms]) {
      const index = byHeader.get(name) ?? byHeader.get(name.replace(/_/g, ' '));
      if (index !== undefined && !assignedColumns.has(index)) {
        assign(index, spec.name);
        break;
      }
    }
  }

  const missing = specs.filter((spec) => spec.required && !fieldIndex.has(spec.name)).map((spec) => spec.name);
  if (missing.length > 0 && !input.allowMissing) {
    throw new InputError(
      `The ${kind} file lacks required column${missing.length > 1 ? 's' : ''} ${missing.join(', ')}. ` +
        `Columns found: ${listColumns(header)}. Map yours with --map COLUMN=FIELD (e.g. --map "Your Column=${missing[0]}").` +
        (input.context ? ` ${input.context}` : ''),
      { missing, found: [...header] },
    );
  }

  const mapping: ColumnMapping = {};
  const featureColumns: Array<[number, string]> = [];
  const unusedColumns: string[] = [];
  header.forEach((column, index) => {
    const field = assignedColumns.get(index);
    if (field !== undefined) {
      mapping[column] = field;
    } else if (kind === 'features' && column.trim() !== '') {
      featureColumns.push([index, column.trim()]);
      mapping[column] = column.trim();
    } else {
      unusedColumns.push(column);
    }
  });
  if (kind === 'features') {
    // Explicitly renamed feature columns (--map col=feature_name).
    for (const [field, index] of fieldIndex) {
      if (field !== 'customer_id') featureColumns.push([index, field]);
    }
    featureColumns.sort((a, b) => a[0] - b[0]);
    if (featureColumns.length === 0 && !input.allowMissing) {
      throw new InputError(`The features file has no feature columns besides customer_id. Columns found: ${listColumns(header)}.`);
    }
    const names = new Set<string>();
    for (const [, name] of featureColumns) {
      if (names.has(name)) throw new InputError(`The features file has the feature "${name}" twice.`);
      names.add(name);
    }
  }
  return { fieldIndex, mapping, featureColumns, unusedColumns, missing, usedSaved };
}

/**
 * Two columns with one name (ignoring case and spacing, as the mapping does) would leave it to
 * chance which one a field reads, and the saved mapping could not tell them apart: refused,
 * naming them. Unnamed columns do not count.
 */
function refuseDuplicateColumns(header: readonly string[]): void {
  const positions = new Map<string, number[]>();
  header.forEach((column, index) => {
    const key = normaliseHeader(column);
    if (key !== '') positions.set(key, [...(positions.get(key) ?? []), index + 1]);
  });
  const duplicates = [...positions.values()].filter((columns) => columns.length > 1);
  if (duplicates.length === 0) return;
  const described = duplicates.map((columns) => `"${header[columns[0] - 1].trim()}" (columns ${columns.slice(0, -1).join(', ')} and ${columns.at(-1)})`);
  throw new InputError(
    `The file has ${duplicates.length === 1 ? 'two columns with the same name' : 'columns with the same names'}: ${described.join('; ')}. ` +
      'Give each column its own name in the file: columns are mapped, and the mapping saved, by name.',
    { duplicateColumns: duplicates.map((columns) => ({ name: header[columns[0] - 1].trim(), columns })) },
  );
}

function listColumns(header: readonly string[]): string {
  return header.length === 0 ? '(none)' : header.map((column) => `"${column}"`).join(', ');
}
