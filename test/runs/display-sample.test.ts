import { describe, expect, it } from 'vitest';
import { displaySamplePositions, drawDisplaySample } from '../../src/runs/display-sample.js';

describe('display sample of a run', () => {
  it('draws distinct indexes in range, the same for the same seed', () => {
    const a = drawDisplaySample(100_000, 20_000, 7);
    expect(a).toHaveLength(20_000);
    expect(new Set(a).size).toBe(20_000);
    expect(Math.min(...a)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...a)).toBeLessThan(100_000);
    expect(drawDisplaySample(100_000, 20_000, 7)).toEqual(a);
    expect(drawDisplaySample(100_000, 20_000, 8)).not.toEqual(a);
  });

  it('takes everyone when the run is smaller than the sample', () => {
    const all = drawDisplaySample(500, 20_000, 1);
    expect([...all].sort((x, y) => x - y)).toEqual(Array.from({ length: 500 }, (_, i) => i));
    expect(drawDisplaySample(0, 20_000, 1)).toHaveLength(0);
  });

  it('is uniform: every tenth of the range gets its share, in any prefix (chi-square, common practice)', () => {
    const sample = drawDisplaySample(1_000_000, 20_000, 3);
    for (const prefix of [2_000, 20_000]) {
      const counts = new Array(10).fill(0);
      for (let i = 0; i < prefix; i++) counts[Math.floor(sample[i] / 100_000)] += 1;
      const expected = prefix / 10;
      const chiSquare = counts.reduce((sum, count) => sum + (count - expected) ** 2 / expected, 0);
      // 9 degrees of freedom: the 99.9th percentile of chi-square is 27.88 (standard tables, from memory).
      expect(chiSquare).toBeLessThan(27.88);
    }
  });

  it('gives each placed customer its sample position or -1', () => {
    const positions = displaySamplePositions(50_000, 4);
    const drawn = [...positions].filter((position) => position >= 0);
    expect(drawn).toHaveLength(20_000);
    expect(new Set(drawn).size).toBe(20_000);
    expect(Math.max(...drawn)).toBe(19_999);
    const order = drawDisplaySample(50_000, 20_000, 4);
    expect(positions[order[0]]).toBe(0);
    expect(positions[order[19_999]]).toBe(19_999);
  });

  it('refuses impossible sizes', () => {
    expect(() => drawDisplaySample(-1, 10, 0)).toThrow(RangeError);
    expect(() => drawDisplaySample(10, 1.5, 0)).toThrow(RangeError);
  });
});
