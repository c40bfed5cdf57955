/**
 * The demo's calendar: days counted from 2025-01-01 (day 0) to 2026-11-30, local shop time with
 * no time zone, times kept as whole minutes from the first day's midnight.
 */

const MS_PER_DAY = 86_400_000;
const FIRST_DAY_UTC = Date.UTC(2025, 0, 1);
export const FIRST_DATE = '2025-01-01';
export const LAST_DATE = '2026-11-30';
export const MINUTES_PER_DAY = 1440;

/** Day number of an ISO date (negative before 2025-01-01). */
export function dayOf(isoDate: string): number {
  return Math.round((Date.parse(`${isoDate}T00:00:00Z`) - FIRST_DAY_UTC) / MS_PER_DAY);
}

export const LAST_DAY = dayOf(LAST_DATE);

/** ISO date of a day number; works on either side of the first day. */
export function isoDateOf(day: number): string {
  return new Date(FIRST_DAY_UTC + day * MS_PER_DAY).toISOString().slice(0, 10);
}

/** 0 = Monday … 6 = Sunday. */
export function weekdayOf(day: number): number {
  return (new Date(FIRST_DAY_UTC + day * MS_PER_DAY).getUTCDay() + 6) % 7;
}

export interface CalendarMonth {
  /** e.g. "2025-12". */
  label: string;
  /** 1–12. */
  monthOfYear: number;
  firstDay: number;
  lastDay: number;
}

/** The 23 calendar months of the demo history, in order. */
export const MONTHS: CalendarMonth[] = (() => {
  const months: CalendarMonth[] = [];
  for (let year = 2025, month = 0; ; month++) {
    if (month === 12) {
      year++;
      month = 0;
    }
    const first = Math.round((Date.UTC(year, month, 1) - FIRST_DAY_UTC) / MS_PER_DAY);
    if (first > LAST_DAY) break;
    const last = Math.round((Date.UTC(year, month + 1, 1) - FIRST_DAY_UTC) / MS_PER_DAY) - 1;
    months.push({ label: isoDateOf(first).slice(0, 7), monthOfYear: month + 1, firstDay: first, lastDay: last });
  }
  return months;
})();

const twoDigits = Array.from({ length: 60 }, (_, i) => String(i).padStart(2, '0'));
const dayStrings = Array.from({ length: LAST_DAY + 1 }, (_, day) => isoDateOf(day));

/** "2025-03-14T17:42:00" for a minute inside the history. */
export function formatMinute(minute: number): string {
  const day = Math.floor(minute / MINUTES_PER_DAY);
  const minuteOfDay = minute - day * MINUTES_PER_DAY;
  const hour = Math.floor(minuteOfDay / 60);
  return `${dayStrings[day]}T${twoDigits[hour]}:${twoDigits[minuteOfDay - hour * 60]}:00`;
}
