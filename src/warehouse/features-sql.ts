/**
 * The feature query for a chain's own engine (DESIGN.md §8a): one SQL query that computes, on the
 * chain's receipts, visits and customers tables (with the import files' field names), the same
 * per-customer features as the app, from the same definitions (src/features/definitions.ts): the
 * row aggregates become conditional SUM/COUNT/MIN/MAX in one GROUP BY per table, the formulas
 * become one layer of columns per dependency level. All arithmetic on doubles, in the formulas'
 * order, so the values equal the app's bit for bit on the same rows.
 *
 * Output: one row per customer with a receipt row in the window — `customer_id`, each feature
 * under the app's name, and `too_new` (1/0) — which `import --features` reads as it is.
 */
import { InputError } from '../errors.js';
import { categorySpellings, featureDefinitions as definitions, type RowAggregate, type RowCondition } from '../features/definitions.js';
import { MINUTES_PER_DAY, SECONDS_OF_DAY_WITHOUT_TIME, SECONDS_PER_DAY } from '../features/shopping-clock.js';
import { namesRead, renderCondition, renderExpression, type ExpressionSyntax } from '../features/expressions.js';
import { featureWindow } from '../features/window.js';
import { isoDateFromDay } from '../store/days.js';
import { sqlDialect, type SqlDialectName } from './dialects.js';
import { layer } from './layers.js';
import { quotedIdentifier, stringLiteral, tableReference } from './names.js';

export interface FeaturesSqlOptions {
  asOf: string;
  windowMonths: number;
  dialect: SqlDialectName | string;
  receiptsTable: string;
  visitsTable: string;
  customersTable: string;
  /** Too-new thresholds, as the run settings (defaults 2 purchases, 2 months). */
  minPurchases: number;
  minTenureMonths: number;
  /** Departments counted as fresh (default src/features/definitions.ts). */
  freshCategories: readonly string[];
}

export interface FeaturesSql {
  sql: string;
  dialect: SqlDialectName;
  /** First and last day of the window (YYYY-MM-DD). */
  windowStart: string;
  windowEnd: string;
  /** Output columns in order: customer_id, the features, too_new. */
  columns: string[];
}

const column = quotedIdentifier;

function checkSettings(options: FeaturesSqlOptions): void {
  if (!Number.isInteger(options.minPurchases) || options.minPurchases < 0) {
    throw new InputError(`The minimum purchases must be a whole number of at least 0; got ${options.minPurchases}.`);
  }
  if (!Number.isFinite(options.minTenureMonths) || options.minTenureMonths < 0) {
    throw new InputError(`The minimum tenure must be a number of months of at least 0; got ${options.minTenureMonths}.`);
  }
}

