/**
 * Writes an export to a temporary name in the target folder and renames it into place at the
 * end, so a cancelled or failed export leaves no file (and never a half-written one under the
 * name the user asked for). Problems with the path are turned into InputErrors that say why.
 */
import { createWriteStream, type WriteStream } from 'node:fs';
import { open, rename, rm, stat } from 'node:fs/promises';
import { once } from 'node:events';
import { basename, dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';
import { CancelledError, InputError } from '../errors.js';

/** The file operations used, injectable so tests can play a file held open by another program. */
export interface FileOperations {
  rename: (from: string, to: string) => Promise<void>;
  /** Opens an existing file for writing and closes it again: fails when another program holds it. */
  probeWritable: (path: string) => Promise<void>;
  /** Creates the temporary file's stream (tests play a disk that fills up). */
  createStream: (path: string) => WriteStream;
}

export const nodeFileOperations: FileOperations = {
  createStream: (path) => createWriteStream(path, { flags: 'wx' }),
  rename,
  probeWritable: async (path) => {
    const handle = await open(path, 'r+');
    await handle.close();
  },
};

function errorCode(error: unknown): string | undefined {
  return typeof error === 'object' && error !== null && 'code' in error ? String((error as { code: unknown }).code) : undefined;
}

/** The reason a path cannot be written, in words; undefined when the error is not about the path. */
export function describeWriteProblem(path: string, error: unknown): string | undefined {
  switch (errorCode(error)) {
    case 'EBUSY':
    case 'ETXTBSY':
      return `${path} is open in another program (close it there, e.g. in the spreadsheet program, and export again)`;
    case 'EPERM':
    case 'EACCES':
      return `${path} cannot be written: permission denied, or the file is open in another program (close it there and export again)`;
    case 'ENOENT':
      return `${path} cannot be written: the folder ${dirname(path)} does not exist`;
    case 'ENOTDIR':
      return `${path} cannot be written: part of the folder path is a file, not a folder`;
    case 'EISDIR':
      return `${path} is a folder; give a file name`;
    case 'EROFS':
      return `${path} cannot be written: the disk is read-only`;
    case 'ENOSPC':
      return `${path} cannot be written: the disk is full`;
    case 'ENAMETOOLONG':
      return `${path} cannot be written: the name is too long`;
    default:
      return undefined;
  }
}

/**
 * A path problem as an InputError saying why in words; the original error stays reachable as
 * `cause`, and its `code` (EACCES, ENOSPC, …) is kept on the error itself, so a caller that sorts
 * failures by their cause in the user's environment sees it.
 */
function asPathError(path: string, error: unknown): unknown {
  const problem = describeWriteProblem(path, error);
  if (problem === undefined) return error;
  const code = errorCode(error);
  return Object.assign(new InputError(`${problem}.`, { path, code }), { code, cause: error });
}

/** Checks the target before any work: its folder exists, it is not a folder, no one holds it open. */
async function checkTarget(path: string, files: FileOperations): Promise<void> {
  const folder = dirname(path);
  const folderStats = await stat(folder).catch((error: unknown) => {
    throw asPathError(path, error);
  });
  if (!folderStats.isDirectory()) throw asPathError(path, Object.assign(new Error('not a folder'), { code: 'ENOTDIR' }));
  const existing = await stat(path).catch(() => null);
  if (existing?.isDirectory()) throw asPathError(path, Object.assign(new Error('is a folder'), { code: 'EISDIR' }));
  if (existing) {
    await files.probeWritable(path).catch((error: unknown) => {
      throw asPathError(path, error);
    });
  }
}

/** A hidden name beside the target, unique to this export. */
export function temporaryPathFor(path: string): string {
  return join(dirname(path), `.${basename(path)}.${process.pid}-${randomBytes(4).toString('hex')}.partial`);
}

async function closeStream(stream: WriteStream): Promise<void> {
  if (stream.closed) return;
  const closed = once(stream, 'close').catch(() => undefined);
  stream.destroy();
  await closed;
}

/**
 * Runs `write` on a stream to a temporary file beside `path`, then renames it to `path`.
 * `write` must end the stream (or have it ended) before resolving. A failing stream (disk full,
 * …) aborts the write through the signal handed to `write`. On any failure the temporary file
 * is removed and the error rethrown, path problems as InputError.
 */
export async function writeFileAtomically<T>(
  path: string,
  write: (output: WriteStream, signal: AbortSignal) => Promise<T>,
  options: { signal?: AbortSignal; files?: FileOperations } = {},
): Promise<T> {
  const files = options.files ?? nodeFileOperations;
  await checkTarget(path, files);
  const temporary = temporaryPathFor(path);
  const output = files.createStream(temporary);
  const streamFailed = new AbortController();
  let streamError: unknown;
  output.on('error', (error) => {
    streamError ??= error;
    streamFailed.abort();
  });
  const signal = options.signal ? AbortSignal.any([options.signal, streamFailed.signal]) : streamFailed.signal;
  // A stream that fails before exceljs listens for it would leave the write waiting forever.
  const failed = new Promise<never>((_, reject) => output.once('error', reject));
  failed.catch(() => undefined);
  let writing: Promise<T> | undefined;
  try {
    writing = write(output, signal);
    writing.catch(() => undefined);
    const result = await Promise.race([writing, failed]);
    if (!output.closed) await once(output, 'close');
    if (streamError !== undefined) throw streamError;
    await files.rename(temporary, path);
    return result;
  } catch (error) {
    // Decide the cause before closing: destroying the stream makes pending writes fail too.
    const cause = streamError ?? error;
    // Let the writer stop (the failed stream fired its signal) before returning: it may still be
    // reading the database, and a caller closing the connection under an open cursor would fail
    // with "busy executing a query", hiding this error.
    await writing?.catch(() => undefined);
    await closeStream(output);
    await rm(temporary, { force: true });
    if (cause instanceof CancelledError && options.signal?.aborted) throw cause;
    throw asPathError(path, cause);
  }
}
