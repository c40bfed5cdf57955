/**
 * The Sources screen's reads of past imports: the history in the screens' terms (amounts in
 * euros, mappings field → column), the mapping saved per kind, and pages of an import's
 * rejection report.
 */
import type { Database } from 'better-sqlite3';
import { readFile } from 'node:fs/promises';
import type { ImportKind, ImportRecord, ImportReportPage, SavedMapping } from '../api/contract.js';
import { InputError } from '../errors.js';
import { listImports, savedMapping as savedColumnMapping } from '../store/imports-repo.js';
import { tokenizeCsv } from './csv-tokenizer.js';
import { toScreenMapping } from './screen-mapping.js';

/** Every import, oldest first. */
export function importHistory(db: Database): ImportRecord[] {
  return listImports(db).map((record) => ({
    importId: record.importId,
    fileName: record.fileName,
    kind: record.kind,
    rowsRead: record.rowsRead,
    rowsImported: record.rowsImported,
    rowsRejected: record.rowsRejected,
    duplicatesSkipped: record.duplicatesSkipped,
    amountTotal: record.amountTotalCents === null ? null : record.amountTotalCents / 100,
    reportPath: record.reportPath,
    importedAt: record.importedAt,
    mapping: toScreenMapping(record.mapping),
  }));
}

/** The mapping last used for a kind, offered again next month. */
export function savedMapping(db: Database, kind: ImportKind): SavedMapping {
  const saved = savedColumnMapping(db, kind);
  return { kind, mapping: saved ? toScreenMapping(saved) : null };
}

/** One page of an import's rejection report (line, column, value, reason). */
export async function importReportPage(db: Database, query: { importId: number; offset: number; limit: number }): Promise<ImportReportPage> {
  const record = listImports(db).find((entry) => entry.importId === query.importId);
  if (!record) throw new InputError(`There is no import ${query.importId} in this database.`);
  if (!record.reportPath) return { importId: query.importId, total: 0, rows: [] };
  let text: string;
  try {
    text = await readFile(record.reportPath, 'utf8');
  } catch (error) {
    throw new InputError(`The report of import ${query.importId} (${record.reportPath}) cannot be read: ${(error as Error).message}`);
  }
  const body = tokenizeCsv(text).slice(1).filter((row) => row.fields.length >= 4);
  return {
    importId: query.importId,
    total: body.length,
    rows: body.slice(query.offset, query.offset + query.limit).map(({ fields: [line, column, value, reason] }) => ({
      line: Number(line),
      column,
      // The report neutralises formula-like text with a leading apostrophe; show the value as read.
      value: /^'[=+\-@\t\r]/.test(value) ? value.slice(1) : value,
      reason,
    })),
  };
}
