/**
 * The per-customer features Spendmix computes from receipts and visits (DESIGN.md §4), with the
 * words the screens and the borderline "why" use for them. Values are in original units: euros,
 * visits, days, months, shares in [0, 1].
 */

export const computedFeatureNames = [
  'spend_per_month',
  'visits_per_month',
  'average_basket',
  'days_since_last_visit',
  'tenure_months',
  'fresh_share',
  'spend_trend',
  'refund_share',
  'purchases',
] as const;

export type ComputedFeatureName = (typeof computedFeatureNames)[number];

export interface FeatureDescription {
  /** Plain words for sentences ("basket size fits Tier 2"). */
  label: string;
  /** Unit shown beside values. */
  unit: 'EUR' | 'EUR per month' | 'visits per month' | 'days' | 'months' | 'share' | 'purchases' | '';
  /** What the number means, for tooltips and the overview sheet. */
  meaning: string;
  /** Smallest value the definition allows (log1p needs values above −1). */
  minimum: number;
}

export const featureDescriptions: Record<ComputedFeatureName, FeatureDescription> = {
  spend_per_month: {
    label: 'spend per month',
    unit: 'EUR per month',
    meaning: 'Net spend in the window (refunds subtracted) divided by the months the customer was observed in it.',
    minimum: -Infinity,
  },
  visits_per_month: {
    label: 'visit rate',
    unit: 'visits per month',
    meaning: 'Store and online visits in the window (from the visits file, or purchases where there is none) per observed month.',
    minimum: 0,
  },
  average_basket: {
    label: 'basket size',
    unit: 'EUR',
    meaning: 'Net spend in the window divided by the number of purchases.',
    minimum: -Infinity,
  },
  days_since_last_visit: {
    label: 'days since last visit',
    unit: 'days',
    meaning: 'Days from the last visit or purchase up to the as-of date.',
    minimum: 0,
  },
  tenure_months: {
    label: 'tenure',
    unit: 'months',
    meaning: 'Months from joining (or the first purchase, whichever is earlier) to the as-of date.',
    minimum: 0,
  },
  fresh_share: {
    label: 'fresh share',
    unit: 'share',
    meaning: 'Share of purchase amounts in fresh departments; empty when the receipts carry no departments.',
    minimum: 0,
  },
  spend_trend: {
    label: 'spend trend',
    unit: '',
    meaning: '(last 3 months − the 3 before) / (their sum): −1 all earlier, 0 flat, +1 all recent.',
    minimum: -1,
  },
  refund_share: {
    label: 'refund share',
    unit: 'share',
    meaning: 'Refunded amount divided by purchased amount in the window.',
    minimum: 0,
  },
  purchases: {
    label: 'purchases',
    unit: 'purchases',
    meaning: 'Distinct receipts with a positive amount in the window.',
    minimum: 0,
  },
};

/** Label for any feature name, including imported ones (which are shown as they are named). */
export function featureLabel(name: string): string {
  return (featureDescriptions as Record<string, FeatureDescription>)[name]?.label ?? name.replace(/_/g, ' ');
}

export function isComputedFeature(name: string): name is ComputedFeatureName {
  return (computedFeatureNames as readonly string[]).includes(name);
}

/** Unit of any feature: a computed one's own, none for imported features (we do not know it). */
export function featureUnit(name: string): string {
  return isComputedFeature(name) ? featureDescriptions[name].unit : '';
}
