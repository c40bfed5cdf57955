/**
 * In-memory export sources for the writer tests: explicit customer rows, segment table derived
 * from them, optional review queue and movement. The rows are test inputs; what a test checks is
 * what an independent reader (openpyxl, csv-parse) finds in the written file.
 */
import type { ExportCustomerRow, ExportMovement, ExportReviewRow, ExportRunHeader, ExportSource, FeatureColumn } from '../../src/export/source.js';
import { featureColumn } from '../../src/export/columns.js';

export const segmentNames = ['Tier 1 — highest spend', 'Tier 2', 'Tier 3 — lowest spend'];

export function customer(customerId: string, overrides: Partial<ExportCustomerRow> = {}): ExportCustomerRow {
  return {
    customerId,
    finalSegmentName: segmentNames[0],
    modelSegmentName: segmentNames[0],
    confidence: 0.95,
    secondSegmentName: segmentNames[1],
    secondProbability: 0.04,
    borderline: false,
    atypical: false,
    tooNew: false,
    excluded: false,
    decision: null,
    marketingConsent: 1,
    revenue: 1200.5,
    features: { spend_per_month: 100.04, visits_per_month: 6.5, average_basket: 15.39 },
    ...overrides,
  };
}

/** A varied set: every segment, flags, decisions and all three consent states, in id order. */
export function variedCustomers(count: number): ExportCustomerRow[] {
  return Array.from({ length: count }, (_, index) => {
    const segment = segmentNames[index % 3];
    const tooNew = index % 17 === 0;
    const decision = index % 11 === 0 ? 'keep' : index % 13 === 0 ? 'move' : index % 19 === 0 ? 'exclude' : null;
    return customer(`C${String(index).padStart(6, '0')}`, {
      finalSegmentName: tooNew ? null : decision === 'move' ? segmentNames[(index + 1) % 3] : segment,
      modelSegmentName: tooNew ? null : segment,
      confidence: tooNew ? null : 0.5 + (index % 50) / 100,
      secondSegmentName: tooNew ? null : segmentNames[(index + 1) % 3],
      secondProbability: tooNew ? null : (50 - (index % 50)) / 100 / 2,
      borderline: !tooNew && index % 5 === 0,
      atypical: !tooNew && index % 23 === 0,
      tooNew,
      excluded: decision === 'exclude',
      decision: tooNew ? null : decision,
      marketingConsent: index % 7 === 0 ? 0 : index % 9 === 0 ? null : 1,
      revenue: index % 29 === 0 ? -12.5 : 100 + index * 3.25,
      features: { spend_per_month: index % 29 === 0 ? -1.04 : 10 + index / 4, visits_per_month: 1 + (index % 12), average_basket: index % 31 === 0 ? null : 20 + (index % 40) },
    });
  });
}

export interface MemorySourceParts {
  customers: ExportCustomerRow[];
  review?: ExportReviewRow[];
  movement?: ExportMovement | null;
}

/** The default features of a run, as columns (spend per month, visit rate, basket size). */
export const defaultFeatureColumns: FeatureColumn[] = ['spend_per_month', 'visits_per_month', 'average_basket'].map(featureColumn);

/** A run header for an invented run 7 of the demo chain, with the given counts. */
export function inventedRunHeader(counts: ExportRunHeader['counts'], parentRunId: number | null): ExportRunHeader {
  return {
    chain: 'Larkmoor Fresh Markets',
    database: null,
    runId: 7,
    parentRunId,
    createdAt: '2026-12-01T09:30:00.000Z',
    asOf: '2026-11-30',
    windowMonths: 12,
    windowStart: '2025-12-01',
    features: defaultFeatureColumns.map((column) => ({ name: column.key, label: column.header, transform: 'log1p, z-scored' })),
    model: [
      { label: 'Segments', value: 3, kind: 'count' },
      { label: 'Gaussian components (k)', value: 4, kind: 'count' },
      { label: 'Covariance structure', value: 'full' },
    ],
    counts,
    warnings: [],
  };
}

export function memorySource(parts: MemorySourceParts): ExportSource {
  const placed = parts.customers.filter((row) => !row.tooNew);
  const totalRevenue = placed.reduce((sum, row) => sum + row.revenue, 0);
  const features = defaultFeatureColumns;
  return {
    header: inventedRunHeader(
      {
        placed: placed.length,
        tooNew: parts.customers.length - placed.length,
        borderline: placed.filter((row) => row.borderline).length,
        atypical: placed.filter((row) => row.atypical).length,
      },
      parts.movement ? parts.movement.parentRunId : null,
    ),
    segments: segmentNames.map((name) => {
      const members = placed.filter((row) => row.modelSegmentName === name);
      const revenue = members.reduce((sum, row) => sum + row.revenue, 0);
      return {
        name,
        customers: members.length,
        share: placed.length ? members.length / placed.length : 0,
        revenue,
        revenueShare: totalRevenue ? revenue / totalRevenue : 0,
        medians: { spend_per_month: 50, visits_per_month: 4, average_basket: 22.5 },
      };
    }),
    medianColumns: features,
    customerFeatureColumns: features,
    customers: () => parts.customers,
    reviewRows: () => parts.review ?? [],
    movement: parts.movement ?? null,
  };
}
