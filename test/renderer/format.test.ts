import { describe, expect, it } from 'vitest';
import { axisUnit, formatInUnit, formattersFor, sampleCaption, traitText } from '../../renderer/src/lib/format.js';

// Expected strings follow the CLDR conventions Node's ICU implements (from memory): en-GB groups
// with commas and puts € first; de-DE groups with dots, uses a decimal comma and puts € last
// after a no-break space.
describe('locale formatting', () => {
  it('formats euros, counts and shares in en-GB', () => {
    const f = formattersFor('en-GB');
    expect(f.euros(1234567.4)).toBe('€1,234,567');
    expect(f.eurosPrecise(-12.5)).toBe('-€12.50');
    expect(f.count(1000000)).toBe('1,000,000');
    expect(f.percent(0.1234)).toBe('12.3%');
    expect(f.probability(0.70049)).toBe('0.700');
  });

  it('formats euros and decimals in de-DE', () => {
    const f = formattersFor('de-DE');
    expect(f.euros(1234567.4)).toBe('1.234.567\u00a0€');
    expect(f.decimal(3.14159, 2)).toBe('3,14');
    expect(f.count(1000000)).toBe('1.000.000');
  });

  it('writes feature values in their units, leaving "per month" to the label', () => {
    const f = formattersFor('en-GB');
    expect(formatInUnit(633.214, 'EUR per month', f)).toBe('€633');
    expect(formatInUnit(23.981, 'EUR', f)).toBe('€23.98');
    expect(formatInUnit(9.86, 'visits per month', f)).toBe('9.9');
    expect(formatInUnit(0.42, 'share', f)).toBe('42.0%');
    expect(formatInUnit(13, 'days', f)).toBe('13 days');
    expect(formatInUnit(1.2345, '', f)).toBe('1.23');
    expect(axisUnit('EUR per month')).toBe(' (EUR)');
    expect(axisUnit('visits per month')).toBe('');
  });

  it('shows a dash rather than NaN or Infinity', () => {
    const f = formattersFor('en-GB');
    expect(f.euros(Number.NaN)).toBe('—');
    expect(f.percent(Number.POSITIVE_INFINITY)).toBe('—');
  });

  it('formats ISO dates without shifting the day', () => {
    expect(formattersFor('en-GB').date('2026-11-30')).toBe('30 Nov 2026');
  });

  it('states the sample a chart draws', () => {
    const f = formattersFor('en-GB');
    expect(sampleCaption(5000, 1000000, f)).toBe('showing 5,000 of 1,000,000 customers');
    expect(sampleCaption(812, 812, f)).toBe('all 812 customers');
    expect(() => sampleCaption(10, 5, f)).toThrow(RangeError);
    expect(() => sampleCaption(-1, 5, f)).toThrow(RangeError);
  });

  it('says a segment trait with its value and where it ranks among all customers', () => {
    const f = formattersFor('en-GB');
    expect(traitText({ label: 'visit rate', median: 6.1, unit: 'visits per month', percentile: 0.72, words: 'frequent' }, f)).toBe('visit rate 6.1 visits/month — frequent (top 28%)');
    expect(traitText({ label: 'basket size', median: 21, unit: 'EUR', percentile: 0.22, words: 'small baskets' }, f)).toBe('basket size €21.00 — small baskets (bottom 22%)');
    expect(traitText({ label: 'days since last visit', median: 3, unit: 'days', percentile: 0.5, words: 'recent' }, f)).toBe('days since last visit 3 days — recent (top 50%)');
    // A word kept from the continued segment near the edge of its fifth says so.
    expect(traitText({ label: 'spend per month', median: 22.7, unit: 'EUR per month', percentile: 0.183, words: 'low spend', kept: true }, f)).toBe(
      'spend per month €22.70/month — low spend (bottom 18%; word kept)',
    );
    // A small share keeps a decimal rather than reading "top 0%".
    const spend = (percentile: number) => traitText({ label: 'spend per month', median: 2400, unit: 'EUR per month', percentile, words: 'very high spend' }, f);
    expect(spend(0.997)).toBe('spend per month €2,400/month — very high spend (top 0.3%)');
    expect(spend(0.99)).toBe('spend per month €2,400/month — very high spend (top 1%)');
    expect(spend(0.9999)).toBe('spend per month €2,400/month — very high spend (top under 0.1%)');
    expect(traitText({ label: 'days since last visit', median: 0, unit: 'days', percentile: 0.004, words: 'very recent' }, f)).toBe('days since last visit 0 days — very recent (bottom 0.4%)');
  });
});
