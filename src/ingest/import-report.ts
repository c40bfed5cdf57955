import { closeSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';
import type { RowRejection } from './row-converters.js';

const FLUSH_LINES = 2000;

/** RFC 4180 quoting; text that a spreadsheet would run as a formula gets a leading apostrophe (OWASP guidance). */
export function reportCell(value: string): string {
  const neutral = /^[=+\-@\t\r]/.test(value) && !/^[+-]?\d+([.,]\d+)?$/.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(neutral) ? `"${neutral.replace(/"/g, '""')}"` : neutral;
}

/**
 * The import report: one line per rejected row (line, column, value, reason), written as rows are
 * read so memory stays flat. Written to a temporary name and renamed when complete; nothing is
 * left behind when there was nothing to report or the import was cancelled.
 */
export class ImportReport {
  private descriptor: number | undefined;
  private pendingLines: string[] = [];
  private readonly temporaryPath: string;
  rejectedRows = 0;
  /** Count of each reason, to summarise a refused file. */
  readonly reasons = new Map<string, number>();

  constructor(readonly path: string) {
    this.temporaryPath = `${path}.partial`;
  }

  add(line: number, rejection: RowRejection): void {
    this.rejectedRows += 1;
    this.reasons.set(rejection.reason, (this.reasons.get(rejection.reason) ?? 0) + 1);
    this.pendingLines.push(`${line},${reportCell(rejection.column)},${reportCell(rejection.value)},${reportCell(rejection.reason)}\n`);
    if (this.pendingLines.length >= FLUSH_LINES) this.writePending();
  }

  private writePending(): void {
    if (this.descriptor === undefined) {
      this.descriptor = openSync(this.temporaryPath, 'w');
      writeSync(this.descriptor, 'line,column,value,reason\n');
    }
    writeSync(this.descriptor, this.pendingLines.join(''));
    this.pendingLines = [];
  }

  /** The most frequent reasons, for error messages. */
  topReasons(limit = 3): string {
    return [...this.reasons.entries()]
      .sort((a, b) => b[1] - a[1])
      .slice(0, limit)
      .map(([reason, count]) => `${reason} (${count})`)
      .join('; ');
  }

  /** Completes the report; returns its path, or null when no row was rejected. */
  finish(): string | null {
    if (this.rejectedRows === 0) {
      this.discard();
      return null;
    }
    this.writePending();
    closeSync(this.descriptor!);
    this.descriptor = undefined;
    renameSync(this.temporaryPath, this.path);
    return this.path;
  }

  discard(): void {
    if (this.descriptor !== undefined) {
      closeSync(this.descriptor);
      this.descriptor = undefined;
    }
    rmSync(this.temporaryPath, { force: true });
    this.pendingLines = [];
  }
}
