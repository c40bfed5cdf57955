import { z } from 'zod';

/**
 * Building blocks of the contract's schemas. Every setting carries its name in words and, where
 * the command line offers it, its flag (`named`), so that a refusal reads the same in the app and
 * in the CLI (src/api/api-errors.ts turns zod's issues into those words).
 */

/**
 * What a field is called: plain words for both surfaces, and the command-line flag if there is
 * one. The words may end in a detail in parentheses (a default, what "none" means): `--help`
 * shows it, refusals leave it out (`shortWords`). A flag may name its value's form after a space
 * (`--as-of <YYYY-MM-DD>`); otherwise the command line derives one from the schema.
 */
export interface FieldName {
  words: string;
  /** The flag alone, e.g. `--as-of`. */
  flag?: string;
  /** The form of its value, e.g. `<YYYY-MM-DD>`, when the flag names one. */
  valueForm?: string;
}

/** The words without their closing detail in parentheses. */
export function shortWords(name: FieldName): string {
  return name.words.replace(/\s*\([^()]*\)$/, '');
}

/** Attaches a field's name to its schema (zod metadata); the schema itself is unchanged. */
export function named<T extends z.ZodType>(schema: T, words: string, flag?: string): T {
  return schema.meta({ words, ...(flag ? { flag } : {}) }) as T;
}

/** The name attached to a schema by `named`, if any. */
export function nameOf(schema: z.ZodType): FieldName | undefined {
  const meta = z.globalRegistry.get(schema) as { words?: unknown; flag?: unknown } | undefined;
  if (typeof meta?.words !== 'string') return undefined;
  if (typeof meta.flag !== 'string') return { words: meta.words };
  const [flag, ...form] = meta.flag.split(' ');
  return { words: meta.words, flag, ...(form.length > 0 ? { valueForm: form.join(' ') } : {}) };
}

/** C0 and C1 control characters and DEL (NUL, escape, line breaks, tabs …). */
const CONTROL_CHARACTER = /[\u0000-\u001F\u007F-\u009F]/;
/** The same, except the line breaks and tabs a multi-line note may hold. */
const CONTROL_CHARACTER_IN_TEXT = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/;

function controlCharacterCheck(pattern: RegExp, rule: string) {
  return (value: string, context: z.RefinementCtx) => {
    const found = pattern.exec(value);
    if (found) {
      const code = found[0].codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0');
      // The message names the character and where it is; the text itself is not repeated (it may be long).
      context.addIssue({ code: 'custom', message: `${rule} (found U+${code} at character ${found.index + 1})`, params: { saysWhere: true } });
    }
  };
}

/** One line of text (a name): trimmed, not empty, at most `max` characters, no control characters. */
export const plainName = (max: number) =>
  z.string().trim().min(1).max(max).superRefine(controlCharacterCheck(CONTROL_CHARACTER, 'must not contain control characters such as line breaks, tabs or escapes'));

/** Free text (a note): may span lines; no other control characters. */
export const plainText = (max: number) =>
  z.string().trim().max(max).superRefine(controlCharacterCheck(CONTROL_CHARACTER_IN_TEXT, 'may hold line breaks and tabs but no other control characters'));

/** Optional one-line text: empty allowed (stored as nothing). */
export const plainLine = (max: number) =>
  z.string().trim().max(max).superRefine(controlCharacterCheck(CONTROL_CHARACTER, 'must not contain control characters such as line breaks, tabs or escapes'));

/** A non-empty string (an id, a path, a feature name). */
export const nonEmpty = z.string().trim().min(1);

export const runId = z.number().int().positive();

function isCalendarDate(text: string): boolean {
  const [year, month, day] = text.split('-').map(Number);
  // setUTCFullYear, not Date.UTC: Date.UTC reads years 0–99 as 1900–1999.
  const date = new Date(0);
  date.setUTCFullYear(year, month - 1, day);
  return date.getUTCFullYear() === year && date.getUTCMonth() === month - 1 && date.getUTCDate() === day;
}

/** A calendar date written YYYY-MM-DD. */
export const isoDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date written YYYY-MM-DD')
  .refine(isCalendarDate, 'is not a calendar date');

export const pageOffset = named(z.number().int().min(0).default(0), 'rows to skip', '--offset');
export const pageLimit = named(z.number().int().min(1).max(1000).default(100), 'rows per page', '--limit');
export const probability = z.number().min(0).max(1);

/** What kinds of value a field's schema accepts, and its default: how a command line reads a flag for it. */
export interface FieldShape {
  number: boolean;
  /** Whole numbers only. */
  integer: boolean;
  /** The texts the field takes, where it takes only some (enums and literals). */
  choices: string[];
  nullable: boolean;
  list: boolean;
  boolean: boolean;
  /** The schema's default, if it has one. */
  defaultValue?: unknown;
}

export function fieldShape(schema: z.ZodType): FieldShape {
  const shape: FieldShape = { number: false, integer: false, choices: [], nullable: false, list: false, boolean: false };
  const visit = (current: z.ZodType) => {
    const def = (current as unknown as { _zod: { def: Record<string, unknown> } })._zod.def;
    switch (def.type) {
      case 'default':
        shape.defaultValue ??= def.defaultValue;
        visit(def.innerType as z.ZodType);
        break;
      case 'optional':
        visit(def.innerType as z.ZodType);
        break;
      case 'nullable':
        shape.nullable = true;
        visit(def.innerType as z.ZodType);
        break;
      case 'union':
        for (const option of def.options as z.ZodType[]) visit(option);
        break;
      case 'number':
        shape.number = true;
        shape.integer = (current as unknown as { isInt?: boolean }).isInt === true;
        break;
      case 'enum':
        shape.choices.push(...Object.values(def.entries as Record<string, string>));
        break;
      case 'literal':
        shape.choices.push(...(def.values as unknown[]).map(String));
        break;
      case 'boolean':
        shape.boolean = true;
        break;
      case 'array':
        shape.list = true;
        break;
    }
  };
  visit(schema);
  return shape;
}
