import type { Command } from 'commander';
import { CancelledError, InputError, environmentError } from '../errors.js';

/** Where a command writes; injectable so tests can capture output without spawning. */
export interface CliIo {
  stdout: (text: string) => void;
  stderr: (text: string) => void;
}

export const processIo: CliIo = {
  stdout: (text) => process.stdout.write(text),
  stderr: (text) => process.stderr.write(text),
};

export const EXIT_OK = 0;
export const EXIT_INTERNAL = 1;
export const EXIT_BAD_INPUT = 2;

export interface CommandOutcome<T> {
  /** The one JSON object printed with --json. */
  result: T;
  /** Human-readable lines printed without --json. */
  human: (result: T) => string;
}

/**
 * Runs one command body with the CLI conventions of DESIGN.md §10: `--json` prints exactly one
 * JSON object on stdout; otherwise human text; errors on stderr, exit 2 for bad input, 1 otherwise.
 * Returns the exit code instead of exiting so tests can call it in-process.
 */
export async function runCommand<T>(
  io: CliIo,
  json: boolean,
  body: () => Promise<CommandOutcome<T>>,
): Promise<number> {
  try {
    const { result, human } = await body();
    io.stdout(json ? `${jsonText(result)}\n` : ensureNewline(terminalText(human(result))));
    return EXIT_OK;
  } catch (error) {
    return reportError(io, json, error);
  }
}

export function reportError(io: CliIo, json: boolean, failure: unknown): number {
  // A failure of the user's environment (permissions, full disk, locked or damaged file): exit 2.
  const error = environmentError(failure) ?? failure;
  const code = error instanceof InputError ? EXIT_BAD_INPUT : EXIT_INTERNAL;
  const message = error instanceof Error ? error.message : String(error);
  if (error instanceof CancelledError) {
    io.stderr(`spendmix: ${message}\n`);
    return EXIT_INTERNAL;
  }
  const prefix = code === EXIT_BAD_INPUT ? 'spendmix: ' : 'spendmix: internal error: ';
  io.stderr(`${prefix}${terminalText(message)}\n`);
  if (code === EXIT_INTERNAL && error instanceof Error && error.stack && process.env.SPENDMIX_DEBUG) {
    io.stderr(`${error.stack}\n`);
  }
  if (json && error instanceof InputError && error.details) {
    io.stderr(`${jsonText({ error: message, details: error.details })}\n`);
  }
  return code;
}

/**
 * Characters that must not reach a terminal as they are: control characters (ESC starts the
 * sequences that move the cursor, recolour, retitle or rewrite the screen; CR overwrites a line),
 * DEL, the C1 controls, and invisible format characters that reorder or hide text (bidirectional
 * overrides and isolates, zero-width characters, line separators). Text read from input files
 * (a binary file given as receipts, a crafted cell) reaches error messages and reports.
 */
const UNSAFE_FOR_TERMINAL = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200b-\u200f\u2028-\u202e\u2060-\u2069\ufeff\ufff9-\ufffb]/g;

const hex = (char: string, width: number) => char.charCodeAt(0).toString(16).padStart(width, '0');

/** Human output with every unsafe character written as a visible escape (\x1b, \u{202e}); newlines and tabs stay. */
export function terminalText(text: string): string {
  return text.replace(UNSAFE_FOR_TERMINAL, (char) => (char.charCodeAt(0) < 0x100 ? `\\x${hex(char, 2)}` : `\\u{${hex(char, 4)}}`));
}

/** One JSON value on one line, with the characters JSON.stringify leaves raw (DEL, C1, format characters) as \u escapes: the same value for any JSON reader. */
export function jsonText(value: unknown): string {
  return JSON.stringify(value).replace(UNSAFE_FOR_TERMINAL, (char) => `\\u${hex(char, 4)}`);
}

function ensureNewline(text: string): string {
  return text.endsWith('\n') ? text : `${text}\n`;
}

/** Every command module exports one of these; src/cli/program.ts registers them all. */
export type RegisterCommand = (program: Command, io: CliIo, setExitCode: (code: number) => void) => void;
