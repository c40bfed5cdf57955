import { Option, type Command } from 'commander';
import type { z } from 'zod';
import { fieldShape, nameOf } from '../api/contract.js';

/**
 * Command-line flags made from the contract's schemas, and their values handed back to those
 * schemas untouched in meaning: the flag of each field and its words come from the field's name
 * (src/api/contract/fields.ts), and a value is given to zod as typed, except that text that looks
 * like a number becomes that number, `none` becomes null where a field may be null, and a list
 * field's value is split at commas. Zod then judges it, with the same words as for the app.
 */

const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/;

/** Text that looks like a number, as that number; anything else as given (zod words the refusal). */
export function numberOrText(raw: string): number | string {
  return NUMBER.test(raw.trim()) ? Number(raw.trim()) : raw;
}

/** A flag's text as the value a field of this schema is given. */
export function flagValue(schema: z.ZodType, raw: string): unknown {
  const shape = fieldShape(schema);
  if (shape.nullable && raw.trim() === 'none') return null;
  if (shape.list) return raw.split(',').map((part) => part.trim()).filter((part) => part.length > 0);
  if (shape.number) return numberOrText(raw);
  if (shape.boolean && (raw === 'true' || raw === 'false')) return raw === 'true';
  return raw;
}

function describeField(schema: z.ZodType, words: string): string {
  const { defaultValue } = fieldShape(schema);
  // An object default (a date range) is described by the field's own words instead.
  const shown = Array.isArray(defaultValue)
    ? defaultValue.join(',')
    : defaultValue === null
      ? 'none'
      : typeof defaultValue === 'object'
        ? undefined
        : defaultValue;
  return `${words}${shown === undefined || shown === '' ? '' : ` (default ${String(shown)})`}`;
}

/** The form of a flag's value as help shows it: `<n>`, `<x>`, `<n|auto>`, `<a|b|c>`, `<a,b>` or `<text>`. */
function valueForm(schema: z.ZodType): string {
  const shape = fieldShape(schema);
  const none = shape.nullable ? ['none'] : [];
  if (shape.list) return '<a,b>';
  if (shape.number) return `<${[shape.integer ? 'n' : 'x', ...shape.choices, ...none].join('|')}>`;
  if (shape.choices.length > 0) return `<${[...shape.choices, ...none].join('|')}>`;
  return '<text>';
}

export interface SchemaOption {
  field: string;
  schema: z.ZodType;
  option: Option;
}

/** One option per named field of `shape` that has a flag (fields listed in `except` are left to the caller). */
export function schemaOptions(shape: Record<string, z.ZodType>, except: readonly string[] = []): SchemaOption[] {
  return Object.entries(shape).flatMap(([field, schema]) => {
    const name = nameOf(schema);
    if (!name?.flag || except.includes(field)) return [];
    return [{ field, schema, option: new Option(`${name.flag} ${name.valueForm ?? valueForm(schema)}`, describeField(schema, name.words)) }];
  });
}

export function addSchemaOptions(command: Command, options: readonly SchemaOption[]): Command {
  for (const { option } of options) command.addOption(option);
  return command;
}

/** The API input fields the given flags set (flags not given are left out, so defaults and files apply). */
export function inputFromFlags(options: readonly SchemaOption[], given: Record<string, unknown>): Record<string, unknown> {
  const input: Record<string, unknown> = {};
  for (const { field, schema, option } of options) {
    const raw = given[option.attributeName()];
    if (typeof raw === 'string') input[field] = flagValue(schema, raw);
  }
  return input;
}
