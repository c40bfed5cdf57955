import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
  combineComponents,
  mergeSegments,
  segmentationAtLevel,
  segmentPosteriors,
  segmentsWhileAmbiguous,
  splitSegment,
  type Segmentation,
} from '../../src/model/index.js';
import { inputErrorOf } from './support.js';

/**
 * mclust's clustCombi (Baudry, Raftery, Celeux, Lo & Gottardo 2010, J. Comput. Graph. Stat.
 * 19(2), 332–353), recorded by test/reference/record-mclust.R with Debian's r-cran-mclust 6.0.0
 * on its published examples (mclust's Baudry_etal_2010_JCGS_examples: ex4.1, ex4.2, ex4.3,
 * ex4.4.1, ex4.4.2, Test1D) and on R's faithful and iris: the posteriors it started from, the
 * pair merged at each step, the entropy and the classification at every level, and the number of
 * clusters chosen by clustCombiOptim and by the same fit against the cumulative count of merged
 * observations (entPlot, "normalized").
 */
interface RecordedExample {
  name: string;
  source: string;
  model: string;
  rows: number;
  components: number;
  posteriors: number[][];
  levels: { clusters: number; merged: [number, number] | null; entropy: number; classification: number[] }[];
  changePointClusters: number;
  mergedCounts: number[];
  changePointMergedObservations: number | null;
}

const recorded = JSON.parse(readFileSync(new URL('../reference/mclust-combining.json', import.meta.url), 'utf8')) as {
  mclustVersion: string;
  examples: RecordedExample[];
};

describe(`combining components by entropy, against mclust ${recorded.mclustVersion} clustCombi`, () => {
  it('covers the published examples and faithful and iris', () => {
    expect(recorded.examples.map((example) => example.name)).toEqual(['ex4.1', 'ex4.2', 'ex4.3', 'ex4.4.1', 'ex4.4.2', 'Test1D', 'faithful', 'iris']);
  });

  for (const example of recorded.examples) {
    it(`${example.name} (${example.source}, ${example.model} with ${example.components} components): same merges, entropies and classifications at every level`, () => {
      const posteriors = Float64Array.from(example.posteriors.flat());
      const hierarchy = combineComponents(posteriors, example.rows, example.components);
      expect(hierarchy.levels).toHaveLength(example.components);
      for (const level of example.levels) {
        const ours = hierarchy.levels[example.components - level.clusters];
        expect(ours.segmentCount).toBe(level.clusters);
        // mclust numbers groups from 1; ours from 0.
        expect(ours.merged?.map((group) => group + 1) ?? null, `merge into ${level.clusters}`).toEqual(level.merged);
        expect(ours.entropy).toBeCloseTo(level.entropy, 9);
        expect(Array.from(ours.classification, (segment) => segment + 1), `classification at ${level.clusters}`).toEqual(level.classification);
      }
      // Merged-row counts as entPlot counts them (mclust's mergedn[K] for K = 1 … G − 1).
      expect(hierarchy.levels.slice(1).map((level) => level.mergedRows).reverse()).toEqual(example.mergedCounts);
      expect(hierarchy.chosenSegments).toBe(example.changePointClusters);
      if (example.changePointMergedObservations !== null) expect(hierarchy.chosenSegmentsByMergedRows).toBe(example.changePointMergedObservations);
    });
  }

  it('makes each level\'s segment posteriors the sums of its components\' posteriors', () => {
    const example = recorded.examples.find((entry) => entry.name === 'ex4.1')!;
    const posteriors = Float64Array.from(example.posteriors.flat());
    const hierarchy = combineComponents(posteriors, example.rows, example.components);
    for (const level of hierarchy.levels) {
      const summed = segmentPosteriors(posteriors, example.rows, level.segmentation);
      for (let row = 0; row < example.rows; row++) {
        let total = 0;
        for (let s = 0; s < level.segmentCount; s++) total += summed[row * level.segmentCount + s];
        expect(total).toBeCloseTo(1, 12);
      }
      // Every component is in exactly one segment.
      expect(level.segmentation.segments.flat().sort((a, b) => a - b)).toEqual(Array.from({ length: example.components }, (_, c) => c));
    }
  });
});