/** Generates the feature query; throws InputError for a bad date, window, dialect or table name. */
export function featuresSql(options: FeaturesSqlOptions): FeaturesSql {
  const dialect = sqlDialect(options.dialect);
  const window = featureWindow(options.asOf, options.windowMonths);
  checkSettings(options);
  const tables = {
    receipts: tableReference(options.receiptsTable, 'receipts table'),
    visits: tableReference(options.visitsTable, 'visits table'),
    customers: tableReference(options.customersTable, 'customers table'),
  };
  const nextDay = dialect.dateLiteral(isoDateFromDay(window.asOfDay + 1));
  const windowStart = dialect.dateLiteral(isoDateFromDay(window.startDay));
  const fresh = categorySpellings(options.freshCategories).map(stringLiteral);

  const asDouble = (expression: string) => `CAST(${expression} AS ${dialect.doubleType})`;
  const rowCondition = (condition: RowCondition): string => {
    switch (condition) {
      case 'positive':
        return 'cents > 0';
      case 'fresh':
        return fresh.length > 0 ? `category IN (${fresh.join(', ')})` : '1 = 0';
      case 'last3Months':
        return `day >= ${window.last3StartDay}`;
      case 'last6Months':
        return `day >= ${window.prev3StartDay}`;
    }
  };
  // A row's clock key, as the app's feature query returns it (src/features/compute.ts): its day
  // number × 86400 plus its clock time in seconds (the row's `seconds`, 0 without a time, which
  // counts as midday); the latest row has the largest key.
  const clockKey = `CAST(day AS BIGINT) * ${SECONDS_PER_DAY} + CASE WHEN seconds = 0 THEN ${SECONDS_OF_DAY_WITHOUT_TIME} ELSE seconds END`;
  const aggregate = (definition: RowAggregate): string => {
    const conditions = [...(definition.scope === 'window' ? [`day >= ${window.startDay}`] : []), ...definition.when.map(rowCondition)];
    const test = conditions.join(' AND ');
    const when = (value: string, otherwise = '') => (test ? `CASE WHEN ${test} THEN ${value}${otherwise} END` : value);
    switch (definition.operation) {
      case 'sum':
        return `SUM(${when('cents', ' ELSE 0')}) AS ${definition.name}`;
      case 'count':
        return `COUNT(${when('1')}) AS ${definition.name}`;
      case 'countDistinct':
        return `COUNT(DISTINCT ${when('receipt_key')}) AS ${definition.name}`;
      case 'min':
      case 'max':
        return `${definition.operation.toUpperCase()}(${when('day')}) AS ${definition.name}`;
      case 'latestMoment':
        return `MAX(${when(clockKey)}) AS ${definition.name}`;
    }
  };
  // A clock key as a moment on the shopping clock (src/features/shopping-clock.ts), with the same
  // double operations in the same order as the app: the day number plus (receipt rows in earlier
  // minutes + seconds into the minute / 60 × rows in the minute) / rows with a clock time; the
  // wall clock's share when no receipt has a time. `clock` is the shopping_clock row of the key's minute.
  const double = (value: number) => dialect.double(value);
  const keyDay = (key: string) => `FLOOR(${asDouble(key)} / ${double(SECONDS_PER_DAY)})`;
  const keySeconds = (key: string) => `(${asDouble(key)} - ${keyDay(key)} * ${double(SECONDS_PER_DAY)})`;
  const keyMinute = (key: string) => `FLOOR(${keySeconds(key)} / ${double(60)})`;
  const momentOfKey = (key: string, clock: string) =>
    `${keyDay(key)} + CASE WHEN ${clock}.total = 0 THEN ${keySeconds(key)} / ${double(SECONDS_PER_DAY)} ` +
    `ELSE (${asDouble(`${clock}.before`)} + (${keySeconds(key)} - ${keyMinute(key)} * ${double(60)}) / ${double(60)} * ${asDouble(`${clock}.within`)}) / ${asDouble(`${clock}.total`)} END`;

  const constants: Record<(typeof definitions.formulaConstants)[number], number | null> = {
    as_of_day: window.asOfDay,
    window_start_day: window.startDay,
    window_months: window.windowMonths,
    window_days: window.asOfDay - window.startDay + 1,
    min_purchases: options.minPurchases,
    min_tenure_months: options.minTenureMonths,
    has_visits: null, // one value per query, from the presence check below
  };
  const syntax: ExpressionSyntax = {
    name: (name) => {
      const fixed = (constants as Record<string, number | null>)[name];
      return fixed === undefined || fixed === null ? name : dialect.double(fixed);
    },
    number: dialect.double,
    missing: 'NULL',
    orElse: (value, fallback) => `COALESCE(${value}, ${fallback})`,
    choose: (test, then, otherwise) => `CASE WHEN ${test} THEN ${then} ELSE ${otherwise} END`,
    and: 'AND',
    or: 'OR',
  };

  const once = dialect.computedOnce;
  const ctes: string[] = [];
  const dateBefore = (limit: string) => `${column('date')} < ${limit} AND ${column('customer_id')} IS NOT NULL`;
  ctes.push(
    layer(
      'receipt_rows',
      '',
      [
        `${column('customer_id')} AS customer_id`,
        `${dialect.dayNumber(column('date'))} AS day`,
        `${dialect.secondsOfDay(column('date'))} AS seconds`,
        `CAST(ROUND(${column('amount')} * 100) AS BIGINT) AS cents`,
        `COALESCE(CAST(${column('receipt_id')} AS TEXT), CAST(${column('date')} AS TEXT) || '|' || COALESCE(CAST(${column('store_id')} AS TEXT), '')) AS receipt_key`,
        `${column('category')} AS category`,
      ],
      tables.receipts,
      [`WHERE ${dateBefore(nextDay)} AND ${column('amount')} IS NOT NULL`],
    ),
  );
  // The shopping clock: the window's receipt rows with a clock time per minute of the day, over
  // all 1440 minutes (a customer's last visit may fall in a minute without a receipt).
  ctes.push(`clock_minutes (minute) AS (
  SELECT 0
  UNION ALL
  SELECT minute + 1 FROM clock_minutes WHERE minute < ${MINUTES_PER_DAY - 1}
)`);
  ctes.push(
    layer('receipt_minutes', '', [`CAST(FLOOR(seconds / ${double(60)}) AS INTEGER) AS minute`, 'COUNT(*) AS receipts'], 'receipt_rows', [
      `WHERE day >= ${window.startDay} AND seconds > 0`,
      `GROUP BY CAST(FLOOR(seconds / ${double(60)}) AS INTEGER)`,
    ]),
  );
  ctes.push(
    layer(
      'shopping_clock',
      once,
      [
        'm.minute AS minute',
        'COALESCE(r.receipts, 0) AS within',
        'SUM(COALESCE(r.receipts, 0)) OVER (ORDER BY m.minute) - COALESCE(r.receipts, 0) AS before',
        'SUM(COALESCE(r.receipts, 0)) OVER () AS total',
      ],
      'clock_minutes AS m',
      ['LEFT JOIN receipt_minutes AS r ON r.minute = m.minute'],
    ),
  );
  ctes.push(
    layer('receipt_totals', '', ['customer_id', ...definitions.receiptAggregates.map(aggregate)], 'receipt_rows', [
      'GROUP BY customer_id',
      `HAVING COUNT(CASE WHEN day >= ${window.startDay} THEN 1 END) > 0`,
    ]),
  );
  ctes.push(
    layer(
      'visit_totals',
      '',
      ['customer_id', ...definitions.visitAggregates.map(aggregate)],
      `(SELECT ${column('customer_id')} AS customer_id, ${dialect.dayNumber(column('date'))} AS day, ${dialect.secondsOfDay(column('date'))} AS seconds FROM ${tables.visits} WHERE ${dateBefore(nextDay)}) AS visit_rows`,
      ['GROUP BY customer_id'],
    ),
  );
  ctes.push(
    layer('join_days', '', [`${column('customer_id')} AS customer_id`, `MIN(${dialect.dayNumber(column('joined'))}) AS joined_day`], tables.customers, [
      `WHERE ${column('joined')} IS NOT NULL`,
      `GROUP BY ${column('customer_id')}`,
    ]),
  );
  // As in the app: visits count only when some visit falls in the window; the fresh share only
  // when any receipt carries a department. (One row: a SELECT without FROM.)
  ctes.push(`presence AS (
  SELECT CASE WHEN EXISTS (SELECT 1 FROM ${tables.visits} WHERE ${column('date')} >= ${windowStart} AND ${column('date')} < ${nextDay}) THEN 1 ELSE 0 END AS has_visits,
         CASE WHEN EXISTS (SELECT 1 FROM ${tables.receipts} WHERE ${column('category')} IS NOT NULL) THEN 1 ELSE 0 END AS has_categories
)`);
  // A latest moment arrives as a clock key and enters the formulas as a moment on the shopping clock.
  const clockJoins: string[] = [];
  const aggregateInput = (table: 'r' | 'v') => (definition: RowAggregate) => {
    const value = `${table}.${definition.name}`;
    if (definition.operation !== 'latestMoment') return `${asDouble(value)} AS ${definition.name}`;
    const clock = `clock_${clockJoins.length + 1}`;
    clockJoins.push(` LEFT JOIN shopping_clock AS ${clock} ON ${clock}.minute = ${keyMinute(value)}`);
    return `${momentOfKey(value, clock)} AS ${definition.name}`;
  };
  const inputColumns = [
    'r.customer_id AS customer_id',
    `${asDouble('p.has_visits')} AS has_visits`,
    'p.has_categories AS has_categories',
    ...definitions.receiptAggregates.map(aggregateInput('r')),
    ...definitions.visitAggregates.map(aggregateInput('v')),
    ...definitions.customerInputs.map((name) => `${asDouble(`j.${name}`)} AS ${name}`),
  ];
  ctes.push(
    layer('formula_inputs', once, inputColumns, 'receipt_totals AS r', [
      'CROSS JOIN presence AS p',
      ' LEFT JOIN visit_totals AS v ON v.customer_id = r.customer_id',
      ' LEFT JOIN join_days AS j ON j.customer_id = r.customer_id',
      ...clockJoins,
    ]),
  );

  // One layer per dependency level: a layer's columns read only the layers before it.
  let previous = 'formula_inputs';
  const level = new Map<string, number>();
  const levels: string[][] = [];
  for (const derived of definitions.derivedValues) {
    const depth = 1 + Math.max(0, ...namesRead(derived.formula).map((name) => level.get(name) ?? 0));
    level.set(derived.name, depth);
    (levels[depth - 1] ??= []).push(`${renderExpression(derived.formula, syntax)} AS ${derived.name}`);
  }
  levels.forEach((columns, index) => {
    const name = `derived_${index + 1}`;
    ctes.push(layer(name, once, ['*', ...columns], previous));
    previous = name;
  });

  const outputs = definitions.featureFormulas.map((feature) => {
    const sql = renderExpression(feature.formula, syntax);
    return `${feature.needsCategories ? `CASE WHEN has_categories = 1 THEN ${sql} ELSE NULL END` : sql} AS ${feature.name}`;
  });
  const columns = ['customer_id', ...definitions.featureFormulas.map((feature) => feature.name as string), 'too_new'];
  const header = [
    `-- Spendmix customer features, ${dialect.name} dialect: the ${window.windowMonths} months ${isoDateFromDay(window.startDay)} to ${options.asOf}.`,
    `-- Reads ${tables.receipts} (customer_id, date, amount, receipt_id, store_id, category), ${tables.visits} (customer_id, date)`,
    `-- and ${tables.customers} (customer_id, joined); each row once (the app drops repeated rows when it imports files).`,
    `-- A date-time's clock time counts for gaps_since_last_visit, on the shopping clock (the share of the window's receipt rows made by then in a day);`,
    `-- a date alone (or 00:00:00) counts as midday.`,
    `-- One row per customer with a receipt row in the window: ${columns.join(', ')}.`,
  ];
  const sql = `${header.join('\n')}
WITH RECURSIVE ${ctes.join(',\n')}
SELECT customer_id,
       ${outputs.join(',\n       ')},
       CASE WHEN ${renderCondition(definitions.tooNewCondition, syntax)} THEN 1 ELSE 0 END AS too_new
  FROM ${previous}
`;
  return {
    sql,
    dialect: dialect.name,
    windowStart: isoDateFromDay(window.startDay),
    windowEnd: options.asOf,
    columns,
  };
}
