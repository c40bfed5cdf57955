import { describe, expect, it } from 'vitest';
import { CancelledError } from '../../src/errors.js';
import { fitMixture, fitMixtureParallel, sweepMixtures, type DataMatrix, type FitResult } from '../../src/model/index.js';
import { restartStream } from '../../src/model/random.js';
import { fitSettings, referenceData, sameBits } from './support.js';

const faithful = referenceData('faithful'); // R's datasets::faithful (Azzalini & Bowman 1990)

/** Seeded three-group data, large enough (> one 65,536-row chunk) for the row-split path. */
function groups(rows: number): DataMatrix {
  const random = restartStream(5, 0);
  const values = new Float64Array(rows * 2);
  for (let row = 0; row < rows; row++) {
    const group = row % 3;
    values[row * 2] = group * 4 + (random.float() + random.float() - 1) * 2;
    values[row * 2 + 1] = group * group + (random.float() - 0.5) * 3;
  }
  return { values, rows, cols: 2 };
}

function expectSameFit(a: FitResult, b: FitResult): void {
  expect(b.logLikelihood).toBe(a.logLikelihood);
  expect(b.icl).toBe(a.icl);
  expect(b.iterations).toBe(a.iterations);
  expect(b.restartLogLikelihoods).toEqual(a.restartLogLikelihoods);
  expect(sameBits(a.model.means, b.model.means)).toBe(true);
  expect(sameBits(a.model.covariances, b.model.covariances)).toBe(true);
  expect(sameBits(a.model.weights, b.model.weights)).toBe(true);
}

describe('worker threads', () => {
  it('restarts spread over workers give the single-thread result bit for bit', async () => {
    const options = { ...fitSettings, components: 3, covarianceType: 'full' as const, restarts: 4, seed: 9, init: 'random' as const };
    expectSameFit(fitMixture(faithful, options), await fitMixtureParallel(faithful, { ...options, threads: 2 }));
  });

  it('E-steps split over workers by rows give the single-thread result bit for bit', async () => {
    const data = groups(70_000);
    const options = { ...fitSettings, components: 3, covarianceType: 'tied' as const, restarts: 1, seed: 2, maxIterations: 10 };
    const progress: number[] = [];
    const parallel = await fitMixtureParallel(data, { ...options, threads: 2, onProgress: (step) => progress.push(step.iteration) });
    expectSameFit(fitMixture(data, options), parallel);
    expect(progress[0]).toBe(0);
    expect(progress.at(-1)).toBe(parallel.iterations);
  });

  it('a sweep returns the table, the BIC winner, and cells equal to single fits', async () => {
    const seen = new Set<string>();
    const sweep = await sweepMixtures(faithful, {
      ...fitSettings,
      criterion: 'bic',
      componentRange: [1, 4],
      covarianceTypes: ['full', 'diag'],
      restarts: 2,
      threads: 2,
      onProgress: (progress) => seen.add(`${progress.covarianceType}/${progress.k}/${progress.restart}`),
    });
    expect(sweep.table.map((row) => `${row.covariance}${row.k}`)).toEqual(['full1', 'full2', 'full3', 'full4', 'diag1', 'diag2', 'diag3', 'diag4']);
    expect(seen.size).toBe(16);
    const lowest = Math.min(...sweep.table.map((row) => row.bic));
    expect(sweep.bestRow.bic).toBe(lowest);
    // On Old Faithful BIC prefers two full-covariance groups (the recorded scikit-learn sweep in test/reference agrees).
    expect([sweep.bestRow.covariance, sweep.bestRow.k]).toEqual(['full', 2]);
    for (const row of sweep.table) {
      const single = fitMixture(faithful, { ...fitSettings, components: row.k, covarianceType: row.covariance, restarts: 2 });
      expect(row.logLikelihood).toBe(single.logLikelihood);
      expect(row.icl).toBe(single.icl);
    }
    expectSameFit(fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'full', restarts: 2 }), sweep.best);
    const byIcl = await sweepMixtures(faithful, { ...fitSettings, componentRange: [1, 4], covarianceTypes: ['full'], restarts: 2, criterion: 'icl', threads: 0 });
    expect(byIcl.bestRow.icl).toBe(Math.min(...byIcl.table.map((row) => row.icl)));
  });

  it('stops promptly on abort with CancelledError', async () => {
    const controller = new AbortController();
    let started = 0;
    const running = sweepMixtures(groups(30_000), {
      ...fitSettings,
      criterion: 'bic',
      componentRange: [1, 8],
      covarianceTypes: ['full', 'diag', 'spherical', 'tied'],
      restarts: 3,
      threads: 2,
      tol: 0,
      maxIterations: 500,
      signal: controller.signal,
      onProgress: () => {
        if (++started === 5) controller.abort();
      },
    });
    const begun = Date.now();
    await expect(running).rejects.toBeInstanceOf(CancelledError);
    expect(Date.now() - begun).toBeLessThan(60_000); // the full sweep would take many minutes
  });

  it('stops on abort on the calling thread too (threads: 0)', async () => {
    const controller = new AbortController();
    const running = fitMixtureParallel(faithful, {
      ...fitSettings,
      components: 3,
      covarianceType: 'full',
      restarts: 4,
      tol: 0,
      maxIterations: 1000,
      threads: 0,
      signal: controller.signal,
      onProgress: (progress) => {
        if (progress.restart === 1 && progress.iteration === 3) controller.abort();
      },
    });
    await expect(running).rejects.toBeInstanceOf(CancelledError);
  });

  it('refuses a bad range before starting any thread', async () => {
    await expect(sweepMixtures(faithful, { ...fitSettings, criterion: 'bic', componentRange: [3, 2], covarianceTypes: ['full'] })).rejects.toThrow(/componentRange/);
    await expect(sweepMixtures(faithful, { ...fitSettings, criterion: 'bic', componentRange: [1, 200], covarianceTypes: ['full'] })).rejects.toThrow(/too few/);
  });
});
