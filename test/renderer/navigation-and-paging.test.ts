import { describe, expect, it } from 'vitest';
import { formatLocation, parseLocation, screens } from '../../renderer/src/lib/navigation.js';
import { pagesForRange, pagesToEvict } from '../../renderer/src/lib/paging.js';
import { designScreens } from '../support/design-reference.js';

describe('screen locations', () => {
  it('the side rail offers the screens of DESIGN.md §9, each once, in the design\'s order', () => {
    expect(screens.map((screen) => screen.title)).toEqual([...designScreens]);
    expect(new Set(screens.map((screen) => screen.id)).size).toBe(designScreens.length);
  });

  it('every screen of the design is reachable by its location, with or without a run, and stays there', () => {
    for (const title of designScreens) {
      const screen = screens.find((candidate) => candidate.title === title)!;
      for (const runId of [12, null]) {
        const location = formatLocation(screen.id, runId);
        expect(parseLocation(location)).toEqual({ screen: screen.id, runId });
        expect(formatLocation(parseLocation(location).screen, parseLocation(location).runId)).toBe(location);
      }
    }
  });

  it('falls back to Sources and ignores malformed run ids', () => {
    expect(parseLocation('')).toEqual({ screen: 'sources', runId: null });
    expect(parseLocation('#/elsewhere?run=3')).toEqual({ screen: 'sources', runId: 3 });
    expect(parseLocation('#/segments?run=0')).toEqual({ screen: 'segments', runId: null });
    expect(parseLocation('#/segments?run=2x')).toEqual({ screen: 'segments', runId: null });
  });
});

describe('page bookkeeping for virtual tables', () => {
  it('asks only for the pages covering the visible rows', () => {
    expect(pagesForRange(0, 30, 100, 1_000_000)).toEqual([0]);
    expect(pagesForRange(95, 130, 100, 1_000_000)).toEqual([0, 1]);
    expect(pagesForRange(999_990, 1_000_020, 100, 1_000_000)).toEqual([9999]);
  });

  it('asks for nothing in an empty table and clamps to the last page', () => {
    expect(pagesForRange(0, -1, 100, 0)).toEqual([]);
    expect(pagesForRange(0, 50, 100, 0)).toEqual([]);
    expect(pagesForRange(180, 400, 100, 250)).toEqual([1, 2]);
    expect(() => pagesForRange(0, 1, 0, 10)).toThrow(RangeError);
  });

  it('evicts the cached pages farthest from view, never a visible one', () => {
    expect(pagesToEvict([0, 1, 2, 3, 50, 51], [50, 51], 4)).toEqual([0, 1]);
    expect(pagesToEvict([5, 6], [5], 4)).toEqual([]);
    const evicted = pagesToEvict(Array.from({ length: 30 }, (_, i) => i), [14, 15], 12);
    expect(evicted).toHaveLength(18);
    expect(evicted).not.toContain(14);
    expect(evicted).not.toContain(15);
    expect(evicted[0]).toBe(29);
  });
});
