/**
 * The mixture engine's public surface. Import from here (`src/model/index.js`), not from the
 * individual modules, so the engine can be reorganised without touching callers.
 */
export * from './types.js';
export { parameterCount, bayesianInformationCriterion, akaikeInformationCriterion, integratedCompletedLikelihood } from './criteria.js';
export { modelToJSON, modelFromJSON } from './serialize.js';
export { fitMixture } from './em.js';
export { scoreRows, imputeMissing } from './score.js';
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
export { fitMixtureParallel, sweepMixtures } from './parallel.js';
export { parseNumericCsv, membershipsHeader, membershipsLines, type NumericCsv } from './matrix-csv.js';
