/**
 * Per-customer features for a trailing window, computed in SQLite: one pass over the window's
 * receipts (conditional aggregates give the last-3-month and prior-3-month sums, and one index
 * seek per customer its first receipt day), one over the visits, and a look-up of join dates; then
 * the formulas, compiled once. Aggregates and formulas are the shared data of ./definitions.ts.
 * The population is every customer with at least one receipt row in the window; customers with
 * none there have lapsed and are not part of the run.
 */
import type { Database } from 'better-sqlite3';
import { InputError, throwIfAborted } from '../errors.js';
import { isoDateFromDay } from '../store/days.js';
import { categorySpellings, featureDefinitions, type RowAggregate, type RowCondition } from './definitions.js';
import { MINUTES_PER_DAY, SECONDS_OF_DAY_WITHOUT_TIME, SECONDS_PER_DAY, momentOnShoppingClock, shoppingClockFromCounts, type ShoppingClock } from './shopping-clock.js';
import { javaScriptSyntax, renderCondition, renderExpression } from './expressions.js';
import { featureWindow, type FeatureWindow } from './window.js';

const { receiptAggregates, visitAggregates, formulaConstants, customerInputs, derivedValues, featureFormulas, tooNewCondition } = featureDefinitions;

/**
 * Features of the customers of a run, in original units. `columns[j][i]` is feature `names[j]` of
 * customer `customerIds[i]`; NaN marks a missing value. Customers are in id order.
 */
export interface FeatureTable {
  source: 'receipts' | 'imported';
  customerIds: string[];
  names: string[];
  columns: Float64Array[];
  /** Net spend in the window, cents (0 where there are no receipts). */
  revenueCents: Float64Array;
  /** 1 where the customer is too new to place (too few purchases or too short a tenure). */
  tooNew: Uint8Array;
}

export interface ComputeFeaturesOptions {
  asOf: string;
  windowMonths: number;
  minPurchases: number;
  minTenureMonths: number;
  /** Departments counted as fresh (the run's setting; its default is the contract's). */
  freshCategories: readonly string[];
  signal?: AbortSignal;
}

export interface DataRange {
  firstDay: number;
  lastDay: number;
}

/** First and last day with receipts or visits; null when there are none. */
export function dataRange(db: Database): DataRange | null {
  const row = db
    .prepare(
      `SELECT min(first) AS firstDay, max(last) AS lastDay FROM (
         SELECT min(day) AS first, max(day) AS last FROM receipts
         UNION ALL SELECT min(day), max(day) FROM visits)`,
    )
    .get() as { firstDay: number | null; lastDay: number | null };
  return row.firstDay === null || row.lastDay === null ? null : { firstDay: row.firstDay, lastDay: row.lastDay };
}

/** Refuses an as-of date outside the days the data covers, naming the range. */
export function checkAsOfInData(db: Database, window: FeatureWindow): void {
  const range = dataRange(db);
  if (!range) throw new InputError('The database holds no receipts or visits yet; import receipts before running a segmentation.');
  if (window.asOfDay < range.firstDay || window.asOfDay > range.lastDay) {
    throw new InputError(
      `The as-of date ${isoDateFromDay(window.asOfDay)} is outside the data, which runs from ${isoDateFromDay(range.firstDay)} ` +
        `to ${isoDateFromDay(range.lastDay)}; choose an as-of date in that range.`,
    );
  }
}

/** The app's own columns for the row values the definitions read. */
const receiptKeySql = "coalesce(receipt_id, day || '|' || ifnull(time, '') || '|' || ifnull(store_id, ''))";

/** Seconds after midnight of a stored clock time (HH:MM:SS text), in SQL over the alias `row`. */
const secondsOfDaySql = (row: string) =>
  `(CAST(substr(${row}.time, 1, 2) AS INTEGER) * 3600 + CAST(substr(${row}.time, 4, 2) AS INTEGER) * 60 + CAST(substr(${row}.time, 7, 2) AS INTEGER))`;
