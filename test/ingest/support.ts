import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Database } from 'better-sqlite3';
import { openDatabase } from '../../src/store/database.js';

export function temporaryFolder(prefix = 'spendmix-ingest-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}

/** A new database in a new temporary folder. */
export function freshDatabase(): { folder: string; db: Database } {
  const folder = temporaryFolder();
  return { folder, db: openDatabase(join(folder, 'spendmix.db')) };
}

export function writeText(folder: string, name: string, text: string | Buffer): string {
  const path = join(folder, name);
  writeFileSync(path, text);
  return path;
}

/** Every data table's row count and the import count: "unchanged" means this is equal. */
export function snapshotCounts(db: Database): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const table of ['receipts', 'visits', 'customers', 'customer_features', 'stores', 'imports', 'column_mappings']) {
    counts[table] = db.prepare(`SELECT count(*) FROM ${table}`).pluck().get() as number;
  }
  return counts;
}

/** Runs the CLI in-process and captures its output and exit code. */
export async function runCliCaptured(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  const { runCli } = await import('../../src/cli/program.js');
  let stdout = '';
  let stderr = '';
  const code = await runCli(args, { stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) });
  return { code, stdout, stderr };
}
