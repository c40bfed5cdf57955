/**
 * The chain's shopping clock: how far through a shopping day a clock time is, measured as the
 * share of the window's receipts made by that time of day. The gaps since the last visit count the
 * time from the last visit to the end of the as-of day on this clock instead of the wall clock.
 *
 * Why: shoppers come in opening hours, so on the wall clock the time since a frequent shopper's
 * last visit is a lattice (a few hours, a day and a few hours, …) with the night as an empty
 * stretch between, and mixture components are spent on its stacks (a "just been in" group split
 * off a tier that shops most days). Counting time by the cumulative rate at which the chain's
 * customers shop turns visits at a daily-varying rate into visits at a steady one, so the time
 * since the last visit spreads out evenly (the time-rescaling theorem: Brown, Barbieri, Ventura,
 * Kass & Frank 2002, "The time-rescaling theorem and its application to neural spike train data
 * analysis", Neural Computation 14, 325–346; cited from memory). A whole day is still one day on
 * this clock, so the customer's usual gap (in days) keeps its meaning.
 *
 * The clock is the empirical distribution of the window's receipt rows over the minutes of the
 * day, linear within a minute: share(t) = (rows in earlier minutes + seconds into t's minute / 60
 * × rows in t's minute) / all rows with a clock time (a receipt split by department counts once
 * per department; ./compute.ts says why). The app (./compute.ts) and the
 * generated SQL (src/warehouse/features-sql.ts) compute it with the same double operations in the
 * same order, so the two agree bit for bit.
 */

export const SECONDS_PER_DAY = 86_400;
export const MINUTES_PER_DAY = 1_440;

/**
 * The clock time a row without one counts as: midday. A time of exactly 00:00:00 counts as no time
 * too, because a date-only column reads as midnight in a chain's engine; the generated SQL and the
 * app then agree, at the cost of half a day for a rare visit on the stroke of midnight.
 */
export const SECONDS_OF_DAY_WITHOUT_TIME = 43_200;

export interface ShoppingClock {
  /** Receipt rows in the minutes before each minute of the day (index 0 … 1439). */
  before: Float64Array;
  /** Receipt rows within each minute of the day. */
  within: Float64Array;
  /** Receipt rows with a clock time in the window; 0 when none has one (then the wall clock is used). */
  total: number;
}

/** The clock from the window's receipt rows counted per minute of the day (index 0 … 1439). */
export function shoppingClockFromCounts(receiptsPerMinute: ArrayLike<number>): ShoppingClock {
  if (receiptsPerMinute.length !== MINUTES_PER_DAY) throw new Error(`A shopping clock needs ${MINUTES_PER_DAY} minute counts; got ${receiptsPerMinute.length}.`);
  const before = new Float64Array(MINUTES_PER_DAY);
  const within = Float64Array.from(receiptsPerMinute);
  let total = 0;
  for (let minute = 0; minute < MINUTES_PER_DAY; minute++) {
    if (!(within[minute] >= 0) || !Number.isInteger(within[minute])) throw new Error(`Minute ${minute} of the shopping clock has a count of ${within[minute]}.`);
    before[minute] = total;
    total += within[minute];
  }
  return { before, within, total };
}

/** The share of the shopping day passed at this many seconds after midnight (0 … 86399). */
export function shareOfShoppingDay(clock: ShoppingClock, secondsOfDay: number): number {
  if (clock.total === 0) return secondsOfDay / SECONDS_PER_DAY;
  const minute = Math.floor(secondsOfDay / 60);
  const secondsIntoMinute = secondsOfDay - minute * 60;
  return (clock.before[minute] + (secondsIntoMinute / 60) * clock.within[minute]) / clock.total;
}

/**
 * A latest-moment aggregate (day number × 86400 + seconds of the clock time, as the feature
 * queries return it) as a moment on the shopping clock: the day number plus the share of the
 * shopping day passed. NaN stays NaN (no such row).
 */
export function momentOnShoppingClock(clock: ShoppingClock, clockKey: number): number {
  if (Number.isNaN(clockKey)) return NaN;
  const day = Math.floor(clockKey / SECONDS_PER_DAY);
  return day + shareOfShoppingDay(clock, clockKey - day * SECONDS_PER_DAY);
}