const hasClockTimeSql = (row: string) => `${row}.time IS NOT NULL AND ${row}.time <> '00:00:00'`;

/**
 * A customer's latest moment in the rows of the group as a clock key: the last day × 86400 plus
 * the largest clock time in seconds of that day's rows (SECONDS_OF_DAY_WITHOUT_TIME without one),
 * which momentOnShoppingClock turns into a moment on the shopping clock. Only the last day's rows
 * are read, by one seek per customer into the (customer_id, day) index as the group is finished:
 * a per-row expression over the whole window cost 0.2 µs a row (about a tenth of the feature build).
 */
function latestMomentSql(table: RowAggregate['table']): string {
  const seconds = `CASE WHEN ${hasClockTimeSql('later')} THEN ${secondsOfDaySql('later')} ELSE ${SECONDS_OF_DAY_WITHOUT_TIME} END`;
  return `max(${table}.day) * ${SECONDS_PER_DAY} + (SELECT max(${seconds}) FROM ${table} AS later WHERE later.customer_id = ${table}.customer_id AND later.day = max(${table}.day))`;
}

/**
 * The chain's shopping clock over the window (./shopping-clock.ts): its receipt rows with a clock
 * time, counted per minute of the day. Rows, not receipts: a receipt split by department counts
 * once per department. On the demo chain the two clocks differ by at most 0.003 of a day's
 * shopping at any minute, and counting distinct receipts cost about 0.65 × a plain GROUP BY over
 * the receipts where counting rows by their stored time costs about 0.2 × (200,000 customers,
 * 4,000,000 rows; README, benchmarks). Grouped by the stored text, minutes taken here.
 */
function shoppingClockOfWindow(db: Database, window: FeatureWindow): ShoppingClock {
  const counts = new Float64Array(MINUTES_PER_DAY);
  const statement = db
    .prepare(`SELECT time, count(*) FROM receipts WHERE day BETWEEN ? AND ? AND ${hasClockTimeSql('receipts')} GROUP BY time`)
    .raw();
  for (const [time, rows] of statement.iterate(window.startDay, window.asOfDay) as Iterable<[string, number]>) {
    counts[Number(time.slice(0, 2)) * 60 + Number(time.slice(3, 5))] += rows;
  }
  return shoppingClockFromCounts(counts);
}

function rowConditionSql(condition: RowCondition, freshList: string): string {
  switch (condition) {
    case 'positive':
      return 'amount_cents > 0';
    case 'fresh':
      return `category IN (${freshList})`;
    case 'last3Months':
      return 'day >= :last3';
    case 'last6Months':
      return 'day >= :prev3';
  }
}

/**
 * One aggregate of ./definitions.ts over the app's tables, inside a GROUP BY customer_id whose
 * rows are already limited to the window. A `history` aggregate is one seek per customer into the
 * (customer_id, day) index, run as each group is finished; measured cheaper than a second pass
 * over the index (1.2 s against 2.8 s for 20 M rows). Every customer of the window has a receipt
 * up to the as-of date, so the earliest receipt overall is the earliest up to the as-of date.
 */
function aggregateSql(aggregate: RowAggregate, freshList: string): string {
  const conditions = aggregate.when.map((condition) => rowConditionSql(condition, freshList));
  const where = conditions.join(' AND ');
  if (aggregate.operation === 'latestMoment') {
    // The group's rows are the window's, so its last day is the window's.
    if (where || aggregate.scope !== 'window') throw new Error(`Receipt aggregate ${aggregate.name}: a latest moment is over the window's rows, without conditions.`);
    return latestMomentSql(aggregate.table);
  }
  const column = aggregate.operation === 'sum' ? 'amount_cents' : aggregate.operation === 'countDistinct' ? receiptKeySql : aggregate.operation === 'count' ? '1' : 'day';
  const of = (expression: string) => (where ? `CASE WHEN ${where} THEN ${expression} END` : expression);
  if (aggregate.scope === 'history') {
    if (where || (aggregate.operation !== 'min' && aggregate.operation !== 'max')) {
      throw new Error(`History aggregate ${aggregate.name}: only an unconditional min or max is supported.`);
    }
    return `(SELECT ${aggregate.operation}(day) FROM ${aggregate.table} AS earlier WHERE earlier.customer_id = ${aggregate.table}.customer_id)`;
  }
  switch (aggregate.operation) {
    case 'sum':
      return `total(${of(column)})`;
    case 'countDistinct':
      return `count(DISTINCT ${of(column)})`;
    default:
      return `${aggregate.operation}(${of(column)})`;
  }
}

