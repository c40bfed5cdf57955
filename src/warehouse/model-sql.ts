/**
 * The scoring query of a run (DESIGN.md §8a): the run's own arithmetic written out as one SQL
 * query over a features table (`customer_id` plus the model features in original units), so a
 * chain's engine labels every customer as the app would. Layer by layer, as src/model scores:
 *
 *   transforms     log1p or cube root, clipping at the stored bounds, z-score with the stored mean and SD
 *   projections    p = W (z − μ_c) with W the inverse Cholesky factor of Σ_c (rows as literals)
 *   log densities  l_c = log w_c + Σ log W_ii − (d/2) log 2π − ½ ‖p‖²
 *   posteriors     log-sum-exp: m = max l_c, e_c = exp(l_c − m), τ_c = e_c / Σ e, log f = m + ln Σ e
 *   segments       a segment's posterior is the sum of its components' (component → segment map)
 *   outputs        segment (top posterior), confidence, margin, borderline, atypical
 *
 * The operations and their order follow the app's (src/model/missing.ts), so the results agree
 * with the app's to rounding in LN/EXP (the engines' maths libraries differ from JavaScript's in
 * the last bit). A row with empty features is scored on the marginal of its observed features,
 * as the app does: with diagonal or spherical covariances each feature's term simply drops out
 * (the marginal of independent coordinates), at any number of features; with full or tied ones,
 * one precomputed factor per pattern of empty features, up to 6 features.
 */
import { modelFromJSON, type MixtureModel } from '../model/index.js';
import { sqlDialect, type SqlDialect, type SqlDialectName } from './dialects.js';
import { layer, sum } from './layers.js';
import { quotedIdentifier, stringLiteral, tableReference } from './names.js';
import { checkScoringModel, type ScoringModel } from './scoring-model.js';

/** Full and tied covariances: up to this many features every pattern of empty features gets its own factors (2^6 − 2 = 62 patterns). */
export const MAX_FEATURES_SCORED_WITH_EMPTY_VALUES = 6;
/** |z| beyond this is not scored: PostgreSQL stops the whole query on a floating-point overflow. */
export const LARGEST_SCORED_Z = 1e100;
/** exp() of anything below this is 0 to double precision; PostgreSQL raises an error instead of returning 0. */
const SMALLEST_EXPONENT = -745;
const LOG_2PI = Math.log(2 * Math.PI);

export interface ModelSqlOptions {
  dialect: SqlDialectName | string;
  featuresTable: string;
}

export interface ModelSql {
  sql: string;
  dialect: SqlDialectName;
  /** Output columns: customer_id, segment, confidence, margin, borderline, atypical. */
  columns: string[];
  /** Feature columns the query reads, model order. */
  features: string[];
  segments: string[];
  components: number;
  /** How a row with an empty feature is treated. */
  emptyValues: 'scored on the observed features' | 'not scored';
}

/** One pattern of observed features: per component, the factor of Σ_oo and the log constant. */
interface PatternTerms {
  observed: number[];
  /** k × m × m, row-major lower-triangular. */
  factors: Float64Array;
  logConstants: number[];
}

/**
 * The factors of one pattern, computed exactly as the app computes them when scoring (the
 * Cholesky factor of the observed block, inverted; src/model via modelFromJSON), and the log
 * constants in the app's order of operations.
 */
function patternTerms(model: MixtureModel, observed: number[]): PatternTerms {
  const { components: k, dimensions: d } = model;
  const m = observed.length;
  const restricted = modelFromJSON({
    format: 'spendmix-mixture',
    version: 1,
    covarianceType: model.covarianceType,
    components: k,
    dimensions: m,
    regularization: model.regularization,
    weights: Array.from(model.weights),
    means: Array.from({ length: k }, (_, c) => observed.map((a) => model.means[c * d + a])),
    covariances: Array.from({ length: k }, (_, c) => observed.map((a) => observed.map((b) => model.covariances[(c * d + a) * d + b]))),
  });
  const factors = restricted.precisionCholesky;
  const logConstants = Array.from({ length: k }, (_, c) => {
    let logDiagonal = 0;
    for (let i = 0; i < m; i++) logDiagonal += Math.log(factors[(c * m + i) * m + i]);
    return Math.log(model.weights[c]) + logDiagonal - 0.5 * m * LOG_2PI;
  });
  return { observed, factors, logConstants };
}

