/**
 * The per-customer features Spendmix computes from receipts and visits (DESIGN.md §4): the words
 * the screens and the borderline "why" use for them, and the definitions themselves as data — the
 * per-customer aggregates of receipt and visit rows, then formulas over them (./expressions.ts).
 * The app's SQLite computation (./compute.ts) and the SQL generated for a chain's own engine
 * (src/warehouse/features-sql.ts) both read these, so the two cannot drift apart. Values are in
 * original units: euros, visits, days, months, shares in [0, 1].
 */
import {
  above,
  allOf,
  anyOf,
  below,
  choose,
  constant,
  dividedBy,
  larger,
  minus,
  missing,
  negated,
  orElse,
  plus,
  smaller,
  times,
  value,
  type Condition,
  type Expression,
} from './expressions.js';
import { DAYS_PER_MONTH } from './window.js';

export const computedFeatureNames = [
  'spend_per_month',
  'visits_per_month',
  'average_basket',
  'days_since_last_visit',
  'gaps_since_last_visit',
  'tenure_months',
  'fresh_share',
  'spend_trend',
  'refund_share',
  'purchases',
] as const;

export type ComputedFeatureName = (typeof computedFeatureNames)[number];

export interface FeatureDescription {
  /** Plain words for sentences ("basket size fits Tier 2"). */
  label: string;
  /** Unit shown beside values. */
  unit: 'EUR' | 'EUR per month' | 'visits per month' | 'days' | 'usual gaps' | 'months' | 'share' | 'purchases' | '';
  /** What the number means, for tooltips and the overview sheet. */
  meaning: string;
  /** Smallest value the definition allows (log1p needs values above −1). */
  minimum: number;
}

export const featureDescriptions: Record<ComputedFeatureName, FeatureDescription> = {
  spend_per_month: {
    label: 'spend per month',
    unit: 'EUR per month',
    meaning: 'Net spend in the window (refunds subtracted) divided by the months the customer was observed in it.',
    minimum: -Infinity,
  },
  visits_per_month: {
    label: 'visit rate',
    unit: 'visits per month',
    meaning: 'Store and online visits in the window (from the visits file, or purchases where there is none) per observed month.',
    minimum: 0,
  },
  average_basket: {
    label: 'basket size',
    unit: 'EUR',
    meaning: 'Net spend in the window divided by the number of purchases.',
    minimum: -Infinity,
  },
  days_since_last_visit: {
    label: 'days since last visit',
    unit: 'days',
    meaning: 'Days from the last visit or purchase up to the as-of date.',
    minimum: 0,
  },
  gaps_since_last_visit: {
    label: 'gaps since last visit',
    unit: 'usual gaps',
    meaning:
      "Time from the last visit to the end of the as-of day counted in the customer's own usual gap between visits (days in a month ÷ visit rate): about 1 while they keep to their rhythm, 5 when five usual gaps have passed without a visit. Hours count by how much of the chain's shopping happens in them, so a night without shopping adds little.",
    minimum: 0,
  },
  tenure_months: {
    label: 'tenure',
    unit: 'months',
    meaning: 'Months from joining (or the first purchase, whichever is earlier) to the as-of date.',
    minimum: 0,
  },
  fresh_share: {
    label: 'fresh share',
    unit: 'share',
    meaning: 'Share of purchase amounts in fresh departments; empty when the receipts carry no departments.',
    minimum: 0,
  },
  spend_trend: {
    label: 'spend trend',
    unit: '',
    meaning: '(last 3 months − the 3 before) / (their sum): −1 all earlier, 0 flat, +1 all recent.',
    minimum: -1,
  },
  refund_share: {
    label: 'refund share',
    unit: 'share',
    meaning: 'Refunded amount divided by purchased amount in the window.',
    minimum: 0,
  },
  purchases: {
    label: 'purchases',
    unit: 'purchases',
    meaning: 'Distinct receipts with a positive amount in the window.',
    minimum: 0,
  },
};

/** The spellings a till may use for a department name ("fresh", "Fresh", "FRESH"): a category matches one of these exactly. */
export function categorySpellings(categories: readonly string[]): string[] {
  const spellings = new Set<string>();
  for (const category of categories) {
    const lower = category.toLowerCase();
    spellings.add(category);
    spellings.add(lower);
    spellings.add(lower.toUpperCase());
    spellings.add(lower.charAt(0).toUpperCase() + lower.slice(1));
  }
  return [...spellings];
}

// ---------------------------------------------------------------------------------------------
// The definitions as data

/**
 * Which rows of a customer an aggregate reads: `window` = days in (as-of − window, as-of];
 * `history` = every day up to the as-of date. Conditions narrow the rows further (all must hold):
 * `positive` amount above zero (a purchase, not a refund); `fresh` a fresh department (see
 * categorySpellings); `last3Months` / `last6Months` days from the start of the last 3 / 6 months.
 */
export type RowCondition = 'positive' | 'fresh' | 'last3Months' | 'last6Months';

