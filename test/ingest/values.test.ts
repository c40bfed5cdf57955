import { describe, expect, it } from 'vitest';
import { parseAmountCents, parseConsent, parseDateTime, parseFeatureValue } from '../../src/ingest/values.js';
import { dayFromIsoDate, isoDateFromDay } from '../../src/store/days.js';

describe('amounts to cents', () => {
  it('reads decimal-point amounts exactly, refunds negative', () => {
    expect(parseAmountCents('12.50', false)).toBe(1250);
    expect(parseAmountCents('0.1', false)).toBe(10);
    expect(parseAmountCents('-3.2', false)).toBe(-320);
    expect(parseAmountCents('(4.00)', false)).toBe(-400);
    expect(parseAmountCents('1,234.56', false)).toBe(123456);
    expect(parseAmountCents('€ 5', false)).toBe(500);
    expect(parseAmountCents('12.3400', false)).toBe(1234);
    expect(parseAmountCents('-0.00', false)).toBe(0);
  });

  it('reads decimal commas only when chosen, and says so otherwise', () => {
    expect(parseAmountCents('12,50', true)).toBe(1250);
    expect(parseAmountCents('1.234,56', true)).toBe(123456);
    expect(parseAmountCents('12,50', false)).toEqual({ reason: expect.stringMatching(/--decimal-comma/) });
    expect(parseAmountCents('12.50', true)).toEqual({ reason: expect.stringMatching(/decimal point/) });
  });

  it('rejects what is not an amount', () => {
    for (const text of ['abc', '', '12.3.4', '--2.00', '7..50', 'n/a', '12.345', '1,23,4']) {
      expect(parseAmountCents(text, false)).toHaveProperty('reason');
    }
  });
});

describe('dates', () => {
  it('day numbers: 1970-01-01 is day 0 and 2000-03-01 is day 11017 (from memory: 30 years incl. 7 leap days = 10957 to 2000-01-01, + 31 + 29)', () => {
    expect(dayFromIsoDate('1970-01-01')).toBe(0);
    expect(dayFromIsoDate('2000-03-01')).toBe(10957 + 31 + 29);
    expect(isoDateFromDay(dayFromIsoDate('2024-02-29'))).toBe('2024-02-29');
    expect(() => dayFromIsoDate('2025-02-29')).toThrow();
  });

  it('ISO dates and date-times are always read', () => {
    expect(parseDateTime('2025-01-03', 'iso')).toEqual({ day: dayFromIsoDate('2025-01-03'), time: null });
    expect(parseDateTime('2025-01-03T14:05:06', 'iso')).toEqual({ day: dayFromIsoDate('2025-01-03'), time: '14:05:06' });
    expect(parseDateTime('2025-01-03 9:05', 'day-first')).toEqual({ day: dayFromIsoDate('2025-01-03'), time: '09:05:00' });
    expect(parseDateTime('2025-01-03T14:05:06+01:00', 'iso')).toEqual({ day: dayFromIsoDate('2025-01-03'), time: '14:05:06' });
  });

  it('never guesses day/month order: slashed dates need an explicit choice', () => {
    expect(parseDateTime('03/06/2026', 'iso')).toEqual({ reason: expect.stringMatching(/--date-format/) });
    expect(parseDateTime('03/06/2026', 'day-first')).toEqual({ day: dayFromIsoDate('2026-06-03'), time: null });
    expect(parseDateTime('03/06/2026 12:16', 'month-first')).toEqual({ day: dayFromIsoDate('2026-03-06'), time: '12:16:00' });
    expect(parseDateTime('31/12/2025', 'month-first')).toHaveProperty('reason');
  });

  it('rejects impossible dates', () => {
    for (const text of ['2025-02-30', '2025-13-01', 'yesterday', '', '2025-01-01T25:00:00']) {
      expect(parseDateTime(text, 'iso')).toHaveProperty('reason');
    }
  });
});

describe('consent and feature values', () => {
  it('consent words', () => {
    expect(parseConsent('Yes')).toBe(1);
    expect(parseConsent('n')).toBe(0);
    expect(parseConsent('')).toBeNull();
    expect(parseConsent('maybe')).toHaveProperty('reason');
  });

  it('feature numbers', () => {
    expect(parseFeatureValue('1.5e3', false)).toBe(1500);
    expect(parseFeatureValue('', false)).toBeNull();
    expect(parseFeatureValue('2,5', true)).toBe(2.5);
    expect(parseFeatureValue('2,5', false)).toHaveProperty('reason');
    expect(parseFeatureValue('NaN', false)).toHaveProperty('reason');
  });
});
