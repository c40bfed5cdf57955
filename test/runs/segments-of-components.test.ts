import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunSummary, SegmentTrait, StartRunInput } from '../../src/api/contract.js';
import { isInputError } from '../../src/errors.js';
import { decodeFloat64, encodeFloat64 } from '../../src/runs/blobs.js';
import { listRuns } from '../../src/runs/read/runs-list.js';
import { segmentationOf } from '../../src/runs/read/segmentation.js';
import { listSegments } from '../../src/runs/read/segments.js';
import { NAME_TRAITS, traitWords } from '../../src/runs/naming.js';
import { storedRun } from '../../src/runs/read/stored-run.js';
import type { Database } from '../../src/store/database.js';
import { acceptRest, allMemberships, decide, regroup, rename, reviewQueue, runMonth } from '../support/core-calls.js';
import { demoDatabase, type DemoDatabase } from './demo-database.js';

/**
 * Segments made of components on the committed 500-customer demo sample (invented chain, seeded
 * generator): regrouping a stored run (a level of the combining hierarchy, a merge, a split) and
 * its refusals, the combination kept by a rescore, the review queue at a capacity and "accept the
 * rest", atypical reasons in original units, and the checks of a feature set before fitting.
 */
let demo: DemoDatabase;
let db: Database;
let october: RunSummary;

const base: StartRunInput = { asOf: '2026-10-31', k: 6, covariance: 'diag', seed: 3, restarts: 2 };

const canonical = (groups: readonly (readonly number[])[]) =>
  groups
    .map((group) => [...group].sort((a, b) => a - b).join(','))
    .sort()
    .join(';');

/** Everything a regroup writes for a run: its row, its segments and every membership. */
function storedState(runId: number): string {
  return JSON.stringify([
    db.prepare('SELECT segmentation, settings, movement, stability, revision, borderline FROM runs WHERE run_id = ?').get(runId),
    db.prepare('SELECT * FROM run_segments WHERE run_id = ? ORDER BY segment_index').all(runId),
    db
      .prepare('SELECT customer_id, segment_index, confidence, margin, second_index, borderline, review, review_value, queued FROM run_memberships WHERE run_id = ? ORDER BY customer_id')
      .all(runId),
    db.prepare('SELECT count(*) FROM review_decisions').pluck().get(),
  ]);
}

/** The stored component posteriors of a run's placed customers, by customer. */
function componentPosteriors(runId: number): Map<string, Float64Array> {
  const rows = db.prepare('SELECT customer_id, posteriors FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL').all(runId) as {
    customer_id: string;
    posteriors: Buffer;
  }[];
  return new Map(rows.map((row) => [row.customer_id, decodeFloat64(row.posteriors)]));
}

async function refusal(runId: number, change: Parameters<typeof regroup>[1]['change']): Promise<string> {
  const before = storedState(runId);
  const outcome = await regroup(db, { runId, change }).then(
    () => null,
    (error: unknown) => error,
  );
  expect(outcome, JSON.stringify(change)).not.toBeNull();
  expect(isInputError(outcome)).toBe(true);
  expect(storedState(runId)).toBe(before);
  return (outcome as Error).message;
}

beforeAll(async () => {
  demo = await demoDatabase('sample');
  db = demo.db;
  october = await runMonth(db, base);
});

afterAll(() => demo?.close());

