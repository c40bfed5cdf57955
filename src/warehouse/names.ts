/**
 * Names and text written into generated SQL. Nothing the analyst or a data file supplies reaches
 * the SQL unchecked: table names must be plain identifiers (refused otherwise), column names are
 * always written as quoted identifiers, and text as string literals, both with their quote
 * characters doubled (standard SQL, the same in DuckDB, PostgreSQL and SQLite).
 */
import { InputError } from '../errors.js';

const PLAIN_IDENTIFIER = /^[A-Za-z_][A-Za-z0-9_]*$/;
/** PostgreSQL truncates identifiers at 63 bytes; longer names would silently mean another one there. */
const MAX_IDENTIFIER_BYTES = 63;
// Control characters (NUL included) have no place in a name and NUL cannot be stored by PostgreSQL.
const CONTROL_CHARACTER = /[\u0000-\u001f\u007f]/;

function describe(name: string): string {
  return JSON.stringify(name.length > 80 ? `${name.slice(0, 80)}…` : name);
}

/**
 * A table reference: one to three plain identifiers (letters, digits, underscores; not starting
 * with a digit) joined by dots, as in `receipts` or `analytics.receipts`. Written as given, so the
 * engine resolves it exactly as it would in the analyst's own SQL. Anything else is refused.
 */
export function tableReference(name: string, what: string): string {
  const parts = name.split('.');
  const plain = parts.length <= 3 && parts.every((part) => PLAIN_IDENTIFIER.test(part) && Buffer.byteLength(part) <= MAX_IDENTIFIER_BYTES);
  if (!plain) {
    throw new InputError(
      `The ${what} ${describe(name)} is not a plain table name. Use letters, digits and underscores (not starting with a digit), ` +
        'optionally qualified by a schema as schema.table; create a view with a plain name for any other table.',
    );
  }
  return name;
}

/** A column as a quoted identifier: "spend_per_month", "basket ""large""". Matches the name exactly, case included. */
export function quotedIdentifier(name: string): string {
  if (name.length === 0) throw new InputError('A column name is empty.');
  if (CONTROL_CHARACTER.test(name)) throw new InputError(`The column name ${describe(name)} contains a control character, which generated SQL does not accept.`);
  if (Buffer.byteLength(name) > MAX_IDENTIFIER_BYTES) {
    throw new InputError(`The column name ${describe(name)} is longer than ${MAX_IDENTIFIER_BYTES} bytes, which PostgreSQL would cut short; rename it.`);
  }
  return `"${name.replace(/"/g, '""')}"`;
}

/** Text as a string literal: 'It''s'. */
export function stringLiteral(text: string): string {
  if (text.includes('\u0000')) throw new InputError(`The text ${describe(text)} contains a NUL character, which generated SQL does not accept.`);
  return `'${text.replace(/'/g, "''")}'`;
}