/**
 * The window aggregate: one pass over the window's rows in customer order (the (customer_id, day)
 * index bounds the days, so rows outside the window are never fetched); one column per receipt
 * aggregate of ./definitions.ts, after the customer id.
 */
function windowAggregateSql(freshCount: number): string {
  const freshList = freshCount > 0 ? Array.from({ length: freshCount }, () => '?').join(', ') : "''";
  return `
    SELECT customer_id,
           ${receiptAggregates.map((aggregate) => aggregateSql(aggregate, freshList)).join(',\n           ')}
      FROM receipts
     WHERE day BETWEEN :start AND :asOf
     GROUP BY customer_id`;
}

/** Visits per customer up to the as-of date (window-scoped aggregates count from the window's start). */
function visitAggregateSql(): string {
  const columns = visitAggregates.map((aggregate) => {
    if (aggregate.when.length > 0) throw new Error(`Visit aggregate ${aggregate.name}: conditions are not supported.`);
    if (aggregate.operation === 'latestMoment') {
      if (aggregate.scope === 'window') throw new Error(`Visit aggregate ${aggregate.name}: a latest moment reads every visit up to the as-of date.`);
      return latestMomentSql('visits');
    }
    const of = aggregate.operation === 'count' ? '1' : 'day';
    return aggregate.scope === 'window' ? `${aggregate.operation}(CASE WHEN day >= :start THEN ${of} END)` : `${aggregate.operation}(${of})`;
  });
  return `SELECT customer_id, ${columns.join(', ')} FROM visits WHERE day <= :asOf GROUP BY customer_id`;
}

/** Input names of the formulas, in the slot order of the compiled function's input array. */
const formulaInputs: readonly string[] = [
  ...formulaConstants,
  ...receiptAggregates.map((aggregate) => aggregate.name),
  ...visitAggregates.map((aggregate) => aggregate.name),
  ...customerInputs,
];
const slot = (name: string) => formulaInputs.indexOf(name);

/**
 * The formulas of ./definitions.ts compiled to one JavaScript function (input slots → features,
 * then the too-new flag as 1/0): straight-line code, no tree walk per customer. The source depends
 * only on the definitions, never on data.
 */
type FormulaFunction = (input: Float64Array, output: Float64Array) => void;
let compiledFormulas: FormulaFunction | null = null;
function formulaFunction(): FormulaFunction {
  if (compiledFormulas) return compiledFormulas;
  const lines = ["'use strict';"];
  formulaInputs.forEach((name, index) => lines.push(`const ${name} = input[${index}];`));
  for (const derived of derivedValues) lines.push(`const ${derived.name} = ${renderExpression(derived.formula, javaScriptSyntax)};`);
  featureFormulas.forEach((feature, index) => lines.push(`output[${index}] = ${renderExpression(feature.formula, javaScriptSyntax)};`));
  lines.push(`output[${featureFormulas.length}] = ${renderCondition(tooNewCondition, javaScriptSyntax)} ? 1 : 0;`);
  compiledFormulas = new Function('input', 'output', lines.join('\n')) as FormulaFunction;
  return compiledFormulas;
}

