import { createHash } from 'node:crypto';
import { closeSync, existsSync, mkdirSync, mkdtempSync, openSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import {
  CATEGORIES,
  CHAIN_NAME,
  DEMO_FILES,
  STORES,
  atypicalCount,
  generateDemoChain,
  type DemoChainResult,
} from '../src/demo/index.js';
import { DEFAULT_DEMO_CUSTOMERS, DEFAULT_DEMO_SEED } from '../src/api/contract.js';
import { AsciiSink } from '../src/demo/ascii-sink.js';
import { STORE_PLACES } from '../src/demo/chain.js';
import { formatCents } from '../src/demo/generate.js';
import { buildMessyFiles, messyReadme } from '../src/demo/messy.js';
import { CancelledError, InputError } from '../src/errors.js';

const projectRoot = fileURLToPath(new URL('..', import.meta.url));
const sampleDir = join(projectRoot, 'demo-data', 'sample');
const messyDir = join(projectRoot, 'demo-data', 'messy');

const freshFolder = () => mkdtempSync(join(tmpdir(), 'spendmix-demo-'));
const sha256 = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

/** Data rows of one of the generator's CSV files, split on commas (it writes no quoted fields). */
function rowsOf(path: string): string[][] {
  const lines = readFileSync(path, 'utf8').split('\n');
  expect(lines.pop()).toBe(''); // every line, the last included, ends with a newline
  return lines.slice(1).map((line) => line.split(','));
}

/** One entry per receipt (its rows summed), so the checks below walk 370,000 receipts, not every row. */
interface ReceiptSummary {
  id: string;
  customerId: string;
  storeId: string;
  date: string;
  cents: number;
  negativeRows: number;
  rows: number;
}

function summariseReceipts(rows: string[][]): ReceiptSummary[] {
  const summaries: ReceiptSummary[] = [];
  let current: ReceiptSummary | undefined;
  for (const [id, customerId, storeId, date, , amount] of rows) {
    if (current?.id !== id) {
      current = { id, customerId, storeId, date, cents: 0, negativeRows: 0, rows: 0 };
      summaries.push(current);
    }
    current.cents += Math.round(Number(amount) * 100);
    current.rows++;
    if (amount.startsWith('-')) current.negativeRows++;
  }
  return summaries;
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = sorted.length >> 1;
  return sorted.length % 2 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}

function quantile(values: number[], q: number): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
}

/**
 * Well-known grocery chains, retailers and cities (from memory). The demo's names must not
 * contain any of them as a word.
 */
const REAL_NAMES = [
  'Tesco', 'Sainsbury', 'Asda', 'Morrisons', 'Waitrose', 'Aldi', 'Lidl', 'Iceland', 'Walmart', 'Kroger',
  'Costco', 'Safeway', 'Albertsons', 'Publix', 'Target', 'Whole Foods', 'Trader Joe', 'Carrefour',
  'Auchan', 'Leclerc', 'Intermarche', 'Casino', 'Monoprix', 'Edeka', 'Rewe', 'Kaufland', 'Netto',
  'Penny', 'Albert Heijn', 'Jumbo', 'Delhaize', 'Colruyt', 'Ahold', 'Spar', 'Coop', 'Migros', 'Mercadona',
  'Esselunga', 'Conad', 'Billa', 'Hofer', 'Dunnes', 'Loblaws', 'Woolworths', 'Coles', 'Metro', 'Makro',
  'Ocado', 'Co-op', 'Londis', 'Budgens', 'Booths', 'Marks', 'Spencer', 'Meijer', 'Wegmans', 'Hy-Vee',
  'London', 'Paris', 'Berlin', 'Madrid', 'Rome', 'Amsterdam', 'Dublin', 'Brussels', 'Vienna', 'Lisbon',
  'Manchester', 'Birmingham', 'Leeds', 'Glasgow', 'Edinburgh', 'Cardiff', 'Belfast', 'Bristol', 'York',
  'Munich', 'Hamburg', 'Cologne', 'Frankfurt', 'Milan', 'Lyon', 'Marseille', 'Rotterdam', 'Antwerp',
  'Zurich', 'Geneva', 'Prague', 'Warsaw', 'Oslo', 'Stockholm', 'Copenhagen', 'Helsinki', 'Chicago',
  'Boston', 'Seattle', 'Toronto', 'Sydney', 'Melbourne', 'Cambridge', 'Oxford', 'Bath', 'Durham',
  'Kendal', 'Keswick', 'Whitby', 'Harrogate', 'Richmond', 'Windsor', 'Stratford', 'Kingston', 'Newport',
];

