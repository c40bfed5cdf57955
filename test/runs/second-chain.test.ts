/**
 * The second test chain (Marrowdine Provisions, invented; test/support/second-chain) through the
 * app as an analyst uses it: the CLI's `import` of its three files, then the default `refresh`
 * at its last day. Checks what holds of the generator and of today's run; how well the run
 * recovers the generated tiers is measured by evaluateAgainstTruth (figures in the benchmark
 * test/bench/segments-against-truth.ts), and asserted here only as a floor on one chain, so that
 * a change that loses what the recency feature gained shows up.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spendmixJson, type ImportJson } from '../support/cli-runner.js';
import { SEPARATED_SPEND_TIERS, SPEND_TIERS } from '../support/second-chain/chain.js';
import { generateSecondChain, type SecondChainResult } from '../support/second-chain/generate.js';
import { evaluateAgainstTruth, evaluateDrift, placedLabels, readStoppedOn, readTruthFile, type Truth, type TruthEvaluation } from '../support/truth-evaluation.js';

const CUSTOMERS = 1000;
/** The default 12-month window ending at the chain's last day, 2026-06-30. */
const WINDOW_FIRST_DATE = '2025-07-01';
const DAYS_PER_MONTH = 365.25 / 12; // the app's tenure months (common practice)

interface RefreshJson {
  runId: number;
  customers: number;
  tooNew: number;
  borderline: number;
  atypical: number;
  segments: { name: string; customers: number }[];
}

let folder: string;
let dataDir: string;
let dbPath: string;
let chain: SecondChainResult;
let truth: Truth;
const imports: Record<string, ImportJson> = {};
let refresh: RefreshJson;
let evaluation: TruthEvaluation;

/** Data lines of one of the generator's files, split at commas (it writes no quoted fields). */
function rowsOf(name: string): string[][] {
  return readFileSync(join(dataDir, name), 'utf8').trim().split('\n').slice(1).map((line) => line.split(','));
}

const dayOf = (isoDate: string) => Date.parse(`${isoDate}T00:00:00Z`) / 86_400_000;

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), 'spendmix-second-chain-'));
  dataDir = join(folder, 'data');
  dbPath = join(folder, 'chain.db');
  chain = generateSecondChain({ outDir: dataDir, customers: CUSTOMERS });
  truth = readTruthFile(join(dataDir, 'truth.csv'));
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    imports[kind] = await spendmixJson<ImportJson>('import', '--db', dbPath, `--${kind}`, join(dataDir, `${kind}.csv`));
  }
  refresh = await spendmixJson<RefreshJson>('refresh', '--db', dbPath, '--as-of', chain.lastDate);
  evaluation = await evaluateAgainstTruth(dbPath, refresh.runId, truth);
});

afterAll(() => {
  if (folder) rmSync(folder, { recursive: true, force: true });
});