/**
 * One per-customer aggregate over receipt or visit rows. `sum` adds amounts in cents (0 when no row
 * matches); `countDistinct` counts distinct receipts (the receipt id, or date-time and store
 * without one); `count` counts rows; `min`/`max` take the day number (missing when no row matches);
 * `latestMoment` takes the latest row's moment on the chain's shopping clock: its day number plus
 * the share of the shopping day passed at its clock time (./shopping-clock.ts; a row without a
 * clock time counts as at midday).
 */
export interface RowAggregate {
  name: string;
  table: 'receipts' | 'visits';
  operation: 'sum' | 'count' | 'countDistinct' | 'min' | 'max' | 'latestMoment';
  scope: 'window' | 'history';
  when: readonly RowCondition[];
}

/**
 * Receipt aggregates, in the column order of the app's window query. A customer belongs to the
 * window's population when they have at least one receipt row in the window (customers with none
 * there have lapsed). Refunds and the 3 months before the last 3 are derived from these
 * (net − bought; last 6 − last 3), which keeps the per-row work small.
 */
export const receiptAggregates: readonly RowAggregate[] = [
  { name: 'net_cents', table: 'receipts', operation: 'sum', scope: 'window', when: [] },
  { name: 'bought_cents', table: 'receipts', operation: 'sum', scope: 'window', when: ['positive'] },
  { name: 'fresh_cents', table: 'receipts', operation: 'sum', scope: 'window', when: ['positive', 'fresh'] },
  { name: 'last3_cents', table: 'receipts', operation: 'sum', scope: 'window', when: ['last3Months'] },
  { name: 'last6_cents', table: 'receipts', operation: 'sum', scope: 'window', when: ['last6Months'] },
  { name: 'purchases', table: 'receipts', operation: 'countDistinct', scope: 'window', when: ['positive'] },
  { name: 'last_receipt_day', table: 'receipts', operation: 'max', scope: 'window', when: [] },
  { name: 'first_receipt_day', table: 'receipts', operation: 'min', scope: 'history', when: [] },
  { name: 'last_receipt_moment', table: 'receipts', operation: 'latestMoment', scope: 'window', when: [] },
];

/** Visit aggregates; read only when the visits hold at least one visit in the window (else all missing). */
export const visitAggregates: readonly RowAggregate[] = [
  { name: 'window_visits', table: 'visits', operation: 'count', scope: 'window', when: [] },
  { name: 'first_visit_day', table: 'visits', operation: 'min', scope: 'history', when: [] },
  { name: 'last_visit_day', table: 'visits', operation: 'max', scope: 'history', when: [] },
  { name: 'last_visit_moment', table: 'visits', operation: 'latestMoment', scope: 'history', when: [] },
];

/**
 * Inputs that are not row aggregates: the window as day numbers (src/features/window.ts), the
 * too-new settings, whether any visit falls in the window (1/0), and the customer's join day
 * (missing when unknown).
 */
export const formulaConstants = ['as_of_day', 'window_start_day', 'window_months', 'window_days', 'min_purchases', 'min_tenure_months', 'has_visits'] as const;
export const customerInputs = ['joined_day'] as const;

const v = value;
const asOf = v('as_of_day');
/** A visit aggregate, counted only when the visits hold at least one visit in the window. */
const visit = (name: string) => choose(above(v('has_visits'), constant(0)), v(name), missing);

/** Intermediate values, each reading only inputs and the values above it. */
export const derivedValues: readonly { name: string; formula: Expression }[] = [
  // First day the customer was seen: joining, first receipt or first visit, whichever is earliest;
  // a join date after the as-of date falls back to the first receipt.
  {
    name: 'earliest_day',
    formula: smaller(
      smaller(v('first_receipt_day'), orElse(v('joined_day'), v('first_receipt_day'))),
      orElse(visit('first_visit_day'), v('first_receipt_day')),
    ),
  },
  { name: 'first_day', formula: choose(above(v('earliest_day'), asOf), v('first_receipt_day'), v('earliest_day')) },
  { name: 'last_day', formula: larger(v('last_receipt_day'), orElse(visit('last_visit_day'), v('last_receipt_day'))) },
  {
    name: 'last_moment',
    formula: larger(v('last_receipt_moment'), orElse(visit('last_visit_moment'), v('last_receipt_moment'))),
  },
  // Months the customer could be seen in the window: the whole window, or from their first day.
  { name: 'observed_days', formula: plus(minus(asOf, larger(v('window_start_day'), v('first_day'))), constant(1)) },
  {
    name: 'observed_months',
    formula: larger(constant(1), dividedBy(times(v('window_months'), v('observed_days')), v('window_days'))),
  },
  { name: 'tenure', formula: dividedBy(plus(minus(asOf, v('first_day')), constant(1)), constant(DAYS_PER_MONTH)) },
  // Spend is net of refunds but never below zero (a refund-only window means no spend).
  { name: 'net_spend', formula: dividedBy(larger(constant(0), v('net_cents')), constant(100)) },
  // Visits from the visits file (never fewer than the purchases), or the purchases without one.
  {
    name: 'visit_count',
    formula: choose(above(v('has_visits'), constant(0)), larger(orElse(v('window_visits'), constant(0)), v('purchases')), v('purchases')),
  },
  { name: 'refund_cents', formula: minus(v('net_cents'), v('bought_cents')) },
  { name: 'prev3_cents', formula: minus(v('last6_cents'), v('last3_cents')) },
  { name: 'trend_base', formula: plus(v('last3_cents'), v('prev3_cents')) },
];

