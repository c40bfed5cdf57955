/**
 * The few places where the engines we generate SQL for differ, in one table. Everything else the
 * generated queries use is SQL that DuckDB, PostgreSQL and SQLite share: CASE, COALESCE, CAST,
 * SUM/COUNT/MIN/MAX with GROUP BY, LEFT JOIN, EXISTS, LN, EXP, and common table expressions.
 */
import { InputError } from '../errors.js';

export const sqlDialectNames = ['duckdb', 'postgres', 'sqlite'] as const;
export type SqlDialectName = (typeof sqlDialectNames)[number];

export interface SqlDialect {
  name: SqlDialectName;
  /** Days since 1970-01-01 of a date or date-time column (the app's day numbers, src/store/days.ts). */
  dayNumber: (column: string) => string;
  /**
   * Seconds since midnight of a date or date-time column's clock time, whole seconds (0 for a
   * date without a time), as an integer the engine then divides in doubles.
   */
  secondsOfDay: (column: string) => string;
  /** A calendar date that the date column compares with (`date < <literal>`). */
  dateLiteral: (isoDate: string) => string;
  /** A double written so that the engine reads back exactly the same double. */
  double: (value: number) => string;
  /** Name of the double type in CAST. */
  doubleType: string;
  /** The largest of several values (never NULL here). */
  greatest: (values: string[]) => string;
  /**
   * What to write after `name AS` in a WITH clause so that a common table expression is computed
   * once. PostgreSQL and SQLite otherwise fold a chain of them into one expression, repeating
   * each column's whole expression wherever it is used again (exponential work for the scoring
   * query's layers); DuckDB keeps its projections as they are.
   */
  computedOnce: string;
}

/**
 * Shortest round-trip form of a double in exponent notation (1.2345e-1). DuckDB and SQLite read
 * such a literal as a double with correct rounding (a test round-trips 20,000 random doubles
 * through both); PostgreSQL reads it as an exact numeric, and the cast makes it the nearest double.
 */
function exponentLiteral(value: number): string {
  if (!Number.isFinite(value)) throw new Error(`Cannot write ${value} as an SQL number.`);
  // Whole numbers stay readable (20787e0); the exponent keeps them doubles in every engine.
  const text = Object.is(value, -0) ? '0e0' : Number.isInteger(value) && Math.abs(value) < 1e15 ? `${value}e0` : value.toExponential();
  return value < 0 ? `(${text})` : text;
}

/** Clock time in whole seconds by EXTRACT (DuckDB and PostgreSQL); fractions of a second are dropped, as the app's importer drops them. */
function secondsOfDayByExtract(timestamp: string): string {
  return `(CAST(EXTRACT(HOUR FROM ${timestamp}) AS INTEGER) * 3600 + CAST(EXTRACT(MINUTE FROM ${timestamp}) AS INTEGER) * 60 + CAST(FLOOR(EXTRACT(SECOND FROM ${timestamp})) AS INTEGER))`;
}

const dialects: Record<SqlDialectName, SqlDialect> = {
  duckdb: {
    name: 'duckdb',
    dayNumber: (column) => `(CAST(${column} AS DATE) - DATE '1970-01-01')`,
    secondsOfDay: (column) => secondsOfDayByExtract(`CAST(${column} AS TIMESTAMP)`),
    dateLiteral: (isoDate) => `DATE '${isoDate}'`,
    double: exponentLiteral,
    doubleType: 'DOUBLE',
    greatest: (values) => (values.length === 1 ? values[0] : `GREATEST(${values.join(', ')})`),
    computedOnce: '',
  },
  postgres: {
    name: 'postgres',
    dayNumber: (column) => `(CAST(${column} AS DATE) - DATE '1970-01-01')`,
    secondsOfDay: (column) => secondsOfDayByExtract(`CAST(${column} AS TIMESTAMP)`),
    dateLiteral: (isoDate) => `DATE '${isoDate}'`,
    double: (value) => `CAST(${exponentLiteral(value)} AS DOUBLE PRECISION)`,
    doubleType: 'DOUBLE PRECISION',
    greatest: (values) => (values.length === 1 ? values[0] : `GREATEST(${values.join(', ')})`),
    computedOnce: 'MATERIALIZED ',
  },
  sqlite: {
    name: 'sqlite',
    // Dates are ISO text in SQLite: julianday of the day's midnight is N + 0.5 exactly.
    dayNumber: (column) => `CAST(julianday(date(${column})) - 2440587.5 AS INTEGER)`,
    // strftime reads the ISO text's time part, 00 for a date alone.
    secondsOfDay: (column) =>
      `(CAST(strftime('%H', ${column}) AS INTEGER) * 3600 + CAST(strftime('%M', ${column}) AS INTEGER) * 60 + CAST(strftime('%S', ${column}) AS INTEGER))`,
    dateLiteral: (isoDate) => `'${isoDate}'`,
    double: exponentLiteral,
    doubleType: 'REAL',
    // SQLite's scalar max() with several arguments.
    greatest: (values) => (values.length === 1 ? values[0] : `MAX(${values.join(', ')})`),
    computedOnce: 'MATERIALIZED ',
  },
};

/** The dialect of that name, or an InputError listing the supported ones. */
export function sqlDialect(name: string): SqlDialect {
  if (!(sqlDialectNames as readonly string[]).includes(name)) {
    throw new InputError(`Unsupported SQL dialect ${JSON.stringify(name)}; supported dialects: ${sqlDialectNames.join(', ')}.`);
  }
  return dialects[name as SqlDialectName];
}
