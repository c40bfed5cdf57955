import type { Migration } from '../migration-types.js';

/**
 * Segmentation runs (DESIGN.md §6, §7): the run row (settings, features and fitted transforms,
 * model, sweep table, movement as JSON), its segments with profiles, one membership row per
 * customer (posteriors and original-unit features as little-endian Float64 BLOBs), and review
 * decisions per run. Money is integer cents like the receipts.
 */
export const runTables: Migration = {
  version: 2,
  name: 'runs',
  up(db) {
    db.exec(`
      CREATE TABLE runs (
        run_id INTEGER PRIMARY KEY,
        parent_run_id INTEGER REFERENCES runs(run_id),
        created_at TEXT NOT NULL,
        as_of TEXT NOT NULL,
        window_months INTEGER NOT NULL,
        mode TEXT NOT NULL CHECK (mode IN ('refit', 'rescore')),
        source TEXT NOT NULL CHECK (source IN ('receipts', 'imported')),
        settings TEXT NOT NULL,
        features TEXT NOT NULL,
        stored_features TEXT NOT NULL,
        transforms TEXT NOT NULL,
        model TEXT NOT NULL,
        sweep TEXT NOT NULL,
        criterion TEXT NOT NULL,
        k INTEGER NOT NULL,
        covariance TEXT NOT NULL,
        log_likelihood REAL NOT NULL,
        bic REAL NOT NULL,
        icl REAL NOT NULL,
        customers INTEGER NOT NULL,
        too_new INTEGER NOT NULL,
        borderline INTEGER NOT NULL,
        atypical INTEGER NOT NULL,
        atypical_log_density_below REAL,
        stability REAL,
        warnings TEXT NOT NULL,
        retired TEXT NOT NULL,
        movement TEXT
      );

      CREATE TABLE run_segments (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        segment_index INTEGER NOT NULL,
        segment_key TEXT NOT NULL,
        name TEXT NOT NULL,
        spend_rank INTEGER NOT NULL,
        origin TEXT NOT NULL CHECK (origin IN ('first', 'matched', 'new')),
        customers INTEGER NOT NULL,
        share REAL NOT NULL,
        revenue_cents INTEGER NOT NULL,
        revenue_share REAL NOT NULL,
        profile TEXT NOT NULL,
        PRIMARY KEY (run_id, segment_index),
        UNIQUE (run_id, segment_key),
        UNIQUE (run_id, name)
      );

      CREATE TABLE run_memberships (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        customer_id TEXT NOT NULL,
        segment_index INTEGER,
        confidence REAL,
        margin REAL,
        second_index INTEGER,
        second_probability REAL,
        log_density REAL,
        borderline INTEGER NOT NULL DEFAULT 0,
        atypical INTEGER NOT NULL DEFAULT 0,
        partial INTEGER NOT NULL DEFAULT 0,
        too_new INTEGER NOT NULL DEFAULT 0,
        review INTEGER NOT NULL DEFAULT 0,
        previous_key TEXT,
        revenue_cents INTEGER NOT NULL,
        spend_per_month REAL,
        features BLOB NOT NULL,
        posteriors BLOB,
        PRIMARY KEY (run_id, customer_id)
      ) WITHOUT ROWID;
      CREATE INDEX run_memberships_by_segment ON run_memberships (run_id, segment_index);
      CREATE INDEX run_memberships_review ON run_memberships (run_id, revenue_cents) WHERE review > 0;

      CREATE TABLE review_decisions (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        customer_id TEXT NOT NULL,
        action TEXT NOT NULL CHECK (action IN ('keep', 'move', 'exclude')),
        segment_key TEXT,
        note TEXT,
        reviewer TEXT,
        decided_at TEXT NOT NULL,
        carried_from_run_id INTEGER REFERENCES runs(run_id),
        PRIMARY KEY (run_id, customer_id)
      ) WITHOUT ROWID;
    `);
  },
};
