/**
 * A small in-memory stand-in for the core, for looking at the screens in a browser before (or
 * without) a database: test-only, never part of the app's build. Numbers are invented from a
 * seeded generator (pure-rand) and only need to look plausible; nothing here is real data.
 */
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import type {
  Api,
  ApiInput,
  ApiOutput,
  BorderlineRow,
  MembershipRow,
  ReviewDecision,
  ReviewItem,
  SegmentProfile,
  SpendmixClient,
  TaskEvent,
  TaskResults,
  TaskStarted,
} from '../../../src/api/contract.js';

const generator = xoroshiro128plus(20261130);
const uniform = () => uniformFloat64(generator);
const normal = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());

const featureNames = ['spendPerMonth', 'visitsPerMonth', 'averageBasket'];
const featureLabels: Record<string, string> = {
  spendPerMonth: 'spend per month',
  visitsPerMonth: 'visits per month',
  averageBasket: 'average basket',
  daysSinceLastVisit: 'days since last visit',
  gapsSinceLastVisit: 'gaps since last visit',
  tenureMonths: 'tenure',
  freshShare: 'fresh share',
};
const featureUnits: Record<string, string> = {
  spendPerMonth: 'EUR',
  visitsPerMonth: 'visits',
  averageBasket: 'EUR',
  daysSinceLastVisit: 'days',
  gapsSinceLastVisit: 'usual gaps',
  tenureMonths: 'months',
  freshShare: 'share',
};

/** The shaping step of a feature's transform, as the core's defaults choose it. */
const shapeOf = (feature: string) => ({ log1p: !['freshShare', 'gapsSinceLastVisit'].includes(feature), cubeRoot: feature === 'gapsSinceLastVisit' });

const segmentShapes = [
  { name: 'Very high spend · very frequent · very large baskets', gaps: 0.6, weight: 0.08, mean: [1.9, 1.3, 1.2], sd: [0.45, 0.5, 0.5], rho: 0.4, spend: 620, visits: 11, basket: 56, percentiles: [0.93, 0.95, 0.2] },
  { name: 'High spend · frequent · large baskets', gaps: 0.7, weight: 0.27, mean: [0.7, 0.6, 0.3], sd: [0.45, 0.45, 0.5], rho: 0.5, spend: 310, visits: 8, basket: 38, percentiles: [0.74, 0.7, 0.3] },
  { name: 'Mid spend · regular · mid-size baskets', gaps: 0.8, weight: 0.38, mean: [-0.3, -0.1, -0.2], sd: [0.5, 0.55, 0.45], rho: 0.3, spend: 140, visits: 5, basket: 27, percentiles: [0.48, 0.45, 0.5] },
  { name: 'Very low spend · rare · small baskets · long absent', gaps: 5.2, weight: 0.27, mean: [-1.2, -0.9, -0.5], sd: [0.5, 0.55, 0.6], rho: 0.2, spend: 52, visits: 2.4, basket: 21, percentiles: [0.15, 0.22, 0.8] },
];
/** Six Gaussian components combined into the four segments: segments 1 and 2 hold two components each. */
const componentsOfSegment = [[0], [1, 4], [2, 5], [3]];
const componentShapes = [0, 1, 2, 3, 1, 2].map((segment, c) => {
  const shape = segmentShapes[segment];
  const shift = c >= 4 ? 0.35 : c === 1 || c === 2 ? -0.35 : 0;
  const [sx, sy, sz] = shape.sd.map((sd) => sd * (c === segment && componentsOfSegment[segment].length === 1 ? 1 : 0.8));
  return {
    component: c,
    segment,
    weight: shape.weight / componentsOfSegment[segment].length,
    mean: [shape.mean[0] + shift, shape.mean[1] - shift / 2, shape.mean[2] + shift / 3],
    covariance: [sx * sx, shape.rho * sx * sy, 0.2 * sx * sz, shape.rho * sx * sy, sy * sy, 0.1 * sy * sz, 0.2 * sx * sz, 0.1 * sy * sz, sz * sz],
  };
});
const capacity = 200;
const totalCustomers = 48_213;

let names = segmentShapes.map((shape) => shape.name);

