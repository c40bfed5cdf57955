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
