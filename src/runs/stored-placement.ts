/**
 * A stored run's customers as the segmenting step needs them (./segmenting.ts): every placed
 * customer's component posteriors, log density, spend and stored features, with their current
 * segment, in customer id order; and the customers the run did not place. Read by a regroup of
 * the run, and for the movement of its later runs against it.
 */
import type { Database } from 'better-sqlite3';
import { decodeFloat64 } from './blobs.js';
import { storedRun } from './read/stored-run.js';
import type { PlacedCustomers } from './segmenting.js';

export interface StoredPlacement {
  placed: PlacedCustomers;
  /** Each placed customer's segment as stored now. */
  labels: Int32Array;
  notPlaced: string[];
}

export function loadPlacement(db: Database, runId: number, onRow?: (done: number) => void): StoredPlacement {
  const run = storedRun(db, runId);
  const n = run.customers;
  const k = run.k;
  const customerIds: string[] = [];
  const notPlaced: string[] = [];
  const revenueCents = new Float64Array(n);
  const posteriors = new Float64Array(n * k);
  const logDensity = new Float64Array(n);
  const labels = new Int32Array(n);
  const columns = run.storedFeatures.map(() => new Float64Array(n));
  let p = 0;
  const rows = db
    .prepare('SELECT customer_id, segment_index, log_density, revenue_cents, features, posteriors FROM run_memberships WHERE run_id = ? ORDER BY customer_id')
    .raw()
    .iterate(runId) as Iterable<[string, number | null, number | null, number, Buffer, Buffer | null]>;
  for (const [customerId, segment, density, revenue, features, componentPosteriors] of rows) {
    if (segment === null) {
      notPlaced.push(customerId);
      continue;
    }
    customerIds.push(customerId);
    labels[p] = segment;
    revenueCents[p] = revenue;
    logDensity[p] = density ?? NaN;
    posteriors.set(decodeFloat64(componentPosteriors), p * k);
    const values = decodeFloat64(features);
    columns.forEach((column, j) => (column[p] = values[j]));
    p++;
    if (p % 50_000 === 0) onRow?.(p);
  }
  return {
    placed: { customerIds, revenueCents, features: run.storedFeatures, columns, posteriors, components: k, logDensity },
    labels,
    notPlaced,
  };
}
