/**
 * The borderline "why": which features pull a customer between their top two segments a and b.
 * Each segment is a mixture of its components, p_s(x) = Σ_{c in s} w_c N(x; μ_c, Σ_c), and the
 * log-odds log p_a(x) − log p_b(x) splits into the prior part log(W_a / W_b) (the segments'
 * summed weights) and the likelihood part ℓ(x) = log(p_a(x) / W_a) − log(p_b(x) / W_b).
 *
 * We split ℓ over the features by Shapley values (Shapley 1953) of the game v(S) = ℓ(x_S), where
 * ℓ(x_S) uses the segments' marginal mixture densities on the feature subset S: each feature gets
 * its average added log-odds over all orders of adding features. The terms add up exactly to ℓ(x).
 * When both segments are one component of a diagonal structure (diag, spherical), ℓ is a sum of
 * one term per feature, c_j = log N_a(x_j) − log N_b(x_j), and the Shapley values are exactly
 * these terms, so the method is called exact there; with full or tied covariances, or segments of
 * several components, correlated features share what they say and the split of that shared part
 * is the convention this method states. Positive terms pull towards a, negative towards b.
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

/** A segment as the why needs it: its components and its name. */
export interface WhySegment {
  components: readonly number[];
  name: string;
}

export function explainBorderline(
  model: MixtureModel,
  /** The customer's values in the model's transformed space (d); NaN = missing, skipped. */
  x: ArrayLike<number>,
  top: WhySegment,
  second: WhySegment,
  features: readonly string[],
): BorderlineWhy {
  const d = model.dimensions;
  const observed: number[] = [];
  for (let j = 0; j < d; j++) if (!Number.isNaN(x[j])) observed.push(j);
  const diagonal = model.covarianceType === 'diag' || model.covarianceType === 'spherical';
  const exact = diagonal && top.components.length === 1 && second.components.length === 1;
  const contributions = shapleyTerms(model, x, top.components, second.components, observed);
  const terms: WhyTerm[] = observed.map((j, index) => ({
    feature: features[j],
    label: featureLabel(features[j]),
    contribution: contributions[index],
    fits: contributions[index] >= 0 ? top.name : second.name,
  }));
  terms.sort((a, b) => Math.abs(b.contribution) - Math.abs(a.contribution));
  const priorLogOdds = Math.log(totalWeight(model, top.components) / totalWeight(model, second.components));
  return {
    terms,
    priorLogOdds,
    method: exact ? 'exact' : 'shapley',
    text: whyText(terms, priorLogOdds, top.name, second.name),
  };
}

function totalWeight(model: MixtureModel, components: readonly number[]): number {
  return components.reduce((sum, c) => sum + model.weights[c], 0);
}

/** log Σ_{c} (w_c / W) N_c(x_S): the segment's marginal mixture density on the features S, its weights normalised. */
function segmentMarginalLogDensity(model: MixtureModel, components: readonly number[], x: ArrayLike<number>, indices: readonly number[]): number {
  if (components.length === 1) return marginalLogDensity(model, components[0], x, indices);
  const total = totalWeight(model, components);
  const terms = components.map((c) => Math.log(model.weights[c] / total) + marginalLogDensity(model, c, x, indices));
  const largest = Math.max(...terms);
  if (largest === -Infinity) return -Infinity;
  return largest + Math.log(terms.reduce((sum, term) => sum + Math.exp(term - largest), 0));
}

/** Shapley value of each observed feature in the game v(S) = log p_a(x_S) − log p_b(x_S) (weights normalised per segment). */
function shapleyTerms(model: MixtureModel, x: ArrayLike<number>, a: readonly number[], b: readonly number[], observed: readonly number[]): number[] {
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
    value[mask] = segmentMarginalLogDensity(model, a, x, indices) - segmentMarginalLogDensity(model, b, x, indices);
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

/**
 * "basket size fits Frequent · small baskets, visit rate fits Regular · large baskets" from the
 * ranked terms; when the segments' sizes (the prior odds) tip the balance, that is said too.
 */
export function whyText(terms: readonly WhyTerm[], priorLogOdds = 0, topName = '', secondName = ''): string {
  const strong = terms.filter((term) => Math.abs(term.contribution) >= NEGLIGIBLE_TERM).slice(0, TERMS_IN_TEXT);
  const parts = strong.map((term) => `${term.label} fits ${term.fits}`);
  if (Math.abs(priorLogOdds) >= NEGLIGIBLE_TERM && topName && secondName) {
    parts.push(`${priorLogOdds > 0 ? topName : secondName} is the more common segment`);
  }
  return parts.length > 0 ? parts.join(', ') : 'the features fit both segments about equally';
}