/** Growable column of doubles (avoids a JS array of a million boxed numbers). */
class DoubleColumn {
  values = new Float64Array(1024);
  length = 0;
  push(value: number): void {
    if (this.length === this.values.length) {
      const grown = new Float64Array(this.values.length * 2);
      grown.set(this.values);
      this.values = grown;
    }
    this.values[this.length++] = value;
  }
  finish(): Float64Array {
    return this.values.slice(0, this.length);
  }
}

/** Computes the features of DESIGN.md §4 (as defined in ./definitions.ts) from receipts and visits. */
export function computeReceiptFeatures(db: Database, options: ComputeFeaturesOptions): FeatureTable {
  const window = featureWindow(options.asOf, options.windowMonths);
  const fresh = categorySpellings(options.freshCategories);
  const params = { start: window.startDay, last3: window.last3StartDay, prev3: window.prev3StartDay, asOf: window.asOfDay };

  const joined = new Map<string, number>();
  for (const [customerId, joinedIso] of db
    .prepare("SELECT customer_id, joined FROM customers WHERE joined IS NOT NULL AND joined <> ''")
    .raw()
    .iterate() as Iterable<[string, string]>) {
    const day = Date.parse(`${joinedIso.slice(0, 10)}T00:00:00Z`) / 86_400_000;
    if (Number.isFinite(day)) joined.set(customerId, Math.round(day));
  }
  throwIfAborted(options.signal);

  // Visits in the window and up to the as-of date; read when a visits file covers the window.
  const hasVisits = db.prepare('SELECT 1 FROM visits WHERE day BETWEEN ? AND ? LIMIT 1').get(window.startDay, window.asOfDay) !== undefined;
  const visits = new Map<string, number[]>();
  if (hasVisits) {
    for (const [customerId, ...values] of db
      .prepare(visitAggregateSql())
      .raw()
      .iterate({ start: window.startDay, asOf: window.asOfDay }) as Iterable<[string, ...number[]]>) {
      visits.set(customerId, values);
    }
  }
  throwIfAborted(options.signal);

  // Departments at all? Without them the fresh share means nothing and is left out.
  const anyCategorised = db.prepare('SELECT 1 FROM receipts WHERE category IS NOT NULL LIMIT 1').get() !== undefined;
  throwIfAborted(options.signal);

  const clock = shoppingClockOfWindow(db, window);
  throwIfAborted(options.signal);

  const compute = formulaFunction();
  const input = new Float64Array(formulaInputs.length);
  const output = new Float64Array(featureFormulas.length + 1);
  input[slot('as_of_day')] = window.asOfDay;
  input[slot('window_start_day')] = window.startDay;
  input[slot('window_months')] = window.windowMonths;
  input[slot('window_days')] = window.asOfDay - window.startDay + 1;
  input[slot('min_purchases')] = options.minPurchases;
  input[slot('min_tenure_months')] = options.minTenureMonths;
  input[slot('has_visits')] = hasVisits ? 1 : 0;
  const receiptSlot = slot(receiptAggregates[0].name);
  const visitSlot = slot(visitAggregates[0].name);
  const joinedSlot = slot('joined_day');
  // The latest-moment aggregates arrive as clock keys; the formulas read moments on the shopping clock.
  const momentSlots = [...receiptAggregates, ...visitAggregates].filter((aggregate) => aggregate.operation === 'latestMoment').map((aggregate) => slot(aggregate.name));
  const netCentsColumn = 1 + receiptAggregates.findIndex((aggregate) => aggregate.name === 'net_cents');

  const customerIds: string[] = [];
  const columns = featureFormulas.map(() => new DoubleColumn());
  const revenue = new DoubleColumn();
  const tooNew: number[] = [];
  let rowCount = 0;
  const statement = db.prepare(windowAggregateSql(fresh.length)).raw();
  for (const row of statement.iterate(...fresh, params) as Iterable<unknown[]>) {
    if (++rowCount % 65536 === 0) throwIfAborted(options.signal);
    const customerId = row[0] as string;
    const aggregates = row as number[];
    for (let a = 0; a < receiptAggregates.length; a++) input[receiptSlot + a] = aggregates[1 + a];
    const visit = visits.get(customerId);
    for (let a = 0; a < visitAggregates.length; a++) input[visitSlot + a] = visit ? visit[a] : NaN;
    for (const momentSlot of momentSlots) input[momentSlot] = momentOnShoppingClock(clock, input[momentSlot]);
    input[joinedSlot] = joined.get(customerId) ?? NaN;
    compute(input, output);
    customerIds.push(customerId);
    for (let j = 0; j < columns.length; j++) columns[j].push(output[j]);
    revenue.push(aggregates[netCentsColumn]);
    tooNew.push(output[featureFormulas.length]);
  }
  throwIfAborted(options.signal);

  const names = featureFormulas.map((feature) => feature.name as string);
  const finished = columns.map((column) => column.finish());
  // Without departments in the data the fresh share means nothing: leave the feature out.
  const keep = featureFormulas.map((feature) => !feature.needsCategories || anyCategorised);
  return {
    source: 'receipts',
    customerIds,
    names: names.filter((_, j) => keep[j]),
    columns: finished.filter((_, j) => keep[j]),
    revenueCents: revenue.finish(),
    tooNew: Uint8Array.from(tooNew),
  };
}

