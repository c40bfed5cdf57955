/**
 * Error kinds shared by the core, the API and the CLI.
 *
 * `InputError` means the caller gave us something we cannot use (bad file, bad option, unknown
 * run). Its message must say what was wrong and how to fix it. The CLI maps it to exit code 2,
 * the API to a 400-class answer. Every other error is an internal failure (exit code 1).
 */
export class InputError extends Error {
  override readonly name = 'InputError';
  /** Optional structured details (e.g. rejected rows, valid names) for JSON consumers. */
  readonly details?: Record<string, unknown>;

  constructor(message: string, details?: Record<string, unknown>) {
    super(message);
    this.details = details;
  }
}

/** Raised when work is stopped through an AbortSignal; nothing half-done is kept. */
export class CancelledError extends Error {
  override readonly name = 'CancelledError';

  constructor(message = 'Cancelled.') {
    super(message);
  }
}

export function isInputError(error: unknown): error is InputError {
  return error instanceof InputError;
}

/** Throws CancelledError when the signal has fired; call between units of work. */
export function throwIfAborted(signal: AbortSignal | undefined): void {
  if (signal?.aborted) throw new CancelledError();
}

/** What the user can do about a damaged database file (health check and SQLITE_CORRUPT alike). */
export function damagedDatabaseAdvice(path?: string, backups: readonly string[] = []): string {
  const file = path ? `"${path}"` : 'DAMAGED.db';
  const copies =
    backups.length > 0
      ? `the copy Spendmix made before its last upgrade (${backups.join(', ')}), or your own backup`
      : 'your own backup (or a copy Spendmix made before an upgrade, named like the database with .backup-v<N> at the end)';
  return (
    `Stop using this file and restore a copy you trust: ${copies}. ` +
    `Or recover what can still be read with the sqlite3 shell: sqlite3 ${file} ".recover" | sqlite3 recovered.db, ` +
    'then work on recovered.db and re-import the months that are missing.'
  );
}

interface SystemErrorFields {
  code?: unknown;
  path?: unknown;
}

/** The problem and the remedy for an error code caused by the user's environment; `what` names the file. */
function environmentAdvice(code: string, what: string | null): { problem: string; remedy: string } | null {
  const is = (...prefixes: string[]) => prefixes.some((prefix) => code === prefix || code.startsWith(`${prefix}_`));
  if (is('EACCES', 'EPERM', 'SQLITE_PERM', 'SQLITE_AUTH')) {
    return {
      problem: `${what ?? 'A file'} cannot be used by this user: permission denied`,
      remedy: 'Check its owner and permissions (ls -l), or choose a file and folder this user may read and write.',
    };
  }
  if (is('EROFS')) return { problem: `${what ?? 'The file'} is on a read-only disk`, remedy: 'Use a folder on a writable disk.' };
  if (is('ENOSPC', 'EDQUOT', 'SQLITE_FULL')) {
    return {
      problem: what ? `${what} cannot be written: the disk is full` : 'The disk is full',
      remedy: 'Free space on that disk (or use a folder on another disk) and try again.',
    };
  }
  if (is('SQLITE_READONLY')) {
    return {
      problem: `${what ?? 'The database'} cannot be written: the file, its folder or its -wal/-shm files are read-only for this user`,
      remedy: 'Make them writable by this user (ls -l shows owner and permissions) and try again.',
    };
  }
  if (is('SQLITE_BUSY', 'SQLITE_LOCKED', 'EBUSY')) {
    return {
      problem: `${what ?? 'The database'} is locked by another program or Spendmix window`,
      remedy: 'Close it there, or wait until that work has finished, and try again.',
    };
  }
  if (is('SQLITE_NOTADB')) {
    return {
      problem: `${what ?? 'The file'} is not an SQLite database, or its first page is damaged`,
      remedy: `Check that you named the right file. If it is your Spendmix database, it is damaged: ${damagedDatabaseAdvice()}`,
    };
  }
  if (is('SQLITE_CORRUPT')) return { problem: `${what ?? 'The database'} is damaged`, remedy: damagedDatabaseAdvice() };
  if (is('SQLITE_CANTOPEN')) {
    return {
      problem: `${what ?? 'The database'} cannot be opened`,
      remedy: 'Check that its folder exists and that this user may read and write there.',
    };
  }
  if (is('SQLITE_IOERR', 'EIO')) {
    return {
      problem: `Reading or writing ${what ?? 'a file'} failed in the operating system`,
      remedy: 'The disk may be failing, full or disconnected: check it and try again.',
    };
  }
  if (is('EMFILE', 'ENFILE')) return { problem: 'Too many files are open', remedy: 'Close other programs, or raise the limit (ulimit -n), and try again.' };
  return null;
}

/**
 * The one classification of failures caused by the user's environment rather than by Spendmix:
 * permissions, a read-only or full disk, a file locked by another program, a damaged database.
 * Returns an InputError (CLI exit code 2, API kind 'input') whose message says what happened,
 * the system's own words for it and what to do; null for every other error (an internal failure
 * stays one). `what` names the file when the caller knows it better than the error does.
 */
export function environmentError(error: unknown, what?: string): InputError | null {
  if (!(error instanceof Error) || error instanceof InputError || error instanceof CancelledError) return null;
  const { code, path } = error as SystemErrorFields;
  if (typeof code !== 'string') return null;
  const advice = environmentAdvice(code, what ?? (typeof path === 'string' ? path : null));
  if (!advice) return null;
  return new InputError(`${advice.problem} (${error.message}). ${advice.remedy}`, { code });
}
