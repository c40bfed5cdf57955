import { InputError, throwIfAborted } from '../errors.js';
import { EVENT_NO_RECEIPT, MonthEvents, drawCustomerMonth, type CustomerState } from './activity.js';
import { CATEGORIES, CHAIN_NAME, STORES } from './chain.js';
import { AsciiSink, fixedWidthBytes } from './ascii-sink.js';
import { FIRST_DATE, LAST_DATE, LAST_DAY, MINUTES_PER_DAY, MONTHS, isoDateOf } from './calendar.js';
import { chooseAtypical, drawCustomer } from './customers.js';
import { DEMO_FILES, DemoFileSet, prepareOutputFolder, type DemoFileKind } from './output-folder.js';

/** A demo, not a load test: 200,000 customers is about 2 GB of CSV (the contract's limit too). */
export const MAX_CUSTOMERS = 200_000;
/** Bump when the generator's output changes for the same seed (the committed sample with it). */
export const GENERATOR_VERSION = 1;

export interface DemoChainOptions {
  outDir: string;
  /** Size and seed (their defaults are the contract's demo settings, src/api/contract/export.ts). */
  customers: number;
  seed: number;
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
  const { customers, seed } = options;
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
  const pieces = rowPieces(states);
  const receiptSink = files.sink('receipts');
  const visitSink = files.sink('visits');
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
      const customerAt = events.customer[e] * pieces.customerIdWidth;
      const storeAt = events.store[e] * STORE_ID_WIDTH;
      const minute = events.minute[e];
      // visits.csv: customer_id,date,store_id,channel
      visitSink.bytes(pieces.customerIds, customerAt, pieces.customerIdWidth);
      visitSink.byte(COMMA);
      writeDateTime(visitSink, pieces, minute);
      visitSink.byte(COMMA);
      visitSink.bytes(pieces.storeIds, storeAt, STORE_ID_WIDTH);
      visitSink.bytes(events.online[e] ? pieces.online : pieces.store);
      visitSink.endRow();
      visits++;
      if (events.kind[e] === EVENT_NO_RECEIPT) continue;
      receipts++;
      if (events.rowCents[events.rowStart[e]] < 0) refunds++;
      // receipts.csv: receipt_id,customer_id,store_id,date,category,amount — one row per department
      for (let row = events.rowStart[e]; row < events.rowEnd[e]; row++) {
        receiptSink.byte(LETTER_R);
        receiptSink.digits(receipts, RECEIPT_NUMBER_WIDTH);
        receiptSink.byte(COMMA);
        receiptSink.bytes(pieces.customerIds, customerAt, pieces.customerIdWidth);
        receiptSink.byte(COMMA);
        receiptSink.bytes(pieces.storeIds, storeAt, STORE_ID_WIDTH);
        receiptSink.byte(COMMA);
        writeDateTime(receiptSink, pieces, minute);
        receiptSink.byte(COMMA);
        receiptSink.bytes(pieces.categories[events.rowCategory[row]]);
        receiptSink.cents(events.rowCents[row]);
        receiptSink.byte(NEWLINE);
        receiptSink.endRow();
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

const COMMA = 44;
const NEWLINE = 10;
const LETTER_R = 82;
const STORE_ID_WIDTH = 3;
const RECEIPT_NUMBER_WIDTH = 7;
const DATE_WIDTH = 10;

/** The fixed pieces rows are made of, as bytes: ids, dates, departments, channels. */
function rowPieces(states: CustomerState[]) {
  const ids = states.map((state) => state.customer.id);
  const customerIdWidth = ids[0].length;
  return {
    customerIdWidth,
    customerIds: fixedWidthBytes(ids, customerIdWidth),
    storeIds: fixedWidthBytes(
      STORES.map((store) => store.id),
      STORE_ID_WIDTH,
    ),
    days: fixedWidthBytes(
      Array.from({ length: LAST_DAY + 1 }, (_, day) => isoDateOf(day)),
      DATE_WIDTH,
    ),
    categories: CATEGORIES.map((category) => Buffer.from(`${category},`, 'latin1')),
    online: Buffer.from(',online\n', 'latin1'),
    store: Buffer.from(',store\n', 'latin1'),
    timeTail: Buffer.from(':00', 'latin1'),
  };
}

/** "2025-03-14T17:42:00": the bytes of formatMinute. */
function writeDateTime(sink: AsciiSink, pieces: ReturnType<typeof rowPieces>, minute: number): void {
  const day = Math.floor(minute / MINUTES_PER_DAY);
  const minuteOfDay = minute - day * MINUTES_PER_DAY;
  const hour = Math.floor(minuteOfDay / 60);
  sink.bytes(pieces.days, day * DATE_WIDTH, DATE_WIDTH);
  sink.byte(84); // 'T'
  sink.digits(hour, 2);
  sink.byte(58); // ':'
  sink.digits(minuteOfDay - hour * 60, 2);
  sink.bytes(pieces.timeTail);
}

/** Cents as EUR with two decimals ("-3.05"), without floating-point rounding. */
export function formatCents(cents: number): string {
  const magnitude = Math.abs(cents);
  const euros = Math.floor(magnitude / 100);
  const rest = magnitude - euros * 100;
  return `${cents < 0 ? '-' : ''}${euros}.${rest < 10 ? '0' : ''}${rest}`;
}