describe('combining worked by hand', () => {
  // Three components, four rows. Components 0 and 1 overlap (rows 0–1 split between them),
  // component 2 stands apart: merging 0 and 1 removes the most entropy.
  //   row 0: 0.5 0.5 0     row 1: 0.4 0.6 0     row 2: 0 0.1 0.9     row 3: 0 0 1
  const posteriors = Float64Array.from([0.5, 0.5, 0, 0.4, 0.6, 0, 0, 0.1, 0.9, 0, 0, 1]);

  it('merges the overlapping pair first, and its entropies are the hand-worked ones', () => {
    const hierarchy = combineComponents(posteriors, 4, 3);
    const xlogx = (value: number) => (value > 0 ? value * Math.log(value) : 0);
    // Level 3: −Σ t log t = −(2·0.5 ln 0.5 + 0.4 ln 0.4 + 0.6 ln 0.6 + 0.1 ln 0.1 + 0.9 ln 0.9).
    const three = -(2 * xlogx(0.5) + xlogx(0.4) + xlogx(0.6) + xlogx(0.1) + xlogx(0.9));
    expect(hierarchy.levels[0].entropy).toBeCloseTo(three, 12);
    // Gains: merge (0, 1) = 2·0.5 ln 2 + (−0.4 ln 0.4 − 0.6 ln 0.6) = 1.3863; merge (1, 2) only
    // row 2: 1 ln 1 − 0.1 ln 0.1 − 0.9 ln 0.9 = 0.3251; merge (0, 2) = 0.
    expect(hierarchy.levels[1].merged).toEqual([0, 1]);
    expect(hierarchy.levels[1].segmentation.segments).toEqual([[0, 1], [2]]);
    // Level 2: rows 0, 1 and 3 are certain; row 2 splits 0.1 / 0.9.
    expect(hierarchy.levels[1].entropy).toBeCloseTo(-(xlogx(0.1) + xlogx(0.9)), 12);
    expect(Array.from(hierarchy.levels[1].classification)).toEqual([0, 0, 1, 1]);
    // Rows 0 and 1 were classified to components 0 (0.5 / 0.5 goes to the first) and 1, the two merged.
    expect(hierarchy.levels[1].mergedRows).toBe(2);
    expect(hierarchy.levels[2].entropy).toBe(0);
    // Three levels: the two-piece fit's only possible change point is at 2 segments.
    expect(hierarchy.chosenSegments).toBe(2);
  });

  it('auto merges only while the merged rows are unsure between the two groups', () => {
    const xlogx = (value: number) => (value > 0 ? value * Math.log(value) : 0);
    // Components 0 and 1 overlap (rows split 50 / 50 or 60 / 40 between them); component 2 is told
    // apart from them by rows at 97 / 3 at worst; component 3 stands apart.
    const rows = [
      [0.5, 0.5, 0, 0],
      [0.6, 0.4, 0, 0],
      [0.4, 0.6, 0, 0],
      [0.97, 0, 0.03, 0],
      [0, 0, 1, 0],
      [0, 0.03, 0.97, 0],
      [0, 0, 0, 1],
    ];
    const hierarchy = combineComponents(Float64Array.from(rows.flat()), rows.length, 4);
    // The first merge joins 0 and 1: rows 0–3 were theirs, each loses its whole 0/1 split.
    expect(hierarchy.levels[1].segmentation.segments).toContainEqual([0, 1]);
    const firstDrop = (hierarchy.levels[0].entropy - hierarchy.levels[1].entropy) / hierarchy.levels[1].mergedRows;
    expect(firstDrop).toBeCloseTo((-xlogx(0.5) * 2 - (xlogx(0.6) + xlogx(0.4)) * 2) / 4, 12);
    // The next merge, of {0, 1} with 2, removes 97 / 3 splits only (0.135 nats a row): auto stops at 3.
    const secondDrop = (hierarchy.levels[1].entropy - hierarchy.levels[2].entropy) / hierarchy.levels[2].mergedRows;
    expect(secondDrop).toBeLessThan(0.2);
    expect(segmentsWhileAmbiguous(hierarchy, 0.2)).toBe(3);
    // A lower bar lets it merge on; no bar above every drop merges nothing.
    expect(segmentsWhileAmbiguous(hierarchy, secondDrop / 2)).toBeLessThan(3);
    expect(segmentsWhileAmbiguous(hierarchy, firstDrop + 0.01)).toBe(4);
    expect(inputErrorOf(() => segmentsWhileAmbiguous(hierarchy, 0)).message).toMatch(/must be positive/);
  });

  it('lets the analyst pick a level, merge two segments and split one back, and refuses what cannot be', () => {
    const hierarchy = combineComponents(posteriors, 4, 3);
    const two = segmentationAtLevel(hierarchy, 2);
    expect(two.segments).toEqual([[0, 1], [2]]);
    expect(segmentationAtLevel(hierarchy, 3).segments).toEqual([[0], [1], [2]]);
    expect(inputErrorOf(() => segmentationAtLevel(hierarchy, 4)).message).toMatch(/Cannot make 4 segments from 3 components/);
    expect(inputErrorOf(() => segmentationAtLevel(hierarchy, 0)).message).toMatch(/whole number ≥ 1/);

    const merged = mergeSegments({ components: 3, segments: [[0], [1], [2]] }, 2, 0);
    expect(merged.segments).toEqual([[0, 2], [1]]);
    expect(inputErrorOf(() => mergeSegments(merged, 1, 1)).message).toMatch(/with itself/);
    expect(inputErrorOf(() => mergeSegments(merged, 0, 2)).message).toMatch(/Segment 2 does not exist/);

    const split = splitSegment(two, 0, [[1], [0]]);
    expect(split.segments).toEqual([[1], [0], [2]]);
    expect(segmentPosteriors(posteriors, 4, split).subarray(0, 3)).toEqual(Float64Array.from([0.5, 0.5, 0]));
    expect(inputErrorOf(() => splitSegment(two, 0, [[0, 1], []])).message).toMatch(/holds no component: a split may not leave a segment empty/);
    expect(inputErrorOf(() => splitSegment(two, 0, [[0], [2]])).message).toMatch(/Component 2 is not in segment 0/);
    expect(inputErrorOf(() => splitSegment(two, 0, [[0], [0]])).message).toMatch(/more than one group/);
    expect(inputErrorOf(() => splitSegment(two, 0, [[0, 1]])).message).toMatch(/at least two groups/);
    const partial: Segmentation = { components: 3, segments: [[0, 1, 2]] };
    expect(inputErrorOf(() => splitSegment(partial, 0, [[0], [1]])).message).toMatch(/leaves component 2 of segment 0 in no group/);
    expect(inputErrorOf(() => segmentPosteriors(posteriors, 4, { components: 3, segments: [[0], [1]] })).message).toMatch(/Component 2 is in no segment/);
  });

  it('refuses posteriors that are not probabilities or do not fit the shape', () => {
    expect(inputErrorOf(() => combineComponents(Float64Array.from([0.5, 0.5, 2, -1]), 2, 2)).message).toMatch(/not a probability/);
    expect(inputErrorOf(() => combineComponents(new Float64Array(5), 2, 3)).message).toMatch(/rows × components = 6/);
  });
});
