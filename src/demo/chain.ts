/**
 * The invented demo chain, Larkmoor Fresh Markets: its stores, departments and the latent
 * shopper profiles the generator draws customers from. Every name here is made up.
 */

export const CHAIN_NAME = 'Larkmoor Fresh Markets';

/** 16 stores in the invented Larkmoor Vale; the place names are made up on purpose. */
export const STORE_PLACES = [
  'Market Square',
  'Bramblequay',
  'Wrenfeather Cross',
  'Cindervale',
  'Thistlewend',
  'Oxhollow Rise',
  'Fennickdown',
  'Quillmere',
  'Saltbarrow Quay',
  'Harrowdeep',
  'Mistlecombe',
  'Duskwater Green',
  'Pebblestoke',
  'Amberlash',
  'Corriwick End',
  'Juniper Fold',
] as const;

export interface Store {
  id: string;
  name: string;
}

export const STORES: Store[] = STORE_PLACES.map((place, index) => ({
  id: `S${String(index + 1).padStart(2, '0')}`,
  name: `Larkmoor Fresh ${place}`,
}));

/** Till departments; a receipt is split into one row per department it touches. */
export const CATEGORIES = [
  'fresh',
  'bakery',
  'dairy',
  'meat',
  'pantry',
  'frozen',
  'drinks',
  'household',
  'personal_care',
] as const;
export type Category = (typeof CATEGORIES)[number];

/** Department mix as relative weights, in CATEGORIES order. */
type CategoryMix = readonly [number, number, number, number, number, number, number, number, number];

export interface ShopperProfile {
  /** Name written to truth.csv. */
  name: string;
  /** Share among the customers drawn from the spend profiles. */
  share: number;
  /** Typical purchase visits per month. */
  visitsPerMonth: number;
  /** Typical basket in EUR. */
  basketEur: number;
  /** Share of purchases made online (delivery from the home store). */
  onlineShare: number;
  categoryMix: CategoryMix;
}

/**
 * Four everyday profiles that overlap (so some customers are genuinely borderline) and a small
 * high-value profile with clearly higher spend. Spend per month ≈ visits × basket:
 * top-up ≈ €22, regular ≈ €88, daily ≈ €84 (many small baskets), weekly family ≈ €231,
 * premium ≈ €770.
 */
export const SPEND_PROFILES: ShopperProfile[] = [
  {
    name: 'top-up',
    share: 0.25,
    visitsPerMonth: 1.2,
    basketEur: 18,
    onlineShare: 0.02,
    categoryMix: [0.8, 1.0, 1.0, 0.3, 1.1, 0.5, 1.4, 0.9, 0.6],
  },
  {
    name: 'regular',
    share: 0.3,
    visitsPerMonth: 2.5,
    basketEur: 35,
    onlineShare: 0.05,
    categoryMix: [1.1, 0.8, 1.0, 0.7, 1.1, 0.6, 0.8, 0.7, 0.5],
  },
  {
    name: 'daily',
    share: 0.17,
    visitsPerMonth: 6,
    basketEur: 14,
    onlineShare: 0.01,
    categoryMix: [1.2, 1.5, 1.1, 0.4, 0.5, 0.3, 1.0, 0.3, 0.3],
  },
  {
    name: 'weekly-family',
    share: 0.24,
    visitsPerMonth: 3.5,
    basketEur: 66,
    onlineShare: 0.12,
    categoryMix: [1.2, 0.8, 1.1, 1.0, 1.2, 0.9, 0.7, 0.9, 0.6],
  },
  {
    name: 'premium',
    share: 0.04,
    visitsPerMonth: 7,
    basketEur: 110,
    onlineShare: 0.15,
    categoryMix: [1.6, 1.0, 1.0, 1.4, 0.7, 0.5, 1.1, 0.6, 0.7],
  },
];

/** Catering buyers: very large baskets of a few departments; they fit no profile well. */
export const ATYPICAL_PROFILE: ShopperProfile = {
  name: 'atypical',
  share: 0,
  visitsPerMonth: 3,
  basketEur: 950,
  onlineShare: 0.3,
  categoryMix: [0.8, 0.4, 0.6, 1.0, 1.6, 1.0, 1.5, 1.2, 0.1],
};

/** truth.csv names for the two life-cycle groups (their spend profile is drawn as usual). */
export const LAPSING_PROFILE_NAME = 'lapsing';
export const NEW_PROFILE_NAME = 'new';
