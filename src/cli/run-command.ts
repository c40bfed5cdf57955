import type { Command } from 'commander';
import { CancelledError, InputError } from '../errors.js';

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
    io.stdout(json ? `${JSON.stringify(result)}\n` : ensureNewline(human(result)));
    return EXIT_OK;
  } catch (error) {
    return reportError(io, json, error);
  }
}

export function reportError(io: CliIo, json: boolean, error: unknown): number {
  const code = error instanceof InputError ? EXIT_BAD_INPUT : EXIT_INTERNAL;
  const message = error instanceof Error ? error.message : String(error);
  if (error instanceof CancelledError) {
    io.stderr(`spendmix: ${message}\n`);
    return EXIT_INTERNAL;
  }
  const prefix = code === EXIT_BAD_INPUT ? 'spendmix: ' : 'spendmix: internal error: ';
  io.stderr(`${prefix}${message}\n`);
  if (code === EXIT_INTERNAL && error instanceof Error && error.stack && process.env.SPENDMIX_DEBUG) {
    io.stderr(`${error.stack}\n`);
  }
  if (json && error instanceof InputError && error.details) {
    io.stderr(`${JSON.stringify({ error: message, details: error.details })}\n`);
  }
  return code;
}

function ensureNewline(text: string): string {
  return text.endsWith('\n') ? text : `${text}\n`;
}

/** Every command module exports one of these; src/cli/program.ts registers them all. */
export type RegisterCommand = (program: Command, io: CliIo, setExitCode: (code: number) => void) => void;
