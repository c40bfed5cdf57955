/**
 * Review queue rules (DESIGN.md §7): who is queued and why, what a decision makes of the final
 * segment, and which decisions carry over to next month's run.
 */
import type { ReviewAction } from '../api/contract.js';

/** Why a customer is queued, as bits of the stored `review` column. */
export const REVIEW_BORDERLINE = 1;
export const REVIEW_ATYPICAL = 2;
export const REVIEW_MOVER = 4;

export type ReviewReason = 'borderline' | 'atypical' | 'mover';

export function reviewMask(borderline: boolean, atypical: boolean, lowConfidenceMover: boolean): number {
  return (borderline ? REVIEW_BORDERLINE : 0) | (atypical ? REVIEW_ATYPICAL : 0) | (lowConfidenceMover ? REVIEW_MOVER : 0);
}

export function reviewReasons(mask: number): ReviewReason[] {
  const reasons: ReviewReason[] = [];
  if (mask & REVIEW_BORDERLINE) reasons.push('borderline');
  if (mask & REVIEW_ATYPICAL) reasons.push('atypical');
  if (mask & REVIEW_MOVER) reasons.push('mover');
  return reasons;
}

/**
 * How uncertain a flagged customer is, in [0, 1], for the queue's order (what a decision is
 * worth = spend at stake × this): 1 − confidence for a borderline customer or a mover (the chance
 * the model's segment is wrong); for a customer who is only atypical, how far below the atypical
 * cut their density sits, 1 − exp(logDensity − cut) = 1 − density / density at the cut (0 at the
 * cut, towards 1 far below it). Where both apply, the larger.
 */
export function reviewUncertainty(mask: number, confidence: number, logDensity: number, atypicalCut: number | null): number {
  let uncertainty = 0;
  if (mask & (REVIEW_BORDERLINE | REVIEW_MOVER)) uncertainty = 1 - confidence;
  if (mask & REVIEW_ATYPICAL && atypicalCut !== null && Number.isFinite(atypicalCut) && logDensity < atypicalCut) {
    uncertainty = Math.max(uncertainty, 1 - Math.exp(logDensity - atypicalCut));
  }
  return Math.min(1, Math.max(0, uncertainty));
}

/** What a decision is worth: spend at stake (net window spend, EUR, none when negative) × uncertainty. */
export function reviewValue(revenueEur: number, uncertainty: number): number {
  return Math.max(0, revenueEur) * uncertainty;
}

/**
 * The capacity-limited queue: of the flagged customers (mask > 0), the `capacity` whose decision
 * is worth most (ties: the smaller customer id first, as the queue lists them); 1 marks them.
 */
export function queueByValue(mask: Uint8Array, value: Float64Array, customerIds: readonly string[], capacity: number): Uint8Array {
  const flagged: number[] = [];
  for (let p = 0; p < mask.length; p++) if (mask[p] > 0) flagged.push(p);
  flagged.sort((a, b) => value[b] - value[a] || (customerIds[a] < customerIds[b] ? -1 : customerIds[a] > customerIds[b] ? 1 : 0));
  const queued = new Uint8Array(mask.length);
  for (const p of flagged.slice(0, capacity)) queued[p] = 1;
  return queued;
}

/** A mover worth a look: placed in a different segment (by key) than last month, and unsure now. */
export function isLowConfidenceMover(previousKey: string | null, currentKey: string, confidence: number, threshold: number | null): boolean {
  return threshold !== null && previousKey !== null && previousKey !== currentKey && confidence < threshold;
}

export interface StoredDecision {
  action: ReviewAction;
  segmentKey: string | null;
}

/**
 * The final segment: the decision's where one exists and its segment is in this run (keep → the
 * confirmed segment, move → the target), else the model's. `exclude` keeps the model segment and
 * marks the customer as excluded from campaigns.
 */
export function finalSegmentKey(modelKey: string | null, decision: StoredDecision | null, keysInRun: ReadonlySet<string>): {
  key: string | null;
  excluded: boolean;
} {
  if (!decision) return { key: modelKey, excluded: false };
  if (decision.action === 'exclude') return { key: modelKey, excluded: true };
  if (decision.segmentKey !== null && keysInRun.has(decision.segmentKey)) return { key: decision.segmentKey, excluded: false };
  return { key: modelKey, excluded: false };
}

/**
 * Whether a decision of the parent run carries into the new run for a customer placed there:
 * exclusions always do; keep and move only while their segment still exists.
 */
export function carriesOver(decision: StoredDecision, keysInRun: ReadonlySet<string>): boolean {
  if (decision.action === 'exclude') return true;
  return decision.segmentKey !== null && keysInRun.has(decision.segmentKey);
}
