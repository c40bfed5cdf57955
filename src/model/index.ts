/**
 * The mixture engine's public surface and the only entry for code outside src/model (the
 * layering test enforces it): import from here, not from the individual modules, so the engine
 * can be reorganised without touching callers.
 *
 * Module map: types (public shapes) · gaussian (the Gaussian numerics and one covariance
 * estimator per structure) · kernel + estep (the E-step) · mstep · missing (E-step with missing
 * values) · init + agglomeration (starts) · em + parallel (EM, restarts, sweeps) · validity
 * (which fits may compete) · criteria · combining (components into segments) · score ·
 * matching · agreement · serialize · matrix-csv · random · validate.
 */
export * from './types.js';
export { parameterCount, bayesianInformationCriterion, akaikeInformationCriterion, integratedCompletedLikelihood } from './criteria.js';
export { modelToJSON, modelFromJSON } from './serialize.js';
export { climbHasConverged, fitMixture, sweepRowOf } from './em.js';
export { scoreRows, imputeMissing, topTwo } from './score.js';
export { componentLogDensity, marginalLogDensity } from './gaussian.js';
export { RELATIVE_VARIANCE_FLOOR } from './validity.js';
export { AGGLOMERATION_SAMPLE } from './agglomeration.js';
export { RANDOM_PARTITION_ROWS_PER_COMPONENT, startMethodOf } from './init.js';
export {
  combineComponents,
  segmentsWhileAmbiguous,
  segmentPosteriors,
  classify,
  segmentationAtLevel,
  checkSegmentation,
  mergeSegments,
  splitSegment,
  type Segmentation,
  type CombiningLevel,
  type CombiningHierarchy,
} from './combining.js';
export {
  bhattacharyyaDistance,
  bhattacharyyaCostMatrix,
  componentsOf,
  costMatrixFromRows,
  minimumCostAssignment,
  matchComponents,
  type GaussianComponent,
  type ComponentSet,
  type CostMatrix,
  type AssignedPair,
  type Assignment,
  type ComponentPair,
  type ComponentMatching,
} from './matching.js';
export { contingencyTable, adjustedRandIndex, adjustedRandIndexFromTable, type ContingencyTable } from './agreement.js';
export { fitMixtureParallel, sweepMixtures, everyFitRefused } from './parallel.js';
export { parseNumericCsv, membershipsHeader, membershipsLines, type NumericCsv } from './matrix-csv.js';
export { restartStream, uniformSampleIndexes, type RandomStream } from './random.js';
