import { InputError } from '../errors.js';
import { precisionCholeskyOf } from './gaussian.js';
import { covarianceTypes, type MixtureModel, type MixtureModelJSON } from './types.js';

/**
 * JSON form of a model. JSON numbers written by JSON.stringify round-trip IEEE doubles exactly,
 * and the precision Cholesky factors are recomputed from the covariances with the same function
 * the fit used, so modelFromJSON(modelToJSON(m)) has the same bits as m.
 */
export function modelToJSON(model: MixtureModel): MixtureModelJSON {
  const { components: k, dimensions: d } = model;
  const means: number[][] = [];
  const covariances: number[][][] = [];
  for (let c = 0; c < k; c++) {
    means.push(Array.from(model.means.subarray(c * d, (c + 1) * d)));
    const matrix: number[][] = [];
    for (let i = 0; i < d; i++) matrix.push(Array.from(model.covariances.subarray((c * d + i) * d, (c * d + i + 1) * d)));
    covariances.push(matrix);
  }
  return {
    format: 'spendmix-mixture',
    version: 1,
    covarianceType: model.covarianceType,
    components: k,
    dimensions: d,
    regularization: model.regularization,
    weights: Array.from(model.weights),
    means,
    covariances,
  };
}

/** Rebuilds a model from modelToJSON's output; throws InputError naming the first bad field. */
export function modelFromJSON(json: unknown): MixtureModel {
  const source = json as Partial<MixtureModelJSON> | null;
  if (!source || typeof source !== 'object' || source.format !== 'spendmix-mixture') {
    throw new InputError('Not a Spendmix mixture model: the "format" field must be "spendmix-mixture".');
  }
  if (source.version !== 1) throw new InputError(`Unsupported mixture model version ${String(source.version)}; this build reads version 1.`);
  const covarianceType = source.covarianceType;
  if (!covarianceType || !covarianceTypes.includes(covarianceType)) {
    throw new InputError(`Mixture model has an unknown covariance type "${String(covarianceType)}".`);
  }
  const k = source.components;
  const d = source.dimensions;
  if (!Number.isInteger(k) || (k as number) < 1 || !Number.isInteger(d) || (d as number) < 1) {
    throw new InputError('Mixture model needs whole numbers components ≥ 1 and dimensions ≥ 1.');
  }
  const weights = finiteVector('weights', source.weights, k as number);
  const means = new Float64Array((k as number) * (d as number));
  const covariances = new Float64Array((k as number) * (d as number) * (d as number));
  if (!Array.isArray(source.means) || source.means.length !== k) throw new InputError(`Mixture model "means" must hold ${k} rows.`);
  if (!Array.isArray(source.covariances) || source.covariances.length !== k) {
    throw new InputError(`Mixture model "covariances" must hold ${k} matrices.`);
  }
  for (let c = 0; c < (k as number); c++) {
    means.set(finiteVector(`means[${c}]`, source.means[c], d as number), c * (d as number));
    const matrix = source.covariances[c];
    if (!Array.isArray(matrix) || matrix.length !== d) throw new InputError(`Mixture model "covariances[${c}]" must be ${d} × ${d}.`);
    for (let i = 0; i < (d as number); i++) {
      covariances.set(finiteVector(`covariances[${c}][${i}]`, matrix[i], d as number), (c * (d as number) + i) * (d as number));
    }
  }
  assertSymmetric(covariances, k as number, d as number);
  const regularization = typeof source.regularization === 'number' && Number.isFinite(source.regularization) ? source.regularization : 0;
  return {
    covarianceType,
    components: k as number,
    dimensions: d as number,
    weights,
    means,
    covariances,
    precisionCholesky: precisionCholeskyOrInputError(covariances, k as number, d as number),
    regularization,
  };
}

/** Symmetric up to rounding (relative 1e-9 of the larger diagonal), or the file is refused. */
function assertSymmetric(covariances: Float64Array, k: number, d: number): void {
  for (let c = 0; c < k; c++) {
    const base = c * d * d;
    for (let i = 0; i < d; i++) {
      for (let j = 0; j < i; j++) {
        const scale = Math.max(Math.abs(covariances[base + i * d + i]), Math.abs(covariances[base + j * d + j]), Number.MIN_VALUE);
        if (Math.abs(covariances[base + i * d + j] - covariances[base + j * d + i]) > 1e-9 * scale) {
          throw new InputError(`Mixture model "covariances[${c}]" is not symmetric (entries [${i}][${j}] and [${j}][${i}] differ).`);
        }
      }
    }
  }
}

function precisionCholeskyOrInputError(covariances: Float64Array, k: number, d: number): Float64Array {
  try {
    return precisionCholeskyOf(covariances, k, d);
  } catch (error) {
    throw new InputError(`Mixture model is not usable: ${error instanceof Error ? error.message : String(error)}`);
  }
}

function finiteVector(field: string, value: unknown, length: number): Float64Array {
  if (!Array.isArray(value) || value.length !== length || !value.every((x) => typeof x === 'number' && Number.isFinite(x))) {
    throw new InputError(`Mixture model "${field}" must be ${length} finite numbers.`);
  }
  return Float64Array.from(value as number[]);
}
