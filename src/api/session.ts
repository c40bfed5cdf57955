import { dirname } from 'node:path';
import { openDatabase, type Database } from '../store/database.js';
import { InputError } from '../errors.js';
import type { LongTaskMethod, TaskResults } from './contract.js';
import type { LongTaskRequest } from './long-task-request.js';
import { runInWorker } from './run-in-worker.js';
import { TaskManager, type ProgressReporter } from './tasks.js';
import { databaseFile, SessionFolder, userPaths, type FilePolicy } from './file-policy.js';
import { DEFAULT_DEMO_CUSTOMERS } from './contract.js';

/** Runs a long task's core work; the default puts it on a worker thread. */
export type LongTaskRunner = <M extends LongTaskMethod>(
  request: LongTaskRequest<M>,
  context: { signal: AbortSignal; onProgress: ProgressReporter },
) => Promise<TaskResults[M]>;

export interface SessionOptions {
  /** Database to open at once, if any. */
  dbPath?: string | null;
  shell: 'electron' | 'browser' | 'cli';
  /** Recent databases as the shell keeps them (Electron: a file in userData). */
  recentDatabases?: () => string[];
  /** Told after every successful open, so the shell can update its recent list and title. */
  onDatabaseOpened?: (path: string) => void;
  runLongTask?: LongTaskRunner;
  /** Customers in the demo chain when a load asks for no size (default 6,000, DESIGN.md §10). */
  demoCustomers?: number;
  /**
   * Which files the API may touch (see file-policy.ts). Default: the user's own paths, or for the
   * browser shell its database and a private session folder.
   */
  files?: FilePolicy;
}

/**
 * One user's working state behind the API: the open database (one connection, used for the
 * quick reads and small writes on the caller's thread) and the long-task manager (heavy work on
 * worker threads, each with its own connection). The CLI, Electron IPC and the browser host each
 * hold one session and call the same handlers on it.
 */
export class ApiSession {
  readonly tasks = new TaskManager();
  readonly shell: SessionOptions['shell'];
  readonly runLongTask: LongTaskRunner;
  readonly demoCustomers: number;
  readonly files: FilePolicy;
  private readonly options: SessionOptions;
  private database: Database | null = null;
  private path: string | null = null;

  constructor(options: SessionOptions) {
    this.options = options;
    this.shell = options.shell;
    this.runLongTask = options.runLongTask ?? runInWorker;
    this.demoCustomers = options.demoCustomers ?? DEFAULT_DEMO_CUSTOMERS;
    this.files = options.files ?? (options.shell === 'browser' ? new SessionFolder({ databasePath: options.dbPath ?? null }) : userPaths);
    try {
      if (options.dbPath) this.open(options.dbPath);
    } catch (error) {
      this.files.close();
      throw error;
    }
  }

  get dbPath(): string | null {
    return this.path;
  }

  get recentDatabases(): string[] {
    return this.options.recentDatabases?.() ?? [];
  }

  /** Opens (creating and migrating if needed) the database; the previous one is closed. */
  open(path: string): Database {
    const absolute = databaseFile(path);
    const next = openDatabase(absolute);
    this.database?.close();
    this.database = next;
    this.path = absolute;
    this.options.onDatabaseOpened?.(absolute);
    return next;
  }

  /** The open database, or a clear InputError telling the user to open one. */
  db(): Database {
    if (!this.database) throw new InputError('No database is open; open or create one first.');
    return this.database;
  }

  requirePath(): string {
    this.db();
    return this.path!;
  }

  /** Folder of the open database: where import reports are written. */
  folder(): string {
    return dirname(this.requirePath());
  }

  /** Starts a long task on the open database, queued behind any running one. */
  startTask<M extends LongTaskMethod>(method: M, input: LongTaskRequest<M>['input']) {
    const dbPath = this.requirePath();
    return this.tasks.start(method, (context) => this.runLongTask({ method, input, dbPath } as LongTaskRequest<M>, context));
  }

  async close(): Promise<void> {
    await this.tasks.shutdown();
    this.database?.close();
    this.database = null;
    this.files.close();
  }
}
