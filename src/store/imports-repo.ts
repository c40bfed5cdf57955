import type { Database } from 'better-sqlite3';
import type { ImportKind } from '../api/contract.js';

export type { ImportKind };
/** The kinds the importer takes (the contract's `importKinds`; a test checks they agree). */
export const IMPORT_KINDS: readonly ImportKind[] = ['receipts', 'visits', 'customers', 'features'];

/** One row of the `imports` table, in API naming. */
export interface ImportRecord {
  importId: number;
  fileName: string;
  kind: ImportKind;
  contentHash: string;
  mapping: Record<string, string>;
  rowsRead: number;
  rowsImported: number;
  rowsRejected: number;
  duplicatesSkipped: number;
  /** Sum of imported receipt amounts in cents; null for other kinds. */
  amountTotalCents: number | null;
  reportPath: string | null;
  importedAt: string;
}

interface ImportRow {
  import_id: number;
  file_name: string;
  kind: ImportKind;
  content_hash: string;
  mapping: string;
  rows_read: number;
  rows_imported: number;
  rows_rejected: number;
  duplicates_skipped: number;
  amount_total_cents: number | null;
  report_path: string | null;
  imported_at: string;
}

function toRecord(row: ImportRow): ImportRecord {
  return {
    importId: row.import_id,
    fileName: row.file_name,
    kind: row.kind,
    contentHash: row.content_hash,
    mapping: JSON.parse(row.mapping) as Record<string, string>,
    rowsRead: row.rows_read,
    rowsImported: row.rows_imported,
    rowsRejected: row.rows_rejected,
    duplicatesSkipped: row.duplicates_skipped,
    amountTotalCents: row.amount_total_cents,
    reportPath: row.report_path,
    importedAt: row.imported_at,
  };
}

/** Every import, oldest first. */
export function listImports(db: Database): ImportRecord[] {
  return (db.prepare('SELECT * FROM imports ORDER BY import_id').all() as ImportRow[]).map(toRecord);
}

export function findImportByHash(db: Database, kind: ImportKind, contentHash: string): ImportRecord | undefined {
  const row = db.prepare('SELECT * FROM imports WHERE kind = ? AND content_hash = ?').get(kind, contentHash) as
    | ImportRow
    | undefined;
  return row ? toRecord(row) : undefined;
}

export type NewImport = Omit<ImportRecord, 'importId'>;

/** Inserts the import's row and returns its id (call inside the import's transaction). */
export function insertImport(db: Database, record: NewImport): number {
  const info = db
    .prepare(
      `INSERT INTO imports (file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected,
         duplicates_skipped, amount_total_cents, report_path, imported_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
    )
    .run(
      record.fileName,
      record.kind,
      record.contentHash,
      JSON.stringify(record.mapping),
      record.rowsRead,
      record.rowsImported,
      record.rowsRejected,
      record.duplicatesSkipped,
      record.amountTotalCents,
      record.reportPath,
      record.importedAt,
    );
  return Number(info.lastInsertRowid);
}

/** Fills in the counts once the rows are in (same transaction as the rows). */
export function finishImport(
  db: Database,
  importId: number,
  counts: Pick<ImportRecord, 'rowsRead' | 'rowsImported' | 'rowsRejected' | 'duplicatesSkipped' | 'amountTotalCents' | 'reportPath'>,
): void {
  db.prepare(
    `UPDATE imports SET rows_read = ?, rows_imported = ?, rows_rejected = ?, duplicates_skipped = ?,
       amount_total_cents = ?, report_path = ? WHERE import_id = ?`,
  ).run(
    counts.rowsRead,
    counts.rowsImported,
    counts.rowsRejected,
    counts.duplicatesSkipped,
    counts.amountTotalCents,
    counts.reportPath,
    importId,
  );
}

/** The column mapping last used for a kind (source column → field), if any. */
export function savedMapping(db: Database, kind: ImportKind): Record<string, string> | undefined {
  const row = db.prepare('SELECT mapping FROM column_mappings WHERE kind = ?').get(kind) as { mapping: string } | undefined;
  return row ? (JSON.parse(row.mapping) as Record<string, string>) : undefined;
}

export function saveMapping(db: Database, kind: ImportKind, mapping: Record<string, string>, savedAt = new Date().toISOString()): void {
  db.prepare(
    `INSERT INTO column_mappings (kind, mapping, saved_at) VALUES (?, ?, ?)
     ON CONFLICT (kind) DO UPDATE SET mapping = excluded.mapping, saved_at = excluded.saved_at`,
  ).run(kind, JSON.stringify(mapping), savedAt);
}
