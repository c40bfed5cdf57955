import {
  ATYPICAL_PROFILE,
  CATEGORIES,
  LAPSING_PROFILE_NAME,
  NEW_PROFILE_NAME,
  SPEND_PROFILES,
  STORES,
  type ShopperProfile,
} from './chain.js';
import { dayOf, LAST_DAY } from './calendar.js';
import { SeededRandom, streamSeed } from './random.js';

/** Shares of the customer base (common practice for a loyalty base; invented for the demo). */
export const POPULATION = {
  /** Joined in the last eight weeks of the history: under two months of tenure at the end. */
  newShare: 0.03,
  /** Stop shopping at some point during 2026 (after a slow-down). */
  lapsingShare: 0.07,
  /** Of the others, joined before the history starts. */
  joinedBeforeShare: 0.72,
  /** Customers who declined marketing. */
  noConsentShare: 0.12,
  /** How often a purchase is made away from the home store. */
  awayFromHomeShare: [0.05, 0.3] as const,
};

/** About 15 atypical customers in 6,000, and at least three in any base of 150 or more. */
export function atypicalCount(customers: number): number {
  return Math.max(Math.min(3, Math.floor(customers / 50)), Math.round(customers / 400));
}

const JOINED_EARLIEST = dayOf('2016-01-01');
const NEW_JOINERS_FROM = dayOf('2026-10-05');
const NEW_JOINERS_TO = dayOf('2026-11-28');
const IN_HISTORY_JOINERS_TO = dayOf('2026-09-30');
const LAPSE_FROM = dayOf('2026-02-01');
const LAPSE_TO = dayOf('2026-09-30');

/** Bigger stores get more home customers. */
const STORE_WEIGHTS = STORES.map((_, index) => (index === 0 ? 2.2 : 0.7 + ((index * 7) % 5) * 0.15));

export interface DemoCustomer {
  id: string;
  /** The latent profile written to truth.csv. */
  truthProfile: string;
  /** The behaviour the purchases are drawn from. */
  spend: ShopperProfile;
  joinedDay: number;
  /** First and last day the customer can shop (inclusive). */
  firstActiveDay: number;
  lastActiveDay: number;
  /** Day the customer stops shopping, for the lapsing group; otherwise null. */
  lapseDay: number | null;
  marketingConsent: boolean;
  homeStore: number;
  visitsPerMonth: number;
  basketEur: number;
  onlineShare: number;
  awayFromHomeShare: number;
  categoryWeights: Float64Array;
  /** This customer's own stream: its draws do not depend on any other customer. */
  random: SeededRandom;
}

export function customerId(index: number, customers: number): string {
  return `C${String(index + 1).padStart(Math.max(5, String(customers).length), '0')}`;
}

/** Which customers are the atypical ones: a seeded draw without replacement. */
export function chooseAtypical(customers: number, seed: number): Set<number> {
  const random = new SeededRandom(streamSeed(seed, -1));
  const chosen = new Set<number>();
  const wanted = Math.min(customers, atypicalCount(customers));
  while (chosen.size < wanted) chosen.add(random.index(customers));
  return chosen;
}

export function drawCustomer(index: number, customers: number, seed: number, atypical: boolean): DemoCustomer {
  const random = new SeededRandom(streamSeed(seed, index));
  const lifecycleDraw = random.uniform();
  const lifecycle = atypical
    ? 'steady'
    : lifecycleDraw < POPULATION.newShare
      ? 'new'
      : lifecycleDraw < POPULATION.newShare + POPULATION.lapsingShare
        ? 'lapsing'
        : 'steady';
  const spend = atypical ? ATYPICAL_PROFILE : SPEND_PROFILES[random.weighted(SPEND_PROFILES.map((p) => p.share))];

  let joinedDay: number;
  let lapseDay: number | null = null;
  if (lifecycle === 'new') {
    joinedDay = NEW_JOINERS_FROM + random.index(NEW_JOINERS_TO - NEW_JOINERS_FROM + 1);
  } else {
    const latestJoin = lifecycle === 'lapsing' || atypical ? dayOf('2025-06-30') : IN_HISTORY_JOINERS_TO;
    joinedDay =
      random.uniform() < POPULATION.joinedBeforeShare
        ? JOINED_EARLIEST + random.index(-JOINED_EARLIEST)
        : random.index(latestJoin + 1);
    if (lifecycle === 'lapsing') lapseDay = LAPSE_FROM + random.index(LAPSE_TO - LAPSE_FROM + 1);
  }

  const categoryWeights = new Float64Array(CATEGORIES.length);
  for (let c = 0; c < CATEGORIES.length; c++) categoryWeights[c] = spend.categoryMix[c] * random.lognormalFactor(0.35);

  const [awayLow, awayHigh] = POPULATION.awayFromHomeShare;
  return {
    id: customerId(index, customers),
    truthProfile: atypical ? ATYPICAL_PROFILE.name : lifecycle === 'new' ? NEW_PROFILE_NAME : lifecycle === 'lapsing' ? LAPSING_PROFILE_NAME : spend.name,
    spend,
    joinedDay,
    firstActiveDay: Math.max(0, joinedDay),
    lastActiveDay: lapseDay === null ? LAST_DAY : lapseDay - 1,
    lapseDay,
    marketingConsent: random.uniform() >= POPULATION.noConsentShare,
    homeStore: random.weighted(STORE_WEIGHTS),
    // Individual spread around the profile: wide enough that neighbouring profiles overlap.
    visitsPerMonth: spend.visitsPerMonth * random.lognormalFactor(0.3),
    basketEur: spend.basketEur * random.lognormalFactor(atypical ? 0.4 : 0.25),
    onlineShare: Math.min(0.9, spend.onlineShare * random.between(0, 2)),
    awayFromHomeShare: random.between(awayLow, awayHigh),
    categoryWeights,
    random,
  };
}
