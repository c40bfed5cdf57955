/**
 * The two passes of an export over a source's customers. The counting pass runs first because
 * the overview sheet, which carries the counts, must be written (and committed) before the
 * customer sheets in a streaming workbook. The writing pass hands each listed customer to a
 * writer and checks that it met exactly the customers the counting pass counted.
 */
import { throwIfAborted } from '../errors.js';
import { emptyTally, selectCustomer, type CampaignFilter, type SelectionTally } from './selection.js';
import type { ExportCustomerRow, ExportReviewRow, ExportSource } from './source.js';

export interface ExportProgress {
  phase: 'counting' | 'overview' | 'customers' | 'review' | 'movement' | 'finishing';
  /** Units done and total in this phase (customers for counting and customers). */
  done: number;
  total: number;
  message: string;
}

export interface PassOptions {
  signal?: AbortSignal;
  onProgress?: (progress: ExportProgress) => void;
}

export interface ExportPlan {
  tally: SelectionTally;
  /** Every customer the source holds (placed and too new). */
  customersSeen: number;
  /** Queued customers with marketing consent, in queue order: the review sheet. */
  reviewListed: ExportReviewRow[];
  /** Queued customers left off the review sheet for refused or unknown consent. */
  reviewSuppressed: number;
}

/** Customers between progress reports and cancel checks. */
const progressEvery = 10_000;

export async function planExport(source: ExportSource, filter: CampaignFilter, options: PassOptions = {}): Promise<ExportPlan> {
  const tally = emptyTally();
  let customersSeen = 0;
  for await (const row of source.customers()) {
    tally[selectCustomer(row, filter)]++;
    customersSeen++;
    if (customersSeen % progressEvery === 0) {
      throwIfAborted(options.signal);
      options.onProgress?.({ phase: 'counting', done: customersSeen, total: 0, message: `Counted ${customersSeen} customers` });
    }
  }
  throwIfAborted(options.signal);
  const reviewListed: ExportReviewRow[] = [];
  let reviewSuppressed = 0;
  for await (const row of source.reviewRows()) {
    if (row.marketingConsent === 1) reviewListed.push(row);
    else reviewSuppressed++;
  }
  throwIfAborted(options.signal);
  options.onProgress?.({ phase: 'counting', done: customersSeen, total: customersSeen, message: `Counted ${customersSeen} customers` });
  return { tally, customersSeen, reviewListed, reviewSuppressed };
}

/**
 * Calls `write` for every listed customer, in the source's order. Throws when the source no
 * longer gives what the counting pass saw (the run changed underneath the export).
 */
export async function streamListedCustomers(
  source: ExportSource,
  filter: CampaignFilter,
  plan: ExportPlan,
  write: (row: ExportCustomerRow) => Promise<void> | void,
  options: PassOptions = {},
): Promise<void> {
  const tally = emptyTally();
  let seen = 0;
  const total = plan.tally.listed;
  for await (const row of source.customers()) {
    const outcome = selectCustomer(row, filter);
    tally[outcome]++;
    seen++;
    if (seen % progressEvery === 0) throwIfAborted(options.signal);
    if (outcome === 'listed') {
      await write(row);
      if (tally.listed % progressEvery === 0) {
        options.onProgress?.({ phase: 'customers', done: tally.listed, total, message: `Wrote ${tally.listed} of ${total} customers` });
      }
    }
  }
  throwIfAborted(options.signal);
  const changed = seen !== plan.customersSeen || (Object.keys(tally) as (keyof SelectionTally)[]).some((key) => tally[key] !== plan.tally[key]);
  if (changed) throw new Error('The run changed while it was being exported; nothing was written. Run the export again.');
  options.onProgress?.({ phase: 'customers', done: tally.listed, total, message: `Wrote ${total} customers` });
}
