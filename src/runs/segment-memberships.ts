/**
 * Customers' segment memberships from their component posteriors (DESIGN.md §5): a segment's
 * posterior is the sum of its components' posteriors; the customer's segment is the one of
 * highest posterior (the first on ties, as the combining's classification), confidence that
 * posterior, margin it minus the second highest.
 *
 * Shapes: component posteriors n × K row-major; the result's columns have n entries, segment
 * indices 0-based (second −1 when there is one segment, with margin 1 as for one component).
 */
import { segmentPosteriors, type Segmentation } from '../model/index.js';

export interface SegmentMemberships {
  rows: number;
  segments: number;
  /** n × S segment posteriors. */
  posteriors: Float64Array;
  top: Int32Array;
  second: Int32Array;
  confidence: Float64Array;
  margin: Float64Array;
  secondProbability: Float64Array;
}

export function segmentMemberships(componentPosteriors: Float64Array, rows: number, segmentation: Segmentation): SegmentMemberships {
  const count = segmentation.segments.length;
  const posteriors = segmentPosteriors(componentPosteriors, rows, segmentation);
  const top = new Int32Array(rows);
  const second = new Int32Array(rows).fill(-1);
  const confidence = new Float64Array(rows);
  const margin = new Float64Array(rows);
  const secondProbability = new Float64Array(rows);
  for (let row = 0; row < rows; row++) {
    let best = 0;
    let runnerUp = -1;
    for (let s = 1; s < count; s++) {
      const value = posteriors[row * count + s];
      if (value > posteriors[row * count + best]) {
        runnerUp = best;
        best = s;
      } else if (runnerUp < 0 || value > posteriors[row * count + runnerUp]) {
        runnerUp = s;
      }
    }
    if (count > 1 && runnerUp < 0) runnerUp = best === 0 ? 1 : 0;
    top[row] = best;
    second[row] = runnerUp;
    confidence[row] = posteriors[row * count + best];
    secondProbability[row] = runnerUp >= 0 ? posteriors[row * count + runnerUp] : 0;
    margin[row] = runnerUp >= 0 ? confidence[row] - secondProbability[row] : 1;
  }
  return { rows, segments: count, posteriors, top, second, confidence, margin, secondProbability };
}
