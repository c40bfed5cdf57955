import { InputError } from '../errors.js';
import { dayFromParts } from '../store/days.js';

/**
 * Cell parsers for the import. Each returns the parsed value or a `Rejection` naming the reason in
 * words a user can act on. Nothing ambiguous is guessed (DESIGN.md §3): non-ISO dates need an
 * explicit day-first/month-first choice, decimal commas an explicit option.
 */
export interface Rejection {
  reason: string;
}

export function isRejection(value: unknown): value is Rejection {
  return typeof value === 'object' && value !== null && 'reason' in value;
}

export type DateFormat = 'iso' | 'day-first' | 'month-first';

/** An inclusive range of calendar dates, `YYYY-MM-DD`. */
export interface DateRange {
  from: string;
  to: string;
}

/** Checks a plausible-date range: two real ISO dates, the first not after the second. */
export function checkDateRange(range: DateRange): DateRange {
  const valid = (text: string) => {
    const match = /^(\d{4})-(\d{2})-(\d{2})$/.exec(text);
    return match !== null && dayFromParts(Number(match[1]), Number(match[2]), Number(match[3])) !== undefined;
  };
  if (!valid(range.from) || !valid(range.to) || range.from > range.to) {
    throw new InputError(`The plausible date range must be two dates YYYY-MM-DD, the first not after the second; got ${range.from} to ${range.to}.`);
  }
  return range;
}

export const DATE_FORMATS: readonly DateFormat[] = ['iso', 'day-first', 'month-first'];

export interface ParsedDate {
  day: number;
  /** HH:MM:SS, or null when the cell holds a date only. */
  time: string | null;
}

const DIGIT_0 = 48;

function digitsAt(text: string, start: number, count: number): number {
  let value = 0;
  for (let index = start; index < start + count; index += 1) {
    const digit = text.charCodeAt(index) - DIGIT_0;
    if (digit < 0 || digit > 9) return -1;
    value = value * 10 + digit;
  }
  return value;
}

let cachedDateKey = -1;
let cachedDay = 0;

/**
 * The shape nearly every export uses, `YYYY-MM-DD` or `YYYY-MM-DDTHH:MM:SS` (or a space for T),
 * parsed without regular expressions or allocation beyond the time slice; anything else
 * (undefined) goes to the general parser. The day number of the last date is remembered.
 */
function parseIsoDateTimeFast(text: string): ParsedDate | undefined {
  const length = text.length;
  if ((length !== 10 && length !== 19) || text.charCodeAt(4) !== 45 || text.charCodeAt(7) !== 45) return undefined;
  const year = digitsAt(text, 0, 4);
  const month = digitsAt(text, 5, 2);
  const dayOfMonth = digitsAt(text, 8, 2);
  if (year < 0 || month < 0 || dayOfMonth < 0) return undefined;
  const key = year * 10000 + month * 100 + dayOfMonth;
  if (key !== cachedDateKey) {
    const day = dayFromParts(year, month, dayOfMonth);
    if (day === undefined) return undefined;
    cachedDateKey = key;
    cachedDay = day;
  }
  if (length === 10) return { day: cachedDay, time: null };
  const separator = text.charCodeAt(10);
  if ((separator !== 84 && separator !== 32) || text.charCodeAt(13) !== 58 || text.charCodeAt(16) !== 58) return undefined;
  const hours = digitsAt(text, 11, 2);
  const minutes = digitsAt(text, 14, 2);
  const seconds = digitsAt(text, 17, 2);
  if (hours < 0 || hours > 23 || minutes < 0 || minutes > 59 || seconds < 0 || seconds > 59) return undefined;
  return { day: cachedDay, time: text.slice(11, 19) };
}

const TIME = /^(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,]\d+)?)?(?:\s*(?:Z|[+-]\d{2}:?\d{2}))?$/;

