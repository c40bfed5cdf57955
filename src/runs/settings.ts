/**
 * Run settings: defaults (DESIGN.md §4, §5) and validation at the boundary. Every check throws
 * InputError naming the setting and what is allowed.
 */
import type { Database } from 'better-sqlite3';
import { InputError } from '../errors.js';
import { defaultFreshCategories } from '../features/definitions.js';
import { logZTransform, validateTransform, zTransform, type FeatureTransform } from '../features/transforms.js';
import { featureWindow } from '../features/window.js';
import { covarianceTypes } from '../model/index.js';
import type { FeatureSource, ResolvedRunSettings, RunSettings } from './types.js';

export const defaultModelFeatures: readonly string[] = ['spend_per_month', 'visits_per_month', 'average_basket'];

export const settingDefaults = {
  windowMonths: 12,
  kMin: 2,
  kMax: 8,
  criterion: 'bic',
  restarts: 5,
  seed: 0,
  tol: 1e-3,
  maxIterations: 200,
  regularization: 1e-6,
  minPurchases: 2,
  minTenureMonths: 2,
  borderlineConfidence: 0.7,
  borderlineMargin: 0.2,
  atypicalPercentile: 1,
} as const;

/** Default transform of a model feature: log1p + z-score for the money and rate defaults, z-score otherwise. */
export function defaultTransform(feature: string, source: FeatureSource): FeatureTransform {
  if (source === 'imported') return zTransform;
  return defaultModelFeatures.includes(feature) ? logZTransform : zTransform;
}

function wholeNumber(name: string, value: unknown, min: number, max: number): number {
  if (typeof value !== 'number' || !Number.isInteger(value) || value < min || value > max) {
    throw new InputError(`${name} must be a whole number from ${min} to ${max}; got ${String(value)}.`);
  }
  return value;
}

function numberIn(name: string, value: unknown, min: number, max: number): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || value < min || value > max) {
    throw new InputError(`${name} must be a number from ${min} to ${max}; got ${String(value)}.`);
  }
  return value;
}

function databaseHasReceipts(db: Database): boolean {
  return db.prepare('SELECT 1 FROM receipts LIMIT 1').get() !== undefined;
}

/** Fills defaults and validates; the parent is resolved later (it needs the runs table). */
export function resolveSettings(db: Database, settings: RunSettings): Omit<ResolvedRunSettings, 'parentRunId'> & { parentRunId: number | null | undefined } {
  if (!settings || typeof settings !== 'object') throw new InputError('Run settings are missing.');
  const windowMonths = wholeNumber('The window (months)', settings.windowMonths ?? settingDefaults.windowMonths, 1, 120);
  featureWindow(settings.asOf, windowMonths);
  const mode = settings.mode ?? 'refit';
  if (mode !== 'refit' && mode !== 'rescore') throw new InputError(`The mode must be "refit" or "rescore"; got "${String(mode)}".`);
  const source: FeatureSource = settings.source ?? (databaseHasReceipts(db) ? 'receipts' : 'imported');
  if (source !== 'receipts' && source !== 'imported') throw new InputError(`The feature source must be "receipts" or "imported"; got "${String(source)}".`);

  const kMin = wholeNumber('The smallest k', settings.kMin ?? settingDefaults.kMin, 1, 50);
  const kMax = wholeNumber('The largest k', settings.kMax ?? Math.max(settingDefaults.kMax, kMin), 1, 50);
  if (kMin > kMax) throw new InputError(`The smallest k (${kMin}) must not exceed the largest (${kMax}).`);
  const k = settings.k === 'auto' || settings.k === undefined ? 'auto' : wholeNumber('k', settings.k, 1, 50);
  const covariance = settings.covariance ?? 'auto';
  if (covariance !== 'auto' && !covarianceTypes.includes(covariance)) {
    throw new InputError(`The covariance structure must be one of ${covarianceTypes.join(', ')} or auto; got "${String(covariance)}".`);
  }
  const criterion = settings.criterion ?? settingDefaults.criterion;
  if (criterion !== 'bic' && criterion !== 'icl') throw new InputError(`The criterion must be "bic" or "icl"; got "${String(criterion)}".`);

  const features = settings.features ?? [];
  if (!Array.isArray(features) || features.some((name) => typeof name !== 'string' || name.trim() === '')) {
    throw new InputError('Features must be a list of feature names.');
  }
  if (new Set(features).size !== features.length) throw new InputError('Each feature may be given only once.');
  const transforms: Record<string, FeatureTransform> = {};
  for (const [feature, transform] of Object.entries(settings.transforms ?? {})) transforms[feature] = validateTransform(feature, transform);

  const movers = settings.reviewMoversBelowConfidence ?? null;
  return {
    asOf: settings.asOf,
    windowMonths,
    mode,
    parentRunId: settings.parentRunId,
    source,
    features,
    transforms,
    k,
    kMin,
    kMax,
    covariance,
    criterion,
    restarts: wholeNumber('Restarts', settings.restarts ?? settingDefaults.restarts, 1, 100),
    seed: wholeNumber('The seed', settings.seed ?? settingDefaults.seed, 0, 2 ** 32 - 1),
    tol: numberIn('The tolerance', settings.tol ?? settingDefaults.tol, 0, 1),
    maxIterations: wholeNumber('The iteration limit', settings.maxIterations ?? settingDefaults.maxIterations, 1, 100_000),
    regularization: numberIn('The regularisation', settings.regularization ?? settingDefaults.regularization, 0, 1),
    minPurchases: wholeNumber('The minimum purchases', settings.minPurchases ?? settingDefaults.minPurchases, 0, 1_000_000),
    minTenureMonths: numberIn('The minimum tenure (months)', settings.minTenureMonths ?? settingDefaults.minTenureMonths, 0, 1200),
    borderlineConfidence: numberIn('The borderline confidence', settings.borderlineConfidence ?? settingDefaults.borderlineConfidence, 0, 1),
    borderlineMargin: numberIn('The borderline margin', settings.borderlineMargin ?? settingDefaults.borderlineMargin, 0, 1),
    atypicalPercentile: numberIn('The atypical percentile', settings.atypicalPercentile ?? settingDefaults.atypicalPercentile, 0, 50),
    reviewMoversBelowConfidence: movers === null ? null : numberIn('The mover review confidence', movers, 0, 1),
    freshCategories: settings.freshCategories ?? [...defaultFreshCategories],
  };
}
