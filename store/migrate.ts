/**
 * Upgrading a study database written by an older spindrift to the current schema (`schema.ts`), in place and
 * in one transaction: either the whole upgrade is committed or the file is left as it was.
 *
 * Version 1 → 2:
 * - `realisations` loses `UNIQUE (point_hash, idx)` (a seed edit or another study made the old rows be deleted)
 *   and gains `master_seed`. The table is rebuilt by SQLite's documented procedure for schema changes ALTER
 *   TABLE cannot make (foreign keys off, new table, copy, drop, rename, `foreign_key_check`), so the rows of
 *   `scalars`, `series`, `events` and `frames` that reference realisations by id stay untouched. Each row's
 *   master seed is recovered by recomputing its key (`keys.ts`) with the seeds of the recorded study revisions;
 *   a row no recorded seed explains keeps NULL (readers then count it as version 1 did).
 * - `points` gains `inputs_json` ('{}': no input-file fingerprints were recorded).
 * - `meta` gains the lineage (`study_name` = the name of the oldest recorded study).
 *
 * @example
 * ```ts
 * const db = new DatabaseSync("old.sqlite");
 * migrateDatabase(db, 1); // now version 2
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { realisationsTable, SCHEMA_VERSION } from "./schema.ts";
import { realisationKey } from "./keys.ts";

/** Version-1 columns of `realisations`, in the order they are copied. */
const V1_COLUMNS = "id, realisation_key, point_hash, idx, seed, status, failure_kind, error, engine_id, " +
  "engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host";

/** What a migration did, for the message the user sees. */
export interface MigrationReport {
  readonly from: number;
  readonly to: number;
  readonly realisations: number;
  /** Realisation rows whose master seed no recorded study explains (left NULL). */
  readonly unmatchedSeeds: number;
}

/**
 * Upgrades `db` (open for writing, not inside a transaction) from `from` to `SCHEMA_VERSION`.
 * @throws Error when the upgrade fails; the transaction is rolled back and the file is unchanged.
 */
export function migrateDatabase(db: DatabaseSync, from: number): MigrationReport {
  if (from !== 1) throw new Error(`no migration from schema version ${from}`);
  db.exec("PRAGMA foreign_keys = OFF");
  db.exec("BEGIN IMMEDIATE");
  try {
    const report = migrate1to2(db);
    const broken = db.prepare("PRAGMA foreign_key_check").all();
    if (broken.length > 0) {
      throw new Error(`the upgraded file fails its foreign-key check (${broken.length} rows)`);
    }
    db.exec("COMMIT");
    return report;
  } catch (e) {
    db.exec("ROLLBACK");
    throw e;
  } finally {
    db.exec("PRAGMA foreign_keys = ON");
  }
}

function migrate1to2(db: DatabaseSync): MigrationReport {
  db.exec(realisationsTable("realisations_v2"));
  db.exec(
    `INSERT INTO realisations_v2 (${V1_COLUMNS}, master_seed) SELECT ${V1_COLUMNS}, NULL FROM realisations`,
  );
  const seeds = (db.prepare(
    "SELECT DISTINCT CAST(json_extract(normalized_json, '$.seed') AS TEXT) AS seed FROM studies",
  ).all() as { seed: string | null }[]).map((r) => r.seed).filter((s): s is string => s !== null);
  const setSeed = db.prepare("UPDATE realisations_v2 SET master_seed = ? WHERE id = ?");
  let realisations = 0, unmatched = 0;
  for (
    const r of db.prepare("SELECT id, realisation_key, point_hash, idx FROM realisations_v2").all() as {
      id: number;
      realisation_key: string;
      point_hash: string;
      idx: number;
    }[]
  ) {
    realisations++;
    const seed = seeds.find((s) => realisationKey(r.point_hash, r.idx, s) === r.realisation_key);
    if (seed === undefined) unmatched++;
    else setSeed.run(seed, r.id);
  }
  db.exec("DROP TABLE realisations");
  db.exec("ALTER TABLE realisations_v2 RENAME TO realisations");
  db.exec("CREATE INDEX IF NOT EXISTS realisations_by_point ON realisations(point_hash, status)");
  db.exec(
    "CREATE INDEX IF NOT EXISTS realisations_by_point_seed ON realisations(point_hash, master_seed, idx)",
  );
  db.exec("ALTER TABLE points ADD COLUMN inputs_json TEXT NOT NULL DEFAULT '{}'");
  const oldest = db.prepare("SELECT name, created_at FROM studies ORDER BY id LIMIT 1").get() as
    | { name: string; created_at: string }
    | undefined;
  const setMeta = db.prepare("INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?)");
  if (oldest) {
    setMeta.run("study_name", oldest.name);
    setMeta.run("created_at", oldest.created_at);
  }
  setMeta.run("schema_version", String(SCHEMA_VERSION));
  setMeta.run("migrated_from", "1");
  return { from: 1, to: SCHEMA_VERSION, realisations, unmatchedSeeds: unmatched };
}
