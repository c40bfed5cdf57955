import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { dayFromIsoDate, dayFromParts, isoDateFromDay } from '../../src/store/days.js';

describe('day numbers', () => {
  it('agree with the JavaScript Date epoch arithmetic for every date 1900–2100 sampled', () => {
    fc.assert(
      fc.property(fc.integer({ min: Date.UTC(1900, 0, 1), max: Date.UTC(2100, 11, 31) }), (stamp) => {
        const date = new Date(stamp);
        const iso = date.toISOString().slice(0, 10);
        const day = dayFromIsoDate(iso);
        expect(day).toBe(Math.floor(stamp / 86_400_000));
        expect(isoDateFromDay(day)).toBe(iso);
      }),
      { numRuns: 300 },
    );
  });

  it('leap years by the Gregorian rule (from memory: 1900 not leap, 2000 leap)', () => {
    expect(dayFromParts(1900, 2, 29)).toBeUndefined();
    expect(dayFromParts(2000, 2, 29)).toBeDefined();
    expect(dayFromParts(2025, 4, 31)).toBeUndefined();
  });
});
