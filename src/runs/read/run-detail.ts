/** One run's summary and detail (the Model screen, `refresh --json`, `runs --run ID --settings-out`). */
import type { Database } from 'better-sqlite3';
import type { RunDetail, RunSummary } from '../../api/contract.js';
import { queueCounts } from './review-counts.js';
import { componentsSearched, fittedCustomerCount } from '../fit.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

/** The `refresh --json` object of a stored run (segments in spend order, names as they are now). */
export function getRunSummary(db: Database, runId: number): RunSummary {
  const run = storedRun(db, runId);
  const segments = [...runSegments(db, runId).list].sort((a, b) => a.spendRank - b.spendRank);
  // Key order as DESIGN.md §10 prints it: segments before stability.
  return {
    runId: run.runId,
    parentRunId: run.parentRunId,
    k: run.k,
    covariance: run.covariance,
    bic: run.bic,
    segmentCount: segments.length,
    segmentation: run.segmentation.method,
    customers: run.customers,
    tooNew: run.tooNew,
    borderline: run.borderline,
    atypical: run.atypical,
    segments: segments.map((segment) => ({
      name: segment.name,
      key: segment.key,
      components: segment.components,
      customers: segment.customers,
      share: segment.share,
      revenueShare: segment.revenueShare,
    })),
    stability: run.stability,
    review: queueCounts(db, runId),
    warnings: run.warnings,
  };
}

/** Summary plus settings, features with their transforms, warnings and retired segments. */
export function getRunDetail(db: Database, runId: number): RunDetail {
  const run = storedRun(db, runId);
  return {
    ...getRunSummary(db, runId),
    asOf: run.asOf,
    windowMonths: run.windowMonths,
    mode: run.mode,
    createdAt: run.createdAt,
    settings: run.settings,
    features: run.settings.features,
    storedFeatures: run.storedFeatures,
    logLikelihood: run.logLikelihood,
    icl: run.icl,
    criterion: run.criterion,
    retiredSegments: run.retired.map((segment) => segment.name),
    fittedOn: run.mode === 'rescore' ? null : fittedCustomerCount(run.settings.fitSample, run.customers),
    componentsSearched: run.mode === 'rescore' ? null : componentsSearched(run.settings),
  };
}