describe('demo chain generator: the default chain (6,000 customers, seed 2026)', () => {
  let result: DemoChainResult;
  let receipts: string[][];
  let receiptSummaries: ReceiptSummary[];
  let visits: string[][];
  let customers: string[][];
  let truth: Map<string, string>;
  const progressMonths: string[] = [];

  beforeAll(async () => {
    result = await generateDemoChain({ outDir: freshFolder(), customers: DEFAULT_DEMO_CUSTOMERS, seed: DEFAULT_DEMO_SEED, onProgress: (p) => progressMonths.push(p.month) });
    receipts = rowsOf(result.files.receipts);
    receiptSummaries = summariseReceipts(receipts);
    visits = rowsOf(result.files.visits);
    customers = rowsOf(result.files.customers);
    truth = new Map(rowsOf(result.files.truth).map(([id, profile]) => [id, profile]));
  });

  it('writes the stated files with their headers and reports progress month by month', () => {
    expect(readdirSync(result.dir).sort()).toEqual(Object.values(DEMO_FILES).sort());
    const header = (path: string) => readFileSync(path, 'utf8').slice(0, 80).split('\n')[0];
    expect(header(result.files.receipts)).toBe('receipt_id,customer_id,store_id,date,category,amount');
    expect(header(result.files.visits)).toBe('customer_id,date,store_id,channel');
    expect(header(result.files.customers)).toBe('customer_id,joined,marketing_consent,home_store');
    expect(header(result.files.stores)).toBe('store_id,name');
    expect(header(result.files.truth)).toBe('customer_id,profile');
    expect(progressMonths[0]).toBe('2025-01');
    expect(progressMonths.at(-1)).toBe('2026-11');
    expect(progressMonths).toHaveLength(23);
  });

  it('has 6,000 customers, at least 300,000 distinct receipts and counts that match the files', () => {
    expect(result.customers).toBe(6000);
    expect(customers).toHaveLength(6000);
    expect(new Set(customers.map((row) => row[0])).size).toBe(6000);
    expect(truth.size).toBe(6000);
    expect(new Set(receiptSummaries.map((receipt) => receipt.id)).size).toBe(result.receipts);
    expect(result.receipts).toBeGreaterThanOrEqual(300_000); // DESIGN.md §10: demo --db needs 300,000
    expect(receipts).toHaveLength(result.receiptRows);
    expect(visits).toHaveLength(result.visits);
    const manifest = JSON.parse(readFileSync(result.files.manifest, 'utf8'));
    expect(manifest).toMatchObject({ seed: DEFAULT_DEMO_SEED, customers: 6000, receipts: result.receipts, visits: result.visits });
  });

  it('writes well-formed rows: ISO date-times in the history, EUR with 2 decimals, known stores and departments', () => {
    // Plain checks collected into one list: an expect() per row would take minutes on a million rows.
    const storeIds = new Set(STORES.map((store) => store.id));
    const categories = new Set<string>(CATEGORIES);
    const customerIds = new Set(customers.map((row) => row[0]));
    const amountForm = /^-?\d+\.\d\d$/;
    const dateForm = /^20(25|26)-\d\d-\d\dT\d\d:\d\d:00$/;
    const problems: string[] = [];
    let previousDate = '';
    let previousReceipt = '';
    const seenReceipts = new Set<string>();
    for (const [receiptId, customerId, storeId, date, category, amount] of receipts) {
      if (!customerIds.has(customerId)) problems.push(`unknown customer ${customerId}`);
      if (!storeIds.has(storeId)) problems.push(`unknown store ${storeId}`);
      if (!categories.has(category)) problems.push(`unknown department ${category}`);
      if (!amountForm.test(amount)) problems.push(`bad amount ${amount}`);
      if (!dateForm.test(date)) problems.push(`bad date ${date}`);
      if (date < previousDate) problems.push(`out of time order at ${receiptId}`);
      previousDate = date;
      // a receipt's department rows are together: a receipt id never comes back later
      if (receiptId !== previousReceipt) {
        if (seenReceipts.has(receiptId)) problems.push(`receipt ${receiptId} split apart`);
        seenReceipts.add(receiptId);
        previousReceipt = receiptId;
      }
      if (problems.length > 5) break;
    }
    for (const [customerId, date, storeId, channel] of visits) {
      if (!customerIds.has(customerId)) problems.push(`unknown visiting customer ${customerId}`);
      if (!storeIds.has(storeId)) problems.push(`unknown visit store ${storeId}`);
      if (channel !== 'store' && channel !== 'online') problems.push(`bad channel ${channel}`);
      if (!dateForm.test(date) || date > '2026-11-30T23:59:00') problems.push(`bad visit date ${date}`);
      if (problems.length > 5) break;
    }
    expect(problems).toEqual([]);
    expect(receipts[0][3].startsWith('2025-01-0')).toBe(true);
    expect(receipts.at(-1)![3] >= '2026-11-25' && receipts.at(-1)![3] <= '2026-11-30T23:59:00').toBe(true);
    expect(visits.some((row) => row[3] === 'online')).toBe(true);
  });

  it('gives every receipt its visit (same customer, time and store)', () => {
    const visitKeys = new Set(visits.map(([customerId, date, storeId]) => `${customerId}|${date}|${storeId}`));
    const withoutVisit = receiptSummaries.filter((r) => !visitKeys.has(`${r.customerId}|${r.date}|${r.storeId}`));
    expect(withoutVisit.slice(0, 3)).toEqual([]);
  });

  it('declines marketing for about 12 % of customers (±1.5 points)', () => {
    const consent = customers.map((row) => row[2]);
    expect(consent.every((value) => value === 'yes' || value === 'no')).toBe(true);
    const noShare = consent.filter((value) => value === 'no').length / consent.length;
    expect(noShare).toBeGreaterThan(0.105);
    expect(noShare).toBeLessThan(0.135);
  });

  it('has refunds on about 1.5 % of receipts (±0.3 points), each a receipt of negative rows only', () => {
    const mixed = receiptSummaries.filter((r) => r.negativeRows > 0 && r.negativeRows < r.rows);
    expect(mixed).toEqual([]);
    const refunds = receiptSummaries.filter((r) => r.negativeRows > 0).length;
    expect(refunds).toBe(result.refunds);
    const refundShare = refunds / receiptSummaries.length;
    expect(refundShare).toBeGreaterThan(0.012);
    expect(refundShare).toBeLessThan(0.018);
  });

  it('has about 8 % of visits without a purchase (±1 point)', () => {
    const purchases = new Set<string>();
    for (const r of receiptSummaries) if (r.cents > 0) purchases.add(`${r.customerId}|${r.date}`);
    const withoutPurchase = visits.filter(([customerId, date]) => !purchases.has(`${customerId}|${date}`)).length;
    const share = withoutPurchase / visits.length;
    expect(share).toBeGreaterThan(0.07);
    expect(share).toBeLessThan(0.09);
  });

  it('has a group too new to place: about 3 % joined in the last eight weeks, and nobody shops before joining', () => {
    const joined = new Map(customers.map(([id, date]) => [id, date]));
    const newcomers = [...truth].filter(([, profile]) => profile === 'new').map(([id]) => id);
    expect(newcomers.length / 6000).toBeGreaterThan(0.02);
    expect(newcomers.length / 6000).toBeLessThan(0.04);
    // under two months of tenure at 2026-11-30 (DESIGN.md §4: too new to place)
    expect(newcomers.filter((id) => !(joined.get(id)! >= '2026-10-01' && joined.get(id)! <= '2026-11-30'))).toEqual([]);
    expect([...truth].filter(([id, profile]) => profile !== 'new' && joined.get(id)! > '2026-09-30')).toEqual([]);
    const beforeJoining = receiptSummaries.filter((r) => r.date.slice(0, 10) < joined.get(r.customerId)!);
    expect(beforeJoining.slice(0, 3)).toEqual([]);
  });

  it('has about 15 atypical customers whose baskets are far larger than anyone else\'s', () => {
    const atypical = [...truth].filter(([, profile]) => profile === 'atypical').map(([id]) => id);
    expect(atypical).toHaveLength(atypicalCount(6000));
    expect(atypicalCount(6000)).toBe(15);
    const byCustomer = new Map<string, number[]>();
    for (const { customerId, cents } of receiptSummaries) {
      if (cents < 0) continue; // refunds are not baskets
      const list = byCustomer.get(customerId) ?? [];
      list.push(cents);
      byCustomer.set(customerId, list);
    }
    const atypicalSet = new Set(atypical);
    const medians = [...byCustomer].map(([id, list]) => ({ id, median: median(list) }));
    const atypicalMedians = medians.filter(({ id }) => atypicalSet.has(id)).map(({ median: m }) => m);
    const otherMedians = medians.filter(({ id }) => !atypicalSet.has(id)).map(({ median: m }) => m);
    expect(atypicalMedians).toHaveLength(15); // every atypical customer shops
    // Stated tolerance: the smallest atypical median basket is at least 1.5× the largest of anyone else.
    expect(Math.min(...atypicalMedians)).toBeGreaterThan(1.5 * Math.max(...otherMedians));
  });

  it('has a small high-value profile (3–5 %) with clearly higher spend, overlapping everyday profiles and lapsers', () => {
    const spend = new Map<string, number>();
    const lastReceipt = new Map<string, string>();
    for (const { customerId, date, cents } of receiptSummaries) {
      spend.set(customerId, (spend.get(customerId) ?? 0) + cents / 100);
      lastReceipt.set(customerId, date);
    }
    const monthlySpend = (profile: string) =>
      [...truth].filter(([, p]) => p === profile).map(([id]) => (spend.get(id) ?? 0) / 23);
    const premium = monthlySpend('premium');
    expect(premium.length / 6000).toBeGreaterThan(0.03);
    expect(premium.length / 6000).toBeLessThan(0.05);
    const family = monthlySpend('weekly-family');
    const regular = monthlySpend('regular');
    const topUp = monthlySpend('top-up');
    // Stated tolerance: the high-value median is at least twice the next profile's.
    expect(median(premium)).toBeGreaterThan(2 * median(family));
    // Neighbouring profiles overlap, so some customers are genuinely borderline.
    expect(quantile(regular, 0.9)).toBeGreaterThan(quantile(family, 0.1));
    expect(quantile(topUp, 0.9)).toBeGreaterThan(quantile(regular, 0.1));
    for (const profile of ['top-up', 'regular', 'daily', 'weekly-family']) {
      expect(monthlySpend(profile).length / 6000).toBeGreaterThan(0.1);
    }
    // Lapsing customers (about 7 %) stop during 2026: nothing after September.
    const lapsing = [...truth].filter(([, p]) => p === 'lapsing').map(([id]) => id);
    expect(lapsing.length / 6000).toBeGreaterThan(0.05);
    expect(lapsing.length / 6000).toBeLessThan(0.09);
    expect(lapsing.filter((id) => (lastReceipt.get(id) ?? '') >= '2026-10-01')).toEqual([]);
    expect(lapsing.filter((id) => (lastReceipt.get(id) ?? '') >= '2026-02-01').length / lapsing.length).toBeGreaterThan(0.8);
  });

  it('lifts December spend: December 2025 is at least 1.2× the mean of November 2025 and January 2026', () => {
    const byMonth = new Map<string, number>();
    for (const { date, cents } of receiptSummaries) byMonth.set(date.slice(0, 7), (byMonth.get(date.slice(0, 7)) ?? 0) + cents);
    const uplift = byMonth.get('2025-12')! / ((byMonth.get('2025-11')! + byMonth.get('2026-01')!) / 2);
    expect(uplift).toBeGreaterThan(1.2);
    expect(uplift).toBeLessThan(1.5);
  });
});