/**
 * Name of the column that marks too-new customers in an imported feature table: the feature
 * query generated for a chain's own engine (src/warehouse) writes it beside the features, so its
 * output imports as it is and places the same customers as the app would.
 */
export const TOO_NEW_COLUMN = 'too_new';

/**
 * The imported feature table (kind `features`), used as it is: one column per feature name, NaN
 * where a customer has no value. A `too_new` column is the too-new flag (1 = too new), not a
 * feature; a feature without a value for any customer is left out, as computed features leave
 * out the fresh share when the receipts carry no departments. Revenue comes from the receipts of
 * the window when there are any.
 */
export function loadImportedFeatures(db: Database, options: { asOf: string; windowMonths: number }): FeatureTable {
  const counts = db.prepare('SELECT feature, count(value) FROM customer_features GROUP BY feature ORDER BY feature').raw().all() as [string, number][];
  const stored = counts.map(([name]) => name);
  const names = counts.filter(([name, values]) => name !== TOO_NEW_COLUMN && values > 0).map(([name]) => name);
  if (names.length === 0) throw new InputError('The database holds no imported customer features; import a features file first.');
  const position = new Map(stored.map((name, j) => [name, j]));
  const customerIds: string[] = [];
  const rows: Float64Array[] = [];
  let current: string | null = null;
  let values: Float64Array | null = null;
  for (const [customerId, feature, value] of db
    .prepare('SELECT customer_id, feature, value FROM customer_features ORDER BY customer_id')
    .raw()
    .iterate() as Iterable<[string, string, number | null]>) {
    if (customerId !== current) {
      current = customerId;
      values = new Float64Array(stored.length).fill(NaN);
      customerIds.push(customerId);
      rows.push(values);
    }
    values![position.get(feature)!] = value === null ? NaN : value;
  }
  const columns = names.map((name) => Float64Array.from(rows, (row) => row[position.get(name)!]));
  const tooNewAt = position.get(TOO_NEW_COLUMN);
  const window = featureWindow(options.asOf, options.windowMonths);
  const revenueById = new Map<string, number>();
  for (const [customerId, cents] of db
    .prepare('SELECT customer_id, total(amount_cents) FROM receipts WHERE day BETWEEN ? AND ? GROUP BY customer_id')
    .raw()
    .iterate(window.startDay, window.asOfDay) as Iterable<[string, number]>) {
    revenueById.set(customerId, cents);
  }
  return {
    source: 'imported',
    customerIds,
    names,
    columns,
    revenueCents: Float64Array.from(customerIds, (id) => revenueById.get(id) ?? 0),
    tooNew: tooNewAt === undefined ? new Uint8Array(customerIds.length) : Uint8Array.from(rows, (row) => (row[tooNewAt] === 1 ? 1 : 0)),
  };
}
