import { existsSync, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { InputError } from '../errors.js';
import type { ApiSession } from './session.js';

/**
 * Every path a handler takes goes through one of these, one per kind, so what a session may
 * reach is decided in one place (the browser host confines its session to its own files).
 */

/** An input file the user named (import, preview): it must exist and be a file; the message says which. */
export function inputFilePath(_session: ApiSession, path: string): string {
  const absolute = resolve(path);
  if (!existsSync(absolute)) throw new InputError(`File ${absolute} does not exist.`);
  if (!statSync(absolute).isFile()) throw new InputError(`${absolute} is a folder, not a file.`);
  return absolute;
}

/** An output file (export): its folder must exist and the path must not be a folder (the writer reports the rest). */
export function outputFilePath(_session: ApiSession, path: string): string {
  const absolute = resolve(path);
  if (!existsSync(dirname(absolute))) throw new InputError(`Folder ${dirname(absolute)} does not exist; choose an existing folder.`);
  if (existsSync(absolute) && statSync(absolute).isDirectory()) throw new InputError(`${absolute} is a folder; give a file name.`);
  return absolute;
}

/** A database file to open or create; never an in-memory one (worker threads open the same file). */
export function databaseFilePath(_session: ApiSession, path: string): string {
  if (path.trim() === '' || path === ':memory:') {
    throw new InputError('Give a database file: the app\'s worker threads open the same file, so an in-memory database cannot be used.');
  }
  return resolve(path);
}
