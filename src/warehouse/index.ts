/**
 * SQL generation for a chain's own engine (DESIGN.md §8a): the feature query (features-sql) and
 * a run's scoring query (model-sql), for DuckDB, PostgreSQL and SQLite. Callers import from here.
 */
export { sqlDialect, sqlDialectNames, type SqlDialect, type SqlDialectName } from './dialects.js';
export { featuresSql, type FeaturesSql, type FeaturesSqlOptions } from './features-sql.js';
export { modelSql, MAX_FEATURES_SCORED_WITH_EMPTY_VALUES, type ModelSql, type ModelSqlOptions } from './model-sql.js';
export {
  checkScoringModel,
  componentsAsSegments,
  readScoringModel,
  type ComponentSegments,
  type ScoringModel,
  type ScoringThresholds,
} from './scoring-model.js';
export { quotedIdentifier, stringLiteral, tableReference } from './names.js';