function segmentProfiles(): SegmentProfile[] {
  const revenue = segmentShapes.map((shape) => shape.weight * totalCustomers * shape.spend * 12);
  const revenueTotal = revenue.reduce((a, b) => a + b, 0);
  return segmentShapes.map((shape, i) => {
    const customers = Math.round(shape.weight * totalCustomers);
    const [sx, sy, sz] = shape.sd;
    const cov = [sx * sx, shape.rho * sx * sy, 0.2 * sx * sz, shape.rho * sx * sy, sy * sy, 0.1 * sy * sz, 0.2 * sx * sz, 0.1 * sy * sz, sz * sz];
    const quart = (median: number, spread: number) => ({ q1: median * (1 - spread), median, q3: median * (1 + spread) });
    const traitWords = [
      ['rare', 'infrequent', 'regular', 'frequent', 'very frequent'],
      ['very small baskets', 'small baskets', 'mid-size baskets', 'large baskets', 'very large baskets'],
    ];
    // The core says how recently by the median in usual gaps (src/runs/naming.ts, RHYTHM_BANDS).
    const rhythm = shape.gaps < 0.25 ? 'just been in' : shape.gaps < 2 ? 'on their usual rhythm' : shape.gaps < 4 ? 'overdue' : 'long absent';
    const medians = [shape.visits, shape.basket, shape.gaps];
    const traitFeatures = [
      { feature: 'visitsPerMonth', label: 'visit rate', unit: 'visits per month' },
      { feature: 'averageBasket', label: 'basket size', unit: 'EUR' },
      { feature: 'gapsSinceLastVisit', label: 'gaps since last visit', unit: 'usual gaps' },
    ];
    return {
      segment: i,
      key: `s${i + 1}`,
      name: names[i],
      defaultName: shape.name,
      renamed: names[i] !== shape.name,
      traits: traitFeatures.map((trait, t) => ({
        ...trait,
        median: medians[t],
        percentile: shape.percentiles[t],
        words: t === 2 ? rhythm : traitWords[t][Math.min(4, Math.floor(shape.percentiles[t] * 5))],
      })),
      components: componentsOfSegment[i],
      spendRank: i + 1,
      origin: 'first' as const,
      customers,
      share: shape.weight,
      revenue: revenue[i],
      revenueShare: revenue[i] / revenueTotal,
      profile: [
        { feature: 'spendPerMonth', unit: 'EUR', ...quart(shape.spend, 0.3) },
        { feature: 'visitsPerMonth', unit: 'visits', ...quart(shape.visits, 0.35) },
        { feature: 'averageBasket', unit: 'EUR', ...quart(shape.basket, 0.25) },
        { feature: 'daysSinceLastVisit', unit: 'days', ...quart(Math.round(30 / shape.visits), 0.5) },
        { feature: 'tenureMonths', unit: 'months', ...quart(14 + i * 2, 0.4) },
        { feature: 'freshShare', unit: 'share', ...quart(0.42 - i * 0.05, 0.3) },
      ],
      weight: shape.weight,
      mean: shape.mean,
      covariance: cov,
    };
  });
}

/** Draws a point of segment i: correlated normal via the Cholesky factor of its covariance. */
function drawPoint(i: number): number[] {
  const shape = segmentShapes[i];
  const [sx, sy, sz] = shape.sd;
  const z1 = normal();
  const z2 = normal();
  const z3 = normal();
  return [
    shape.mean[0] + sx * z1,
    shape.mean[1] + sy * (shape.rho * z1 + Math.sqrt(1 - shape.rho ** 2) * z2),
    shape.mean[2] + sz * (0.2 * z1 + 0.97 * z3),
  ];
}

function pickSegment(): number {
  let u = uniform();
  for (let i = 0; i < segmentShapes.length; i++) {
    u -= segmentShapes[i].weight;
    if (u <= 0) return i;
  }
  return segmentShapes.length - 1;
}