function parseTime(text: string): string | Rejection {
  const match = TIME.exec(text);
  if (!match) return { reason: 'time part is not HH:MM or HH:MM:SS' };
  const hours = Number(match[1]);
  const minutes = Number(match[2]);
  const seconds = match[3] === undefined ? 0 : Number(match[3]);
  if (hours > 23 || minutes > 59 || seconds > 59) return { reason: 'time of day out of range' };
  return `${String(hours).padStart(2, '0')}:${match[2]}:${String(seconds).padStart(2, '0')}`;
}

const SLASHED = /^(\d{1,2})[/.-](\d{1,2})[/.-](\d{4})$/;

/**
 * Date or date-time. ISO `YYYY-MM-DD` (optionally `T`/space and a time; a zone suffix is accepted
 * and ignored: the local wall-clock time on the receipt is what matters) is always accepted.
 * `DD/MM/YYYY` or `MM/DD/YYYY` (separators / . -) only with the matching explicit format.
 */
export function parseDateTime(raw: string, format: DateFormat): ParsedDate | Rejection {
  const fast = parseIsoDateTimeFast(raw);
  if (fast !== undefined) return fast;
  const text = raw.trim();
  if (text.length === 0) return { reason: 'date is empty' };
  if (text.length >= 10 && text.charCodeAt(4) === 45 && text.charCodeAt(7) === 45) {
    const year = digitsAt(text, 0, 4);
    const month = digitsAt(text, 5, 2);
    const dayOfMonth = digitsAt(text, 8, 2);
    if (year < 0 || month < 0 || dayOfMonth < 0) return { reason: 'date is not a valid ISO date (YYYY-MM-DD)' };
    const day = dayFromParts(year, month, dayOfMonth);
    if (day === undefined) return { reason: 'no such calendar date' };
    if (text.length === 10) return { day, time: null };
    const separator = text[10];
    if (separator !== 'T' && separator !== ' ') return { reason: 'date is not a valid ISO date (YYYY-MM-DD)' };
    const time = parseTime(text.slice(11).trim());
    return typeof time === 'string' ? { day, time } : time;
  }
  const [datePart, ...rest] = text.split(/\s+/);
  const match = SLASHED.exec(datePart);
  if (!match) return { reason: 'not a date (expected YYYY-MM-DD, or DD/MM/YYYY / MM/DD/YYYY with --date-format)' };
  if (format === 'iso') {
    return { reason: 'date is not ISO (YYYY-MM-DD); choose --date-format day-first or month-first for this file' };
  }
  const first = Number(match[1]);
  const second = Number(match[2]);
  const year = Number(match[3]);
  const [dayOfMonth, month] = format === 'day-first' ? [first, second] : [second, first];
  const day = dayFromParts(year, month, dayOfMonth);
  if (day === undefined) return { reason: `no such calendar date when read ${format}` };
  if (rest.length === 0) return { day, time: null };
  const time = parseTime(rest.join(' '));
  return typeof time === 'string' ? { day, time } : time;
}

/**
 * Money amount → integer cents, parsed from the text (never through floating point, so 0.1 + 0.2
 * stays exact). Decimal point by default; with `decimalComma`, a comma. A grouping separator (the
 * other one, or a space/apostrophe) is accepted only in groups of three digits. A leading minus
 * (or trailing minus, or parentheses, common in till exports) means a refund. More than two
 * decimals are accepted only when the extra digits are zeros.
 */
export function parseAmountCents(raw: string, decimalComma: boolean): number | Rejection {
  const fast = parsePlainAmountFast(raw, decimalComma ? 44 : 46);
  if (fast !== undefined) return fast;
  const parsed = parseAmountText(raw, decimalComma);
  if (typeof parsed === 'number' || /decimal (comma|point)/.test(parsed.reason)) return parsed;
  return otherDecimalMarkHint(raw, decimalComma) ?? parsed;
}

