/**
 * The borderline "why": which features pull a customer between their top two segments a and b.
 * The log-odds log(π_a N(x; μ_a, Σ_a)) − log(π_b N(x; μ_b, Σ_b)) splits into the prior part
 * log(π_a/π_b) and the likelihood part ℓ(x) = log N_a(x) − log N_b(x).
 * - Diagonal covariances (diag, spherical): ℓ is exactly a sum of one term per feature,
 *     c_j = −½ [ln σ²_aj − ln σ²_bj + (x_j − μ_aj)²/σ²_aj − (x_j − μ_bj)²/σ²_bj].
 * - Full and tied covariances: correlated features share what they say, so there is no single
 *   per-feature split. We use the Shapley values (Shapley 1953) of the game v(S) = ℓ(x_S), where
 *   ℓ(x_S) uses the marginal Gaussians of the feature subset S: each feature gets its average added
 *   log-odds over all orders of adding features. The terms add up exactly to ℓ(x) and give the
 *   exact terms above when the covariances are diagonal; the split of shared information between
 *   correlated features is the convention this method states.
 * Positive terms pull towards a, negative towards b.
 */
import { featureLabel } from '../features/definitions.js';
import { marginalLogDensity, type MixtureModel } from '../model/index.js';
import type { BorderlineWhy, WhyTerm } from '../api/contract.js';

/** Terms smaller than this (in log-odds) are not worth a word unless nothing else pulls. */
const NEGLIGIBLE_TERM = 0.05;
/** How many features the sentence names at most. */
const TERMS_IN_TEXT = 3;

/** Above this many observed features the 2^m subsets of the Shapley split get too many. */
const MAX_SHAPLEY_FEATURES = 16;

export function explainBorderline(
  model: MixtureModel,
  /** The customer's values in the model's transformed space (d); NaN = missing, skipped. */
  x: ArrayLike<number>,
  top: number,
  second: number,
  features: readonly string[],
  segmentNames: readonly string[],
): BorderlineWhy {
  const d = model.dimensions;
  const observed: number[] = [];
  for (let j = 0; j < d; j++) if (!Number.isNaN(x[j])) observed.push(j);
  const diagonal = model.covarianceType === 'diag' || model.covarianceType === 'spherical';
  const contributions = diagonal
    ? observed.map((j) => diagonalTerm(model, x, top, second, j))
    : shapleyTerms(model, x, top, second, observed);
  const terms: WhyTerm[] = observed.map((j, index) => ({
    feature: features[j],
    label: featureLabel(features[j]),
    contribution: contributions[index],
    fits: contributions[index] >= 0 ? segmentNames[top] : segmentNames[second],
  }));
  terms.sort((a, b) => Math.abs(b.contribution) - Math.abs(a.contribution));
  const priorLogOdds = Math.log(model.weights[top] / model.weights[second]);
  return {
    terms,
    priorLogOdds,
    method: diagonal ? 'exact' : 'shapley',
    text: whyText(terms, priorLogOdds, segmentNames[top], segmentNames[second]),
  };
}

/** Shapley value of each observed feature in the game v(S) = log N_a(x_S) − log N_b(x_S). */
function shapleyTerms(model: MixtureModel, x: ArrayLike<number>, a: number, b: number, observed: readonly number[]): number[] {
  const m = observed.length;
  if (m > MAX_SHAPLEY_FEATURES) {
    throw new Error(`The borderline explanation supports at most ${MAX_SHAPLEY_FEATURES} features; the model has ${m}.`);
  }
  const subsets = 1 << m;
  const value = new Float64Array(subsets);
  const size = new Int32Array(subsets);
  for (let mask = 1; mask < subsets; mask++) {
    const indices: number[] = [];
    for (let bit = 0; bit < m; bit++) if (mask & (1 << bit)) indices.push(observed[bit]);
    size[mask] = indices.length;
    value[mask] = marginalLogDensity(model, a, x, indices) - marginalLogDensity(model, b, x, indices);
  }
  // Weight of a coalition of size s that feature j joins: s! (m − s − 1)! / m!.
  const factorial = [1];
  for (let n = 1; n <= m; n++) factorial.push(factorial[n - 1] * n);
  return observed.map((_, bit) => {
    let total = 0;
    for (let mask = 0; mask < subsets; mask++) {
      if (mask & (1 << bit)) continue;
      const s = size[mask];
      total += ((factorial[s] * factorial[m - s - 1]) / factorial[m]) * (value[mask | (1 << bit)] - value[mask]);
    }
    return total;
  });
}

/** The exact per-feature term of the log-odds for diagonal covariances: log N_a(x_j) − log N_b(x_j). */
function diagonalTerm(model: MixtureModel, x: ArrayLike<number>, a: number, b: number, j: number): number {
  return marginalLogDensity(model, a, x, [j]) - marginalLogDensity(model, b, x, [j]);
}

/**
 * "basket size fits Tier 2, visit rate fits Tier 3" from the ranked terms; when the segments'
 * sizes (the prior odds) tip the balance, that is said too.
 */
export function whyText(terms: readonly WhyTerm[], priorLogOdds = 0, topName = '', secondName = ''): string {
  const strong = terms.filter((term) => Math.abs(term.contribution) >= NEGLIGIBLE_TERM).slice(0, TERMS_IN_TEXT);
  const parts = strong.map((term) => `${term.label} fits ${term.fits}`);
  if (Math.abs(priorLogOdds) >= NEGLIGIBLE_TERM && topName && secondName) {
    parts.push(`${priorLogOdds > 0 ? topName : secondName} is the more common segment`);
  }
  return parts.length > 0 ? parts.join(', ') : 'the features fit both segments about equally';
}
