/**
 * The three SQL engines the generated queries are proved on, behind one small interface: DuckDB
 * in-process (@duckdb/node-api), SQLite (better-sqlite3, built with its math functions, so LN and
 * EXP are SQLite's own), and PostgreSQL: a throw-away cluster started for the test in a private
 * folder (initdb, pg_ctl; Unix socket only, no TCP) and driven through psql, stopped afterwards.
 */
import { spawnSync } from 'node:child_process';
import { chownSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import Database from 'better-sqlite3';
import { parse } from 'csv-parse/sync';

export type ColumnType = 'text' | 'double' | 'timestamp' | 'date';
export interface ColumnSpec {
  name: string;
  type: ColumnType;
}

/** A result row: numbers as numbers (PostgreSQL's come back as their text), text as strings, NULL as null. */
export type EngineRow = Record<string, unknown>;

export interface Engine {
  name: 'duckdb' | 'sqlite' | 'postgres';
  /** Creates `table` with these columns and loads the CSV file (header row; empty cell = NULL). */
  loadCsv(table: string, columns: ColumnSpec[], csvPath: string): Promise<void>;
  /** Runs a statement that returns nothing. */
  run(sql: string): Promise<void>;
  /** Runs a query. */
  query(sql: string): Promise<EngineRow[]>;
  close(): Promise<void>;
}

/** Column types of the chain's files (demo-data): the dates as date-times, amounts as doubles, the rest as text. */
export function chainFileColumns(csvPath: string): ColumnSpec[] {
  const types: Record<string, ColumnType> = { date: 'timestamp', amount: 'double', joined: 'date' };
  const header = readFileSync(csvPath, 'utf8').split(/\r?\n/, 1)[0].split(',');
  return header.map((name) => ({ name, type: types[name] ?? 'text' }));
}

/** Quoted column name for the engines' own DDL in these tests (names here may be hostile on purpose). */
const quote = (name: string) => `"${name.replace(/"/g, '""')}"`;

function duckType(type: ColumnType): string {
  return { text: 'VARCHAR', double: 'DOUBLE', timestamp: 'TIMESTAMP', date: 'DATE' }[type];
}

export async function openDuckDb(): Promise<Engine> {
  const instance = await DuckDBInstance.create(':memory:', { threads: '2' });
  const connection = await instance.connect();
  return {
    name: 'duckdb',
    async loadCsv(table, columns, csvPath) {
      const types = columns.map((column) => `'${column.name.replace(/'/g, "''")}': '${duckType(column.type)}'`).join(', ');
      await connection.run(
        `CREATE TABLE ${table} AS SELECT * FROM read_csv('${csvPath.replace(/'/g, "''")}', header = true, auto_detect = false, columns = {${types}})`,
      );
    },
    async run(sql) {
      await connection.run(sql);
    },
    async query(sql) {
      const reader = await connection.runAndReadAll(sql);
      return reader.getRowObjectsJS() as EngineRow[];
    },
    async close() {
      connection.closeSync();
      instance.closeSync();
    },
  };
}

export async function openSqlite(): Promise<Engine> {
  const db = new Database(':memory:');
  return {
    name: 'sqlite',
    async loadCsv(table, columns, csvPath) {
      const affinity = (type: ColumnType) => (type === 'double' ? 'REAL' : 'TEXT');
      db.exec(`CREATE TABLE ${table} (${columns.map((column) => `${quote(column.name)} ${affinity(column.type)}`).join(', ')})`);
      const insert = db.prepare(`INSERT INTO ${table} VALUES (${columns.map(() => '?').join(', ')})`);
      const records = parse(readFileSync(csvPath), { from_line: 2 }) as string[][];
      db.transaction(() => {
        for (const record of records) {
          insert.run(
            record.map((cell, j) =>
              cell === '' ? null : columns[j].type === 'double' ? Number(cell) : cell,
            ),
          );
        }
      })();
    },
    async run(sql) {
      db.exec(sql);
    },
    async query(sql) {
      return db.prepare(sql).all() as EngineRow[];
    },
    async close() {
      db.close();
    },
  };
}

/** Folder of the PostgreSQL programs (Debian's layout), or null when PostgreSQL is not installed. */
export function postgresBinaries(): string | null {
  const root = '/usr/lib/postgresql';
  if (!existsSync(root)) return null;
  const versions = readdirSync(root)
    .filter((version) => existsSync(join(root, version, 'bin', 'initdb')))
    .sort((a, b) => Number(b) - Number(a));
  return versions.length > 0 && existsSync('/usr/bin/psql') ? join(root, versions[0], 'bin') : null;
}

function pgType(type: ColumnType): string {
  return { text: 'TEXT', double: 'DOUBLE PRECISION', timestamp: 'TIMESTAMP', date: 'DATE' }[type];
}

/**
 * Starts a private cluster; the server refuses to run as root, so as root the cluster belongs to
 * `nobody`. Returns the engine; `close` stops the server and removes the folder.
 */
export async function openPostgres(): Promise<Engine> {
  const bin = postgresBinaries();
  if (!bin) throw new Error('PostgreSQL is not installed (Debian package postgresql; .ci/run installs it).');
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-pg-'));
  const asRoot = process.getuid?.() === 0;
  const owner = asRoot ? Number(spawnSync('id', ['-u', 'nobody'], { encoding: 'utf8' }).stdout.trim()) : null;
  if (owner !== null) chownSync(folder, owner, owner);
  const server = (program: string, args: string[]) => {
    const command = asRoot ? 'runuser' : join(bin, program);
    const fullArgs = asRoot ? ['-u', 'nobody', '--', join(bin, program), ...args] : args;
    const result = spawnSync(command, fullArgs, { encoding: 'utf8', cwd: folder });
    if (result.status !== 0) throw new Error(`${program} failed: ${result.stderr || result.stdout}`);
  };
  const data = join(folder, 'data');
  const user = asRoot ? 'nobody' : (process.env.USER ?? 'postgres');
  server('initdb', ['-D', data, '-A', 'trust', '-U', user, '--no-sync', '-E', 'UTF8', '--locale', 'C']);
  server('pg_ctl', ['-D', data, '-l', join(folder, 'server.log'), '-w', '-o', `-k ${folder} -p 5432 -c listen_addresses= -c fsync=off -c full_page_writes=off`, 'start']);

  let counter = 0;
  const psql = (sql: string, output?: string): string => {
    const file = join(folder, `statement-${++counter}.sql`);
    writeFileSync(file, sql);
    const args = ['-h', folder, '-p', '5432', '-U', user, '-d', 'postgres', '-X', '-q', '-v', 'ON_ERROR_STOP=1', '-f', file];
    if (output) args.push('--csv', '-o', output);
    const result = spawnSync('psql', args, { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
    rmSync(file, { force: true });
    if (result.status !== 0) throw new Error(`psql failed: ${result.stderr}`);
    return result.stderr;
  };
  return {
    name: 'postgres',
    async loadCsv(table, columns, csvPath) {
      psql(
        `CREATE TABLE ${table} (${columns.map((column) => `${quote(column.name)} ${pgType(column.type)}`).join(', ')});\n` +
          `\\copy ${table} FROM '${csvPath.replace(/'/g, "''")}' WITH (FORMAT csv, HEADER true)\n`,
      );
    },
    async run(sql) {
      psql(sql);
    },
    async query(sql) {
      const output = join(folder, `result-${++counter}.csv`);
      psql(sql.trim().replace(/;?\s*$/, ';\n'), output);
      const [header, ...records] = parse(readFileSync(output)) as string[][];
      rmSync(output, { force: true });
      // psql's CSV writes NULL as an empty cell; no text column these tests read is ever empty.
      return records.map((record) => Object.fromEntries(record.map((cell, j) => [header[j], cell === '' ? null : cell])));
    },
    async close() {
      try {
        server('pg_ctl', ['-D', data, '-w', '-m', 'immediate', 'stop']);
      } finally {
        rmSync(folder, { recursive: true, force: true });
      }
    },
  };
}