function caseOf(selector: string, branches: [number, string][], otherwise: string | null): string {
  if (branches.length === 1 && otherwise === null) return `CASE WHEN ${selector} = ${branches[0][0]} THEN ${branches[0][1]} END`;
  return `CASE ${selector} ${branches.map(([when, then]) => `WHEN ${when} THEN ${then}`).join(' ')}${otherwise === null ? '' : ` ELSE ${otherwise}`} END`;
}

/** The query; throws InputError for a model that cannot be scored, a bad table name or an unsupported dialect. */
export function modelSql(scoring: ScoringModel, options: ModelSqlOptions): ModelSql {
  const dialect: SqlDialect = sqlDialect(options.dialect);
  const table = tableReference(options.featuresTable, 'features table');
  checkScoringModel(scoring);
  const { model, features, transforms, segments, thresholds } = scoring;
  const k = model.components;
  const d = model.dimensions;
  const S = segments.names.length;
  const number = dialect.double;
  const once = dialect.computedOnce;
  const columnsOf = (prefix: string, count: number) => Array.from({ length: count }, (_, i) => `${prefix}${i}`);
  const zs = columnsOf('z', d);
  const allMissing = 2 ** d - 1;
  // Diagonal precision factors: an empty feature's term of the projection and the log constant
  // drops out by itself, so no pattern needs factors of its own.
  const separable = model.covarianceType === 'diag' || model.covarianceType === 'spherical';
  const withEmptyValues = separable || d <= MAX_FEATURES_SCORED_WITH_EMPTY_VALUES;

  // Patterns by bit mask of empty features (bit j = feature j empty): all observed first.
  const masks = withEmptyValues && !separable ? Array.from({ length: allMissing }, (_, mask) => mask) : [0];
  const patterns = masks.map((mask) => ({ mask, terms: patternTerms(model, Array.from({ length: d }, (_, a) => a).filter((a) => !(mask & (1 << a)))) }));

  const ctes: string[] = [];
  const push = (name: string, columns: string[], source: string, computedOnce = once) => ctes.push(layer(name, computedOnce, columns, source));
  push(
    'model_input',
    [`${quotedIdentifier('customer_id')} AS customer_id`, ...features.map((name, j) => `CAST(${quotedIdentifier(name)} AS ${dialect.doubleType}) AS x${j}`)],
    table,
    '',
  );

  // log1p(x) = ln(1 + x) · x / ((1 + x) − 1), accurate where 1 + x rounds (Goldberg 1991,
  // "What every computer scientist should know about floating-point arithmetic", Theorem 4);
  // only for finite x > −1: the app refuses other values, and LN would fail on them.
  const largest = number(Number.MAX_VALUE);
  const logged = transforms.map((transform, j) => {
    const x = `x${j}`;
    if (transform.cubeRoot) {
      // Cube root by EXP(LN(|x|) / 3) with the sign put back (SQLite has no CBRT); within a few
      // units in the last place of Math.cbrt, far inside the agreement the tests hold it to.
      const root = (value: string) => `EXP(LN(${value}) / ${number(3)})`;
      return `CASE WHEN ${x} > ${number(0)} AND ${x} <= ${largest} THEN ${root(x)} WHEN ${x} < ${number(0)} AND ${x} >= -${largest} THEN -${root(`-${x}`)} WHEN ${x} = ${number(0)} THEN ${number(0)} END AS y${j}`;
    }
    if (!transform.log1p) return `${x} AS y${j}`;
    const onePlus = `(${number(1)} + ${x})`;
    return `CASE WHEN ${x} > ${number(-1)} AND ${x} <= ${largest} THEN CASE WHEN ${onePlus} = ${number(1)} THEN ${x} ELSE ((LN(${onePlus}) * ${x}) / (${onePlus} - ${number(1)})) END END AS y${j}`;
  });
  const badInput = transforms.flatMap((transform, j) => [
    `ABS(x${j}) > ${largest}`, // ±infinity (and NaN, which PostgreSQL and DuckDB order above every number)
    ...(transform.log1p ? [`x${j} <= ${number(-1)}`] : []),
  ]);
  const pattern = sum(features.map((_, j) => `CASE WHEN x${j} IS NULL THEN ${2 ** j} ELSE 0 END`));
  push(
    'logged',
    ['customer_id', ...logged, `${pattern} AS missing_pattern`, `CASE WHEN ${badInput.map((test) => `(${test})`).join(' OR ')} THEN 1 ELSE 0 END AS bad_input`],
    'model_input',
  );

  // Clipping as the app clamps: below the lower bound first, then above the upper one.
  const clipped = transforms.map((transform, j) => {
    const { clipLower, clipUpper } = transform.fitted!;
    const y = `y${j}`;
    const branches = [
      ...(clipLower !== null ? [`WHEN ${y} < ${number(clipLower)} THEN ${number(clipLower)}`] : []),
      ...(clipUpper !== null ? [`WHEN ${y} > ${number(clipUpper)} THEN ${number(clipUpper)}`] : []),
    ];
    return `${branches.length ? `CASE ${branches.join(' ')} ELSE ${y} END` : y} AS c${j}`;
  });
  push('clipped', ['customer_id', 'missing_pattern', ...clipped, 'bad_input'], 'logged');
  const unscorable = [
    'bad_input = 1',
    `missing_pattern = ${allMissing}`,
    ...(withEmptyValues ? [] : ['missing_pattern <> 0']),
    ...transforms.map((transform, j) => `ABS(c${j} - ${number(transform.fitted!.mean)}) > ${number(LARGEST_SCORED_Z * transform.fitted!.standardDeviation)}`),
  ];
  const zScored = transforms.map((transform, j) => {
    const { mean, standardDeviation } = transform.fitted!;
    // Without z-scoring the app's mean 0 and SD 1 leave the value unchanged: (c − 0) / 1 = c.
    const z = transform.zScore ? `((c${j} - ${number(mean)}) / ${number(standardDeviation)})` : `c${j}`;
    return `CASE WHEN ${unscorable.map((test) => `(${test})`).join(' OR ')} THEN NULL ELSE ${z} END AS z${j}`;
  });
  push('transformed', ['customer_id', 'missing_pattern', ...zScored], 'clipped');

  // Projections p_c,i = Σ_{j ≤ i} W_ij (z_j − μ_c,j) over the observed features of the row's pattern;
  // rows of a pattern with fewer features pad with 0, which leaves the sum of squares unchanged.
  const projection = (terms: PatternTerms, c: number, i: number): string => {
    const m = terms.observed.length;
    if (i >= m) return number(0);
    const parts: string[] = [];
    for (let j = 0; j <= i; j++) {
      const weight = terms.factors[(c * m + i) * m + j];
      if (weight === 0) continue; // adding 0 · e changes nothing (diag and spherical factors)
      const a = terms.observed[j];
      parts.push(`(${number(weight)} * (${zs[a]} - ${number(model.means[c * d + a])}))`);
    }
    return parts.length ? sum(parts) : number(0);
  };
  // Complete rows (pattern 0) are tested first and alone: one comparison for them, not one per pattern.
  const byPattern = (term: (terms: PatternTerms) => string) =>
    patterns.length === 1
      ? term(patterns[0].terms)
      : `CASE WHEN missing_pattern = 0 THEN ${term(patterns[0].terms)} ELSE ${caseOf('missing_pattern', patterns.slice(1).map(({ mask, terms }) => [mask, term(terms)]), null)} END`;
  const complete = patterns[0].terms;
  // Separable: an empty feature contributes 0 to the projection and to the sum of log factors, and
  // is not counted in (m/2) log 2π; the same operations in the same order as the app's marginal.
  const ifObserved = (i: number, term: string, otherwise = number(0)) => `CASE WHEN ${zs[i]} IS NULL THEN ${otherwise} ELSE ${term} END`;
  const projections = Array.from({ length: k * d }, (_, index) => {
    const [c, i] = [Math.floor(index / d), index % d];
    return `${separable ? ifObserved(i, projection(complete, c, i)) : byPattern((terms) => projection(terms, c, i))} AS p${c}_${i}`;
  });
  // No observed feature (a row the app refuses has every z NULL): NULL, so the row stays unscored.
  const observedCount = `NULLIF(${sum(zs.map((_, i) => ifObserved(i, number(1))))}, ${number(0)})`;
  const separableLogConstants = Array.from({ length: separable ? k : 0 }, (_, c) => {
    const logFactors = sum(Array.from({ length: d }, (_, i) => ifObserved(i, number(Math.log(complete.factors[(c * d + i) * d + i])))));
    return `((${number(Math.log(model.weights[c]))} + ${logFactors}) - ((${number(0.5)} * ${observedCount}) * ${number(LOG_2PI)})) AS log_constant${c}`;
  });
  push('projected', ['customer_id', 'missing_pattern', ...projections, ...separableLogConstants], 'transformed');

  const logDensities = Array.from({ length: k }, (_, c) => {
    const squares = sum(Array.from({ length: d }, (_, i) => `(p${c}_${i} * p${c}_${i})`));
    const logConstant = separable ? `log_constant${c}` : byPattern((terms) => number(terms.logConstants[c]));
    return `(${logConstant} - (${number(0.5)} * ${squares})) AS l${c}`;
  });
  push('log_densities', ['customer_id', ...logDensities], 'projected');
  const ls = columnsOf('l', k);
  push('best', ['customer_id', ...ls, `${dialect.greatest(ls)} AS top_log`], 'log_densities');
  const scaled = ls.map((l, c) => `CASE WHEN (${l} - top_log) < ${number(SMALLEST_EXPONENT)} THEN ${number(0)} ELSE EXP(${l} - top_log) END AS e${c}`);
  push('scaled', ['customer_id', 'top_log', ...scaled], 'best');
  const es = columnsOf('e', k);
  push('totals', ['customer_id', 'top_log', ...es, `${sum(es)} AS total`], 'scaled');
  const segmentPosteriors = segments.names.map((_, s) => {
    const members = segments.ofComponent.flatMap((segment, c) => (segment === s ? [`(e${c} / total)`] : []));
    return `${sum(members)} AS s${s}`;
  });
  push('posteriors', ['customer_id', '(top_log + LN(total)) AS log_density', ...segmentPosteriors], 'totals');
  const ss = columnsOf('s', S);
  push('ranked', ['customer_id', 'log_density', ...ss, `${dialect.greatest(ss)} AS confidence`], 'posteriors');
  // The first segment with the top posterior wins, as in the app; the second is the best of the rest.
  const topIndex = S === 1 ? 'CASE WHEN confidence IS NOT NULL THEN 0 END' : `CASE ${ss.map((s, index) => `WHEN ${s} = confidence THEN ${index}`).join(' ')} END`;
  push('labelled', ['customer_id', 'log_density', 'confidence', `${topIndex} AS top_index`, ...(S === 1 ? [] : ss)], 'ranked');
  const second = dialect.greatest(ss.map((s, index) => `CASE WHEN top_index = ${index} THEN ${number(-1)} ELSE ${s} END`));
  const margin = S === 1 ? `CASE WHEN confidence IS NOT NULL THEN ${number(1)} END` : `(confidence - ${second})`;
  push('margins', ['customer_id', 'log_density', 'confidence', 'top_index', `${margin} AS margin`], 'labelled');

  const names = caseOf('top_index', segments.names.map((name, index) => [index, stringLiteral(name)]), null);
  const cut = thresholds.atypicalLogDensityBelow;
  const header = [
    `-- Spendmix scoring query${scoring.runId === null ? '' : ` of run ${scoring.runId}`}, ${dialect.name} dialect: ${model.covarianceType} covariance, ${k} component(s), ${S} segment(s).`,
    `-- Reads customer_id and ${d} feature column(s) in original units from ${table}; returns customer_id, segment, confidence, margin, borderline, atypical.`,
    withEmptyValues
      ? '-- A row with empty features is scored on its observed ones; a row the app would refuse (no value, a value log1p cannot take, infinity) gets NULLs.'
      : `-- A row with an empty feature gets NULLs (with ${model.covarianceType} covariances empty values are scored up to ${MAX_FEATURES_SCORED_WITH_EMPTY_VALUES} features), as does a row the app would refuse.`,
    `-- Borderline: confidence below ${thresholds.borderlineConfidence} or margin below ${thresholds.borderlineMargin}. Atypical: log density below ${cut === null ? '(no cut: never)' : cut}.`,
  ];
  const sql = `${header.join('\n')}
WITH ${ctes.join(',\n')}
SELECT customer_id,
       ${names} AS segment,
       confidence,
       margin,
       CASE WHEN confidence IS NULL THEN NULL WHEN confidence < ${number(thresholds.borderlineConfidence)} OR margin < ${number(thresholds.borderlineMargin)} THEN 1 ELSE 0 END AS borderline,
       CASE WHEN log_density IS NULL THEN NULL${cut === null ? '' : ` WHEN log_density < ${number(cut)} THEN 1`} ELSE 0 END AS atypical
  FROM margins
`;
  return {
    sql,
    dialect: dialect.name,
    columns: ['customer_id', 'segment', 'confidence', 'margin', 'borderline', 'atypical'],
    features: [...features],
    segments: [...segments.names],
    components: k,
    emptyValues: withEmptyValues ? 'scored on the observed features' : 'not scored',
  };
}
