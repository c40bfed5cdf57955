/**
 * The borderline "why": which features pull a customer between their top two segments a and b.
 * The log-odds log(π_a N(x; μ_a, Σ_a)) − log(π_b N(x; μ_b, Σ_b)) splits into the prior part
 * log(π_a/π_b) and, when the covariances are diagonal (diag, spherical), a sum of one exact term
 * per feature:
 *   c_j = −½ [ln σ²_aj − ln σ²_bj + (x_j − μ_aj)²/σ²_aj − (x_j − μ_bj)²/σ²_bj].
 * For full and tied covariances the terms use each feature's marginal variance Σ_jj instead (the
 * stated approximation: correlations between features are ignored, so the terms need not add up to
 * the exact log-odds). Positive terms pull towards a, negative towards b.
 */
import { featureLabel } from '../features/definitions.js';
import type { MixtureModel } from '../model/types.js';
import type { BorderlineWhy, WhyTerm } from './types.js';

/** Terms smaller than this (in log-odds) are not worth a word unless nothing else pulls. */
const NEGLIGIBLE_TERM = 0.05;
/** How many features the sentence names at most. */
const TERMS_IN_TEXT = 3;

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
  const terms: WhyTerm[] = [];
  for (let j = 0; j < d; j++) {
    if (Number.isNaN(x[j])) continue;
    const varianceA = model.covariances[(top * d + j) * d + j];
    const varianceB = model.covariances[(second * d + j) * d + j];
    const deltaA = x[j] - model.means[top * d + j];
    const deltaB = x[j] - model.means[second * d + j];
    const contribution = -0.5 * (Math.log(varianceA) - Math.log(varianceB) + (deltaA * deltaA) / varianceA - (deltaB * deltaB) / varianceB);
    terms.push({
      feature: features[j],
      label: featureLabel(features[j]),
      contribution,
      fits: contribution >= 0 ? segmentNames[top] : segmentNames[second],
    });
  }
  terms.sort((a, b) => Math.abs(b.contribution) - Math.abs(a.contribution));
  return {
    terms,
    priorLogOdds: Math.log(model.weights[top] / model.weights[second]),
    method: model.covarianceType === 'diag' || model.covarianceType === 'spherical' ? 'exact' : 'marginal',
    text: whyText(terms, Math.log(model.weights[top] / model.weights[second]), segmentNames[top], segmentNames[second]),
  };
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