const customers: MembershipRow[] = Array.from({ length: 2400 }, (_, n) => {
  const segment = pickSegment();
  const second = segment === 0 ? 1 : segment - 1;
  const confidence = 0.45 + 0.55 * Math.sqrt(uniform());
  const secondProbability = (1 - confidence) * (0.6 + 0.4 * uniform());
  return {
    customerId: `LM-${String(100000 + n * 37).padStart(6, '0')}`,
    segment,
    segmentName: null,
    finalSegment: segment,
    finalSegmentName: null,
    confidence,
    margin: confidence - secondProbability,
    secondSegment: second,
    secondSegmentName: null,
    secondProbability,
    logDensity: -3 + normal(),
    borderline: confidence < 0.7 || confidence - secondProbability < 0.2,
    atypical: uniform() < 0.01,
    partial: false,
    tooNew: false,
    excluded: false,
    flagged: false,
    queued: false,
    revenue: segmentShapes[segment].spend * 12 * Math.exp(0.3 * normal()),
    spendPerMonth: segmentShapes[segment].spend * Math.exp(0.3 * normal()),
    decision: null,
  };
}).sort((a, b) => b.revenue - a.revenue);

const withNames = <T extends MembershipRow>(row: T): T => ({
  ...row,
  segmentName: row.segment === null ? null : names[row.segment],
  secondSegmentName: row.secondSegment === null ? null : names[row.secondSegment],
  finalSegmentName: row.finalSegment === null ? null : names[row.finalSegment],
});

function whyOf(row: MembershipRow): BorderlineRow['why'] {
  const top = names[row.segment ?? 0];
  const second = names[row.secondSegment ?? 0];
  return {
    terms: [
      { feature: 'averageBasket', label: 'average basket', contribution: 0.8, fits: top },
      { feature: 'visitsPerMonth', label: 'visits per month', contribution: -0.6, fits: second },
    ],
    priorLogOdds: 0.1,
    method: 'shapley',
    text: `average basket fits ${top}, visits per month fits ${second}`,
  };
}

/** Flagged customers by what a decision is worth (spend × uncertainty); the first `capacity` are the queue. */
const valueOf = (row: MembershipRow) => row.revenue * (row.borderline ? 1 - (row.confidence ?? 1) : 0.6);
const flagged = customers.filter((row) => row.borderline || row.atypical).sort((a, b) => valueOf(b) - valueOf(a));
flagged.forEach((row, position) => Object.assign(row, { flagged: true, queued: position < capacity }));
const queue = flagged.filter((row) => row.queued);
const decisions = new Map<string, ReviewDecision>();

function queueCounts(): ApiOutput<'reviewQueue'>['queue'] {
  const scale = Math.round(totalCustomers / customers.length);
  const leftOut = flagged.filter((row) => !row.queued);
  return {
    capacity,
    flagged: capacity + leftOut.length * scale,
    queued: queue.length,
    leftOut: {
      customers: leftOut.length * scale,
      borderline: leftOut.filter((row) => row.borderline).length * scale,
      atypical: leftOut.filter((row) => row.atypical).length * scale,
      mover: 0,
    },
    leftOutDecided: leftOut.filter((row) => decisions.has(row.customerId)).length * scale,
    valueCut: valueOf(queue[queue.length - 1]),
  };
}

function reviewItem(row: MembershipRow): ReviewItem {
  const decision = decisions.get(row.customerId) ?? null;
  const profiles = segmentProfiles();
  return {
    ...withNames(row),
    decision,
    reasons: [row.borderline ? 'borderline' : null, row.atypical ? 'atypical' : null].filter((r): r is 'borderline' | 'atypical' => r !== null),
    value: valueOf(row),
    uncertainty: row.borderline ? 1 - (row.confidence ?? 1) : 0.6,
    why: row.borderline ? whyOf(row) : null,
    atypicalWhy: row.atypical
      ? {
          terms: [{ feature: 'spendPerMonth', label: 'spend per month', unit: 'EUR per month', value: 10_918, direction: 'above', share: 0.9991, extreme: true }],
          text: 'spend per month EUR 10,918, above 99.9 % of customers',
        }
      : null,
    featureComparison: featureNames.map((feature, f) => ({
      feature,
      label: featureLabels[feature],
      value: (profiles[row.segment ?? 0].profile[f].median + profiles[row.secondSegment ?? 0].profile[f].median) / 2,
      topMedian: profiles[row.segment ?? 0].profile[f].median,
      secondMedian: profiles[row.secondSegment ?? 0].profile[f].median,
    })),
    previousSegmentName: names[row.secondSegment ?? 0],
    previousDecision: null,
  };
}

const listeners = new Set<(event: TaskEvent) => void>();
let taskCounter = 0;
const taskResults = new Map<string, unknown>();

