/**
 * The runs core called as the API's handlers call it: every input through the contract's schema
 * first (defaults filled in, refusals worded as the app words them), the data-dependent run
 * settings made explicit as the startRun task makes them.
 */
import type { z } from 'zod';
import { parseInput } from '../../src/api/api-errors.js';
import {
  acceptUnqueuedInput,
  borderlineInput,
  decideReviewInput,
  membershipsPageInput,
  regroupSegmentsInput,
  renameSegmentInput,
  reviewQueueInput,
  startRunInput,
  type MembershipRow,
  type StartRunInput,
} from '../../src/api/contract.js';
import { runSettingsFor } from '../../src/api/long-tasks.js';
import { borderlinePage } from '../../src/runs/read/borderline.js';
import { membershipsPage } from '../../src/runs/read/memberships.js';
import { reviewQueuePage } from '../../src/runs/read/review-queue.js';
import { renameSegment } from '../../src/runs/rename-segment.js';
import { acceptUnqueued, decideReview } from '../../src/runs/review-decisions.js';
import { regroupSegments } from '../../src/runs/regroup.js';
import { runSegmentation } from '../../src/runs/run.js';
import type { RunOptions } from '../../src/runs/types.js';
import type { Database } from '../../src/store/database.js';

export const runSettings = (db: Database, input: StartRunInput) => runSettingsFor(db, parseInput('startRun', startRunInput, input));
export const runMonth = (db: Database, input: StartRunInput, options?: RunOptions) => runSegmentation(db, runSettings(db, input), options);

export const decide = (db: Database, input: z.input<typeof decideReviewInput>) => decideReview(db, parseInput('decideReview', decideReviewInput, input));
export const rename = (db: Database, input: z.input<typeof renameSegmentInput>) => renameSegment(db, parseInput('renameSegment', renameSegmentInput, input));
export const memberships = (db: Database, input: z.input<typeof membershipsPageInput>) =>
  membershipsPage(db, parseInput('membershipsPage', membershipsPageInput, input));
export const reviewQueue = (db: Database, input: z.input<typeof reviewQueueInput>) => reviewQueuePage(db, parseInput('reviewQueue', reviewQueueInput, input));
export const borderline = (db: Database, input: z.input<typeof borderlineInput>) => borderlinePage(db, parseInput('borderline', borderlineInput, input));

/** Every customer of a run (placed and too new), a page at a time, in customer id order. */
export function allMemberships(db: Database, runId: number): MembershipRow[] {
  const rows: MembershipRow[] = [];
  for (let offset = 0; ; offset += 1000) {
    const page = memberships(db, { runId, offset, limit: 1000, sortBy: 'customerId', descending: false });
    rows.push(...page.rows);
    if (rows.length >= page.total || page.rows.length === 0) return rows;
  }
}

/** Every queued customer, a page at a time, by spend at stake. */
export function wholeQueue(db: Database, runId: number) {
  const rows = [];
  for (let offset = 0; ; offset += 1000) {
    const page = reviewQueue(db, { runId, offset, limit: 1000 });
    rows.push(...page.rows);
    if (rows.length >= page.total || page.rows.length === 0) return rows;
  }
}

export const regroup = (db: Database, input: z.input<typeof regroupSegmentsInput>) => regroupSegments(db, parseInput('regroupSegments', regroupSegmentsInput, input));
export const acceptRest = (db: Database, input: z.input<typeof acceptUnqueuedInput>) => acceptUnqueued(db, parseInput('acceptUnqueued', acceptUnqueuedInput, input));
