import type { ImportKind } from '../store/imports-repo.js';
import type { ResolvedMapping } from './mapping.js';
import {
  isRejection,
  parseAmountCents,
  parseConsent,
  parseDateTime,
  parseFeatureValue,
  parseWholeNumber,
  type DateFormat,
  type DateRange,
  type ParsedDate,
  type Rejection,
} from './values.js';
import { dayFromIsoDate, isoDateFromDay } from '../store/days.js';

export interface ReadOptions {
  dateFormat: DateFormat;
  decimalComma: boolean;
  /** Dates outside this range (ISO, inclusive) are rejected as implausible; absent = no range. */
  plausibleDates?: DateRange;
}

/** Why one row was kept out: which column, its value, and the reason (a line of the report). */
export interface RowRejection {
  column: string;
  value: string;
  reason: string;
}

/**
 * The typed values of one accepted row, in the column order of the kind's table (see
 * src/store/bulk-writers.ts): receipts [receipt_id, customer_id, day, time, amount_cents, store_id,
 * category, items]; visits [customer_id, day, time, store_id, channel]; customers [customer_id,
 * joined, marketing_consent, home_store, (which of those the file provides)]; features
 * [customer_id, value per feature column].
 */
export type RowValues = Array<string | number | null>;

/** Position of the store id in each kind's row values, or -1 (used to record unknown stores). */
export const STORE_VALUE_INDEX: Record<ImportKind, number> = { receipts: 5, visits: 3, customers: 3, features: -1 };

/** Position of the amount in cents in each kind's row values, or -1. */
export const AMOUNT_VALUE_INDEX: Record<ImportKind, number> = { receipts: 4, visits: -1, customers: -1, features: -1 };

export type RowConverter = (fields: readonly string[]) => RowValues | RowRejection;

export function isRowRejection(value: RowValues | RowRejection): value is RowRejection {
  return !Array.isArray(value);
}

/**
 * Builds the validating converter of one file: resolves column indexes once, then each call turns
 * a record's fields into typed values or a rejection. Dates repeat heavily in sorted exports, so
 * the last parsed date text is remembered.
 */
export function makeRowConverter(kind: ImportKind, resolved: ResolvedMapping, header: readonly string[], options: ReadOptions): RowConverter {
  const index = (field: string) => resolved.fieldIndex.get(field) ?? -1;
  const columnName = (field: string) => header[index(field)] ?? field;
  const text = (fields: readonly string[], at: number): string | null => {
    if (at < 0) return null;
    const value = fields[at].trim();
    return value.length === 0 ? null : value;
  };
  const reject = (field: string, value: string, rejection: Rejection): RowRejection => ({
    column: columnName(field),
    value,
    reason: rejection.reason,
  });
  const customerAt = index('customer_id');
  const dateAt = index('date');
  const timeAt = index('time');
  const plausible = options.plausibleDates;
  const firstDay = plausible ? dayFromIsoDate(plausible.from) : Number.NEGATIVE_INFINITY;
  const lastDay = plausible ? dayFromIsoDate(plausible.to) : Number.POSITIVE_INFINITY;
  const implausible: Rejection = {
    reason: `date outside the plausible range ${plausible?.from} to ${plausible?.to}; if it is right, widen the range (--plausible-dates FROM..TO)`,
  };
  /** A date cell parsed, then held to the plausible range. */
  const parseDate = (raw: string): ParsedDate | Rejection => {
    const parsed = parseDateTime(raw, options.dateFormat);
    return isRejection(parsed) || (parsed.day >= firstDay && parsed.day <= lastDay) ? parsed : implausible;
  };
  let lastDateText = '';
  let lastDate: ParsedDate | Rejection = { reason: 'date is empty' };
  const readDate = (fields: readonly string[]): ParsedDate | RowRejection => {
    const raw = fields[dateAt];
    if (raw !== lastDateText) {
      lastDateText = raw;
      lastDate = parseDate(raw);
    }
    if (isRejection(lastDate)) return reject('date', raw, lastDate);
    if (timeAt >= 0 && lastDate.time === null) {
      const rawTime = fields[timeAt].trim();
      if (rawTime.length > 0) {
        const combined = parseDateTime(`${isoDateFromDay(lastDate.day)} ${rawTime}`, 'iso');
        if (isRejection(combined)) return reject('time', rawTime, combined);
        return combined;
      }
    }
    return lastDate;
  };
  const readCustomer = (fields: readonly string[]): string | RowRejection => {
    const id = fields[customerAt].trim();
    return id.length === 0 ? reject('customer_id', '', { reason: 'customer_id is empty' }) : id;
  };

  switch (kind) {
    case 'receipts': {
      const amountAt = index('amount');
      const receiptAt = index('receipt_id');
      const storeAt = index('store_id');
      const categoryAt = index('category');
      const itemsAt = index('items');
      return (fields) => {
        const customer = readCustomer(fields);
        if (typeof customer !== 'string') return customer;
        const date = readDate(fields);
        if ('reason' in date) return date;
        const amount = parseAmountCents(fields[amountAt], options.decimalComma);
        if (typeof amount !== 'number') return reject('amount', fields[amountAt], amount);
        let items: number | null = null;
        const itemsText = text(fields, itemsAt);
        if (itemsText !== null) {
          const parsed = parseWholeNumber(itemsText);
          if (typeof parsed !== 'number') return reject('items', itemsText, parsed);
          items = parsed;
        }
        return [text(fields, receiptAt), customer, date.day, date.time, amount, text(fields, storeAt), text(fields, categoryAt), items];
      };
    }
    case 'visits': {
      const storeAt = index('store_id');
      const channelAt = index('channel');
      return (fields) => {
        const customer = readCustomer(fields);
        if (typeof customer !== 'string') return customer;
        const date = readDate(fields);
        if ('reason' in date) return date;
        return [customer, date.day, date.time, text(fields, storeAt), text(fields, channelAt)];
      };
    }
    case 'customers': {
      const joinedAt = index('joined');
      const consentAt = index('marketing_consent');
      const homeAt = index('home_store');
      return (fields) => {
        const customer = readCustomer(fields);
        if (typeof customer !== 'string') return customer;
        let joined: string | null = null;
        const joinedText = text(fields, joinedAt);
        if (joinedText !== null) {
          const parsed = parseDate(joinedText);
          if (isRejection(parsed)) return reject('joined', joinedText, parsed);
          joined = isoDateFromDay(parsed.day);
        }
        let consent: number | null = null;
        if (consentAt >= 0) {
          const parsed = parseConsent(fields[consentAt]);
          if (isRejection(parsed)) return reject('marketing_consent', fields[consentAt], parsed);
          consent = parsed;
        }
        return [customer, joined, consent, text(fields, homeAt)];
      };
    }
    case 'features': {
      const columns = resolved.featureColumns;
      return (fields) => {
        const customer = readCustomer(fields);
        if (typeof customer !== 'string') return customer;
        const values: RowValues = [customer];
        for (const [at, name] of columns) {
          const parsed = parseFeatureValue(fields[at], options.decimalComma);
          if (isRejection(parsed)) return { column: header[at] ?? name, value: fields[at], reason: parsed.reason };
          values.push(parsed);
        }
        return values;
      };
    }
  }
}