/** A pretend long task: a few progress events, then done with `result`. */
function pretendTask<M extends keyof TaskResults>(method: M, result: TaskResults[M], phases: string[]): TaskStarted<M> {
  const taskId = `fake-${++taskCounter}`;
  taskResults.set(taskId, result);
  let step = 0;
  const total = 10;
  const tick = () => {
    if (step < total) {
      const event: TaskEvent = { type: 'progress', taskId, phase: phases[Math.min(phases.length - 1, Math.floor((step / total) * phases.length))], done: step, total, message: `step ${step + 1}` };
      listeners.forEach((listener) => listener(event));
      step += 1;
      setTimeout(tick, 120);
    } else {
      listeners.forEach((listener) => listener({ type: 'done', taskId, method, result }));
    }
  };
  setTimeout(tick, 50);
  return { taskId, method };
}

const runSettings: ApiOutput<'runSummary'>['settings'] = {
  asOf: '2026-11-30', windowMonths: 12, mode: 'refit', parentRunId: null, source: 'receipts', k: 'auto', kMin: 2, kMax: 8, covariance: 'auto', criterion: 'bic', fitSample: null,
  restarts: 5, seed: 0, tol: 1e-3, maxIterations: 200, regularization: 1e-6, init: 'kmeans', borderlineConfidence: 0.7, borderlineMargin: 0.2,
  atypicalPercentile: 1, reviewMoversBelowConfidence: null, reviewCapacity: capacity, segmentCount: 'auto', minPurchases: 2, minTenureMonths: 2, freshCategories: ['fresh', 'bakery'],
  features: featureNames.map((feature) => ({ feature, ...shapeOf(feature), clipLowerPercentile: null, clipUpperPercentile: null, zScore: true })),
};

function summary(runId: number): ApiOutput<'runSummary'> {
  const profiles = segmentProfiles();
  return {
    runId, parentRunId: runId > 1 ? runId - 1 : null, k: 6, covariance: 'full', bic: 301_544.2, segmentCount: 4, segmentation: 'auto',
    customers: totalCustomers, tooNew: 1_204, borderline: 2_630, atypical: 482,
    segments: profiles.map((p) => ({ name: p.name, key: p.key, components: p.components, customers: p.customers, share: p.share, revenueShare: p.revenueShare })),
    stability: runId > 1 ? 0.812 : null,
    review: queueCounts(),
    warnings: ['The features are nearly collinear: spend per month is explained by the others with R² = 0.97; drop spend per month.'],
    asOf: runId > 1 ? '2026-11-30' : '2026-10-31', windowMonths: 12, mode: 'refit', createdAt: '2026-12-01T09:12:00Z', settings: runSettings,
    features: featureNames.map((feature) => ({ feature, ...shapeOf(feature), clipLowerPercentile: null, clipUpperPercentile: null, zScore: true })),
    storedFeatures: Object.keys(featureLabels), logLikelihood: -150_600.3, icl: 309_870.5, criterion: 'bic', retiredSegments: [],
    fittedOn: totalCustomers,
    componentsSearched: { from: 2, to: 8 },
  };
}

function confidenceBins(confidenceCut: number, marginCut: number, atypicalPercentile: number): ApiOutput<'certainty'> {
  const bins = Array.from({ length: 20 }, (_, b) => ({ from: b / 20, to: (b + 1) / 20, customers: 0 }));
  let borderline = 0;
  for (const row of customers) {
    const c = row.confidence ?? 0;
    bins[Math.min(19, Math.floor(c * 20))].customers += 1;
    if (c < confidenceCut || (row.margin ?? 0) < marginCut) borderline += 1;
  }
  const scale = totalCustomers / customers.length;
  return {
    runId: 2, customers: totalCustomers,
    confidenceHistogram: bins.map((bin) => ({ ...bin, customers: Math.round(bin.customers * scale) })),
    borderline: Math.round(borderline * scale), atypical: Math.round((atypicalPercentile / 100) * totalCustomers), atypicalLogDensityBelow: -5.84 + atypicalPercentile * 0.3,
    queue: queueCounts(),
  };
}

