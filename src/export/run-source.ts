/**
 * An ExportSource over a stored run: the run's header, segment profiles, movement and review
 * queue from the runs core's reads (src/runs/read), and its customers through one prepared
 * cursor (`iterateRunCustomers`), so a million customers stream without being held in memory.
 */
import type { Database } from 'better-sqlite3';
import { basename } from 'node:path';
import { featureLabel } from '../features/definitions.js';
import { describeTransform } from '../features/transforms.js';
import { featureWindow } from '../features/window.js';
import type { ReviewItem, RunDetail } from '../api/contract.js';
import { iterateRunCustomers } from '../runs/read/export-customers.js';
import { movementOf } from '../runs/read/movement.js';
import { everyReviewItem } from '../runs/read/review-queue.js';
import { getRunDetail } from '../runs/read/run-detail.js';
import { listSegments } from '../runs/read/segments.js';
import { isoDateFromDay } from '../store/days.js';
import { getCustomer } from '../store/customers-repo.js';
import { featureColumn } from './columns.js';
import type { ExportReviewRow, ExportRunHeader, ExportSource, OverviewEntry } from './source.js';

/** "2 to 8", "fixed at 5", or the parent's model for a rescore. */
function searchedWords(detail: RunDetail): string {
  const searched = detail.componentsSearched;
  if (searched === null) return "the parent run's model";
  return searched.from === searched.to ? `fixed at ${searched.from}` : `${searched.from} to ${searched.to}`;
}

function modelEntries(detail: RunDetail): OverviewEntry[] {
  const { settings } = detail;
  const threshold = (value: number | null) => (value === null ? 'off' : value);
  return [
    { label: 'Mode', value: settings.mode },
    { label: 'Feature source', value: settings.source },
    { label: 'Segments', value: detail.segmentCount, kind: 'count' },
    { label: 'Gaussian components (k)', value: detail.k, kind: 'count' },
    { label: 'k searched', value: searchedWords(detail) },
    { label: 'Covariance structure', value: detail.covariance },
    { label: 'Covariance searched', value: settings.covariance },
    { label: 'Selection criterion', value: detail.criterion.toUpperCase() },
    { label: 'BIC (lower is better)', value: detail.bic, kind: 'decimal' },
    { label: 'ICL (lower is better)', value: detail.icl, kind: 'decimal' },
    { label: 'Log-likelihood', value: detail.logLikelihood, kind: 'decimal' },
    { label: 'Fitted on (placed customers)', value: detail.fittedOn === null ? "the parent run's model" : detail.fittedOn, kind: 'count' },
    { label: 'Restarts', value: settings.restarts, kind: 'count' },
    { label: 'Seed', value: settings.seed, kind: 'count' },
    { label: 'Convergence tolerance', value: settings.tol, kind: 'number' },
    { label: 'Maximum iterations', value: settings.maxIterations, kind: 'count' },
    { label: 'Covariance regularisation', value: settings.regularization, kind: 'number' },
    { label: 'Too new: fewer purchases than', value: settings.minPurchases, kind: 'count' },
    { label: 'Too new: fewer months of tenure than', value: settings.minTenureMonths, kind: 'decimal' },
    { label: 'Borderline: confidence below', value: settings.borderlineConfidence, kind: 'probability' },
    { label: 'Borderline: margin below', value: settings.borderlineMargin, kind: 'probability' },
    { label: 'Atypical: log density below percentile', value: settings.atypicalPercentile, kind: 'decimal' },
    { label: 'Review movers with confidence below', value: threshold(settings.reviewMoversBelowConfidence), kind: 'probability' },
    { label: 'Stability against the parent (adjusted Rand index)', value: detail.stability ?? 'first run', kind: 'probability' },
  ];
}

function runHeader(db: Database, detail: RunDetail): ExportRunHeader {
  const { settings } = detail;
  return {
    chain: null,
    database: db.memory ? null : basename(db.name),
    runId: detail.runId,
    parentRunId: detail.parentRunId,
    createdAt: detail.createdAt,
    asOf: settings.asOf,
    windowMonths: settings.windowMonths,
    windowStart: isoDateFromDay(featureWindow(settings.asOf, settings.windowMonths).startDay),
    features: detail.features.map((spec) => ({ name: spec.feature, label: featureLabel(spec.feature), transform: describeTransform(spec) })),
    model: modelEntries(detail),
    counts: { placed: detail.customers, tooNew: detail.tooNew, borderline: detail.borderline, atypical: detail.atypical },
    warnings: detail.warnings,
  };
}

function reviewRow(item: ReviewItem, consent: 0 | 1 | null): ExportReviewRow {
  return {
    customerId: item.customerId,
    reasons: item.reasons,
    revenue: item.revenue,
    topSegmentName: item.segmentName,
    topProbability: item.confidence,
    secondSegmentName: item.secondSegmentName,
    secondProbability: item.secondProbability,
    decision: item.decision?.action ?? null,
    decidedSegmentName: item.decision?.segmentName ?? null,
    note: item.decision?.note ?? null,
    reviewer: item.decision?.reviewer ?? null,
    decidedAt: item.decision?.decidedAt ?? null,
    marketingConsent: consent,
  };
}

function* reviewRows(db: Database, runId: number): Generator<ExportReviewRow> {
  for (const item of everyReviewItem(db, runId)) yield reviewRow(item, getCustomer(db, item.customerId)?.marketingConsent ?? null);
}

/** Model features first, then spend, visit rate and basket when stored: the customer sheets' features. */
function keyFeatures(detail: RunDetail): string[] {
  const wanted = [...detail.features.map((spec) => spec.feature), 'spend_per_month', 'visits_per_month', 'average_basket'];
  return [...new Set(wanted)].filter((name) => detail.storedFeatures.includes(name));
}

/** The export source of a stored run (the run id must exist: resolve it with resolveRunId first). */
export function runExportSource(db: Database, runId: number): ExportSource {
  const detail = getRunDetail(db, runId);
  const profiles = listSegments(db, runId).segments;
  const movement = movementOf(db, runId);
  const features = keyFeatures(detail).map(featureColumn);
  return {
    header: runHeader(db, detail),
    segments: profiles.map((profile) => ({
      name: profile.name,
      customers: profile.customers,
      share: profile.share,
      revenue: profile.revenue,
      revenueShare: profile.revenueShare,
      medians: Object.fromEntries(features.map((column) => [column.key, profile.profile.find((quartiles) => quartiles.feature === column.key)?.median ?? null])),
    })),
    medianColumns: features,
    customerFeatureColumns: features,
    customers: () => iterateRunCustomers(db, runId),
    reviewRows: () => reviewRows(db, runId),
    movement:
      movement.parentRunId === null
        ? null
        : {
            parentRunId: movement.parentRunId,
            parentSegments: movement.parentSegments.map((segment) => segment.name),
            currentSegments: movement.currentSegments.map((segment) => segment.name),
            counts: movement.matrix,
            entered: movement.entered,
            left: movement.left,
            common: movement.common,
            adjustedRandIndex: movement.stability,
          },
  };
}
