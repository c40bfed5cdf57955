/**
 * Why an atypical customer fits no segment well (DESIGN.md §7): the features that are extreme,
 * in original units and percentiles against every placed customer of the run ("spend per month
 * EUR 10,918, above 99.9 % of customers"); when no feature is extreme on its own, the rare
 * combination of the two most unusual ones. Atypical means a low mixture density, which
 * combining components into segments does not change, so the reason is worked out once per run.
 */
import type { AtypicalTerm, AtypicalWhy } from '../api/contract.js';
import { featureLabel, featureUnit, featureValueWords } from '../features/definitions.js';
import { countBelowSorted } from '../features/quantiles.js';

/** A share beyond this is extreme on its own (the 2.5 % tails on each side). */
export const EXTREME_SHARE = 0.975;
/** Extreme features named at most; unusual ones named when none is extreme. */
const EXTREME_TERMS = 3;
const COMBINATION_TERMS = 2;

/** One feature's term as stored with the run (label, unit and words are added when read). */
export type StoredAtypicalTerm = Omit<AtypicalTerm, 'label' | 'unit'>;

/** A feature's values over the run's placed customers, sorted ascending (NaN left out). */
export interface SortedFeature {
  feature: string;
  sorted: Float64Array;
}

/** Values strictly above x. */
function countAbove(sorted: Float64Array, x: number): number {
  let low = 0;
  let high = sorted.length;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (sorted[middle] <= x) low = middle + 1;
    else high = middle;
  }
  return sorted.length - low;
}

/**
 * The terms of one customer: for each feature with a value, the share of placed customers it lies
 * above (or below, whichever is larger), most extreme first; the extreme ones (up to three), or
 * the two most unusual when none is extreme.
 */
export function atypicalTerms(values: readonly number[], features: readonly SortedFeature[]): StoredAtypicalTerm[] {
  const terms: StoredAtypicalTerm[] = [];
  features.forEach(({ feature, sorted }, j) => {
    const value = values[j];
    if (!Number.isFinite(value) || sorted.length === 0) return;
    const above = countBelowSorted(sorted, value) / sorted.length;
    const below = countAbove(sorted, value) / sorted.length;
    const direction = above >= below ? 'above' : 'below';
    const share = Math.max(above, below);
    terms.push({ feature, value, direction, share, extreme: share >= EXTREME_SHARE });
  });
  terms.sort((a, b) => b.share - a.share);
  const extreme = terms.filter((term) => term.extreme);
  return extreme.length > 0 ? extreme.slice(0, EXTREME_TERMS) : terms.slice(0, COMBINATION_TERMS);
}

/** A share as a percentage that never overstates it: 0.99968 → "99.9 %". */
function percentWords(share: number): string {
  const floored = Math.floor(share * 1000) / 10;
  return `${floored.toLocaleString('en-GB', { minimumFractionDigits: floored < 99 && Number.isInteger(floored) ? 0 : 1, maximumFractionDigits: 1 })} %`;
}

function termWords(term: StoredAtypicalTerm): string {
  return `${featureLabel(term.feature)} ${featureValueWords(term.feature, term.value)}, ${term.direction} ${percentWords(term.share)} of customers`;
}

/** The reason in the contract's form, with its sentence. */
export function atypicalWhy(stored: readonly StoredAtypicalTerm[]): AtypicalWhy {
  const terms = stored.map((term) => ({ ...term, label: featureLabel(term.feature), unit: featureUnit(term.feature) }));
  const words = stored.map(termWords);
  let text: string;
  if (stored.length === 0) text = 'fits no segment well, though no feature stands out';
  else if (stored.some((term) => term.extreme)) text = words.join('; ');
  else text = `no feature is extreme on its own; the combination is rare: ${words.join(', with ')}`;
  return { terms, text };
}