const api: Api = {
  appInfo: async () => ({
    version: '0.1.0', shell: 'browser', databasePath: '/home/analyst/larkmoor.spendmix.db', recentDatabases: [],
    cautions: [
      'Segments drive who gets offers. Do not use protected characteristics or proxies for them as features.',
      "Respect marketing consent and local data-protection law; keep personal data on the analyst's machine.",
      'Treat segments as estimates — the review queue exists because some customers do not fit. Defer to the company’s privacy and legal advice.',
    ],
  }),
  openDatabase: async () => api.databaseInfo({}),
  databaseInfo: async () => ({
    path: '/home/analyst/larkmoor.spendmix.db', schemaVersion: 2, customers: 49_417, receipts: 2_412_880, visits: 3_120_554, imports: 3, runs: 2,
    firstDataDate: '2025-01-01', lastDataDate: '2026-11-30',
  }),
  previewFile: async (input: ApiInput<'previewFile'>) => {
    const columns = ['Kunde', 'Datum', 'Betrag', 'Bon', 'Filiale'];
    const mapping = input.mapping ?? { Kunde: 'customer_id', Datum: 'date', Betrag: 'amount', Bon: 'receipt_id', Filiale: 'store_id' };
    return {
      path: input.path, kind: input.kind, columns, sheets: [], delimiter: ';', encoding: 'UTF-8',
      fields: [
        { field: 'customer_id', required: true, description: 'loyalty card number' },
        { field: 'date', required: true, description: 'date or date-time of the receipt' },
        { field: 'amount', required: true, description: 'amount in EUR; negative for refunds' },
        { field: 'receipt_id', required: false, description: 'receipt number' },
        { field: 'store_id', required: false, description: 'store' },
        { field: 'category', required: false, description: 'department' },
      ],
      mapping, mappingSource: input.mapping ? 'given' : 'saved', missingFields: [],
      rows: Array.from({ length: 12 }, (_, i) => ({
        line: i + 2,
        cells: { Kunde: `LM-${100100 + i}`, Datum: `2026-12-0${1 + (i % 5)}`, Betrag: i === 4 ? 'zwölf' : `${(12.5 + i * 3.1).toFixed(2)}`, Bon: `R${8000 + i}`, Filiale: `S0${1 + (i % 9)}` },
        parsed: i === 4 ? null : { customer_id: `LM-${100100 + i}`, date: `2026-12-0${1 + (i % 5)}`, amount: 12.5 + i * 3.1, receipt_id: `R${8000 + i}`, store_id: `S0${1 + (i % 9)}` },
        problem: i === 4 ? 'amount: “zwölf” is not a number' : null,
      })),
    };
  },
  importFile: async (input) => pretendTask('importFile', { importId: 4, file: input.path, kind: input.kind, rowsRead: 20_114, rowsImported: 20_101, rowsRejected: 13, duplicatesSkipped: 0, alreadyImported: false, amountTotal: 512_330.4, report: '/home/analyst/larkmoor-import-4-rejected.csv' }, ['reading', 'validating', 'writing']),
  listImports: async () => [
    { importId: 1, fileName: 'larkmoor-receipts-2025.csv', kind: 'receipts', rowsRead: 1_204_113, rowsImported: 1_204_100, rowsRejected: 13, duplicatesSkipped: 0, amountTotal: 30_411_873.2, reportPath: '/home/analyst/r1.csv', importedAt: '2026-11-02T08:30:00Z', mapping: {} },
    { importId: 2, fileName: 'larkmoor-visits.csv', kind: 'visits', rowsRead: 3_120_554, rowsImported: 3_120_554, rowsRejected: 0, duplicatesSkipped: 0, amountTotal: null, reportPath: null, importedAt: '2026-11-02T08:41:00Z', mapping: {} },
    { importId: 3, fileName: 'larkmoor-receipts-2026-11.csv', kind: 'receipts', rowsRead: 1_208_790, rowsImported: 1_208_780, rowsRejected: 2, duplicatesSkipped: 8, amountTotal: 31_002_118.9, reportPath: '/home/analyst/r3.csv', importedAt: '2026-12-01T07:55:00Z', mapping: {} },
  ],
  importReport: async (input) => {
    const total = input.importId === 1 ? 13 : 2;
    const rows = Array.from({ length: total }, (_, i) => ({ line: 1_400 + i * 9_317, column: i % 3 === 0 ? 'date' : 'amount', value: i % 3 === 0 ? '2025-02-30' : '12,5O', reason: i % 3 === 0 ? 'not a calendar date' : 'not a number' }));
    return { importId: input.importId, total, rows: rows.slice(input.offset ?? 0, (input.offset ?? 0) + (input.limit ?? 100)) };
  },
  savedMapping: async (input) => ({ kind: input.kind, mapping: null }),
  modelOptions: async () => ({
    features: Object.keys(featureLabels).map((name) => ({
      name, label: featureLabels[name], unit: featureUnits[name], meaning: featureLabels[name], inDefaultSet: featureNames.includes(name),
      defaultTransform: { feature: name, ...shapeOf(name), clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
    })),
    covarianceTypes: ['full', 'diag', 'spherical', 'tied'],
    defaults: runSettings,
  }),
  startRun: async () => pretendTask('startRun', { ...summary(3) }, ['features', 'fitting k=2 full', 'fitting k=4 full', 'memberships', 'profiles']),
  listRuns: async () =>
    [2, 1].map((id) => {
      const { runId, parentRunId, k, covariance, bic, segmentCount, segmentation, customers, tooNew, borderline, atypical, stability, createdAt, asOf, windowMonths, mode } = summary(id);
      return { runId, parentRunId, k, covariance, bic, segmentCount, segmentation, customers, tooNew, borderline, atypical, stability, createdAt, asOf, windowMonths, mode };
    }),
  runSummary: async (input) => summary(input.runId),
  segments: async (input) => ({ runId: input.runId, features: featureNames, segments: segmentProfiles(), components: componentShapes }),
  segmentation: async (input) => {
    // Entropy falls steeply over the first merges (components of one segment), then flattens: auto stops at 4.
    const levels: ApiOutput<'segmentation'>['levels'] = [
      { segmentCount: 6, entropy: 9_840, mergedRows: 0, merged: null, groups: [[0], [1], [2], [3], [4], [5]] },
      { segmentCount: 5, entropy: 6_120, mergedRows: 7_300, merged: [1, 4], groups: [[0], [1, 4], [2], [3], [5]] },
      { segmentCount: 4, entropy: 2_950, mergedRows: 9_800, merged: [2, 4], groups: [[0], [1, 4], [2, 5], [3]] },
      { segmentCount: 3, entropy: 2_410, mergedRows: 21_400, merged: [1, 2], groups: [[0], [1, 2, 4, 5], [3]] },
      { segmentCount: 2, entropy: 1_520, mergedRows: 31_900, merged: [1, 2], groups: [[0], [1, 2, 3, 4, 5]] },
      { segmentCount: 1, entropy: 0, mergedRows: 45_300, merged: [0, 1], groups: [[0, 1, 2, 3, 4, 5]] },
    ];
    return {
      runId: input.runId, components: 6, covariance: 'full', method: 'auto', segmentCount: 4, autoSegmentCount: 4, autoSegmentCountByMergedRows: 4,
      segments: segmentProfiles().map((p) => ({ segment: p.segment, key: p.key, name: p.name, components: p.components, customers: p.customers })),
      levels, currentLevel: 4,
    };
  },
  regroupSegments: async (input) =>
    pretendTask('regroupSegments', {
      summary: summary(input.runId),
      change: 'level' in input.change ? `combined into ${String(input.change.level)} segments` : 'merge' in input.change ? 'merged two segments' : 'split a segment',
      keptKeys: ['s1', 's2', 's3', 's4'], retired: [], added: [], returned: [], laterRunsUpdated: [],
    }, ['reading', 'combining', 'storing']),
  sweepTable: async () => {
    const rows: ApiOutput<'sweepTable'> = [];
    const base: Record<string, number> = { full: 0, diag: 4_200, spherical: 9_800, tied: 2_100 };
    for (const covariance of ['full', 'diag', 'spherical', 'tied'] as const) {
      for (let k = 2; k <= 8; k++) {
        // Large full fits leave a component with a handful of customers: lower BIC, but refused.
        const collapsed = covariance === 'full' && k >= 7;
        const bic = 301_544 + base[covariance] + 2_600 * (k - 6) ** 2 - (collapsed ? 40_000 : 0);
        const refused = collapsed ? `component ${k} has ${k === 7 ? '3.2' : '1.0'} effective members; a full covariance in 3 features needs at least 4` : null;
        rows.push({ k, covariance, logLikelihood: -bic / 2, bic, aic: bic - 300, icl: bic + 6_000 + 900 * k, parameterCount: k * 10, converged: true, iterations: 40 + k, warnings: [], refused, chosen: covariance === 'full' && k === 6 });
      }
    }
    return rows;
  },
  segmentSample: async (input) => {
    const limit = Math.min(input.limit ?? 5000, totalCustomers);
    const points = Array.from({ length: limit }, (_, n) => {
      const segment = pickSegment();
      const model = drawPoint(segment);
      return { customerId: `LM-${n}`, segment, model, original: model.map((v) => Math.exp(v)) };
    });
    return { runId: input.runId, totalCustomers, features: featureNames, points };
  },
  featureDistribution: async (input) => {
    const edges = Array.from({ length: 41 }, (_, i) => i * 20);
    return {
      runId: input.runId, feature: input.feature, unit: featureUnits[input.feature] ?? '',
      customersUsed: totalCustomers, totalCustomers,
      edges,
      counts: segmentShapes.map((shape, s) => ({
        segment: s,
        counts: edges.slice(0, -1).map((edge) => Math.round(shape.weight * totalCustomers * Math.exp(-0.5 * ((Math.log(edge + 10) - Math.log(shape.spend)) / 0.35) ** 2))),
      })),
    };
  },
  membershipsPage: async (input) => {
    const offset = input.offset ?? 0;
    return { runId: input.runId, total: customers.length, offset, rows: customers.slice(offset, offset + (input.limit ?? 100)).map(withNames) };
  },
  certainty: async (input) => confidenceBins(input.borderlineConfidence, input.borderlineMargin, input.atypicalPercentile),
  borderline: async (input) => {
    const confidenceCut = input.borderlineConfidence ?? 0.7;
    const marginCut = input.borderlineMargin ?? 0.2;
    const rows = customers.filter((row) => (row.confidence ?? 1) < confidenceCut || (row.margin ?? 1) < marginCut);
    const offset = input.offset ?? 0;
    return { runId: input.runId, total: rows.length, offset, rows: rows.slice(offset, offset + (input.limit ?? 100)).map((row) => ({ ...withNames(row), why: whyOf(row) })) };
  },
  reviewQueue: async (input) => {
    const status = input.status ?? 'all';
    const scope = input.scope ?? 'queued';
    const inScope = flagged.filter((row) => scope === 'flagged' || (scope === 'queued') === row.queued);
    const rows = inScope.filter((row) => status === 'all' || (status === 'done') === decisions.has(row.customerId));
    const offset = input.offset ?? 0;
    return {
      runId: input.runId, total: rows.length, done: inScope.filter((row) => decisions.has(row.customerId)).length, offset,
      rows: rows.slice(offset, offset + (input.limit ?? 100)).map(reviewItem), queue: queueCounts(),
    };
  },
  acceptUnqueued: async (input) => {
    const open = flagged.filter((row) => !row.queued && !decisions.has(row.customerId));
    const already = flagged.filter((row) => !row.queued).length - open.length;
    for (const row of open) {
      decisions.set(row.customerId, { action: 'keep', segmentKey: `s${(row.segment ?? 0) + 1}`, segmentName: names[row.segment ?? 0], note: input.note || null, reviewer: input.reviewer || 'analyst', decidedAt: new Date().toISOString(), carriedFromRunId: null });
    }
    return { runId: input.runId, accepted: open.length, alreadyDecided: already, queue: queueCounts() };
  },
  decideReview: async (input) => {
    const row = flagged.find((item) => item.customerId === input.customerId);
    if (!row) throw Object.assign(new Error(`Customer ${input.customerId} is not flagged for review.`), { kind: 'input' });
    const segment = input.action === 'move' ? input.segment ?? 0 : row.segment ?? 0;
    const target = typeof segment === 'number' ? segment : Number(segment);
    decisions.set(row.customerId, { action: input.action, segmentKey: input.action === 'exclude' ? null : `s${target + 1}`, segmentName: input.action === 'exclude' ? null : names[target], note: input.note ?? null, reviewer: 'analyst', decidedAt: new Date().toISOString(), carriedFromRunId: null });
    return reviewItem(row);
  },
  renameSegment: async (input) => {
    const index = typeof input.segment === 'number' ? input.segment : Number(input.segment);
    names = names.map((name, i) => (i === index ? input.name : name));
    return segmentProfiles()[index];
  },
  movement: async (input) => ({
    runId: input.runId, parentRunId: 1,
    parentSegments: segmentProfiles().map((p) => ({ segment: p.segment, key: p.key, name: p.name })),
    currentSegments: segmentProfiles().map((p) => ({ segment: p.segment, key: p.key, name: p.name })),
    matrix: [
      [3_210, 402, 31, 4],
      [377, 11_090, 1_120, 88],
      [22, 1_304, 15_200, 1_208],
      [3, 97, 1_310, 10_950],
    ],
    common: 46_416, entered: 1_797, left: 1_486, stability: 0.812,
    warnings: [{ segmentKey: 's2', segmentName: names[1], kind: 'mean-shift', feature: 'averageBasket', amount: 0.56, message: `${names[1]}: basket size moved 0.56 standard deviations up since last month.` }],
    retired: [], added: [],
  }),
  exportRun: async (input) => pretendTask('exportRun', { out: input.out, sheets: ['Overview', 'Customers', 'Review', 'Movement'], customersExported: 39_882, suppressedNoConsent: 6_944 }, ['overview', 'writing customers', 'review', 'movement']),
  loadDemo: async () => pretendTask('loadDemo', { db: '/home/analyst/larkmoor.spendmix.db', customers: 6_000, receipts: 312_400, visits: 401_220, receiptRows: 871_090 }, ['generating', 'writing']),
  featuresSql: async (input) => ({
    sql: '-- (preview) the feature query\nWITH receipt_rows AS (SELECT 1)\nSELECT 1',
    dialect: input.dialect ?? 'duckdb',
    asOf: input.asOf,
    windowMonths: input.windowMonths ?? 12,
    windowStart: '2025-12-01',
    tables: { receipts: input.receiptsTable ?? 'receipts', visits: input.visitsTable ?? 'visits', customers: input.customersTable ?? 'customers' },
    columns: ['customer_id', 'spend_per_month', 'visits_per_month', 'average_basket', 'too_new'],
  }),
  modelSql: async (input) => ({
    sql: [
      `-- (preview) scoring query of run ${input.runId}, ${input.dialect ?? 'duckdb'} dialect`,
      'WITH model_input AS (',
      `  SELECT customer_id, ${featureNames.map((feature) => `"${feature}"`).join(', ')}`,
      `  FROM ${input.featuresTable ?? 'customer_features'}`,
      ')',
      'SELECT customer_id, segment, confidence, margin, borderline, atypical FROM model_input',
    ].join('\n'),
    dialect: input.dialect ?? 'duckdb',
    runId: input.runId,
    featuresTable: input.featuresTable ?? 'customer_features',
    features: featureNames,
    segments: [...names],
    components: segmentShapes.length,
    columns: ['customer_id', 'segment', 'confidence', 'margin', 'borderline', 'atypical'],
    emptyValues: 'scored on the observed features',
    out: input.out ?? null,
  }),
  cancelTask: async (input) => ({ taskId: input.taskId, cancelled: true }),
  taskStatus: async (input) => ({ taskId: input.taskId, method: 'loadDemo', state: 'done', startedAt: '', finishedAt: '', progress: null, result: taskResults.get(input.taskId), error: null }),
};

export const fakeClient: SpendmixClient = {
  api,
  shell: {
    kind: 'browser',
    chooseOpenFile: async () => null,
    chooseSavePath: async () => null,
    pathForFile: async (file) => `/tmp/uploads/${file.name}`,
    deliverExport: async () => undefined,
    onMenuCommand: () => () => undefined,
  },
  onTaskEvent: (listener) => {
    listeners.add(listener);
    return () => listeners.delete(listener);
  },
  waitForTask: <M extends keyof TaskResults>(started: TaskStarted<M>, onProgress?: (progress: import('../../../src/api/contract.js').TaskProgress) => void) =>
    new Promise<TaskResults[M]>((resolve) => {
      const listener = (event: TaskEvent) => {
        if (event.taskId !== started.taskId) return;
        if (event.type === 'progress') onProgress?.(event);
        if (event.type === 'done') {
          listeners.delete(listener);
          resolve(event.result as TaskResults[M]);
        }
      };
      listeners.add(listener);
    }),
};