describe('the second test chain generator', () => {
  it('is seeded: the same seed and size give the same bytes, another seed other data', () => {
    const files = ['receipts.csv', 'visits.csv', 'customers.csv', 'truth.csv', 'manifest.json'];
    const write = (name: string, seed: number) => generateSecondChain({ outDir: join(folder, name), customers: 150, seed }).dir;
    const [first, again, other] = [write('seeded-a', 7), write('seeded-b', 7), write('seeded-c', 8)];
    for (const file of files) expect(readFileSync(join(again, file)).equals(readFileSync(join(first, file))), file).toBe(true);
    expect(readFileSync(join(other, 'receipts.csv')).equals(readFileSync(join(first, 'receipts.csv')))).toBe(false);
  });

  it('truth.csv names every customer of customers.csv once, with a tier and a group that add up to its counts', () => {
    const customerIds = rowsOf('customers.csv').map(([id]) => id);
    expect(customerIds).toHaveLength(CUSTOMERS);
    expect([...truth.keys()].sort()).toEqual([...customerIds].sort());
    const tierNames = new Set([...SPEND_TIERS.map((tier) => tier.name), 'atypical']);
    const tiers: Record<string, number> = {};
    const groups: Record<string, number> = {};
    for (const [, tier, group] of rowsOf('truth.csv')) {
      expect(tierNames.has(tier), tier).toBe(true);
      tiers[tier] = (tiers[tier] ?? 0) + 1;
      groups[group] = (groups[group] ?? 0) + 1;
    }
    expect(tiers).toEqual(Object.fromEntries(Object.entries(chain.tiers).filter(([, count]) => count > 0)));
    expect(groups).toEqual(Object.fromEntries(Object.entries(chain.groups).filter(([, count]) => count > 0)));
    expect(chain.groups.atypical).toBeGreaterThanOrEqual(2);
    expect(chain.groups.new).toBeGreaterThan(0);
  });

  it('truth.csv stopped_on: only ordinary customers drifted away, none shops after that day, and the occasional tier drifts most', () => {
    const lastActivity = new Map<string, string>();
    for (const [, customerId, , date] of rowsOf('receipts.csv')) if ((lastActivity.get(customerId) ?? '') < date) lastActivity.set(customerId, date);
    for (const [customerId, date] of rowsOf('visits.csv')) if ((lastActivity.get(customerId) ?? '') < date) lastActivity.set(customerId, date);
    const drifted: Record<string, number> = {};
    const byTier: Record<string, number> = {};
    for (const [customerId, tier, group, stoppedOn = ''] of rowsOf('truth.csv')) {
      byTier[tier] = (byTier[tier] ?? 0) + 1;
      if (stoppedOn === '') continue;
      expect(group, customerId).toBe('steady');
      expect(stoppedOn >= '2026-02-01' && stoppedOn <= chain.lastDate, stoppedOn).toBe(true);
      const last = lastActivity.get(customerId);
      if (last !== undefined) expect(last <= stoppedOn, `${customerId} shops on ${last} after stopping on ${stoppedOn}`).toBe(true);
      drifted[tier] = (drifted[tier] ?? 0) + 1;
    }
    // chain.ts: 22 % of the occasional tier drifts away, 3–6 % of the others.
    const share = (tier: string) => (drifted[tier] ?? 0) / byTier[tier];
    expect(share('occasional')).toBeGreaterThan(0.12);
    for (const tier of ['top-up', 'weekly', 'household']) expect(share(tier), tier).toBeLessThan(share('occasional'));
  });

  it('with separated tiers: the same customers, tier for tier, with bigger weekly and household baskets and a smaller occasional one', () => {
    const write = (tiers: 'overlapping' | 'separated') => generateSecondChain({ outDir: join(folder, `spacing-${tiers}`), customers: 400, tiers });
    const [first, separated] = [write('overlapping'), write('separated')];
    expect(first.tierSpacing).toBe('overlapping');
    expect(separated.tierSpacing).toBe('separated');
    // Only the tiers' parameters differ: the draws of tier, joining, consent and drifting away are
    // the same (the day a drifted customer stops is drawn after the tier's gamma, so it may differ).
    const truthOf = (dir: string) =>
      readFileSync(join(dir, 'truth.csv'), 'utf8')
        .trim()
        .split('\n')
        .map((line) => line.split(','))
        .map(([customerId, tier, group, stoppedOn]) => [customerId, tier, group, stoppedOn === '' ? '' : 'stopped']);
    expect(truthOf(separated.dir)).toEqual(truthOf(first.dir));
    expect(readFileSync(join(separated.dir, 'customers.csv'), 'utf8')).toBe(readFileSync(join(first.dir, 'customers.csv'), 'utf8'));
    const medianBasket = (dir: string, tier: string) => {
      const tierOf = new Map(readFileSync(join(dir, 'truth.csv'), 'utf8').trim().split('\n').slice(1).map((line) => line.split(',') as [string, string]));
      const amounts = readFileSync(join(dir, 'receipts.csv'), 'utf8')
        .trim()
        .split('\n')
        .slice(1)
        .map((line) => line.split(','))
        .filter((row) => tierOf.get(row[1]) === tier && Number(row[5]) > 0)
        .map((row) => Number(row[5]))
        .sort((a, b) => a - b);
      return amounts[Math.floor(amounts.length / 2)];
    };
    // Median basket per receipt (the generator's medians are EUR 24 → 20, 58 → 70, 105 → 170).
    expect(medianBasket(separated.dir, 'occasional')).toBeLessThan(medianBasket(first.dir, 'occasional'));
    expect(medianBasket(separated.dir, 'weekly') / medianBasket(first.dir, 'weekly')).toBeGreaterThan(1.1);
    expect(medianBasket(separated.dir, 'household') / medianBasket(first.dir, 'household')).toBeGreaterThan(1.4);
    expect(() => generateSecondChain({ outDir: join(folder, 'spacing-bad'), customers: 10, tiers: 'wide' as 'separated' })).toThrow(/tiers must be "overlapping" or "separated"/);
  });

  it('tells its story in the data: median spend per month rises from occasional to top-up, weekly and household', () => {
    const spendCents = new Map<string, number>();
    for (const [, customerId, , date, , amount] of rowsOf('receipts.csv')) {
      if (date >= WINDOW_FIRST_DATE) spendCents.set(customerId, (spendCents.get(customerId) ?? 0) + Math.round(Number(amount) * 100));
    }
    const medianSpend = (tier: string) => {
      const values = [...truth.entries()]
        .filter(([customerId, label]) => label === tier && spendCents.has(customerId))
        .map(([customerId]) => spendCents.get(customerId)!)
        .sort((a, b) => a - b);
      return values[Math.floor(values.length / 2)];
    };
    const medians = SPEND_TIERS.map((tier) => medianSpend(tier.name));
    for (let t = 1; t < medians.length; t++) expect(medians[t], SPEND_TIERS[t].name).toBeGreaterThan(medians[t - 1]);
  });
});

