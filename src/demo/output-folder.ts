import { accessSync, closeSync, constants, mkdirSync, openSync, readdirSync, renameSync, rmSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { InputError } from '../errors.js';
import { AsciiSink } from './ascii-sink.js';

/** Every file the generator writes into its output folder. */
export const DEMO_FILES = {
  receipts: 'receipts.csv',
  visits: 'visits.csv',
  customers: 'customers.csv',
  stores: 'stores.csv',
  truth: 'truth.csv',
  manifest: 'manifest.json',
} as const;
export type DemoFileKind = keyof typeof DEMO_FILES;

const PARTIAL_SUFFIX = '.partial';
const ownNames = new Set(Object.values(DEMO_FILES).flatMap((name) => [name, `${name}${PARTIAL_SUFFIX}`]));

/**
 * Checks the output folder and creates it when missing. It may be empty or hold an earlier
 * demo (which is then replaced), but nothing else: we never mix the demo into someone's files.
 */
export function prepareOutputFolder(folder: string): string {
  if (typeof folder !== 'string' || folder.trim() === '') {
    throw new InputError('The output folder is missing: give a folder path for the demo files (e.g. --out demo).');
  }
  const path = resolve(folder);
  let isFolder = false;
  try {
    isFolder = statSync(path).isDirectory();
    if (!isFolder) throw new InputError(`${path} is a file, not a folder: give a new or empty folder for the demo files.`);
  } catch (error) {
    if (error instanceof InputError) throw error;
    if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw folderError(path, error);
  }
  if (isFolder) {
    const others = readdirSync(path).filter((name) => !ownNames.has(name));
    if (others.length > 0) {
      const shown = others.slice(0, 3).join(', ') + (others.length > 3 ? `, … (${others.length} in all)` : '');
      throw new InputError(
        `${path} already holds other files (${shown}): give an empty folder, a new one, or one holding only an earlier demo.`,
      );
    }
  } else {
    try {
      mkdirSync(path, { recursive: true });
    } catch (error) {
      throw folderError(path, error);
    }
  }
  try {
    accessSync(path, constants.W_OK);
  } catch (error) {
    throw folderError(path, error);
  }
  return path;
}

function folderError(path: string, error: unknown): InputError {
  const code = (error as NodeJS.ErrnoException).code ?? 'error';
  return new InputError(`Cannot write the demo files into ${path} (${code}): choose a folder you can write to.`);
}

/**
 * The demo's output files, each written under a temporary name and renamed into place only when
 * all of them are complete, so a failed or cancelled run leaves an earlier demo untouched.
 * Rows go through an AsciiSink per file and are written synchronously in 64 KiB pieces: the
 * generator is CPU-bound anyway and yields between months.
 */
export class DemoFileSet {
  private readonly descriptors = new Map<DemoFileKind, number>();
  private readonly sinks = new Map<DemoFileKind, AsciiSink>();

  private constructor(readonly folder: string) {}

  static create(folder: string): DemoFileSet {
    const files = new DemoFileSet(folder);
    try {
      for (const kind of Object.keys(DEMO_FILES) as DemoFileKind[]) {
        const descriptor = openSync(files.partialPath(kind), 'w');
        files.descriptors.set(kind, descriptor);
        files.sinks.set(kind, new AsciiSink(descriptor));
      }
    } catch (error) {
      files.discard();
      throw folderError(folder, error);
    }
    return files;
  }

  path(kind: DemoFileKind): string {
    return join(this.folder, DEMO_FILES[kind]);
  }

  /** The byte writer of one file, for rows written piece by piece (call endRow() after each). */
  sink(kind: DemoFileKind): AsciiSink {
    return this.sinks.get(kind)!;
  }

  /** Adds ASCII text to a file. */
  append(kind: DemoFileKind, text: string): void {
    const sink = this.sink(kind);
    sink.text(text);
    sink.endRow();
  }

  /** Writes what is pending, closes every file and moves it into place. */
  commit(): void {
    for (const [kind, descriptor] of this.descriptors) {
      this.sink(kind).flush();
      closeSync(descriptor);
    }
    this.descriptors.clear();
    for (const kind of Object.keys(DEMO_FILES) as DemoFileKind[]) renameSync(this.partialPath(kind), this.path(kind));
  }

  /** Closes and removes the partial files; the folder is as it was. */
  discard(): void {
    for (const descriptor of this.descriptors.values()) {
      try {
        closeSync(descriptor);
      } catch {
        // already closed or never fully opened: nothing more to release
      }
    }
    this.descriptors.clear();
    for (const kind of Object.keys(DEMO_FILES) as DemoFileKind[]) rmSync(this.partialPath(kind), { force: true });
  }

  private partialPath(kind: DemoFileKind): string {
    return `${this.path(kind)}${PARTIAL_SUFFIX}`;
  }
}
