import { existsSync, lstatSync, mkdirSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { InputError } from '../errors.js';
import { createPrivateFolder } from './private-folder.js';

/**
 * Which files a session's API calls may touch: one function per kind of path, called by the
 * handlers. The desktop app and the CLI work on the user's own paths (chosen in native dialogs or
 * typed on the command line); the browser host only on its own database and its session folder,
 * because anything holding its token could otherwise read or write any file the user can.
 */
export interface FilePolicy {
  /** A file to read for an import or a preview: its absolute path, or an InputError. */
  inputFile(path: string): string;
  /** Where an export asked for as `requested` is written: an absolute path, or an InputError. */
  exportTarget(requested: string): string;
  /** The database file `openDatabase` may open for `path`, or an InputError. */
  databasePath(path: string): string;
  /** Removes what the policy keeps for the session (the browser host's folder). */
  close(): void;
}

/** The user's own paths: the file must exist and be a file; the message says which. */
function existingFile(path: string): string {
  const absolute = resolve(path);
  if (!existsSync(absolute)) throw new InputError(`File ${absolute} does not exist.`);
  if (!statSync(absolute).isFile()) throw new InputError(`${absolute} is a folder, not a file.`);
  return absolute;
}

/** An output path of the user's: its folder must exist (the exporter reports everything else). */
function writableTarget(path: string): string {
  const absolute = resolve(path);
  if (!existsSync(dirname(absolute))) throw new InputError(`Folder ${dirname(absolute)} does not exist; choose an existing folder.`);
  if (existsSync(absolute) && statSync(absolute).isDirectory()) throw new InputError(`${absolute} is a folder; give a file name.`);
  return absolute;
}

/** A database file to open or create; never an in-memory one (worker threads open the same file). */
export function databaseFile(path: string): string {
  if (path.trim() === '' || path === ':memory:') {
    throw new InputError("Give a database file: the app's worker threads open the same file, so an in-memory database cannot be used.");
  }
  return resolve(path);
}

/** The desktop app and the CLI: the paths the user chose. */
export const userPaths: FilePolicy = {
  inputFile: existingFile,
  exportTarget: writableTarget,
  databasePath: databaseFile,
  close: () => undefined,
};

/** A file name safe in any folder: no separators, no leading dots, only common characters. */
export function safeFileName(name: string, fallback: string): string {
  const cleaned = basename(name.replace(/\\/g, '/'))
    .replace(/[^\w.\- ()]+/g, '_')
    .replace(/^[.\s]+/, '')
    .slice(0, 120);
  return cleaned === '' ? fallback : cleaned;
}

/**
 * The browser host's files: the database given at start (`serve --db`), files uploaded into a
 * private session folder (0700, owner checked), and exports written there and handed to the
 * browser once as a download. Nothing else on disk is reachable through the API.
 */
export class SessionFolder implements FilePolicy {
  readonly root: string;
  readonly uploadsDir: string;
  private readonly exportsDir: string;
  private readonly database: string | null;
  private readonly uploaded = new Set<string>();
  /** Exports written or being written, by path, with the name the browser saves them under. */
  private readonly exports = new Map<string, string>();

  constructor(options: { databasePath: string | null }) {
    this.database = options.databasePath ? resolve(options.databasePath) : null;
    this.root = createPrivateFolder('spendmix-session-');
    this.uploadsDir = join(this.root, 'uploads');
    this.exportsDir = join(this.root, 'exports');
    mkdirSync(this.uploadsDir, { mode: 0o700 });
    mkdirSync(this.exportsDir, { mode: 0o700 });
  }

  /** A new path for an upload named `name` (one sub-folder per upload: nothing is overwritten). */
  allocateUpload(name: string): string {
    return join(mkdtempSync(join(this.uploadsDir, 'file-')), safeFileName(name, 'upload'));
  }

  /** Marks a completely received upload as readable by imports and previews. */
  acceptUpload(path: string): void {
    this.uploaded.add(path);
  }

  /** Removes an upload that was refused or broken off. */
  discardUpload(path: string): void {
    this.uploaded.delete(path);
    rmSync(dirname(path), { recursive: true, force: true });
  }

  inputFile(path: string): string {
    const absolute = resolve(path);
    if (!this.uploaded.has(absolute) || !lstatSync(absolute, { throwIfNoEntry: false })?.isFile()) {
      throw new InputError(
        `${absolute} was not uploaded in this session: the browser host reads only files uploaded into its session folder. ` +
          'Drop the file on the Sources screen (or choose it there) to upload it.',
      );
    }
    return absolute;
  }

  exportTarget(requested: string): string {
    const wanted = safeFileName(requested, 'spendmix-export');
    const name = ['.xlsx', '.csv', '.sql'].includes(extname(wanted).toLowerCase()) ? wanted : `${wanted}.xlsx`;
    const path = join(mkdtempSync(join(this.exportsDir, 'export-')), name);
    this.exports.set(path, name);
    return path;
  }

  /**
   * The export at `path` for its one download, or null when there is none (never written here,
   * or downloaded already). The caller removes it with `discardExport` once it has been sent.
   */
  takeExport(path: string): { path: string; name: string } | null {
    const absolute = resolve(path);
    const name = this.exports.get(absolute);
    if (name === undefined || !lstatSync(absolute, { throwIfNoEntry: false })?.isFile()) return null;
    this.exports.delete(absolute);
    return { path: absolute, name };
  }

  discardExport(path: string): void {
    rmSync(dirname(path), { recursive: true, force: true });
  }

  databasePath(path: string): string {
    const absolute = resolve(path);
    if (absolute !== this.database) {
      throw new InputError(
        `The browser host works on ${this.database ?? 'the database given with --db'} only; ` +
          'to work on another database, start `spendmix serve --db FILE` with that file.',
      );
    }
    return absolute;
  }

  close(): void {
    rmSync(this.root, { recursive: true, force: true });
  }
}
