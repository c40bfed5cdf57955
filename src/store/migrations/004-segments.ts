import type { Migration } from '../migration-types.js';

/**
 * Segments made of components (DESIGN.md §5, §7):
 * - runs.segmentation: how the model's components are combined into segments, as JSON
 *   {method: 'auto' | 'level' | 'hand', segments: component indices per segment, autoSegmentCount,
 *   autoSegmentCountByMergedRows, levels: the combining hierarchy summary (segmentCount, entropy,
 *   mergedRows, merged pair, groups per level)}; NULL for runs stored before, which read as one
 *   segment per component.
 * - run_segments rows are segments: `components` (JSON list of component indices), the trait-based
 *   `default_name` and `traits`, and `renamed` (the name is the analyst's own).
 * - run_memberships: the segment columns (segment_index, confidence, margin, second, flags) are
 *   per segment, `posteriors` stays per component (so segments can be re-summed without
 *   refitting); `review_value` orders the queue (spend at stake × uncertainty), `queued` marks the
 *   customers within the run's review capacity, `atypical_reason` holds why an atypical customer
 *   fits no segment (JSON terms).
 *
 * Runs stored before: every segment is its one component; names of the old "Tier n" pattern are
 * defaults, others the analyst's renames; every flagged customer was queued, so their settings
 * get a review capacity of that many and the queue is valued by spend at stake × (1 − confidence).
 */
export const segmentsOfComponents: Migration = {
  version: 4,
  name: 'segments made of components',
  up(db) {
    db.exec(`
      ALTER TABLE runs ADD COLUMN segmentation TEXT;
      ALTER TABLE runs ADD COLUMN revision INTEGER NOT NULL DEFAULT 0;

      ALTER TABLE run_segments ADD COLUMN components TEXT NOT NULL DEFAULT '[]';
      ALTER TABLE run_segments ADD COLUMN default_name TEXT NOT NULL DEFAULT '';
      ALTER TABLE run_segments ADD COLUMN renamed INTEGER NOT NULL DEFAULT 0;
      ALTER TABLE run_segments ADD COLUMN traits TEXT NOT NULL DEFAULT '[]';
      UPDATE run_segments SET components = json_array(segment_index), default_name = name,
        renamed = NOT (name GLOB 'Tier [1-9]' OR name GLOB 'Tier [1-9][0-9]' OR name = 'Tier 1 — highest spend'
          OR name GLOB 'Tier [1-9] — lowest spend' OR name GLOB 'Tier [1-9][0-9] — lowest spend' OR name = 'Tier 1 — all customers'
          OR name GLOB 'Tier * (new)' OR name GLOB 'Tier * (new [0-9]*)');

      ALTER TABLE run_memberships ADD COLUMN review_value REAL;
      ALTER TABLE run_memberships ADD COLUMN queued INTEGER NOT NULL DEFAULT 0;
      ALTER TABLE run_memberships ADD COLUMN atypical_reason TEXT;
      UPDATE run_memberships SET queued = 1, review_value = max(revenue_cents, 0) / 100.0 * (1 - ifnull(confidence, 1)) WHERE review > 0;
      DROP INDEX run_memberships_review;
      CREATE INDEX run_memberships_review ON run_memberships (run_id, review_value) WHERE review > 0;

      UPDATE runs SET settings = json_set(settings,
        '$.segmentCount', k,
        '$.reviewCapacity', (SELECT count(*) FROM run_memberships m WHERE m.run_id = runs.run_id AND m.review > 0));
    `);
  },
};
