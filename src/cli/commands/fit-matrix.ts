import { closeSync, openSync, readFileSync, writeSync } from 'node:fs';
import { InputError } from '../../errors.js';
import {
  covarianceTypes,
  fitMixtureParallel,
  initMethods,
  membershipsHeader,
  membershipsLines,
  parameterCount,
  parseNumericCsv,
  scoreRows,
  sweepMixtures,
  type CovarianceType,
  type FitProgress,
  type FitResult,
  type InitMethod,
  type SweepRow,
} from '../../model/index.js';
import { parseInteger, parseNumber, runCommand, type RegisterCommand } from '../run-command.js';

interface FitMatrixOptions {
  input?: string;
  k?: string;
  kMax?: number;
  covariance?: string;
  restarts: number;
  seed: number;
  tol: number;
  maxIter: number;
  reg: number;
  init: string;
  memberships?: string;
  json?: boolean;
}

/** What `fit-matrix --json` prints (DESIGN.md §10). */
export interface FitMatrixJson {
  n: number;
  d: number;
  k: number;
  covariance: CovarianceType;
  logLikelihood: number;
  meanLogLikelihood: number;
  bic: number;
  aic: number;
  icl: number;
  weights: number[];
  /** k × d */
  means: number[][];
  /** k × d × d, full matrices whatever the structure */
  covariances: number[][][];
  converged: boolean;
  iterations: number;
  /** Wall time of the fit alone (not reading the file or writing memberships). */
  seconds: number;
  /** With --k auto: the fits refused for model choice (a collapsed component), with the reason. */
  refusedFits?: { k: number; covariance: CovarianceType; reason: string }[];
}

/** fit-matrix's defaults, in one place (the engine takes every setting from its caller). */
const DEFAULTS = { kMax: 8, restarts: 5, seed: 0, tol: 1e-3, maxIter: 200, reg: 1e-6, init: 'mixed' } as const;

function parseK(raw: string | undefined): number | 'auto' {
  if (raw === undefined) throw new InputError('fit-matrix needs --k N (a whole number ≥ 1) or --k auto.');
  if (raw.trim().toLowerCase() === 'auto') return 'auto';
  if (!/^-?\d+$/.test(raw.trim())) throw new InputError(`--k must be a whole number ≥ 1 or "auto"; got "${raw}".`);
  const k = Number(raw);
  if (k < 1) throw new InputError(`--k must be at least 1; got ${k}.`);
  return k;
}

/** The largest k ≤ kMax whose model has fewer free parameters than there are rows (at least 1). */
function largestFittableK(kMax: number, rows: number, cols: number, covarianceType: CovarianceType): number {
  let k = kMax;
  while (k > 1 && parameterCount(k, cols, covarianceType) >= rows) k--;
  return k;
}

function parseCovariance(raw: string | undefined): CovarianceType {
  if (raw === undefined) throw new InputError(`fit-matrix needs --covariance ${covarianceTypes.join('|')}.`);
  if (!covarianceTypes.includes(raw as CovarianceType)) {
    throw new InputError(`Unknown covariance structure "${raw}"; use one of ${covarianceTypes.join(', ')}.`);
  }
  return raw as CovarianceType;
}

function parseInit(raw: string): InitMethod {
  if (!initMethods.includes(raw as InitMethod)) throw new InputError(`Unknown --init "${raw}"; use one of ${initMethods.join(', ')}.`);
  return raw as InitMethod;
}

function nested(values: Float64Array, ...shape: number[]): unknown[] {
  const [size, ...rest] = shape;
  const stride = rest.reduce((product, value) => product * value, 1);
  return Array.from({ length: size }, (_, index) => {
    const part = values.subarray(index * stride, (index + 1) * stride);
    return rest.length === 0 ? part[0] : rest.length === 1 ? Array.from(part) : nested(part, ...rest);
  });
}

