/**
 * The display sample of a run: a seeded uniform sample (without replacement) of up to 20,000
 * placed customers, drawn once when the run is stored and kept in `run_samples` in random order
 * with the columns the charts need (model segment, stored features). Scatter plots and
 * distributions read a prefix of it, so their cost is the sample's and never grows with the
 * number of customers (DESIGN.md §9, §11: the Segments screen at 1,000,000).
 */
import { restartStream, uniformSampleIndexes } from '../model/index.js';

/** The largest sample the API serves (segmentSample's limit). */
export const DISPLAY_SAMPLE_SIZE = 20_000;

/** Customers a per-segment distribution is binned over: plenty for 40 bins, and the same work at any size. */
export const DISTRIBUTION_SAMPLE_SIZE = 10_000;

/** Mixed into the seed so the display sample does not replay the fit's restart streams. */
const SAMPLE_SALT = 0x5a3c96e1;

/**
 * Indexes 0..count-1 of a uniform sample of min(count, size) items in random order, so any prefix
 * of it is itself a uniform sample.
 */
export function drawDisplaySample(count: number, size: number, seed: number): Int32Array {
  return uniformSampleIndexes(count, size, restartStream((seed ^ SAMPLE_SALT) | 0, 0));
}

/** For each of `count` placed customers, its position in the display sample, or -1 when not drawn. */
export function displaySamplePositions(count: number, seed: number): Int32Array {
  const positions = new Int32Array(count).fill(-1);
  drawDisplaySample(count, DISPLAY_SAMPLE_SIZE, seed).forEach((index, position) => (positions[index] = position));
  return positions;
}