describe('demo chain generator: determinism, the committed sample and the messy files', () => {
  it('gives identical files for the same seed and different files for another seed', async () => {
    const first = await generateDemoChain({ outDir: freshFolder(), customers: 300, seed: 11 });
    const again = await generateDemoChain({ outDir: freshFolder(), customers: 300, seed: 11 });
    const other = await generateDemoChain({ outDir: freshFolder(), customers: 300, seed: 12 });
    for (const kind of Object.keys(DEMO_FILES) as (keyof typeof DEMO_FILES)[]) {
      expect(sha256(again.files[kind]), kind).toBe(sha256(first.files[kind]));
    }
    for (const kind of ['receipts', 'visits', 'customers', 'truth'] as const) {
      expect(sha256(other.files[kind]), kind).not.toBe(sha256(first.files[kind]));
    }
    expect(first.customers).toBe(300);
    expect(rowsOf(first.files.customers)).toHaveLength(300);
  });

  it('committed demo-data/sample equals a fresh generation with its seed (500 customers, seed 2026)', async () => {
    const manifest = JSON.parse(readFileSync(join(sampleDir, 'manifest.json'), 'utf8'));
    expect(manifest).toMatchObject({ customers: 500, seed: 2026 });
    const fresh = await generateDemoChain({ outDir: freshFolder(), customers: manifest.customers, seed: manifest.seed });
    for (const kind of Object.keys(DEMO_FILES) as (keyof typeof DEMO_FILES)[]) {
      expect(sha256(fresh.files[kind]), `${kind}: regenerate with npm run -s demo:sample`).toBe(
        sha256(join(sampleDir, DEMO_FILES[kind])),
      );
    }
    expect(atypicalCount(500)).toBe(3);
    const profiles = rowsOf(join(sampleDir, 'truth.csv')).map((row) => row[1]);
    expect(profiles.filter((p) => p === 'atypical')).toHaveLength(3);
    expect(profiles.filter((p) => p === 'new').length).toBeGreaterThan(5);
  });

  it('committed demo-data/messy equals its generator, and the README names every file', () => {
    const files = buildMessyFiles();
    for (const file of files) {
      expect(readFileSync(join(messyDir, file.name)).equals(file.bytes), `${file.name}: regenerate with npm run -s demo:messy`).toBe(true);
    }
    expect(readFileSync(join(messyDir, 'README.md'), 'utf8')).toBe(messyReadme(files));
    expect(readdirSync(messyDir).sort()).toEqual([...files.map((file) => file.name), 'README.md'].sort());
  });

  it('makes the messy files wrong in the ways the README says', () => {
    const byName = new Map(buildMessyFiles().map((file) => [file.name, file]));
    const text = (name: string) => byName.get(name)!.bytes.toString('utf8');
    expect(text('decimal-comma-semicolon.csv').split('\n')[1]).toMatch(/^[^,]+;[^,]+;[^,]+;[^,]+;[^,]+;\d+,\d\d$/);
    expect(text('missing-amount-column.csv').split('\n')[0]).toBe('receipt_id,customer_id,store_id,date,category');
    expect(text('ambiguous-day-month.csv').split('\n').slice(1, -1).every((line) => /,(0\d|1[0-2])\/(0\d|1[0-2])\/20\d\d /.test(line))).toBe(true);
    const windows = byName.get('windows-1252.csv')!.bytes;
    expect(windows.includes(Buffer.from('crèmerie', 'latin1'))).toBe(true); // è is 0xE8 in Windows-1252
    expect(windows.includes(Buffer.from('crèmerie', 'utf8'))).toBe(false);
    expect([...byName.get('bom-crlf-quoted.csv')!.bytes.subarray(0, 3)]).toEqual([0xef, 0xbb, 0xbf]);
    const badDates = text('bad-dates.csv').split('\n');
    const about = byName.get('bad-dates.csv')!.about;
    const lines = about.match(/on lines ([\d, ]+)\./)![1].split(', ').map(Number);
    expect(lines.map((line) => badDates[line - 1].split(',')[3])).toEqual(['2025-02-30T10:15:00', '2025-13-04T09:20:00', 'yesterday', '']);
  });
});

