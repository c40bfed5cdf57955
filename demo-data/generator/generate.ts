import { InputError, throwIfAborted } from '../../src/errors.js';
import { EVENT_NO_RECEIPT, MonthEvents, drawCustomerMonth, type CustomerState } from './activity.js';
import { CATEGORIES, CHAIN_NAME, STORES } from './chain.js';
import { FIRST_DATE, LAST_DATE, MONTHS, formatMinute, isoDateOf } from './calendar.js';
import { chooseAtypical, drawCustomer } from './customers.js';
import { DEMO_FILES, DemoFileSet, prepareOutputFolder, type DemoFileKind } from './output-folder.js';

export const DEFAULT_CUSTOMERS = 6000;
export const DEFAULT_SEED = 2026;
/** A demo, not a load test: 200,000 customers is about 2 GB of CSV (the app's API caps it there too). */
export const MAX_CUSTOMERS = 200_000;
/** Bump when the generator's output changes for the same seed (the committed sample with it). */
export const GENERATOR_VERSION = 1;

export interface DemoChainOptions {
  outDir: string;
  customers?: number;
  seed?: number;
  /** Called after each month of history is written. */
  onProgress?: (progress: DemoProgress) => void;
  signal?: AbortSignal;
}

export interface DemoProgress {
  month: string;
  monthsDone: number;
  months: number;
  receipts: number;
}

export interface DemoChainResult {
  dir: string;
  customers: number;
  /** Distinct receipts (purchases and refunds); each has one row per department. */
  receipts: number;
  receiptRows: number;
  refunds: number;
  visits: number;
  seed: number;
  files: Record<DemoFileKind, string>;
}

const RECEIPTS_HEADER = 'receipt_id,customer_id,store_id,date,category,amount\n';
const VISITS_HEADER = 'customer_id,date,store_id,channel\n';

/**
 * Writes the invented Larkmoor Fresh Markets chain as CSV files into `outDir`: receipts split by
 * department, visits, customers, stores, and truth.csv (each customer's latent profile, for
 * tests only). Same seed and customer count, same bytes. Rows are produced month by month and
 * written as they are made, so memory does not grow with the history.
 */
export async function generateDemoChain(options: DemoChainOptions): Promise<DemoChainResult> {
  const customers = options.customers ?? DEFAULT_CUSTOMERS;
  const seed = options.seed ?? DEFAULT_SEED;
  if (!Number.isSafeInteger(customers) || customers < 1 || customers > MAX_CUSTOMERS) {
    throw new InputError(`The number of customers must be a whole number from 1 to ${MAX_CUSTOMERS}; got ${customers}.`);
  }
  if (!Number.isSafeInteger(seed) || seed < 0 || seed > 0xffffffff) {
    throw new InputError(`The seed must be a whole number from 0 to ${0xffffffff}; got ${seed}.`);
  }
  const dir = prepareOutputFolder(options.outDir);
  throwIfAborted(options.signal);

  const files = DemoFileSet.create(dir);
  try {
    const counts = await writeChain(files, customers, seed, options);
    files.commit();
    return {
      dir,
      customers,
      ...counts,
      seed,
      files: Object.fromEntries(Object.keys(DEMO_FILES).map((kind) => [kind, files.path(kind as DemoFileKind)])) as Record<
        DemoFileKind,
        string
      >,
    };
  } catch (error) {
    files.discard();
    throw error;
  }
}

/** Lets the event loop run (progress events, an abort) between months of CPU-bound work. */
const nextTurn = () => new Promise<void>((resolveTurn) => setImmediate(resolveTurn));

async function writeChain(files: DemoFileSet, customers: number, seed: number, options: DemoChainOptions) {
  const atypical = chooseAtypical(customers, seed);
  const states: CustomerState[] = [];
  files.append('customers', 'customer_id,joined,marketing_consent,home_store\n');
  files.append('truth', 'customer_id,profile\n');
  for (let index = 0; index < customers; index++) {
    const customer = drawCustomer(index, customers, seed, atypical.has(index));
    states.push({ customer, pendingRefunds: [] });
    files.append(
      'customers',
      `${customer.id},${isoDateOf(customer.joinedDay)},${customer.marketingConsent ? 'yes' : 'no'},${STORES[customer.homeStore].id}\n`,
    );
    files.append('truth', `${customer.id},${customer.truthProfile}\n`);
  }
  files.append('stores', `store_id,name\n${STORES.map((store) => `${store.id},${store.name}\n`).join('')}`);

  files.append('receipts', RECEIPTS_HEADER);
  files.append('visits', VISITS_HEADER);
  const events = new MonthEvents();
  let receipts = 0;
  let receiptRows = 0;
  let refunds = 0;
  let visits = 0;
  for (let m = 0; m < MONTHS.length; m++) {
    await nextTurn();
    throwIfAborted(options.signal);
    const month = MONTHS[m];
    events.clear();
    for (let index = 0; index < customers; index++) drawCustomerMonth(states[index], index, month, events);

    for (const e of events.timeOrder()) {
      const customerId = states[events.customer[e]].customer.id;
      const date = formatMinute(events.minute[e]);
      const storeId = STORES[events.store[e]].id;
      files.append('visits', `${customerId},${date},${storeId},${events.online[e] ? 'online' : 'store'}\n`);
      visits++;
      if (events.kind[e] === EVENT_NO_RECEIPT) continue;
      receipts++;
      if (events.rowCents[events.rowStart[e]] < 0) refunds++;
      const receiptPrefix = `R${String(receipts).padStart(7, '0')},${customerId},${storeId},${date},`;
      for (let row = events.rowStart[e]; row < events.rowEnd[e]; row++) {
        files.append('receipts', `${receiptPrefix}${CATEGORIES[events.rowCategory[row]]},${formatCents(events.rowCents[row])}\n`);
        receiptRows++;
      }
    }
    options.onProgress?.({ month: month.label, monthsDone: m + 1, months: MONTHS.length, receipts });
  }

  const manifest = {
    chain: CHAIN_NAME,
    generatorVersion: GENERATOR_VERSION,
    seed,
    customers,
    receipts,
    receiptRows,
    refunds,
    visits,
    firstDate: FIRST_DATE,
    lastDate: LAST_DATE,
    currency: 'EUR',
    note: 'truth.csv holds each customer\'s latent profile for tests only; the app never reads it.',
  };
  files.append('manifest', `${JSON.stringify(manifest, null, 2)}\n`);
  return { receipts, receiptRows, refunds, visits };
}

/** Cents as EUR with two decimals ("-3.05"), without floating-point rounding. */
export function formatCents(cents: number): string {
  const magnitude = Math.abs(cents);
  const euros = Math.floor(magnitude / 100);
  const rest = magnitude - euros * 100;
  return `${cents < 0 ? '-' : ''}${euros}.${rest < 10 ? '0' : ''}${rest}`;
}
