/**
 * An ExportSource over a stored run: the run's header, segment profiles, movement and review
 * queue from the runs repository, and its customers through the repository's one-statement
 * cursor (`iterateRunCustomers`), so a million customers stream without being held in memory.
 */
import type { Database } from 'better-sqlite3';
import { basename } from 'node:path';
import { featureLabel } from '../features/definitions.js';
import { describeTransform } from '../features/transforms.js';
import { featureWindow } from '../features/window.js';
import { getReviewQueue, getRunDetail, iterateRunCustomers, getMovement, listSegments } from '../runs/repository.js';
import type { ReviewItem, RunDetail } from '../runs/types.js';
import { isoDateFromDay } from '../store/days.js';
import { getCustomer } from '../store/customers-repo.js';
import { featureColumn } from './columns.js';
import type { ExportReviewRow, ExportRunHeader, ExportSource, OverviewEntry } from './source.js';

/** Review queue rows fetched per page (the repository's page limit). */
const reviewPageSize = 10_000;

function modelEntries(detail: RunDetail): OverviewEntry[] {
  const { settings, summary } = detail;
  const threshold = (value: number | null) => (value === null ? 'off' : value);
  return [
    { label: 'Mode', value: settings.mode },
    { label: 'Feature source', value: settings.source },
    { label: 'Segments (k)', value: summary.k, kind: 'count' },
    { label: 'k searched', value: settings.k === 'auto' ? `${settings.kMin} to ${settings.kMax}` : `fixed at ${settings.k}` },
    { label: 'Covariance structure', value: summary.covariance },
    { label: 'Covariance searched', value: settings.covariance },
    { label: 'Selection criterion', value: detail.criterion.toUpperCase() },
    { label: 'BIC (lower is better)', value: summary.bic, kind: 'decimal' },
    { label: 'ICL (lower is better)', value: detail.icl, kind: 'decimal' },
    { label: 'Log-likelihood', value: detail.logLikelihood, kind: 'decimal' },
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
    { label: 'Stability against the parent (adjusted Rand index)', value: summary.stability ?? 'first run', kind: 'probability' },
  ];
}

function runHeader(db: Database, detail: RunDetail): ExportRunHeader {
  const { settings, summary } = detail;
  return {
    chain: null,
    database: db.memory ? null : basename(db.name),
    runId: summary.runId,
    parentRunId: summary.parentRunId,
    createdAt: detail.createdAt,
    asOf: settings.asOf,
    windowMonths: settings.windowMonths,
    windowStart: isoDateFromDay(featureWindow(settings.asOf, settings.windowMonths).startDay),
    features: detail.features.map((name) => ({ name, label: featureLabel(name), transform: describeTransform(detail.transforms[name]) })),
    model: modelEntries(detail),
    counts: { placed: summary.customers, tooNew: summary.tooNew, borderline: summary.borderline, atypical: summary.atypical },
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
  for (let offset = 0; ; offset += reviewPageSize) {
    const page = getReviewQueue(db, runId, { offset, limit: reviewPageSize, status: 'all' });
    for (const item of page.items) yield reviewRow(item, getCustomer(db, item.customerId)?.marketingConsent ?? null);
    if (page.items.length < reviewPageSize || offset + page.items.length >= page.total) return;
  }
}

/** Model features first, then spend, visit rate and basket when stored: the customer sheets' features. */
function keyFeatures(detail: RunDetail): string[] {
  const wanted = [...detail.features, 'spend_per_month', 'visits_per_month', 'average_basket'];
  return [...new Set(wanted)].filter((name) => detail.storedFeatures.includes(name));
}

/** The export source of a stored run (the run id must exist: resolve it with resolveRunId first). */
export function runExportSource(db: Database, runId: number): ExportSource {
  const detail = getRunDetail(db, runId);
  const profiles = listSegments(db, runId);
  const movement = getMovement(db, runId);
  const features = keyFeatures(detail).map(featureColumn);
  return {
    header: runHeader(db, detail),
    segments: profiles.map((profile) => ({
      name: profile.name,
      customers: profile.customers,
      share: profile.share,
      revenue: profile.revenue,
      revenueShare: profile.revenueShare,
      medians: Object.fromEntries(features.map((column) => [column.key, profile.features[column.key]?.median ?? null])),
    })),
    medianColumns: features,
    customerFeatureColumns: features,
    customers: () => iterateRunCustomers(db, runId),
    reviewRows: () => reviewRows(db, runId),
    movement:
      movement === null
        ? null
        : {
            parentRunId: movement.parentRunId,
            parentSegments: movement.parentSegments.map((segment) => segment.name),
            currentSegments: movement.currentSegments.map((segment) => segment.name),
            counts: movement.counts,
            entered: movement.entered,
            left: movement.left,
            common: movement.common,
            adjustedRandIndex: movement.adjustedRandIndex,
          },
  };
}
