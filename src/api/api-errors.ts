import { z, ZodError } from 'zod';
import { CancelledError, InputError, environmentError } from '../errors.js';
import { nameOf, shortWords, type ApiError, type FieldName } from './contract.js';

/**
 * Input validation and the error forms of the API. Every input, whether it came from a screen,
 * over IPC or HTTP, or from command-line flags, is validated here with its zod schema, and a
 * refusal is worded here, so the app and the CLI say the same words for the same bad input:
 *
 *   startRun: invalid input — the window in months (windowMonths, --window-months) must be at most 60 (got 61).
 */

type Issue = z.core.$ZodIssue;

/** A value as the message quotes it: text in quotes with control characters escaped, long text cut. */
function quote(value: unknown): string {
  const text = typeof value === 'string' ? JSON.stringify(value.length > 60 ? `${value.slice(0, 57)}...` : value) : String(value);
  return text;
}

const expectedWords: Record<string, string> = {
  int: 'a whole number',
  number: 'a number',
  string: 'text',
  boolean: 'true or false',
  array: 'a list',
  object: 'an object',
  record: 'an object',
};

/** What is wrong, in words, without the field's name (the screens show it beside the field). */
function describeProblem(issue: Issue): string | undefined {
  if (issue.input === undefined && (issue.code === 'invalid_type' || issue.code === 'invalid_value' || issue.code === 'invalid_union')) return 'is required';
  switch (issue.code) {
    case 'invalid_type':
      return `must be ${expectedWords[issue.expected] ?? issue.expected}`;
    case 'too_big': {
      const limit = String(issue.maximum);
      if (issue.origin === 'string') return `must be at most ${limit} characters long`;
      if (issue.origin === 'array') return `may list at most ${limit}`;
      return issue.inclusive === false ? `must be below ${limit}` : `must be at most ${limit}`;
    }
    case 'too_small': {
      const limit = Number(issue.minimum);
      if (issue.origin === 'string') return limit <= 1 ? 'must not be empty' : `must be at least ${limit} characters long`;
      if (issue.origin === 'array') return limit <= 1 ? 'must list at least one' : `must list at least ${limit}`;
      return issue.inclusive === false ? `must be above ${limit}` : `must be at least ${limit}`;
    }
    case 'invalid_value':
      return issue.values.length === 1 ? `must be ${quote(issue.values[0])}` : `must be one of ${issue.values.map(String).join(', ')}`;
    case 'invalid_union': {
      const alternatives = issue.errors.map((branch) => (branch[0] ? describeProblem(branch[0])?.replace(/^must be /, '') : undefined));
      return alternatives.every(Boolean) ? `must be ${alternatives.join(' or ')}` : 'is not any of the accepted forms';
    }
    case 'unrecognized_keys':
      return `unknown field${issue.keys.length > 1 ? 's' : ''} ${issue.keys.map(quote).join(', ')}`;
    default:
      return undefined; // schema-level messages (formats, refinements) stand as written
  }
}

/** The schemas met along a path, outermost first (through defaults, optionals, objects, lists). */
function schemasAlong(schema: z.ZodType, path: readonly PropertyKey[]): z.ZodType[] {
  const met: z.ZodType[] = [];
  let current: z.ZodType | undefined = schema;
  let step = 0;
  while (current) {
    met.push(current);
    const def: Record<string, unknown> = (current as unknown as { _zod: { def: Record<string, unknown> } })._zod.def;
    if (def.type === 'default' || def.type === 'optional' || def.type === 'nullable' || def.type === 'readonly' || def.type === 'prefault') {
      current = def.innerType as z.ZodType;
    } else if (def.type === 'pipe') {
      current = def.in as z.ZodType;
    } else if (step < path.length && def.type === 'object') {
      current = (def.shape as Record<string, z.ZodType>)[String(path[step++])];
    } else if (step < path.length && def.type === 'array') {
      step++;
      current = def.element as z.ZodType;
    } else {
      current = undefined;
    }
  }
  return met;
}

/** The field as both surfaces name it: words, then the field path and the flag. */
function fieldLabel(schema: z.ZodType | undefined, path: readonly PropertyKey[]): string {
  const pathText = path.map(String).join('.');
  if (path.length === 0) return '';
  const name: FieldName | undefined = schema
    ? schemasAlong(schema, path).map(nameOf).filter((found): found is FieldName => found !== undefined).at(-1)
    : undefined;
  if (!name) return pathText;
  return `${shortWords(name)} (${pathText}${name.flag ? `, ${name.flag}` : ''})`;
}

/** Path of a zod issue as the field's name in dots ("features.0.feature"); "(input)" for the whole. */
function issuePath(path: readonly PropertyKey[]): string {
  return path.length === 0 ? '(input)' : path.map(String).join('.');
}

function problemWithValue(issue: Issue): string {
  const saysWhere = issue.code === 'custom' && (issue.params as { saysWhere?: boolean } | undefined)?.saysWhere === true;
  const shown = !saysWhere && issue.code !== 'unrecognized_keys' && issue.input !== undefined && (typeof issue.input !== 'object' || issue.input === null);
  return shown ? `${issue.message} (got ${quote(issue.input)})` : issue.message;
}

/**
 * Turns a zod failure into an InputError whose message names every offending field in words, by
 * its path and by its flag (`what: invalid input — … .`); `details.issues` keeps each field's path
 * and problem for the screens to show beside the field.
 */
export function inputErrorFromZod(what: string, error: ZodError, schema?: z.ZodType): InputError {
  const issues = error.issues.map((issue) => ({ path: issuePath(issue.path), message: problemWithValue(issue) }));
  const text = error.issues
    .map((issue, i) => {
      const label = fieldLabel(schema, issue.path);
      if (!label) return issues[i].message;
      return `${label} ${issue.code === 'unrecognized_keys' ? 'has an ' : ''}${issues[i].message}`;
    })
    .join('; ');
  return new InputError(`${what}: invalid input — ${text}.`, { issues });
}

/** The zod issues of `raw` against `schema`, worded as this module words them; empty when valid. */
export function checkInput<S extends z.ZodType>(schema: S, raw: unknown): { ok: true; value: z.output<S> } | { ok: false; error: ZodError } {
  const parsed = schema.safeParse(raw, { reportInput: true, error: (issue) => describeProblem(issue as Issue) });
  return parsed.success ? { ok: true, value: parsed.data } : { ok: false, error: parsed.error };
}

/** Validates `raw` with `schema`: the parsed value (defaults filled in), or the worded InputError. */
export function parseInput<S extends z.ZodType>(what: string, schema: S, raw: unknown): z.output<S> {
  const checked = checkInput(schema, raw);
  if (!checked.ok) throw inputErrorFromZod(what, checked.error, schema);
  return checked.value;
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
