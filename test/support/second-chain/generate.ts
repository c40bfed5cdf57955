/**
 * Writes the second test chain (Marrowdine Provisions, invented) as the files an analyst would
 * import — receipts.csv (one row per receipt, no departments, date and time in separate columns,
 * an item count), visits.csv (store visits, no channel), customers.csv — plus truth.csv (each
 * customer's generated tier and group, and the day a customer who drifted away last shopped; for
 * tests only), stores.csv and manifest.json. Same seed and size,
 * same bytes. Rows are written customer by customer, each customer's in time order.
 */
import { closeSync, mkdirSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';
import { join, resolve } from 'node:path';
import {
  ATYPICAL_KINDS,
  CHAIN_NAME,
  DAYS_IN_AVERAGE_MONTH,
  FIRST_DATE,
  LAST_DATE,
  LAST_DAY_NUMBER,
  POPULATION,
  SEPARATED_SPEND_TIERS,
  SPEND_TIERS,
  STORE_HOME_WEIGHTS,
  STORES,
  TRIPS,
  dayNumber,
  isoDay,
  monthOfDay,
  type SpendTier,
} from './chain.js';
import { Draws } from './draws.js';

/** Small and fast by default (a few seconds); the largest size keeps a test chain a test chain. */
export const CHAIN_SIZE = { defaultCustomers: 3500, defaultSeed: 12, maxCustomers: 100_000 } as const;

export interface SecondChainOptions {
  /** Folder for the files; created when missing. Files of an earlier generation are replaced. */
  outDir: string;
  /** Number of customers (default CHAIN_SIZE.defaultCustomers). */
  customers?: number;
  /** Generator seed, 0 to 2^32 − 1 (default CHAIN_SIZE.defaultSeed). */
  seed?: number;
  /** The tiers as first written ('overlapping', the default) or further apart ('separated'; chain.ts). */
  tiers?: TierSpacing;
}

export type TierSpacing = 'overlapping' | 'separated';

const TIERS_BY_SPACING: Record<TierSpacing, readonly SpendTier[]> = { overlapping: SPEND_TIERS, separated: SEPARATED_SPEND_TIERS };

/** truth.csv `group`: an ordinary customer, one who joined too recently to place, or a business buyer. */
export type TruthGroup = 'steady' | 'new' | 'atypical';

export interface SecondChainResult {
  dir: string;
  chain: string;
  customers: number;
  seed: number;
  tierSpacing: TierSpacing;
  firstDate: string;
  lastDate: string;
  /** Receipt rows: purchases plus refunds (one row per receipt). */
  receipts: number;
  purchases: number;
  refunds: number;
  visits: number;
  /** Sum of all receipt amounts in cents (refunds negative). */
  amountCents: number;
  /** Customers per truth.csv tier (the four tiers and "atypical"). */
  tiers: Record<string, number>;
  groups: Record<TruthGroup, number>;
  consent: { yes: number; no: number; unknown: number };
  files: { receipts: string; visits: string; customers: string; truth: string; stores: string; manifest: string };
}

const FILES = {
  receipts: 'receipts.csv',
  visits: 'visits.csv',
  customers: 'customers.csv',
  truth: 'truth.csv',
  stores: 'stores.csv',
  manifest: 'manifest.json',
} as const;

/** Appends text to a file under a temporary name; `commit` moves it into place. */
class FileWriter {
  private readonly partPath: string;
  private readonly fd: number;
  private pending: string[] = [];
  private pendingLength = 0;
  private open = true;

  constructor(readonly path: string) {
    this.partPath = `${path}.part`;
    this.fd = openSync(this.partPath, 'w');
  }

  write(text: string): void {
    this.pending.push(text);
    this.pendingLength += text.length;
    if (this.pendingLength > 1 << 20) this.flush();
  }

  private flush(): void {
    if (this.pending.length > 0) writeSync(this.fd, this.pending.join(''));
    this.pending = [];
    this.pendingLength = 0;
  }

  /** Writes what is pending and closes the file; a second call does nothing. */
  close(): void {
    if (!this.open) return;
    this.open = false;
    try {
      this.flush();
    } finally {
      closeSync(this.fd);
    }
  }

  commit(): void {
    renameSync(this.partPath, this.path);
  }

  discard(): void {
    rmSync(this.partPath, { force: true });
  }
}

interface Customer {
  id: string;
  tier: string;
  group: TruthGroup;
  behaviour: Omit<SpendTier, 'share' | 'driftShare'>;
  joinedDay: number;
  consent: 'yes' | 'no' | '';
  homeStore: number;
  tripsPerMonth: number;
  usualBasketEur: number;
  /** Last day the customer shops (the last day of the history unless they drifted away). */
  lastShoppingDay: number;
  /** Whether the customer drifted away (truth.csv `stopped_on` then holds `lastShoppingDay`). */
  drifted: boolean;
}

/** One row's worth of a customer's activity: a purchase, a refund, or a visit without a receipt. */
interface Activity {
  minute: number;
  store: number;
  /** Cents; 0 for a visit without a receipt. */
  cents: number;
  items: number;
}

export function customerIdOf(index: number): string {
  return `70${String(index + 1).padStart(7, '0')}`;
}

export function atypicalCountFor(customers: number): number {
  return Math.max(customers >= 100 ? 2 : 0, Math.round(customers / POPULATION.customersPerAtypical));
}

/** Which customer indices buy for a business, and which kind each is (taken in turn). */
function chooseAtypical(customers: number, draws: Draws): Map<number, number> {
  const chosen = new Map<number, number>();
  const wanted = Math.min(customers, atypicalCountFor(customers));
  while (chosen.size < wanted) {
    const index = draws.wholeBetween(0, customers - 1);
    if (!chosen.has(index)) chosen.set(index, chosen.size % ATYPICAL_KINDS.length);
  }
  return chosen;
}

function drawCustomer(index: number, draws: Draws, atypicalKind: number | undefined, tiers: readonly SpendTier[]): Customer {
  const tierIndex = draws.pick(tiers.map((tier) => tier.share));
  const tier = tiers[tierIndex];
  const atypical = atypicalKind !== undefined;
  const behaviour = atypical ? ATYPICAL_KINDS[atypicalKind] : tier;
  const group: TruthGroup = atypical ? 'atypical' : draws.chance(POPULATION.newShare) ? 'new' : 'steady';

  let joinedDay: number;
  if (group === 'new') {
    const [nearest, farthest] = POPULATION.newJoinedWithinDays;
    joinedDay = LAST_DAY_NUMBER - draws.wholeBetween(nearest, farthest);
  } else if (draws.chance(POPULATION.joinedBeforeShare)) {
    joinedDay = draws.wholeBetween(dayNumber(POPULATION.earliestJoined), -1);
  } else {
    joinedDay = draws.wholeBetween(0, LAST_DAY_NUMBER - POPULATION.latestPlaceableJoinBeforeEndDays);
  }

  const consentDraw = draws.unit();
  const consent = consentDraw < POPULATION.consent.yes ? 'yes' : consentDraw < POPULATION.consent.yes + POPULATION.consent.no ? 'no' : '';
  const drifts = !atypical && group === 'steady' && draws.chance(tier.driftShare);
  return {
    id: customerIdOf(index),
    tier: atypical ? behaviour.name : tier.name,
    group,
    behaviour,
    joinedDay,
    consent,
    homeStore: draws.pick(STORE_HOME_WEIGHTS),
    tripsPerMonth: draws.gamma(behaviour.visitsShape, behaviour.visitsMean),
    usualBasketEur: draws.logNormal(behaviour.basketMedian, behaviour.basketLogSd),
    lastShoppingDay: drifts ? LAST_DAY_NUMBER - draws.wholeBetween(0, POPULATION.driftDays - 1) : LAST_DAY_NUMBER,
    drifted: drifts,
  };
}

const MINUTES_PER_DAY = 1440;

/** A minute of the day within opening hours that this customer has not used yet (the visit key is unique). */
function freeMinute(day: number, used: Set<number>, draws: Draws): number {
  for (;;) {
    const minute = day * MINUTES_PER_DAY + draws.wholeBetween(TRIPS.openingHour * 60, TRIPS.closingHour * 60 - 1);
    if (!used.has(minute)) {
      used.add(minute);
      return minute;
    }
  }
}

function storeFor(customer: Customer, draws: Draws): number {
  if (!draws.chance(customer.behaviour.awayShare)) return customer.homeStore;
  const other = draws.wholeBetween(0, STORES.length - 2);
  return other >= customer.homeStore ? other + 1 : other;
}

/** The customer's trips as a Poisson process at their own rate, from joining (or the first day) to their last day. */
function drawActivity(customer: Customer, draws: Draws): Activity[] {
  const activity: Activity[] = [];
  const used = new Set<number>();
  const ratePerDay = customer.tripsPerMonth / DAYS_IN_AVERAGE_MONTH;
  const start = Math.max(0, customer.joinedDay);
  for (let t = start + draws.exponential(ratePerDay); t < customer.lastShoppingDay + 1; t += draws.exponential(ratePerDay)) {
    const day = Math.floor(t);
    const store = storeFor(customer, draws);
    const basketEur =
      draws.logNormal(customer.usualBasketEur, customer.behaviour.tripLogSd) * (monthOfDay(day) === 12 ? TRIPS.decemberBasketFactor : 1);
    const cents = Math.max(TRIPS.minimumBasketCents, Math.round(basketEur * 100));
    const items = Math.max(1, Math.round(basketEur / draws.logNormal(TRIPS.itemPrice, 0.25)));
    activity.push({ minute: freeMinute(day, used, draws), store, cents, items });

    if (draws.chance(TRIPS.refundPerPurchase)) {
      const [soonest, latest] = TRIPS.refundDelayDays;
      const refundDay = day + draws.wholeBetween(soonest, latest);
      const refundCents = -Math.max(1, Math.round(cents * (0.1 + 0.9 * draws.unit())));
      if (refundDay <= customer.lastShoppingDay) activity.push({ minute: freeMinute(refundDay, used, draws), store, cents: refundCents, items: 1 });
    }
    if (draws.chance(TRIPS.visitOnlyPerTrip)) {
      const visitDay = Math.min(customer.lastShoppingDay, day + draws.wholeBetween(0, 6));
      activity.push({ minute: freeMinute(visitDay, used, draws), store: storeFor(customer, draws), cents: 0, items: 0 });
    }
  }
  return activity.sort((a, b) => a.minute - b.minute);
}

const twoDigits = (value: number) => (value < 10 ? `0${value}` : String(value));

function dateAndTime(minute: number): [string, string] {
  const day = Math.floor(minute / MINUTES_PER_DAY);
  const ofDay = minute - day * MINUTES_PER_DAY;
  return [isoDay(day), `${twoDigits(Math.floor(ofDay / 60))}:${twoDigits(ofDay % 60)}`];
}

/** Generates the chain into `outDir` and returns what it wrote. */
export function generateSecondChain(options: SecondChainOptions): SecondChainResult {
  const customers = options.customers ?? CHAIN_SIZE.defaultCustomers;
  const seed = options.seed ?? CHAIN_SIZE.defaultSeed;
  if (!Number.isSafeInteger(customers) || customers < 1 || customers > CHAIN_SIZE.maxCustomers) {
    throw new RangeError(`customers must be a whole number from 1 to ${CHAIN_SIZE.maxCustomers}; got ${customers}`);
  }
  if (!Number.isSafeInteger(seed) || seed < 0 || seed > 0xffffffff) throw new RangeError(`seed must be a whole number from 0 to ${0xffffffff}; got ${seed}`);
  const tierSpacing = options.tiers ?? 'overlapping';
  if (!(tierSpacing in TIERS_BY_SPACING)) throw new RangeError(`tiers must be "overlapping" or "separated"; got "${tierSpacing}"`);
  const dir = resolve(options.outDir);
  mkdirSync(dir, { recursive: true });
  const writers = Object.fromEntries(Object.entries(FILES).map(([kind, name]) => [kind, new FileWriter(join(dir, name))])) as Record<
    keyof typeof FILES,
    FileWriter
  >;
  try {
    const counts = writeChain(writers, customers, seed, TIERS_BY_SPACING[tierSpacing]);
    const result: SecondChainResult = {
      dir,
      chain: CHAIN_NAME,
      customers,
      seed,
      tierSpacing,
      firstDate: FIRST_DATE,
      lastDate: LAST_DATE,
      ...counts,
      files: Object.fromEntries(Object.entries(writers).map(([kind, writer]) => [kind, writer.path])) as SecondChainResult['files'],
    };
    const { dir: _dir, files: _files, ...manifest } = result;
    writers.manifest.write(`${JSON.stringify({ ...manifest, note: 'truth.csv is for tests only; the app never reads it.' }, null, 2)}\n`);
    for (const writer of Object.values(writers)) writer.close();
    for (const writer of Object.values(writers)) writer.commit();
    return result;
  } catch (error) {
    for (const writer of Object.values(writers)) {
      try {
        writer.close();
      } catch {
        // the original error is the one to report
      }
      writer.discard();
    }
    throw error;
  }
}

function writeChain(writers: Record<keyof typeof FILES, FileWriter>, customers: number, seed: number, spendTiers: readonly SpendTier[]) {
  const master = new Draws(seed);
  const atypical = chooseAtypical(customers, new Draws(master.childSeed()));
  const receiptNumbers = STORES.map(() => 0);
  const tiers: Record<string, number> = Object.fromEntries([...spendTiers.map((tier) => [tier.name, 0]), [ATYPICAL_KINDS[0].name, 0]]);
  const groups: Record<TruthGroup, number> = { steady: 0, new: 0, atypical: 0 };
  const consent = { yes: 0, no: 0, unknown: 0 };
  let purchases = 0;
  let refunds = 0;
  let visits = 0;
  let amountCents = 0;

  writers.receipts.write('receipt_id,customer_id,store_id,date,time,amount,items\n');
  writers.visits.write('customer_id,date,time,store_id\n');
  writers.customers.write('customer_id,joined,marketing_consent,home_store\n');
  writers.truth.write('customer_id,tier,group,stopped_on\n');
  writers.stores.write(`store_id,name\n${STORES.map((store) => `${store.id},${store.name}\n`).join('')}`);

  for (let index = 0; index < customers; index++) {
    const draws = new Draws(master.childSeed());
    const customer = drawCustomer(index, draws, atypical.get(index), spendTiers);
    tiers[customer.tier]++;
    groups[customer.group]++;
    consent[customer.consent === '' ? 'unknown' : customer.consent]++;
    writers.customers.write(`${customer.id},${isoDay(customer.joinedDay)},${customer.consent},${STORES[customer.homeStore].id}\n`);
    writers.truth.write(`${customer.id},${customer.tier},${customer.group},${customer.drifted ? isoDay(customer.lastShoppingDay) : ''}\n`);

    for (const event of drawActivity(customer, draws)) {
      const [date, time] = dateAndTime(event.minute);
      const store = STORES[event.store].id;
      writers.visits.write(`${customer.id},${date},${time},${store}\n`);
      visits++;
      if (event.cents === 0) continue;
      const receiptId = `${store}-${String(++receiptNumbers[event.store]).padStart(7, '0')}`;
      writers.receipts.write(`${receiptId},${customer.id},${store},${date},${time},${(event.cents / 100).toFixed(2)},${event.items}\n`);
      if (event.cents > 0) purchases++;
      else refunds++;
      amountCents += event.cents;
    }
  }
  return { receipts: purchases + refunds, purchases, refunds, visits, amountCents, tiers, groups, consent };
}
