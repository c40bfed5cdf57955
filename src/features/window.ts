/**
 * The trailing window of a run as day numbers (src/store/days.ts). A window of N months ending at
 * the as-of date covers (as-of − N calendar months, as-of]: ending 2026-11-30, 12 months start on
 * 2025-12-01. The spend trend compares (as-of − 3 months, as-of] with the 3 months before.
 */
import { InputError } from '../errors.js';
import { dayFromIsoDate, dayFromParts, daysInMonth } from '../store/days.js';

/** Average days per calendar month (365.25 / 12), used for tenure and observed months (common practice). */
export const DAYS_PER_MONTH = 365.25 / 12;

export interface FeatureWindow {
  asOfDay: number;
  /** First day inside the window. */
  startDay: number;
  /** First day of the last 3 months and of the 3 months before them. */
  last3StartDay: number;
  prev3StartDay: number;
  windowMonths: number;
}

/**
 * Day number of (date − months), with the day of month clamped to the shorter month; a month's
 * last day maps to the target month's last day, so month-end windows cover whole months
 * (2026-11-30 − 3 months = 2026-08-31).
 */
export function subtractMonths(isoDate: string, months: number): number {
  const [year, month, day] = isoDate.split('-').map(Number);
  const total = year * 12 + (month - 1) - months;
  const targetYear = Math.floor(total / 12);
  const targetMonth = (total % 12) + 1;
  const lastDay = daysInMonth(targetYear, targetMonth);
  const result = dayFromParts(targetYear, targetMonth, day === daysInMonth(year, month) ? lastDay : Math.min(day, lastDay));
  if (result === undefined) throw new InputError(`The date ${isoDate} minus ${months} months is out of range.`);
  return result;
}

export function parseAsOf(asOf: string): number {
  try {
    return dayFromIsoDate(asOf);
  } catch {
    throw new InputError(`The as-of date must be a calendar date YYYY-MM-DD; got "${asOf}".`);
  }
}

export function featureWindow(asOf: string, windowMonths: number): FeatureWindow {
  if (!Number.isInteger(windowMonths) || windowMonths < 1 || windowMonths > 120) {
    throw new InputError(`The window must be a whole number of months from 1 to 120; got ${windowMonths}.`);
  }
  const asOfDay = parseAsOf(asOf);
  return {
    asOfDay,
    startDay: subtractMonths(asOf, windowMonths) + 1,
    last3StartDay: subtractMonths(asOf, 3) + 1,
    prev3StartDay: subtractMonths(asOf, 6) + 1,
    windowMonths,
  };
}