function toJson(fit: FitResult, n: number, seconds: number, table: SweepRow[] | null): FitMatrixJson {
  const { model } = fit;
  const { components: k, dimensions: d } = model;
  return {
    n,
    d,
    k,
    covariance: model.covarianceType,
    logLikelihood: fit.logLikelihood,
    meanLogLikelihood: fit.meanLogLikelihood,
    bic: fit.bic,
    aic: fit.aic,
    icl: fit.icl,
    weights: Array.from(model.weights),
    means: nested(model.means, k, d) as number[][],
    covariances: nested(model.covariances, k, d, d) as number[][][],
    converged: fit.converged,
    iterations: fit.iterations,
    seconds,
    ...(table ? { refusedFits: table.flatMap((row) => (row.refused === null ? [] : [{ k: row.k, covariance: row.covarianceType, reason: row.refused }])) } : {}),
  };
}

/** Writes the memberships CSV in slices so a million rows never sit in one string. */
function writeMemberships(path: string, fit: FitResult, data: Parameters<typeof scoreRows>[1]): void {
  const memberships = scoreRows(fit.model, data);
  let descriptor: number;
  try {
    descriptor = openSync(path, 'w');
  } catch (error) {
    throw new InputError(`Cannot write --memberships ${path}: ${error instanceof Error ? error.message : String(error)}`);
  }
  try {
    writeSync(descriptor, `${membershipsHeader(memberships.components)}\n`);
    const slice = 10_000;
    for (let start = 0; start < memberships.rows; start += slice) {
      writeSync(descriptor, membershipsLines(memberships, start, Math.min(memberships.rows, start + slice)));
    }
  } finally {
    closeSync(descriptor);
  }
}

function describe(result: FitMatrixJson, table: SweepRow[] | null, skipped: string[], membershipsPath: string | undefined): string {
  const lines: string[] = [];
  if (skipped.length > 0) lines.push(`Left out non-numeric column(s): ${skipped.join(', ')}`);
  if (table) {
    lines.push('k  log L            BIC              ICL              converged');
    for (const row of table) {
      lines.push(
        `${String(row.k).padEnd(2)} ${row.logLikelihood.toFixed(3).padEnd(16)} ${row.bic.toFixed(3).padEnd(16)} ${row.icl.toFixed(3).padEnd(16)} ${row.converged ? 'yes' : 'no'}` +
          (row.refused ? `  refused: ${row.refused}` : ''),
      );
    }
    lines.push(`Chosen by BIC: k = ${result.k}`);
  }
  lines.push(
    `Fitted ${result.k} ${result.covariance} component(s) to ${result.n} rows × ${result.d} columns in ${result.seconds.toFixed(2)} s ` +
      `(${result.iterations} iterations, ${result.converged ? 'converged' : 'not converged'})`,
    `log L ${result.logLikelihood.toFixed(4)} (mean ${result.meanLogLikelihood.toFixed(6)}), BIC ${result.bic.toFixed(4)}, AIC ${result.aic.toFixed(4)}, ICL ${result.icl.toFixed(4)}`,
  );
  result.weights.forEach((weight, c) => {
    lines.push(`  component ${c + 1}: weight ${weight.toFixed(4)}, mean [${result.means[c].map((value) => value.toPrecision(6)).join(', ')}]`);
  });
  if (membershipsPath) lines.push(`Memberships written to ${membershipsPath}`);
  return lines.join('\n');
}

