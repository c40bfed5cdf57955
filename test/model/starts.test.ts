import { describe, expect, it } from 'vitest';
import { agglomerate, AGGLOMERATION_SAMPLE, cutTree, sampleRows } from '../../src/model/agglomeration.js';
import { initialLabels, RANDOM_PARTITION_ROWS_PER_COMPONENT, startMethodOf } from '../../src/model/init.js';
import { adjustedRandIndex, fitMixture, restartStream, scoreRows, type DataMatrix } from '../../src/model/index.js';
import { fitSettings, referenceData } from './support.js';

/** Seeded data: three well-separated 2-D groups, the group of row i is i % 3. */
function threeGroups(rows: number, seed: number): { data: DataMatrix; truth: Int32Array } {
  const random = restartStream(seed, 0);
  const values = new Float64Array(rows * 2);
  const truth = new Int32Array(rows);
  for (let row = 0; row < rows; row++) {
    const group = row % 3;
    truth[row] = group;
    values[row * 2] = [0, 6, 0][group] + random.float() + random.float() - 1;
    values[row * 2 + 1] = [0, 0, 6][group] + (random.float() + random.float() - 1) * 2;
  }
  return { data: { values, rows, cols: 2 }, truth };
}

describe('starts that differ in kind', () => {
  it('the mixed default starts with hierarchical agglomeration, then alternates k-means and random partitions', () => {
    expect([0, 1, 2, 3, 4, 5].map((restart) => startMethodOf('mixed', restart))).toEqual([
      'hierarchical',
      'kmeans',
      'random-partition',
      'kmeans',
      'random-partition',
      'kmeans',
    ]);
    expect(startMethodOf('kmeans++', 0)).toBe('kmeans++');
    const fit = fitMixture(referenceData('iris'), { ...fitSettings, components: 3, covarianceType: 'full' });
    expect(fit.restartStarts).toEqual(['hierarchical', 'kmeans', 'random-partition', 'kmeans', 'random-partition']);
  });

  it('a random partition deals a seeded random sample of 10 rows per component out evenly, and leaves the rest unlabelled', () => {
    const { data } = threeGroups(3000, 1);
    const labels = (seed: number) =>
      initialLabels(data.values, data.rows, 2, 4, 'random-partition', restartStream(seed, 0), () => {
        throw new Error('not hierarchical');
      });
    const first = labels(7);
    const counts = [0, 0, 0, 0];
    first.forEach((label) => label >= 0 && counts[label]++);
    expect(counts).toEqual([RANDOM_PARTITION_ROWS_PER_COMPONENT, RANDOM_PARTITION_ROWS_PER_COMPONENT, RANDOM_PARTITION_ROWS_PER_COMPONENT, RANDOM_PARTITION_ROWS_PER_COMPONENT]);
    expect(first.filter((label) => label < 0)).toHaveLength(3000 - 40);
    expect(Array.from(labels(7))).toEqual(Array.from(first));
    expect(Array.from(labels(8))).not.toEqual(Array.from(first));
  });

  it('the agglomeration tree is nested: each cut refines the one with fewer groups', () => {
    const data = referenceData('iris');
    const tree = agglomerate(data.values, data.cols, Int32Array.from({ length: data.rows }, (_, row) => row));
    expect(tree.groups).toBe(data.rows - 1); // iris has one duplicated row (rows 102 and 143)
    for (let k = 1; k < 8; k++) {
      const coarse = cutTree(tree, k);
      const fine = cutTree(tree, k + 1);
      expect(new Set(fine).size).toBe(k + 1);
      const parentOf = new Map<number, number>();
      fine.forEach((label, row) => {
        expect(parentOf.get(label) ?? coarse[row]).toBe(coarse[row]);
        parentOf.set(label, coarse[row]);
      });
    }
  });

  it(`on more than ${AGGLOMERATION_SAMPLE} rows agglomerates a seeded sample of ${AGGLOMERATION_SAMPLE} and starts EM from its partition`, () => {
    const { data, truth } = threeGroups(9000, 3);
    const sample = sampleRows(data.rows, AGGLOMERATION_SAMPLE, restartStream(5, 0));
    expect(new Set(sample).size).toBe(AGGLOMERATION_SAMPLE);
    expect(Array.from(sampleRows(data.rows, AGGLOMERATION_SAMPLE, restartStream(5, 0)))).toEqual(Array.from(sample));
    // The start (the sample's partition, every other row unlabelled) already finds the groups.
    const tree = agglomerate(data.values, 2, sample.sort());
    const labels = initialLabels(data.values, data.rows, 2, 3, 'hierarchical', restartStream(5, 0), () => tree);
    const labelled = labels.filter((label) => label >= 0);
    expect(labelled).toHaveLength(AGGLOMERATION_SAMPLE);
    const truthOfLabelled = Int32Array.from(truth.filter((_, row) => labels[row] >= 0));
    expect(adjustedRandIndex(labelled, truthOfLabelled)).toBeGreaterThan(0.95);
    // EM from it (restart 0 samples with stream 0 of seed 5, as above) converges on all rows.
    const fit = fitMixture(data, { ...fitSettings, components: 3, covarianceType: 'full', init: 'hierarchical', restarts: 1, seed: 5 });
    expect(fit.refused).toBeNull();
    expect(fit.restartStarts).toEqual(['hierarchical']);
    const grouped = scoreRows(fit.model, data).topSegment;
    expect(adjustedRandIndex(grouped, truth)).toBeGreaterThan(0.95);
  });
});