describe('the second test chain through the CLI', () => {
  it('imports every generated row: none rejected, none skipped, the amount total to the cent', () => {
    const expected = { customers: chain.customers, receipts: chain.receipts, visits: chain.visits };
    for (const [kind, rows] of Object.entries(expected)) {
      expect(imports[kind], kind).toMatchObject({ rowsRead: rows, rowsImported: rows, rowsRejected: 0, duplicatesSkipped: 0, alreadyImported: false });
    }
    expect(Math.round(imports.receipts.amountTotal! * 100)).toBe(chain.amountCents);
  });

  it('the default refresh places exactly the customers with two purchases in the window and two months of tenure', () => {
    const asOfDay = dayOf(chain.lastDate);
    const joinedDay = new Map(rowsOf('customers.csv').map(([id, joined]) => [id, dayOf(joined)]));
    const purchases = new Map<string, Set<string>>();
    const inWindow = new Set<string>();
    for (const [receiptId, customerId, , date, , amount] of rowsOf('receipts.csv')) {
      if (date < WINDOW_FIRST_DATE) continue;
      inWindow.add(customerId);
      if (Number(amount) > 0) purchases.set(customerId, (purchases.get(customerId) ?? new Set()).add(receiptId));
    }
    // Every customer's activity starts on or after joining, so tenure runs from the joined day.
    const expectedPlaced = [...inWindow]
      .filter((id) => (purchases.get(id)?.size ?? 0) >= 2 && (asOfDay - joinedDay.get(id)! + 1) / DAYS_PER_MONTH >= 2)
      .sort();

    const placed = placedLabels(dbPath, refresh.runId, truth).customerIds;
    expect(placed).toEqual(expectedPlaced);
    expect(refresh.customers).toBe(expectedPlaced.length);
    expect(refresh.tooNew).toBe(inWindow.size - expectedPlaced.length);
    const placedSet = new Set(placed);
    const truthRows = rowsOf('truth.csv');
    expect(truthRows.filter(([id, , group]) => group === 'new' && placedSet.has(id))).toEqual([]);
    expect(truthRows.filter(([id, , group]) => group === 'atypical' && !placedSet.has(id))).toEqual([]);
  });

  it('evaluateAgainstTruth reports the run as the CLI does, with a cross table over every placed customer', () => {
    expect(evaluation).toMatchObject({
      runId: refresh.runId,
      placed: refresh.customers,
      tooNew: refresh.tooNew,
      borderline: refresh.borderline,
      atypical: refresh.atypical,
      segments: refresh.segments.length,
    });
    expect(evaluation.segmentTable.map(({ name, customers }) => ({ name, customers }))).toEqual(
      refresh.segments.map(({ name, customers }) => ({ name, customers })),
    );
    expect(evaluation.borderlineShare).toBeCloseTo(refresh.borderline / refresh.customers, 12);
    expect(evaluation.queueShare).toBeCloseTo(evaluation.queue / refresh.customers, 12);
    expect(evaluation.queue).toBeLessThanOrEqual(refresh.customers);

    const { counts, segmentNames, truthLabels } = evaluation.crossTable;
    expect(segmentNames).toEqual(refresh.segments.map((segment) => segment.name));
    const columnTotals = segmentNames.map((_, c) => counts.reduce((total, row) => total + row[c], 0));
    expect(columnTotals).toEqual(refresh.segments.map((segment) => segment.customers));
    const placed = placedLabels(dbPath, refresh.runId, truth);
    truthLabels.forEach((label, r) => {
      expect(counts[r].reduce((a, b) => a + b, 0)).toBe(placed.truthLabels.filter((placedLabel) => placedLabel === label).length);
    });
    expect(evaluation.ari).toBeGreaterThan(-1);
    expect(evaluation.ari).toBeLessThanOrEqual(1);
  });
});

