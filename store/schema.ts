/**
 * The SQLite schema of a study database (one file per study). Documented table by table in DEVELOPERS.md
 * ("Database schema"); keep the two in step. `SCHEMA_VERSION` is bumped on any change, with a migration from
 * the previous version in `migrate.ts`.
 *
 * Visibility rule: rows of a realisation become visible in `frames`, `series`, `scalars` and `events` in the
 * single transaction that marks it `done` or `failed`. While it runs, its frames stream into `pending_frames`;
 * a crash leaves only a `running` row and pending frames, which the next run discards.
 *
 * Identity rule: a realisation is identified by its key alone (hash of point, index and master seed), so
 * realisations of the same point and index with another master seed (a seed edit, another study) coexist and
 * are never deleted by a run of a different revision.
 */
export const SCHEMA_VERSION = 2;

/** Oldest schema version this build can open: older files are migrated (`migrate.ts`) on the first write. */
export const OLDEST_READABLE_VERSION = 1;

/** The CREATE statement of the realisations table under `name` (the migration builds it under another name). */
export function realisationsTable(name: string): string {
  return `-- master_seed: the study's master seed that (with point and index) made this realisation; NULL only for rows
-- migrated from schema version 1 that no recorded study's seed explains.
CREATE TABLE IF NOT EXISTS ${name} (
  id               INTEGER PRIMARY KEY,
  realisation_key  TEXT NOT NULL UNIQUE,
  point_hash       TEXT NOT NULL REFERENCES points(point_hash),
  idx              INTEGER NOT NULL,
  master_seed      TEXT,
  seed             TEXT NOT NULL,
  status           TEXT NOT NULL CHECK (status IN ('running', 'done', 'failed')),
  failure_kind     TEXT,
  error            TEXT,
  engine_id        TEXT NOT NULL,
  engine_version   TEXT NOT NULL,
  started_at       TEXT,
  finished_at      TEXT,
  wall_seconds     REAL,
  sim_time_reached REAL,
  frame_count      INTEGER,
  host             TEXT
) STRICT;`;
}

export const SCHEMA_SQL = `
CREATE TABLE IF NOT EXISTS meta (
  key   TEXT PRIMARY KEY,
  value TEXT NOT NULL
) STRICT;

-- One row per distinct normalized study that was run into this database (edits add rows).
CREATE TABLE IF NOT EXISTS studies (
  id              INTEGER PRIMARY KEY,
  name            TEXT NOT NULL,
  description     TEXT NOT NULL,
  study_hash      TEXT NOT NULL UNIQUE,
  source_path     TEXT,
  text            TEXT NOT NULL,
  normalized_json TEXT NOT NULL,
  engine_id       TEXT NOT NULL,
  engine_version  TEXT NOT NULL,
  tool_version    TEXT NOT NULL,
  deno_version    TEXT NOT NULL,
  git_commit      TEXT,
  notes_json      TEXT NOT NULL DEFAULT '[]',
  units_json      TEXT NOT NULL DEFAULT '{}',
  created_at      TEXT NOT NULL,
  last_run_at     TEXT
) STRICT;

-- A parameter point: the full normalized engine parameters plus run controls and observable settings, and the
-- content fingerprints of the input files its engine reads (imported data), which are part of its hash.
CREATE TABLE IF NOT EXISTS points (
  point_hash     TEXT PRIMARY KEY,
  params_hash    TEXT NOT NULL,
  engine_id      TEXT NOT NULL,
  engine_version TEXT NOT NULL,
  params_json    TEXT NOT NULL,
  controls_json  TEXT NOT NULL,
  created_at     TEXT NOT NULL,
  inputs_json    TEXT NOT NULL DEFAULT '{}'
) STRICT;

-- Which points a study revision contains, in sweep order, with the swept values.
CREATE TABLE IF NOT EXISTS study_points (
  study_id    INTEGER NOT NULL REFERENCES studies(id) ON DELETE CASCADE,
  point_index INTEGER NOT NULL,
  point_hash  TEXT NOT NULL REFERENCES points(point_hash),
  label       TEXT NOT NULL,
  varied_json TEXT NOT NULL,
  PRIMARY KEY (study_id, point_index)
) STRICT;

${realisationsTable("realisations")}

CREATE TABLE IF NOT EXISTS scalars (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  name           TEXT NOT NULL,
  value          REAL,
  PRIMARY KEY (realisation_id, name)
) STRICT, WITHOUT ROWID;

CREATE TABLE IF NOT EXISTS series (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  name           TEXT NOT NULL,
  k              INTEGER NOT NULL,
  t              REAL NOT NULL,
  value          REAL,
  PRIMARY KEY (realisation_id, name, k)
) STRICT, WITHOUT ROWID;

CREATE TABLE IF NOT EXISTS events (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  seq            INTEGER NOT NULL,
  t              REAL NOT NULL,
  kind           TEXT NOT NULL,
  ids_json       TEXT NOT NULL,
  data_json      TEXT NOT NULL,
  PRIMARY KEY (realisation_id, seq)
) STRICT;

-- One row per stored frame; 'layout' names the little-endian arrays packed into 'data' (see frame_codec.ts).
CREATE TABLE IF NOT EXISTS frames (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  k              INTEGER NOT NULL,
  t              REAL NOT NULL,
  n              INTEGER NOT NULL,
  layout         TEXT NOT NULL,
  data           BLOB NOT NULL,
  PRIMARY KEY (realisation_id, k)
) STRICT;

CREATE TABLE IF NOT EXISTS pending_frames (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  k              INTEGER NOT NULL,
  t              REAL NOT NULL,
  n              INTEGER NOT NULL,
  layout         TEXT NOT NULL,
  data           BLOB NOT NULL,
  PRIMARY KEY (realisation_id, k)
) STRICT;

-- Ensemble-level results per parameter point (diffusion fits, intervals, …), recomputable from the rows above.
CREATE TABLE IF NOT EXISTS ensemble_results (
  study_id    INTEGER NOT NULL REFERENCES studies(id) ON DELETE CASCADE,
  point_hash  TEXT NOT NULL REFERENCES points(point_hash),
  analysis    TEXT NOT NULL,
  name        TEXT NOT NULL,
  value       REAL,
  lower       REAL,
  upper       REAL,
  detail_json TEXT NOT NULL DEFAULT '{}',
  computed_at TEXT NOT NULL,
  PRIMARY KEY (study_id, point_hash, analysis, name)
) STRICT;

-- Field snapshots (optional engine channel, store/snapshots.ts): downsampled images of a field (e.g. the GP
-- density and phase) at stored frame k; 'data' holds nx·ny little-endian float32 values, row-major. Added without
-- a version bump: older databases gain the table when opened, and readers treat a missing table as empty.
CREATE TABLE IF NOT EXISTS field_snapshots (
  realisation_id INTEGER NOT NULL REFERENCES realisations(id) ON DELETE CASCADE,
  k              INTEGER NOT NULL,
  name           TEXT NOT NULL,
  t              REAL NOT NULL,
  nx             INTEGER NOT NULL,
  ny             INTEGER NOT NULL,
  x0             REAL NOT NULL,
  y0             REAL NOT NULL,
  dx             REAL NOT NULL,
  dy             REAL NOT NULL,
  data           BLOB NOT NULL,
  PRIMARY KEY (realisation_id, k, name)
) STRICT;

CREATE INDEX IF NOT EXISTS realisations_by_point ON realisations(point_hash, status);
CREATE INDEX IF NOT EXISTS realisations_by_point_seed ON realisations(point_hash, master_seed, idx);
`;
