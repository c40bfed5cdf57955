/**
 * Which customers an export lists (DESIGN.md §8, campaign lists). A customer is listed when they
 * are placed in a segment, not excluded by a review decision, in one of the chosen final
 * segments, reviewed only if reviewed customers are wanted, confident enough, and have given
 * marketing consent. Consent is checked last, so `suppressed` counts exactly the customers who
 * would have been on the list but did not consent (refused or unknown): they are never listed.
 */
import { InputError } from '../errors.js';
import type { ExportCustomerRow } from './source.js';

export interface CampaignFilter {
  /** Final segment names to list; null = every segment. */
  segments: ReadonlySet<string> | null;
  /** Model confidence at or above this (0 = no limit). Reviewed customers are placed by a person and pass. */
  minConfidence: number;
  /** List customers with a keep or move decision (exclude decisions are never listed). */
  includeReviewed: boolean;
}

export interface CampaignFilterInput {
  segments?: readonly string[] | null;
  minConfidence?: number;
  includeReviewed?: boolean;
}

export type SelectionOutcome =
  | 'listed'
  | 'tooNew'
  | 'excludedByReview'
  | 'otherSegment'
  | 'reviewedLeftOut'
  | 'belowConfidence'
  | 'noConsent'
  | 'unknownConsent';

/** How many customers ended in each outcome; `listed` is the number of rows written. */
export type SelectionTally = Record<SelectionOutcome, number>;

export function emptyTally(): SelectionTally {
  return {
    listed: 0,
    tooNew: 0,
    excludedByReview: 0,
    otherSegment: 0,
    reviewedLeftOut: 0,
    belowConfidence: 0,
    noConsent: 0,
    unknownConsent: 0,
  };
}

/** Customers left out for consent: refused plus unknown (the `suppressedNoConsent` figure). */
export function suppressedCount(tally: SelectionTally): number {
  return tally.noConsent + tally.unknownConsent;
}

/**
 * Checks the filter against the run's segment names; throws InputError naming the valid ones.
 * Segment names are matched exactly, after trimming what the user typed.
 */
export function resolveCampaignFilter(input: CampaignFilterInput, segmentNames: readonly string[]): CampaignFilter {
  const minConfidence = input.minConfidence ?? 0;
  if (!Number.isFinite(minConfidence) || minConfidence < 0 || minConfidence > 1) {
    throw new InputError(`The minimum confidence must be a number between 0 and 1; got ${input.minConfidence}.`);
  }
  let segments: Set<string> | null = null;
  if (input.segments && input.segments.length > 0) {
    const known = new Set(segmentNames);
    const wanted = input.segments.map((name) => name.trim());
    const unknown = wanted.filter((name) => !known.has(name));
    if (unknown.length > 0) {
      const listed = segmentNames.map((name) => `"${name}"`).join(', ');
      throw new InputError(
        `No segment named ${unknown.map((name) => `"${name}"`).join(', ')} in this run. The segments are: ${listed}.`,
        { unknownSegments: unknown, validSegments: [...segmentNames] },
      );
    }
    segments = new Set(wanted);
  }
  return { segments, minConfidence, includeReviewed: input.includeReviewed ?? true };
}

/** The outcome for one customer under the filter. */
export function selectCustomer(row: ExportCustomerRow, filter: CampaignFilter): SelectionOutcome {
  if (row.tooNew || row.finalSegmentName === null) return 'tooNew';
  if (row.excluded || row.decision === 'exclude') return 'excludedByReview';
  if (filter.segments !== null && !filter.segments.has(row.finalSegmentName)) return 'otherSegment';
  const reviewed = row.decision !== null;
  if (reviewed && !filter.includeReviewed) return 'reviewedLeftOut';
  if (!reviewed && filter.minConfidence > 0 && (row.confidence ?? 0) < filter.minConfidence) return 'belowConfidence';
  if (row.marketingConsent === 1) return 'listed';
  return row.marketingConsent === 0 ? 'noConsent' : 'unknownConsent';
}

/** Plain words for the overview's selection block. */
export function describeFilter(filter: CampaignFilter): { label: string; value: string }[] {
  return [
    { label: 'Segments listed', value: filter.segments === null ? 'all segments' : [...filter.segments].join('; ') },
    {
      label: 'Minimum confidence',
      value: filter.minConfidence > 0 ? `${filter.minConfidence} (customers placed by a review decision pass)` : 'none',
    },
    {
      label: 'Reviewed customers',
      value: filter.includeReviewed ? 'included (keep and move decisions)' : 'left out (any customer with a decision)',
    },
    { label: 'Always left out', value: 'customers excluded by review; customers without marketing consent or with unknown consent' },
  ];
}
