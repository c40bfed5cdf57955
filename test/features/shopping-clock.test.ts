import { describe, expect, it } from 'vitest';
import {
  MINUTES_PER_DAY,
  SECONDS_PER_DAY,
  momentOnShoppingClock,
  shareOfShoppingDay,
  shoppingClockFromCounts,
} from '../../src/features/shopping-clock.js';
import { restartStream } from '../../src/model/index.js';

/** Minute counts with `receipts` at each listed minute of the day. */
function countsAt(entries: [minute: number, receipts: number][]): Float64Array {
  const counts = new Float64Array(MINUTES_PER_DAY);
  for (const [minute, receipts] of entries) counts[minute] += receipts;
  return counts;
}

describe('the shopping clock', () => {
  const clock = shoppingClockFromCounts(countsAt([[8 * 60, 1], [12 * 60, 2], [18 * 60, 1]]));

  it('counts the share of the receipts made by a time of day, spreading a minute’s receipts over it', () => {
    expect(clock.total).toBe(4);
    expect(shareOfShoppingDay(clock, 0)).toBe(0);
    expect(shareOfShoppingDay(clock, 8 * 3600)).toBe(0);
    expect(shareOfShoppingDay(clock, 8 * 3600 + 30)).toBe(0.5 / 4);
    expect(shareOfShoppingDay(clock, 8 * 3600 + 60)).toBe(1 / 4);
    // The night and the hours without receipts add nothing.
    expect(shareOfShoppingDay(clock, 11 * 3600)).toBe(1 / 4);
    expect(shareOfShoppingDay(clock, 12 * 3600 + 15)).toBe((1 + 0.5) / 4);
    expect(shareOfShoppingDay(clock, 23 * 3600)).toBe(1);
  });

  it('falls back to the wall clock when no receipt has a time', () => {
    const empty = shoppingClockFromCounts(new Float64Array(MINUTES_PER_DAY));
    expect(shareOfShoppingDay(empty, 21_600)).toBe(0.25);
  });

  it('turns a clock key (day × 86400 + seconds) into the day plus the share of the shopping day', () => {
    const day = 20_757;
    expect(momentOnShoppingClock(clock, day * SECONDS_PER_DAY + 12 * 3600 + 30)).toBe(day + (1 + 1) / 4);
    expect(momentOnShoppingClock(clock, NaN)).toBeNaN();
  });

  it('refuses counts that are not one whole number per minute of the day', () => {
    expect(() => shoppingClockFromCounts(new Float64Array(60))).toThrow(/1440 minute counts/);
    expect(() => shoppingClockFromCounts(countsAt([[5, 0.5]]))).toThrow(/minute 5/i);
    expect(() => shoppingClockFromCounts(countsAt([[5, -1]]))).toThrow(/minute 5/i);
  });

  it('makes the time since a steady shopper’s last visit exponential, as the time-rescaling theorem says, where the wall clock leaves a lattice', () => {
    // Steady shoppers at one visit every 3 days on average (Poisson), visiting only in opening hours
    // 08:00–20:00 with a midday and an evening peak. Seeded; 20,000 shoppers, 60 days each.
    const stream = restartStream(7, 0);
    const random = () => stream.float();
    const hourWeights = [0, 0, 0, 0, 0, 0, 0, 0, 4, 5, 6, 7, 9, 8, 6, 6, 8, 10, 9, 5, 0, 0, 0, 0];
    const weightTotal = hourWeights.reduce((a, b) => a + b, 0);
    const drawSecondOfDay = () => {
      let u = random() * weightTotal;
      let hour = 0;
      while (u >= hourWeights[hour]) u -= hourWeights[hour++];
      return hour * 3600 + Math.floor(random() * 3600);
    };
    const ratePerDay = 1 / 3;
    const drawPoisson = (mean: number) => {
      let count = 0;
      for (let p = Math.exp(-mean), s = p, u = random(); u > s; count++) {
        p *= mean / (count + 1);
        s += p;
      }
      return count;
    };
    const counts = new Float64Array(MINUTES_PER_DAY);
    const lastKeys: number[] = [];
    for (let shopper = 0; shopper < 20_000; shopper++) {
      let lastKey = NaN;
      for (let day = 0; day < 60; day++) {
        for (let visit = drawPoisson(ratePerDay); visit > 0; visit--) {
          const second = drawSecondOfDay();
          counts[Math.floor(second / 60)]++;
          const key = day * SECONDS_PER_DAY + second;
          if (!(key <= lastKey)) lastKey = key;
        }
      }
      if (!Number.isNaN(lastKey)) lastKeys.push(lastKey);
    }
    const shopping = shoppingClockFromCounts(counts);
    const wall = shoppingClockFromCounts(new Float64Array(MINUTES_PER_DAY));
    // Largest gap between the empirical distribution of the time since the last visit (days, times
    // the rate) and the exponential of mean 1 (Kolmogorov–Smirnov distance). Shoppers seen no
    // visit in 60 days are left out, so the exponential is truncated there (e^−20: negligible).
    const distance = (moments: number[]) => {
      const elapsed = moments.map((moment) => (60 - moment) * ratePerDay).sort((a, b) => a - b);
      let largest = 0;
      elapsed.forEach((x, i) => {
        const expected = 1 - Math.exp(-x);
        largest = Math.max(largest, Math.abs((i + 1) / elapsed.length - expected), Math.abs(i / elapsed.length - expected));
      });
      return largest;
    };
    const onShoppingClock = distance(lastKeys.map((key) => momentOnShoppingClock(shopping, key)));
    const onWallClock = distance(lastKeys.map((key) => momentOnShoppingClock(wall, key)));
    // At n ≈ 20,000 the 1 % critical distance is 1.63 / √n ≈ 0.012 (Kolmogorov's limit law).
    expect(onShoppingClock).toBeLessThan(0.012);
    expect(onWallClock).toBeGreaterThan(0.05);
  });
});