describe('regrouping a stored run', () => {
  it('a level takes the hierarchy grouping; memberships are the summed component posteriors', async () => {
    const tree = segmentationOf(db, october.runId);
    expect(tree.components).toBe(6);
    expect(tree.levels.map((level) => level.segmentCount)).toEqual([6, 5, 4, 3, 2, 1]);
    // Auto took the level where the entropy curve flattens.
    expect(october.segmentation).toBe('auto');
    expect(october.segmentCount).toBe(tree.autoSegmentCount);

    const result = await regroup(db, { runId: october.runId, change: { level: 3 } });
    expect(result.summary.segmentCount).toBe(3);
    expect(result.summary.segmentation).toBe('level');
    const after = segmentationOf(db, october.runId);
    const level3 = after.levels.find((level) => level.segmentCount === 3)!;
    expect(canonical(after.segments.map((segment) => segment.components))).toBe(canonical(level3.groups));
    expect(after.currentLevel).toBe(3);

    const posteriors = componentPosteriors(october.runId);
    const segments = listSegments(db, october.runId).segments;
    let checked = 0;
    for (const row of allMemberships(db, october.runId)) {
      if (row.segment === null) continue;
      const component = posteriors.get(row.customerId)!;
      const sums = segments
        .slice()
        .sort((a, b) => a.segment - b.segment)
        .map((segment) => segment.components.reduce((total, c) => total + component[c], 0));
      expect(row.confidence).toBeCloseTo(Math.max(...sums), 12);
      expect(sums[row.segment]).toBeCloseTo(Math.max(...sums), 12);
      checked++;
    }
    expect(checked).toBe(result.summary.customers);
    expect(result.summary.segments.reduce((total, segment) => total + segment.customers, 0)).toBe(result.summary.customers);
  });

  it('merge and split by hand; a rename survives where the segment keeps its key', async () => {
    const [first, second] = listSegments(db, october.runId).segments;
    rename(db, { runId: october.runId, segment: first.key, name: 'Big weekly shop' });
    const merged = await regroup(db, { runId: october.runId, change: { merge: [first.key, second.key] } });
    expect(merged.summary.segmentCount).toBe(2);
    expect(merged.summary.segmentation).toBe('hand');
    const union = [...first.components, ...second.components].sort((a, b) => a - b);
    const mergedSegment = merged.summary.segments.find((segment) => canonical([segment.components]) === canonical([union]))!;
    expect(mergedSegment).toBeDefined();
    // The merged segment continues the larger of the two (most shared customers) under its key.
    const larger = first.customers >= second.customers ? first : second;
    expect(mergedSegment.key).toBe(larger.key);
    if (larger.key === first.key) expect(mergedSegment.name).toBe('Big weekly shop');
    expect(merged.retired).toHaveLength(1);
    expect(merged.change).toMatch(/^merged "/);

    const split = await regroup(db, {
      runId: october.runId,
      change: { split: { segment: mergedSegment.key, parts: [first.components, second.components] } },
    });
    expect(split.summary.segmentCount).toBe(3);
    expect(canonical(split.summary.segments.map((segment) => segment.components))).toBe(
      canonical(segmentationOf(db, october.runId).levels.find((level) => level.segmentCount === 3)!.groups),
    );
    expect(segmentationOf(db, october.runId).method).toBe('hand');
    // What settings-out writes to repeat the month: the grouping itself.
    expect(canonical(storedRun(db, october.runId).settings.segmentation!)).toBe(canonical(split.summary.segments.map((segment) => segment.components)));
  });

  it('refuses more segments than components, an empty or foreign split part, a merge with itself; nothing stored', async () => {
    const segments = listSegments(db, october.runId).segments;
    const single = segments.find((segment) => segment.components.length === 1)!;
    const multi = segments.find((segment) => segment.components.length > 1)!;
    expect(await refusal(october.runId, { level: 7 })).toMatch(/Cannot make 7 segments from 6 components/);
    expect(await refusal(october.runId, { merge: [single.key, single.name] })).toMatch(/with itself/);
    expect(await refusal(october.runId, { split: { segment: multi.key, parts: [multi.components, []] } })).toMatch(/holds no component/);
    expect(await refusal(october.runId, { split: { segment: multi.key, parts: [[multi.components[0]], [single.components[0]]] } })).toMatch(
      new RegExp(`Component ${single.components[0]} is not in segment`),
    );
    expect(await refusal(october.runId, { merge: [single.key, 'S999'] })).toMatch(/S999/);
  });

  it('refuses a grouping that would leave a segment without customers; nothing stored', async () => {
    // Make one component never the larger share against the rest: halve its posterior into component 0's.
    db.exec('SAVEPOINT weak_component');
    try {
      await regroup(db, { runId: october.runId, change: { level: 1 } });
      const weak = 5;
      const update = db.prepare('UPDATE run_memberships SET posteriors = ? WHERE run_id = ? AND customer_id = ?');
      for (const [customerId, posterior] of componentPosteriors(october.runId)) {
        const moved = Float64Array.from(posterior);
        moved[0] += moved[weak] * 0.6;
        moved[weak] *= 0.4;
        update.run(encodeFloat64(moved), october.runId, customerId);
      }
      const all = [0, 1, 2, 3, 4];
      const message = await refusal(october.runId, { split: { segment: 0, parts: [all, [weak]] } });
      expect(message).toMatch(/Segment 1 \(components 5\) would hold no customer/);
    } finally {
      db.exec('ROLLBACK TO weak_component; RELEASE weak_component');
    }
  });
});

describe('months keep the combination', () => {
  it('a rescore keeps the hand-made grouping, keys and names; a refit carries names by the segment sharing most customers', async () => {
    const run = await runMonth(db, { ...base, asOf: '2026-09-30' });
    const first = listSegments(db, run.runId).segments;
    const [a, b] = first;
    await regroup(db, { runId: run.runId, change: { merge: [a.key, b.key] } });
    const handMade = listSegments(db, run.runId).segments;
    rename(db, { runId: run.runId, segment: handMade[0].key, name: 'Kept by hand' });

    const rescore = await runMonth(db, { ...base, asOf: '2026-09-30', mode: 'rescore', parentRunId: run.runId });
    expect(rescore.segmentation).toBe('hand');
    const rescored = listSegments(db, rescore.runId).segments;
    const byKey = (list: typeof rescored) => new Map(list.map((segment) => [segment.key, [canonical([segment.components]), segment.name]]));
    expect(byKey(rescored)).toEqual(byKey(listSegments(db, run.runId).segments));

    const refit = await runMonth(db, { ...base, asOf: '2026-10-31', parentRunId: run.runId });
    const parentOf = new Map(allMemberships(db, run.runId).map((row) => [row.customerId, row.segment]));
    const renamedIndex = listSegments(db, run.runId).segments.find((segment) => segment.name === 'Kept by hand')!.segment;
    const carried = listSegments(db, refit.runId).segments.find((segment) => segment.name === 'Kept by hand');
    // The rename goes where most of its customers went, when that is at least half of either side.
    const shared = new Map<number, number>();
    for (const row of allMemberships(db, refit.runId)) {
      if (row.segment !== null && parentOf.get(row.customerId) === renamedIndex) shared.set(row.segment, (shared.get(row.segment) ?? 0) + 1);
    }
    const [bestSegment] = [...shared.entries()].sort((x, y) => y[1] - x[1])[0];
    expect(carried).toBeDefined();
    expect(carried!.segment).toBe(bestSegment);
    expect(carried!.key).toBe(handMade[0].key);
    expect(carried!.renamed).toBe(true);
  });
});

describe('the review queue at a capacity', () => {
  let run: RunSummary;
  beforeAll(async () => {
    run = await runMonth(db, { ...base, asOf: '2026-11-30', parentRunId: null, reviewCapacity: 5, borderlineConfidence: 0.9 });
  });

  it('queues at most the capacity, by spend at stake × uncertainty; the rest are counted by reason', () => {
    const queue = reviewQueue(db, { runId: run.runId, limit: 1000 });
    const flagged = reviewQueue(db, { runId: run.runId, limit: 1000, scope: 'flagged' });
    const rest = reviewQueue(db, { runId: run.runId, limit: 1000, scope: 'unqueued' });
    expect(queue.queue.flagged).toBeGreaterThan(5);
    expect(queue.total).toBe(5);
    expect(queue.queue).toMatchObject({ capacity: 5, queued: 5, flagged: flagged.total });
    expect(rest.total).toBe(flagged.total - 5);
    expect(queue.queue.leftOut.customers).toBe(rest.total);
    expect(queue.queue.leftOut.borderline).toBe(rest.rows.filter((item) => item.reasons.includes('borderline')).length);
    expect(queue.queue.leftOut.atypical).toBe(rest.rows.filter((item) => item.reasons.includes('atypical')).length);
    for (const item of flagged.rows) {
      if (item.reasons.includes('borderline') && !item.reasons.includes('atypical')) expect(item.uncertainty).toBeCloseTo(1 - item.confidence!, 12);
      expect(item.value).toBeCloseTo(Math.max(0, item.revenue) * item.uncertainty, 6);
    }
    const values = queue.rows.map((item) => item.value);
    expect(values).toEqual([...values].sort((x, y) => y - x));
    const lowestQueued = Math.min(...values);
    for (const item of rest.rows) expect(item.value).toBeLessThanOrEqual(lowestQueued);
    expect(queue.queue.valueCut).toBeCloseTo(lowestQueued, 6);
    const memberships = allMemberships(db, run.runId);
    expect(memberships.filter((row) => row.queued).map((row) => row.customerId).sort()).toEqual(queue.rows.map((item) => item.customerId).sort());
  });

  it('accept the rest keeps the model segment for flagged customers beyond the capacity only, once', () => {
    const rest = reviewQueue(db, { runId: run.runId, limit: 1000, scope: 'unqueued' });
    const first = acceptRest(db, { runId: run.runId, reviewer: 'tester', note: 'bulk' });
    expect(first).toMatchObject({ accepted: rest.total, alreadyDecided: 0 });
    expect(first.queue.leftOutDecided).toBe(rest.total);
    const decided = db.prepare('SELECT customer_id, action, segment_key, reviewer, note FROM review_decisions WHERE run_id = ?').all(run.runId) as {
      customer_id: string;
      action: string;
      segment_key: string;
    }[];
    expect(decided.map((row) => row.customer_id).sort()).toEqual(rest.rows.map((item) => item.customerId).sort());
    const keyOf = new Map(listSegments(db, run.runId).segments.map((segment) => [segment.segment, segment.key]));
    const segmentOf = new Map(rest.rows.map((item) => [item.customerId, item.segment]));
    for (const row of decided) {
      expect(row).toMatchObject({ action: 'keep', reviewer: 'tester', note: 'bulk' });
      expect(row.segment_key).toBe(keyOf.get(segmentOf.get(row.customer_id)!));
    }
    const again = acceptRest(db, { runId: run.runId });
    expect(again).toMatchObject({ accepted: 0, alreadyDecided: rest.total });
    expect(db.prepare('SELECT count(*) FROM review_decisions WHERE run_id = ?').pluck().get(run.runId)).toBe(rest.total);
    // The queue itself is untouched.
    expect(reviewQueue(db, { runId: run.runId, status: 'done' }).total).toBe(0);
  });

  it('an atypical-only customer gets the extreme features in original units and percentiles, not the borderline sentence', () => {
    const flagged = reviewQueue(db, { runId: run.runId, limit: 1000, scope: 'flagged' }).rows;
    const atypicalOnly = flagged.filter((item) => item.reasons.length === 1 && item.reasons[0] === 'atypical');
    expect(atypicalOnly.length).toBeGreaterThan(0);
    const stored = storedRun(db, run.runId).storedFeatures;
    const values = new Map<string, Float64Array>();
    for (const row of db.prepare('SELECT customer_id, features FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL').all(run.runId) as {
      customer_id: string;
      features: Buffer;
    }[])
      values.set(row.customer_id, decodeFloat64(row.features));
    for (const item of atypicalOnly) {
      expect(item.why).toBeNull();
      expect(item.atypicalWhy).not.toBeNull();
      const { terms, text } = item.atypicalWhy!;
      expect(text).not.toMatch(/fits|more common segment/);
      for (const term of terms) {
        const j = stored.indexOf(term.feature);
        expect(term.value).toBe(values.get(item.customerId)![j]);
        const column = [...values.values()].map((row) => row[j]).filter(Number.isFinite);
        const share = (term.direction === 'above' ? column.filter((v) => v < term.value) : column.filter((v) => v > term.value)).length / column.length;
        expect(term.share).toBeCloseTo(share, 12);
        expect(text).toContain(`${term.label} `);
        expect(text).toMatch(new RegExp(`${term.label} [^;]+?, ${term.direction} [\\d.]+ % of customers`));
      }
      if (terms.some((term) => term.feature === 'spend_per_month' && term.extreme)) expect(text).toMatch(/spend per month EUR [\d,.]+, (above|below)/);
    }
  });
});

describe('the feature set before fitting', () => {
  it('spend per month beside visit rate and basket size: the collinearity warning is stored with the run', async () => {
    const summary = await runMonth(db, {
      ...base,
      k: 3,
      covariance: 'full',
      features: [{ feature: 'spend_per_month' }, { feature: 'visits_per_month' }, { feature: 'average_basket' }],
    });
    const warning = summary.warnings.find((text) => /nearly collinear/.test(text));
    expect(warning).toMatch(/spend per month is explained by visit rate and basket size with R² = 0\.9\d\d .*Drop spend per month/);
    expect(storedRun(db, summary.runId).warnings).toContain(warning);
    const defaults = await runMonth(db, { ...base, k: 3 });
    expect(defaults.warnings.some((text) => /collinear/.test(text))).toBe(false);
  });

  async function importedRefusal(values: (index: number) => [number, number], settings: Partial<StartRunInput>): Promise<string> {
    db.exec('SAVEPOINT imported');
    try {
      const customers = db.prepare('SELECT customer_id FROM customers ORDER BY customer_id').pluck().all() as string[];
      const insert = db.prepare('INSERT INTO customer_features (customer_id, feature, value) VALUES (?, ?, ?)');
      customers.forEach((customerId, i) => {
        const [a, b] = values(i);
        insert.run(customerId, 'flat_points', a);
        insert.run(customerId, 'coupon_count', b);
      });
      const runsBefore = listRuns(db).length;
      const membershipsBefore = db.prepare('SELECT count(*) FROM run_memberships').pluck().get();
      const error = await runMonth(db, { ...base, source: 'imported', parentRunId: null, ...settings }).then(
        () => null,
        (caught: unknown) => caught,
      );
      expect(isInputError(error)).toBe(true);
      expect(listRuns(db).length).toBe(runsBefore);
      expect(db.prepare('SELECT count(*) FROM run_memberships').pluck().get()).toBe(membershipsBefore);
      return (error as Error).message;
    } finally {
      db.exec('ROLLBACK TO imported; RELEASE imported');
    }
  }

  it('a constant feature is refused by name, nothing stored', async () => {
    const message = await importedRefusal((i) => [7, i % 13], { k: 2, features: [{ feature: 'flat_points' }, { feature: 'coupon_count' }] });
    expect(message).toMatch(/"flat_points" .* the same value for every customer/);
    expect(message).not.toMatch(/coupon_count/);
  });

  it('every fit refused: says what to change, nothing stored', async () => {
    // Three distinct points: every 2- or 3-component full fit has a component with no spread in some direction.
    const points: [number, number][] = [
      [0, 0],
      [1, 0],
      [0, 1],
    ];
    const message = await importedRefusal((i) => points[i % 3], {
      k: 'auto',
      kMin: 2,
      kMax: 3,
      covariance: 'full',
      features: [{ feature: 'flat_points' }, { feature: 'coupon_count' }],
    });
    expect(message).toMatch(/^Every fit was refused: .*Try fewer components, other features, or a larger regularisation\.$/);
  });
});

describe('trying another level and coming back', () => {
  it('a segment of the same components gets its key, its rename and the decisions moving customers there back', async () => {
    // Last in the file: its own run, so that no other test sees it as a parent.
    const run = await runMonth(db, { ...base, asOf: '2026-08-31', parentRunId: null });
    const shown = listSegments(db, run.runId).segments;
    expect(shown.length).toBeGreaterThanOrEqual(2);
    const target = [...shown].sort((a, b) => a.customers - b.customers)[0];
    rename(db, { runId: run.runId, segment: target.key, name: 'Win-back list' });
    const mover = allMemberships(db, run.runId).find((row) => row.flagged && row.segment !== target.segment)!;
    expect(mover).toBeDefined();
    decide(db, { runId: run.runId, customerId: mover.customerId, action: 'move', segment: target.key, reviewer: 'tester' });
    const finalOf = () => allMemberships(db, run.runId).find((row) => row.customerId === mover.customerId)!.finalSegmentName;
    expect(finalOf()).toBe('Win-back list');

    const one = await regroup(db, { runId: run.runId, change: { level: 1 } });
    expect(one.retired).toContain('Win-back list');
    expect(one.returned).toEqual([]);
    const [only] = listSegments(db, run.runId).segments;
    // With its segment gone the decision leaves the customer in the model's segment, and stays stored.
    expect(finalOf()).toBe(only.name);

    const back = await regroup(db, { runId: run.runId, change: { level: 'auto' } });
    const again = listSegments(db, run.runId).segments;
    const byKey = (list: typeof again) => new Map(list.map((segment) => [segment.key, canonical([segment.components])]));
    expect(byKey(again)).toEqual(byKey(shown));
    expect(again.find((segment) => segment.key === target.key)).toMatchObject({ name: 'Win-back list', renamed: true });
    expect(back.added).toEqual([]);
    expect(back.returned).toContain('Win-back list');
    expect(back.returned).toHaveLength(shown.length - 1);
    expect(finalOf()).toBe('Win-back list');

    // A grouping never shown before still gets fresh keys.
    const components = segmentationOf(db, run.runId).levels[0].groups.length;
    const all = await regroup(db, { runId: run.runId, change: { level: components } });
    if (components > shown.length) expect(all.added.length).toBeGreaterThan(0);
    const fresh = listSegments(db, run.runId).segments.filter((segment) => !shown.some((earlier) => earlier.key === segment.key));
    expect(fresh.length).toBe(all.added.length);
  });
});

describe('a database edited by hand', () => {
  it('malformed remembered segments are ignored by a regroup, not an internal error', async () => {
    const run = await runMonth(db, { ...base, asOf: '2026-05-31', parentRunId: null });
    for (const garbage of ['{"a":1}', '[{"components":5,"key":7}]', '[{"components":[99],"key":"S1","name":"x","renamed":false,"origin":"first"}]']) {
      db.prepare("UPDATE runs SET segmentation = json_set(segmentation, '$.shownBefore', json(?)) WHERE run_id = ?").run(garbage, run.runId);
      const result = await regroup(db, { runId: run.runId, change: { level: 1 } });
      expect(result.summary.segmentCount).toBe(1);
      expect(result.returned).toEqual([]);
    }
  });
});

describe('names that continue', () => {
  it('a refit keeps the parent segment\'s word for a trait near the edge of its fifth, and not one far from it', async () => {
    // Last in the file: its own runs. The parent's stored words are set by hand to the neighbouring
    // fifth's, as if last month had sat just across the edge.
    const parent = await runMonth(db, { ...base, asOf: '2026-06-30', parentRunId: null });
    const first = await runMonth(db, { ...base, asOf: '2026-07-31', parentRunId: parent.runId });
    const matched = listSegments(db, first.runId).segments.filter((segment) => segment.origin === 'matched');
    const fifth = (p: number) => Math.min(4, Math.floor(p / 0.2));
    const neighbour = (p: number) => (p % 0.2 < 0.1 ? fifth(p) - 1 : fifth(p) + 1);
    const candidates = matched.flatMap((segment) =>
      segment.traits
        // The rhythm trait's words go by its median, not its fifth (its stickiness: test/runs/naming-movement.test.ts).
        .filter((trait) => trait.feature !== 'gaps_since_last_visit')
        .filter((trait) => trait.percentile < 0.99 && neighbour(trait.percentile) >= 0 && neighbour(trait.percentile) <= 4)
        .map((trait) => ({ key: segment.key, trait, edgeDistance: Math.min(trait.percentile % 0.2, 0.2 - (trait.percentile % 0.2)) })),
    );
    const near = candidates.find((candidate) => candidate.edgeDistance < 0.045);
    const far = candidates.find((candidate) => candidate.edgeDistance > 0.055);
    expect(near, 'a matched trait within 5 points of an edge').toBeDefined();
    expect(far, 'a matched trait further than 5 points from every edge').toBeDefined();

    const setParentWords = (key: string, feature: string, words: string) => {
      const row = db.prepare('SELECT traits FROM run_segments WHERE run_id = ? AND segment_key = ?').get(parent.runId, key) as { traits: string };
      const traits = (JSON.parse(row.traits) as SegmentTrait[]).map((trait) => (trait.feature === feature ? { ...trait, words } : trait));
      db.prepare('UPDATE run_segments SET traits = ? WHERE run_id = ? AND segment_key = ?').run(JSON.stringify(traits), parent.runId, key);
    };
    const neighbourWords = (candidate: NonNullable<typeof near>) => traitWords(candidate.trait.feature, 0.2 * neighbour(candidate.trait.percentile) + 0.1);
    setParentWords(near!.key, near!.trait.feature, neighbourWords(near!));
    setParentWords(far!.key, far!.trait.feature, neighbourWords(far!));

    const again = await runMonth(db, { ...base, asOf: '2026-07-31', parentRunId: parent.runId });
    const segments = listSegments(db, again.runId).segments;
    const traitOf = (candidate: NonNullable<typeof near>) =>
      segments.find((segment) => segment.key === candidate.key)!.traits.find((trait) => trait.feature === candidate.trait.feature)!;
    expect(traitOf(near!)).toMatchObject({ words: neighbourWords(near!), kept: true });
    expect(traitOf(far!)).toMatchObject({ words: far!.trait.words });
    expect(traitOf(far!).kept).toBeUndefined();
    // The name says the kept word where the trait is one the name uses.
    const nearSegment = segments.find((segment) => segment.key === near!.key)!;
    const words = nearSegment.defaultName.toLowerCase().split(' · ');
    if (NAME_TRAITS.includes(near!.trait.feature)) {
      expect(words).toContain(neighbourWords(near!));
      expect(words).not.toContain(near!.trait.words);
    }
    // Kept: the hand-set word, and any word the same refit kept before the hand edit (a trait
    // that sat near an edge on its own); nothing else.
    const keptBefore = matched.find((segment) => segment.key === near!.key)!.traits.filter((trait) => trait.kept).map((trait) => trait.feature);
    expect(nearSegment.traits.filter((trait) => trait.kept).map((trait) => trait.feature).sort()).toEqual([...new Set([...keptBefore, near!.trait.feature])].sort());

    // Another level and back: every segment returns with the same name, the kept word included.
    const names = (runId: number) => new Map(listSegments(db, runId).segments.map((segment) => [segment.key, segment.name]));
    const before = names(again.runId);
    await regroup(db, { runId: again.runId, change: { level: 1 } });
    await regroup(db, { runId: again.runId, change: { level: 'auto' } });
    expect(names(again.runId)).toEqual(before);
    const nearNow = listSegments(db, again.runId).segments.find((segment) => segment.key === near!.key)!;
    expect(nearNow.traits.find((trait) => trait.feature === near!.trait.feature)).toMatchObject({ words: neighbourWords(near!), kept: true });
  });
});