describe('demo chain generator: byte writer', () => {
  it('writes amounts and padded numbers exactly as formatCents and padStart do', () => {
    const path = join(freshFolder(), 'sink.txt');
    const descriptor = openSync(path, 'w');
    const sink = new AsciiSink(descriptor);
    const amounts = [0, 1, 9, 10, 99, 100, 101, 1234, 100000, 12345678, -1, -10, -99, -100, -105, -123456];
    const numbers = [0, 7, 42, 1234567, 12345678];
    for (const cents of amounts) {
      sink.cents(cents);
      sink.byte(10);
    }
    for (const value of numbers) {
      sink.digits(value, 7);
      sink.byte(10);
    }
    sink.text('done\n');
    sink.flush();
    closeSync(descriptor);
    const expected = [...amounts.map(formatCents), ...numbers.map((value) => String(value).padStart(7, '0')), 'done', ''];
    expect(readFileSync(path, 'utf8').split('\n')).toEqual(expected);
    expect(formatCents(-305)).toBe('-3.05');
    expect(formatCents(120)).toBe('1.20');
  });
});

describe('demo chain generator: names and the output folder', () => {
  it('uses no real chain, retailer or city name (deny list from memory)', () => {
    const names = [CHAIN_NAME, ...STORE_PLACES, ...STORES.map((store) => store.name), readFileSync(join(sampleDir, 'stores.csv'), 'utf8')];
    for (const real of REAL_NAMES) {
      const word = new RegExp(`\\b${real.replace(/[-\s]/g, '[-\\s]?')}\\b`, 'i');
      for (const name of names) expect(word.test(name), `${name} contains ${real}`).toBe(false);
    }
    expect(new Set(STORES.map((store) => store.name)).size).toBe(16);
  });

  it('refuses bad counts and seeds, files and folders holding other files, with InputError', async () => {
    await expect(generateDemoChain({ outDir: freshFolder(), customers: 0, seed: 1 })).rejects.toThrow(InputError);
    await expect(generateDemoChain({ outDir: freshFolder(), customers: 2.5, seed: 1 })).rejects.toThrow(/whole number/);
    await expect(generateDemoChain({ outDir: freshFolder(), customers: 5, seed: -1 })).rejects.toThrow(InputError);
    const busy = freshFolder();
    writeFileSync(join(busy, 'notes.txt'), 'keep me');
    await expect(generateDemoChain({ outDir: busy, customers: 5, seed: 1 })).rejects.toThrow(/already holds other files \(notes\.txt\)/);
    expect(readdirSync(busy)).toEqual(['notes.txt']);
    const file = join(freshFolder(), 'a-file');
    writeFileSync(file, '');
    await expect(generateDemoChain({ outDir: file, customers: 5, seed: 1 })).rejects.toThrow(/is a file, not a folder/);
    await expect(generateDemoChain({ outDir: join(file, 'below'), customers: 5, seed: 1 })).rejects.toThrow(InputError);
    await expect(generateDemoChain({ outDir: '', customers: 5, seed: 1 })).rejects.toThrow(/output folder is missing/);
  });

  it('creates a missing folder, replaces an earlier demo, and leaves it intact when cancelled', async () => {
    const folder = join(freshFolder(), 'new', 'demo');
    const first = await generateDemoChain({ outDir: folder, customers: 20, seed: 1 });
    const before = sha256(first.files.receipts);
    const controller = new AbortController();
    await expect(
      generateDemoChain({ outDir: folder, customers: 20, seed: 2, signal: controller.signal, onProgress: () => controller.abort() }),
    ).rejects.toThrow(CancelledError);
    expect(readdirSync(folder).sort()).toEqual(Object.values(DEMO_FILES).sort()); // no partial files left
    expect(sha256(first.files.receipts)).toBe(before);
    const second = await generateDemoChain({ outDir: folder, customers: 20, seed: 2 });
    expect(sha256(second.files.receipts)).not.toBe(before);
    expect(existsSync(join(folder, 'receipts.csv.partial'))).toBe(false);
    mkdirSync(join(folder, 'extra'));
    await expect(generateDemoChain({ outDir: folder, customers: 20, seed: 1 })).rejects.toThrow(/already holds other files \(extra\)/);
  });
});