describe('the default run on the separated tiers (default size and seed)', () => {
  it('recovers the 4 tiers: ARI at least 0.75, the segments besides the lapsed ones within one of 4, a review share a person can take', async () => {
    // Measured (README, benchmarks): ARI 0.809 with the gaps counted on the shopping clock and EM
    // run until the gain still to come is below tol; 0.766 before (wall-clock gaps, EM stopped at
    // the first small step), 0.692 with whole days and log1p. A segment more than half of whose
    // customers stopped coming (truth.csv stopped_on) is a group the truth keeps in their old
    // tiers; it is counted apart, and the ARI is also asserted without those customers.
    const separatedFolder = mkdtempSync(join(tmpdir(), 'spendmix-second-chain-separated-'));
    try {
      const separatedData = join(separatedFolder, 'data');
      const separatedDb = join(separatedFolder, 'chain.db');
      const separated = generateSecondChain({ outDir: separatedData, tiers: 'separated' });
      for (const kind of ['customers', 'receipts', 'visits'] as const) {
        await spendmixJson<ImportJson>('import', '--db', separatedDb, `--${kind}`, join(separatedData, `${kind}.csv`));
      }
      const run = await spendmixJson<RefreshJson>('refresh', '--db', separatedDb, '--as-of', separated.lastDate);
      const truthPath = join(separatedData, 'truth.csv');
      const truth = readTruthFile(truthPath);
      const result = await evaluateAgainstTruth(separatedDb, run.runId, truth);
      const drift = evaluateDrift(separatedDb, run.runId, truth, readStoppedOn(truthPath), separated.lastDate);
      expect(result.ari).toBeGreaterThanOrEqual(0.75);
      expect(drift.ariKeptComing).toBeGreaterThanOrEqual(0.75);
      expect(drift.segmentsMostlyStopped).toBeGreaterThanOrEqual(1);
      expect(Math.abs(result.segments - drift.segmentsMostlyStopped - SEPARATED_SPEND_TIERS.length)).toBeLessThanOrEqual(1);
      expect(result.queueShare).toBeLessThanOrEqual(0.1);
    } finally {
      rmSync(separatedFolder, { recursive: true, force: true });
    }
  }, 120_000);
});
