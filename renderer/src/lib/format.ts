/**
 * Number formatting for the screens: everything goes through Intl.NumberFormat in the user's
 * locale (money in EUR, the chain's currency). Formatters are cached per locale because building
 * one is far slower than using it, and tables format thousands of cells.
 */
export interface Formatters {
  count(value: number): string;
  euros(value: number): string;
  eurosPrecise(value: number): string;
  percent(share: number, digits?: number): string;
  decimal(value: number, digits?: number): string;
  probability(value: number): string;
  date(iso: string): string;
  dateTime(iso: string): string;
}

const cache = new Map<string, Formatters>();

export function formattersFor(locale: string | undefined): Formatters {
  const key = locale ?? '';
  const cached = cache.get(key);
  if (cached) return cached;
  const count = new Intl.NumberFormat(locale, { maximumFractionDigits: 0 });
  const euros = new Intl.NumberFormat(locale, { style: 'currency', currency: 'EUR', maximumFractionDigits: 0 });
  const eurosPrecise = new Intl.NumberFormat(locale, { style: 'currency', currency: 'EUR', minimumFractionDigits: 2, maximumFractionDigits: 2 });
  const percents = new Map<number, Intl.NumberFormat>();
  const decimals = new Map<number, Intl.NumberFormat>();
  const percentFormat = (digits: number) => {
    let format = percents.get(digits);
    if (!format) {
      format = new Intl.NumberFormat(locale, { style: 'percent', minimumFractionDigits: digits, maximumFractionDigits: digits });
      percents.set(digits, format);
    }
    return format;
  };
  const decimalFormat = (digits: number) => {
    let format = decimals.get(digits);
    if (!format) {
      format = new Intl.NumberFormat(locale, { minimumFractionDigits: digits, maximumFractionDigits: digits });
      decimals.set(digits, format);
    }
    return format;
  };
  const dates = new Intl.DateTimeFormat(locale, { year: 'numeric', month: 'short', day: 'numeric', timeZone: 'UTC' });
  const dateTimes = new Intl.DateTimeFormat(locale, { year: 'numeric', month: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit' });
  const guard = (value: number, write: (v: number) => string) => (Number.isFinite(value) ? write(value) : '—');
  const formatters: Formatters = {
    count: (value) => guard(value, (v) => count.format(v)),
    euros: (value) => guard(value, (v) => euros.format(v)),
    eurosPrecise: (value) => guard(value, (v) => eurosPrecise.format(v)),
    percent: (share, digits = 1) => guard(share, (v) => percentFormat(digits).format(v)),
    decimal: (value, digits = 2) => guard(value, (v) => decimalFormat(digits).format(v)),
    probability: (value) => guard(value, (v) => decimalFormat(3).format(v)),
    date: (iso) => {
      const time = Date.parse(iso.length === 10 ? `${iso}T00:00:00Z` : iso);
      return Number.isNaN(time) ? iso : dates.format(time);
    },
    dateTime: (iso) => {
      const time = Date.parse(iso);
      return Number.isNaN(time) ? iso : dateTimes.format(time);
    },
  };
  cache.set(key, formatters);
  return formatters;
}

/** The locale the screens format for: the browser's first preference (Intl's default elsewhere). */
export function userLocale(): string | undefined {
  // Read through globalThis so this module also type-checks and runs in Node's tests.
  const browser = (globalThis as { navigator?: { language?: string } }).navigator;
  return browser?.language;
}

/** How an axis names a feature's unit: money says EUR, counts and rates need nothing beyond the label. */
export function axisUnit(unit: string): string {
  return unit.startsWith('EUR') ? ' (EUR)' : unit === 'share' ? ' (share)' : unit === 'days' || unit === 'months' ? ` (${unit})` : '';
}

/** "showing 5,000 of 1,000,000 customers", or "all 812 customers" when nothing was left out. */
export function sampleCaption(shown: number, total: number, format: Formatters, noun = 'customers'): string {
  if (!Number.isInteger(shown) || !Number.isInteger(total) || shown < 0 || total < 0) {
    throw new RangeError(`Sample sizes must be non-negative integers (shown ${shown}, total ${total}).`);
  }
  if (shown > total) throw new RangeError(`A sample cannot hold more than the whole (shown ${shown}, total ${total}).`);
  if (shown === total) return `all ${format.count(total)} ${noun}`;
  return `showing ${format.count(shown)} of ${format.count(total)} ${noun}`;
}

/**
 * A feature value in its own unit, as the core labels it ('EUR', 'EUR per month', 'visits per
 * month', 'days', 'usual gaps', 'months', 'share', 'purchases', '' for unitless or imported
 * features). The "per month" is left to the feature's label ("spend per month"), so cells stay
 * short.
 */
export function formatInUnit(value: number, unit: string, format: Formatters): string {
  switch (unit) {
    case 'EUR':
    case 'EUR per month':
      return Math.abs(value) < 100 ? format.eurosPrecise(value) : format.euros(value);
    case 'visits per month':
      return format.decimal(value, 1);
    case 'usual gaps':
      return `${format.decimal(value, 1)} usual gaps`;
    case 'share':
      return format.percent(value);
    case 'days':
      return `${format.count(value)} days`;
    case 'months':
      return `${format.decimal(value, 1)} months`;
    case 'visits':
      return `${format.decimal(value, 1)} visits`;
    case 'purchases':
      return `${format.count(value)} purchases`;
    case '':
      return format.decimal(value, 2);
    default:
      return `${format.decimal(value, 2)} ${unit}`;
  }
}

/** The text with its first letter in capitals (a sentence built from a phrase). */
export function capitalise(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/** "1 segment", "3 segments": a count with its noun in the right number. */
export function countOf(count: number, singular: string, format: Formatters, plural = `${singular}s`): string {
  return `${format.count(count)} ${count === 1 ? singular : plural}`;
}

/**
 * A segment trait in words: "visit rate 6.1 visits/month — frequent (top 28 %)". The rank says
 * where the segment's median sits among all placed customers: the top share above it when it is
 * in the upper half, the bottom share below it otherwise. "; word kept" when the words are the
 * continued segment's, kept near the edge of their fifth.
 */
export function traitText(trait: { label: string; median: number; unit: string; percentile: number; words: string; kept?: boolean }, format: Formatters): string {
  const value =
    trait.unit === 'visits per month'
      ? `${format.decimal(trait.median, 1)} visits/month`
      : trait.unit === 'EUR per month'
        ? `${formatInUnit(trait.median, 'EUR', format)}/month`
        : formatInUnit(trait.median, trait.unit, format);
  const rank = trait.percentile >= 0.5 ? `top ${rankShare(1 - trait.percentile, format)}` : `bottom ${rankShare(trait.percentile, format)}`;
  return `${trait.label} ${value} — ${trait.words} (${rank}${trait.kept ? '; word kept' : ''})`;
}

/** A rank's share in whole percent, or with one decimal below 1 % so that a small share never reads "0 %". */
function rankShare(share: number, format: Formatters): string {
  if (share >= 0.0095) return format.percent(share, 0);
  return share >= 0.0005 ? format.percent(share, 1) : `under ${format.percent(0.001, 1)}`;
}