export interface FeatureFormula {
  name: ComputedFeatureName;
  formula: Expression;
  /** Only meaningful when the receipts carry departments; the app leaves the feature out otherwise. */
  needsCategories?: true;
}

/** The features, in the order of computedFeatureNames (a test checks it). */
export const featureFormulas: readonly FeatureFormula[] = [
  { name: 'spend_per_month', formula: dividedBy(v('net_spend'), v('observed_months')) },
  { name: 'visits_per_month', formula: dividedBy(v('visit_count'), v('observed_months')) },
  { name: 'average_basket', formula: choose(above(v('purchases'), constant(0)), dividedBy(v('net_spend'), v('purchases')), missing) },
  { name: 'days_since_last_visit', formula: minus(asOf, v('last_day')) },
  // Recency in the customer's own rhythm: ten days away is nothing for a monthly shopper and a
  // lapse for a daily one. Days alone also repeat the visit rate (frequent shoppers were in
  // recently) with an exponential spread that mixture components split tiers on. Counted from
  // the clock time of the last visit to the end of the as-of day on the chain's shopping clock:
  // whole days would put everyone seen on one day at one value, and wall-clock hours leave the
  // night as an empty stretch between stacks; components are spent on both (measured in the README).
  {
    name: 'gaps_since_last_visit',
    formula: dividedBy(
      times(minus(plus(asOf, constant(1)), v('last_moment')), dividedBy(v('visit_count'), v('observed_months'))),
      constant(DAYS_PER_MONTH),
    ),
  },
  { name: 'tenure_months', formula: v('tenure') },
  {
    name: 'fresh_share',
    formula: choose(above(v('bought_cents'), constant(0)), dividedBy(v('fresh_cents'), v('bought_cents')), missing),
    needsCategories: true,
  },
  {
    name: 'spend_trend',
    formula: choose(above(v('trend_base'), constant(0)), dividedBy(minus(v('last3_cents'), v('prev3_cents')), v('trend_base')), constant(0)),
  },
  {
    name: 'refund_share',
    formula: choose(
      allOf(above(v('bought_cents'), constant(0)), below(v('refund_cents'), constant(0))),
      dividedBy(negated(v('refund_cents')), v('bought_cents')),
      constant(0),
    ),
  },
  { name: 'purchases', formula: v('purchases') },
];

/** "Too new to place": too few purchases or too short a tenure (thresholds are run settings). */
export const tooNewCondition: Condition = anyOf(below(v('purchases'), v('min_purchases')), below(v('tenure'), v('min_tenure_months')));

/** Label for any feature name, including imported ones (which are shown as they are named). */
export function featureLabel(name: string): string {
  return (featureDescriptions as Record<string, FeatureDescription>)[name]?.label ?? name.replace(/_/g, ' ');
}

export function isComputedFeature(name: string): name is ComputedFeatureName {
  return (computedFeatureNames as readonly string[]).includes(name);
}

/** Everything a renderer of the definitions reads: the app's computation and the generated SQL. */
export const featureDefinitions = {
  receiptAggregates,
  visitAggregates,
  formulaConstants,
  customerInputs,
  derivedValues,
  featureFormulas,
  tooNewCondition,
} as const;

/** Unit of any feature: a computed one's own, none for imported features (we do not know it). */
export function featureUnit(name: string): string {
  return isComputedFeature(name) ? featureDescriptions[name].unit : '';
}

/** A feature's value in words with its unit, as sentences show it: "EUR 10,918", "12.3 visits per month", "62 %". */
export function featureValueWords(name: string, value: number): string {
  const unit = featureUnit(name);
  const number = (digits: number) => value.toLocaleString('en-GB', { minimumFractionDigits: digits, maximumFractionDigits: digits });
  switch (unit) {
    case 'EUR':
    case 'EUR per month':
      return `EUR ${number(Math.abs(value) >= 100 ? 0 : 2)}`;
    case 'share':
      return `${(value * 100).toLocaleString('en-GB', { maximumFractionDigits: 1 })} %`;
    case 'days':
    case 'months':
    case 'purchases':
      return `${number(Number.isInteger(value) ? 0 : 1)} ${unit}`;
    case 'visits per month':
    case 'usual gaps':
      return `${number(1)} ${unit}`;
    default:
      return value.toLocaleString('en-GB', { maximumSignificantDigits: 4 });
  }
}
