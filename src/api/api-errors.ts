import { ZodError } from 'zod';
import { CancelledError, InputError, environmentError } from '../errors.js';
import type { ApiError } from './contract.js';

/** Path of a zod issue as the field's name in dots ("features.0.feature"); "(input)" for the whole. */
function issuePath(path: readonly PropertyKey[]): string {
  return path.length === 0 ? '(input)' : path.map(String).join('.');
}

/**
 * Turns a zod failure into an InputError whose message names every offending field, so the CLI,
 * IPC and HTTP callers all see the same clear text (e.g. `startRun: asOf must be a date written
 * YYYY-MM-DD`).
 */
export function inputErrorFromZod(method: string, error: ZodError): InputError {
  const issues = error.issues.map((issue) => ({ path: issuePath(issue.path), message: issue.message }));
  const text = issues.map((issue) => `${issue.path}: ${issue.message}`).join('; ');
  return new InputError(`${method}: invalid input — ${text}.`, { issues });
}

/** The transport-neutral form of any error a handler throws. */
export function toApiError(error: unknown): ApiError {
  if (error instanceof ZodError) return toApiError(inputErrorFromZod('input', error));
  if (error instanceof CancelledError) return { kind: 'cancelled', message: error.message };
  if (error instanceof InputError) {
    const issues = error.details?.issues as ApiError['issues'] | undefined;
    const details = error.details && Object.keys(error.details).some((key) => key !== 'issues') ? error.details : undefined;
    return { kind: 'input', message: error.message, ...(issues ? { issues } : {}), ...(details ? { details } : {}) };
  }
  // A failure of the user's environment (permissions, full disk, locked or damaged file) is theirs to fix.
  const explained = environmentError(error);
  if (explained) return toApiError(explained);
  const message = error instanceof Error ? error.message : String(error);
  return { kind: 'internal', message };
}

/** Rebuilds a throwable from an ApiError (a worker's failure, re-thrown on the caller's side). */
export function fromApiError(error: ApiError): Error {
  if (error.kind === 'cancelled') return new CancelledError(error.message);
  if (error.kind === 'input') return new InputError(error.message, { ...(error.details ?? {}), ...(error.issues ? { issues: error.issues } : {}) });
  return new Error(error.message);
}

/** HTTP status for an error kind: the caller's fault is 400, a stopped task 409, ours 500. */
export function httpStatusFor(error: ApiError): number {
  if (error.kind === 'input') return 400;
  if (error.kind === 'cancelled') return 409;
  return 500;
}