/** `spendmix fit-matrix --input CSV --k N|auto --covariance S`: fits the numeric columns of a CSV as they are. */
export const registerFitMatrix: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('fit-matrix')
    .description('Fit a Gaussian mixture to the numeric columns of a CSV file, as they are.')
    .option('--input <csv>', 'CSV with a header row; columns with no number at all (ids, labels) are left out')
    .option('--k <n|auto>', 'number of components, or "auto" to choose 1…--k-max by BIC')
    .option('--k-max <n>', `largest k tried with --k auto (default ${DEFAULTS.kMax})`, parseInteger('--k-max', 1, 100))
    .option('--covariance <structure>', `covariance structure: ${covarianceTypes.join(', ')}`)
    .option('--restarts <n>', 'independent starts; the best valid log-likelihood wins', parseInteger('--restarts', 1, 1000), DEFAULTS.restarts)
    .option('--seed <n>', 'seed; the same seed gives the same fit', parseInteger('--seed', 0, 0x7fffffff), DEFAULTS.seed)
    .option('--tol <x>', 'stop when the mean log-likelihood changes by less than this', parseNumber('--tol', 0), DEFAULTS.tol)
    .option('--max-iter <n>', 'most EM iterations per start', parseInteger('--max-iter', 1, 1_000_000), DEFAULTS.maxIter)
    .option('--reg <x>', 'added to covariance diagonals', parseNumber('--reg', 0), DEFAULTS.reg)
    .option(
      '--init <method>',
      `initialisation: ${initMethods.join(', ')} (mixed: start 1 hierarchical agglomeration, then k-means and random partitions in turn)`,
      DEFAULTS.init,
    )
    .option('--memberships <out.csv>', 'write each row\'s segment, posteriors, confidence, margin and log density')
    .option(
      '--json',
      'print one JSON object {n, d, k, covariance, logLikelihood, meanLogLikelihood, bic, aic, icl, weights, means, covariances, converged, iterations, seconds}, with --k auto also refusedFits [{k, covariance, reason}]',
    )
    .action(async (options: FitMatrixOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (options.input === undefined) throw new InputError('fit-matrix needs --input FILE.csv.');
          const k = parseK(options.k);
          const covarianceType = parseCovariance(options.covariance);
          const init = parseInit(options.init);
          if (options.kMax !== undefined && k !== 'auto') throw new InputError('--k-max applies only with --k auto.');
          let text: string;
          try {
            text = readFileSync(options.input, 'utf8');
          } catch (error) {
            throw new InputError(`Cannot read --input ${options.input}: ${error instanceof Error ? error.message : String(error)}`);
          }
          const { data, skippedColumns } = parseNumericCsv(text, options.input);
          const showProgress = !json && process.stderr.isTTY;
          const onProgress = showProgress
            ? (progress: FitProgress) => io.stderr(`\rk ${progress.k}, start ${progress.restart + 1}, iteration ${progress.iteration}   `)
            : undefined;
          const common = { restarts: options.restarts, seed: options.seed, tol: options.tol, maxIterations: options.maxIter, regularization: options.reg, init, onProgress };
          const started = performance.now();
          let fit: FitResult;
          let table: SweepRow[] | null = null;
          if (k === 'auto') {
            const kMax = largestFittableK(options.kMax ?? DEFAULTS.kMax, data.rows, data.cols, covarianceType);
            if (kMax < (options.kMax ?? DEFAULTS.kMax)) {
              io.stderr(`note: ${data.rows} rows support at most k = ${kMax} with ${covarianceType} covariance; trying k = 1…${kMax}\n`);
            }
            const sweep = await sweepMixtures(data, { ...common, componentRange: [1, kMax], covarianceTypes: [covarianceType], criterion: 'bic' });
            fit = sweep.best;
            table = sweep.table;
          } else {
            fit = await fitMixtureParallel(data, { ...common, components: k, covarianceType });
          }
          const seconds = (performance.now() - started) / 1000;
          if (showProgress) io.stderr('\n');
          for (const warning of fit.warnings) io.stderr(`warning: ${warning}\n`);
          if (fit.refused && k !== 'auto') io.stderr(`warning: this fit would be refused in a choice of k: ${fit.refused}.\n`);
          if (options.memberships) writeMemberships(options.memberships, fit, data);
          const result = toJson(fit, data.rows, seconds, table);
          return { result, human: (value) => describe(value, table, skippedColumns, options.memberships) };
        }),
      );
    });
};
