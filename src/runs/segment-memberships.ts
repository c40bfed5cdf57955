/**
 * Customers' segment memberships from their component posteriors (DESIGN.md §5): a segment's
 * posterior is the sum of its components' posteriors; the customer's segment is the one of
 * highest posterior (the first on ties, as the combining's classification), confidence that
 * posterior, margin it minus the second highest.
 *
 * Shapes: component posteriors n × K row-major; the result's columns have n entries, segment
 * indices 0-based (second −1 when there is one segment, with margin 1 as for one component).
 */
import { segmentPosteriors, topTwo, type Segmentation } from '../model/index.js';

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
  const { top, second, confidence, margin } = topTwo(posteriors, rows, count);
  const secondProbability = Float64Array.from(second, (s, row) => (s >= 0 ? posteriors[row * count + s] : 0));
  return { rows, segments: count, posteriors, top, second, confidence, margin, secondProbability };
}
