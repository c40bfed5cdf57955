/**
 * Calendar days as integers (days since 1970-01-01, UTC). Receipts and visits store their date
 * this way so that trailing windows are plain integer ranges in SQL.
 */

const MS_PER_DAY = 86_400_000;
const ISO_DATE = /^(\d{4})-(\d{2})-(\d{2})$/;

/** Day number of a calendar date; returns undefined when the parts do not form a real date. */
export function dayFromParts(year: number, month: number, dayOfMonth: number): number | undefined {
  if (!Number.isInteger(year) || !Number.isInteger(month) || !Number.isInteger(dayOfMonth)) return undefined;
  if (year < 1 || year > 9999 || month < 1 || month > 12 || dayOfMonth < 1) return undefined;
  if (dayOfMonth > daysInMonth(year, month)) return undefined;
  const stamp = Date.UTC(year, month - 1, dayOfMonth);
  // Date.UTC maps years 0–99 to 1900–1999; correct for them so every year is literal.
  const corrected = year < 100 ? new Date(stamp).setUTCFullYear(year) : stamp;
  return Math.round(corrected / MS_PER_DAY);
}

export function daysInMonth(year: number, month: number): number {
  if (month === 2) return isLeapYear(year) ? 29 : 28;
  return month === 4 || month === 6 || month === 9 || month === 11 ? 30 : 31;
}

function isLeapYear(year: number): boolean {
  return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0;
}

/** `YYYY-MM-DD` → day number. Throws RangeError for anything else (callers validate input first). */
export function dayFromIsoDate(isoDate: string): number {
  const match = ISO_DATE.exec(isoDate);
  const day = match ? dayFromParts(Number(match[1]), Number(match[2]), Number(match[3])) : undefined;
  if (day === undefined) throw new RangeError(`Not an ISO calendar date (YYYY-MM-DD): "${isoDate}".`);
  return day;
}

/** Day number → `YYYY-MM-DD`. */
export function isoDateFromDay(day: number): string {
  if (!Number.isInteger(day)) throw new RangeError(`A day number must be an integer; got ${day}.`);
  const date = new Date(day * MS_PER_DAY);
  const year = String(date.getUTCFullYear()).padStart(4, '0');
  const month = String(date.getUTCMonth() + 1).padStart(2, '0');
  const dayOfMonth = String(date.getUTCDate()).padStart(2, '0');
  return `${year}-${month}-${dayOfMonth}`;
}