const DECIMAL_COMMA_SHAPE = /^[-+(]?\s*€?\s*\d{1,3}(?:[.\s'\u00a0\u202f]\d{3})*,\d+\s*€?\s*[-)]?$/;
const DECIMAL_POINT_SHAPE = /^[-+(]?\s*€?\s*\d{1,3}(?:[,\s'\u00a0\u202f]\d{3})*\.\d+\s*€?\s*[-)]?$/;
const POINT_GROUPED_THOUSANDS = /^[-+(]?\s*€?\s*\d{1,3}(?:\.\d{3})+\s*€?\s*[-)]?$/;

/**
 * When a refused amount is written with the other decimal mark (`1.234,56` read with a decimal
 * point), the reason says so and names the setting, instead of a puzzling "more than 2 decimals".
 */
function otherDecimalMarkHint(raw: string, decimalComma: boolean): Rejection | undefined {
  const text = raw.trim();
  if (!decimalComma && DECIMAL_COMMA_SHAPE.test(text)) {
    return { reason: 'amount looks like it has a decimal comma (as in 1.234,56); choose --decimal-comma for this file' };
  }
  if (!decimalComma && POINT_GROUPED_THOUSANDS.test(text)) {
    return { reason: 'amount has 3 decimals; if the point groups thousands (1.234 for 1234), choose --decimal-comma for this file' };
  }
  if (decimalComma && DECIMAL_POINT_SHAPE.test(text)) {
    return { reason: 'amount looks like it has a decimal point (as in 1,234.56), but the file is read with --decimal-comma' };
  }
  return undefined;
}

function parseAmountText(raw: string, decimalComma: boolean): number | Rejection {
  let text = raw.trim();
  if (text.length === 0) return { reason: 'amount is empty' };
  let negative = false;
  if (text.startsWith('(') && text.endsWith(')')) {
    negative = true;
    text = text.slice(1, -1).trim();
  }
  if (text.startsWith('-') || text.startsWith('+')) {
    negative = negative !== (text[0] === '-');
    text = text.slice(1).trim();
  } else if (text.endsWith('-')) {
    negative = !negative;
    text = text.slice(0, -1).trim();
  }
  if (text.startsWith('€')) text = text.slice(1).trim();
  else if (text.endsWith('€')) text = text.slice(0, -1).trim();
  const decimalMark = decimalComma ? 44 : 46;
  const otherMark = decimalComma ? 46 : 44;
  let units = 0;
  let cents = 0;
  let integerDigits = 0;
  let fractionDigits = 0;
  let inFraction = false;
  let groupDigits = -1; // digits since the last grouping separator; -1 = none seen
  let lastGroupMark = 0;
  const misplaced = (): Rejection =>
    lastGroupMark === 44 && !decimalComma
      ? { reason: 'amount has a decimal comma; choose --decimal-comma for this file' }
      : lastGroupMark === 46 && decimalComma
        ? { reason: 'amount has a decimal point, but the file is read with --decimal-comma' }
        : { reason: 'amount has a misplaced grouping separator' };
  for (let index = 0; index < text.length; index += 1) {
    const code = text.charCodeAt(index);
    const digit = code - DIGIT_0;
    if (digit >= 0 && digit <= 9) {
      if (inFraction) {
        fractionDigits += 1;
        if (fractionDigits <= 2) cents = cents * 10 + digit;
        else if (digit !== 0) return { reason: 'amount has more than 2 decimals' };
      } else {
        units = units * 10 + digit;
        integerDigits += 1;
        if (groupDigits >= 0) groupDigits += 1;
      }
      continue;
    }
    if (code === decimalMark && !inFraction) {
      if (groupDigits >= 0 && groupDigits !== 3) return misplaced();
      inFraction = true;
      continue;
    }
    if ((code === otherMark || code === 32 || code === 39 || code === 0xa0 || code === 0x202f) && !inFraction && integerDigits > 0) {
      if (groupDigits >= 0 && groupDigits !== 3) return misplaced();
      lastGroupMark = code;
      if (code === otherMark && groupDigits < 0 && integerDigits > 3) return misplaced();
      groupDigits = 0;
      continue;
    }
    if (code === 44 && !decimalComma) return { reason: 'amount has a decimal comma; choose --decimal-comma for this file' };
    if (code === 46 && decimalComma) return { reason: 'amount has a decimal point, but the file is read with --decimal-comma' };
    return { reason: 'amount is not a number' };
  }
  if (groupDigits >= 0 && groupDigits !== 3) return misplaced();
  if (integerDigits === 0 && fractionDigits === 0) return { reason: 'amount is not a number' };
  if (fractionDigits === 1) cents *= 10;
  const total = units * 100 + cents;
  if (!Number.isSafeInteger(total) || total > 1e13) return { reason: 'amount is out of range' };
  return negative && total !== 0 ? -total : total;
}

/**
 * `-?digits(.d|.dd)?` with the chosen decimal mark, the common case, in one pass; anything else
 * (undefined) goes to the general parser.
 */
function parsePlainAmountFast(text: string, decimalMark: number): number | undefined {
  const length = text.length;
  if (length === 0 || length > 14) return undefined;
  let index = 0;
  let negative = false;
  if (text.charCodeAt(0) === 45) {
    negative = true;
    index = 1;
  }
  let units = 0;
  let digits = 0;
  for (; index < length; index += 1) {
    const digit = text.charCodeAt(index) - DIGIT_0;
    if (digit < 0 || digit > 9) break;
    units = units * 10 + digit;
    digits += 1;
  }
  if (digits === 0) return undefined;
  let cents = 0;
  if (index < length) {
    if (text.charCodeAt(index) !== decimalMark) return undefined;
    const fraction = length - index - 1;
    if (fraction === 1) {
      const digit = text.charCodeAt(index + 1) - DIGIT_0;
      if (digit < 0 || digit > 9) return undefined;
      cents = digit * 10;
    } else if (fraction === 2) {
      const tens = text.charCodeAt(index + 1) - DIGIT_0;
      const ones = text.charCodeAt(index + 2) - DIGIT_0;
      if (tens < 0 || tens > 9 || ones < 0 || ones > 9) return undefined;
      cents = tens * 10 + ones;
    } else return undefined;
  }
  const total = units * 100 + cents;
  return negative && total !== 0 ? -total : total;
}

/** Whole number (items on a receipt); a refund line may carry a negative count. */
export function parseWholeNumber(raw: string): number | Rejection {
  const text = raw.trim();
  if (!/^[+-]?\d{1,9}$/.test(text)) {
    if (/^[+-]?\d{1,9}\.0+$/.test(text)) return Number.parseInt(text, 10);
    return { reason: 'not a whole number' };
  }
  return Number.parseInt(text, 10);
}

const CONSENT_YES = new Set(['yes', 'y', 'true', '1', 'opt-in', 'opted in', 'ja', 'oui', 'si', 'sí']);
const CONSENT_NO = new Set(['no', 'n', 'false', '0', 'opt-out', 'opted out', 'nein', 'non']);

/** Marketing consent: yes/no words → 1/0; an empty cell is unknown (null). */
export function parseConsent(raw: string): 0 | 1 | null | Rejection {
  const text = raw.trim().toLowerCase();
  if (text.length === 0) return null;
  if (CONSENT_YES.has(text)) return 1;
  if (CONSENT_NO.has(text)) return 0;
  return { reason: 'consent must be yes or no (also y/n, true/false, 1/0)' };
}

/** A numeric feature value (decimal point, or comma with decimalComma); empty = missing (null). */
export function parseFeatureValue(raw: string, decimalComma: boolean): number | null | Rejection {
  let text = raw.trim();
  if (text.length === 0) return null;
  if (decimalComma) {
    if (text.includes('.')) return { reason: 'number has a point but --decimal-comma was chosen' };
    text = text.replace(',', '.');
  }
  if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text)) {
    return { reason: text.includes(',') ? 'number has a decimal comma; choose --decimal-comma for this file' : 'not a number' };
  }
  const value = Number(text);
  return Number.isFinite(value) ? value : { reason: 'number out of range' };
}
