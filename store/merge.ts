/**
 * Folding a shard database (written by one cluster array task) into the study database.
 *
 * Steps, per shard:
 * 1. Snapshot: the shard is copied with SQLite's online backup into a private temporary file, so a task still
 *    writing it is neither disturbed nor seen half-way (a task killed mid-transaction leaves a hot journal,
 *    which opening the shard rolls back first, as SQLite always does).
 * 2. Checks on the snapshot, before the study database is touched: `PRAGMA integrity_check` (a truncated or
 *    damaged file is refused), the spindrift schema version, the study hash and the engine id and version of
 *    the shard's study and of every realisation in it.
 * 3. One transaction on the study database, rows read from the snapshot: study, points and point links are
 *    added if missing; every finished realisation of the shard (done or failed) is copied with its scalars,
 *    series, events, frames and field snapshots unless the study database already has it. "Already has it": stored `done`, or
 *    stored `failed` while the shard's copy failed too. A shard's `done` replaces a stored `failed` (a rerun that
 *    succeeded) and a stored `running` row (left by a killed local run). Unfinished (`running`) realisations of
 *    the shard are left out: they count as missing and are submitted again.
 *
 * Merging is idempotent (merging a shard again adds nothing) and order-independent: realisations are matched
 * by their key, never by row id, so the result does not depend on which shard is merged first.
 * Do not merge while a local `spindrift run` writes the same database.
 *
 * @example
 * ```ts
 * const store = StudyStore.open("film.sqlite");
 * const r = await mergeShard(store, "film-cluster/20261201T101500Z/shard-4711-3.sqlite", {
 *   studyHash: study.hash, engineId: "point-vortex-2d", engineVersion: "1.0.0",
 * });
 * r.added; // realisations copied
 * ```
 */
import { backup, DatabaseSync, type SQLInputValue, type StatementSync } from "node:sqlite";
import { join } from "node:path";
import { SCHEMA_VERSION } from "./schema.ts";
import type { StudyStore } from "./db.ts";
import { FIELD_SNAPSHOT_COLUMNS, hasTable as hasSnapshotTable } from "./snapshots.ts";
import { migrateDatabase } from "./migrate.ts";

/** What a shard must belong to. */
export interface ShardExpectation {
  readonly studyHash: string;
  readonly engineId: string;
  readonly engineVersion: string;
}

export interface MergeResult {
  readonly shard: string;
  /** Realisations new to the study database. */
  readonly added: number;
  /** Stored `failed` or `running` realisations replaced by the shard's finished copy. */
  readonly replaced: number;
  /** Realisations the study database already had. */
  readonly alreadyStored: number;
  /** Realisations still running in the shard (or left unfinished by a killed task): not copied. */
  readonly unfinished: number;
}

export type ShardProblem =
  | "unreadable"
  | "corrupt"
  | "not-a-shard"
  | "schema-version"
  | "other-study"
  | "engine-version";

/** A shard that was not merged; the study database is untouched. */
export class ShardRejected extends Error {
  readonly problem: ShardProblem;
  readonly shard: string;
  constructor(shard: string, problem: ShardProblem, message: string) {
    super(`${shard}: ${message}`);
    this.name = "ShardRejected";
    this.shard = shard;
    this.problem = problem;
  }
}

const REALISATION_COLUMNS =
  "realisation_key, point_hash, idx, master_seed, seed, status, failure_kind, error, engine_id, " +
  "engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host";
const STUDY_COLUMNS = "name, description, study_hash, source_path, text, normalized_json, engine_id, " +
  "engine_version, tool_version, deno_version, git_commit, notes_json, units_json, created_at, last_run_at";
const POINT_COLUMNS =
  "point_hash, params_hash, engine_id, engine_version, params_json, controls_json, created_at, inputs_json";

/** Copies the shard into a temporary file with the online backup; the caller removes `dir`. */
async function snapshot(shardPath: string): Promise<{ dir: string; path: string }> {
  try {
    Deno.statSync(shardPath);
  } catch (e) {
    throw new ShardRejected(shardPath, "unreadable", `cannot read the shard: ${(e as Error).message}`);
  }
  const dir = Deno.makeTempDirSync({ prefix: "spindrift-shard-" });
  const path = join(dir, "snapshot.sqlite");
  let source: DatabaseSync | undefined;
  try {
    source = new DatabaseSync(shardPath);
    source.exec("PRAGMA busy_timeout = 30000");
    await backup(source, path, { rate: -1 });
    return { dir, path };
  } catch (e) {
    Deno.removeSync(dir, { recursive: true });
    const msg = (e as Error).message;
    const corrupt = /malformed|not a database|corrupt|disk image/i.test(msg);
    throw new ShardRejected(
      shardPath,
      corrupt ? "corrupt" : "unreadable",
      corrupt
        ? `the shard is damaged or truncated (${msg}); nothing was merged from it`
        : `cannot read the shard (${msg}); nothing was merged from it`,
    );
  } finally {
    source?.close();
  }
}

/** Checks a snapshot against the expectation; throws ShardRejected. */
function checkSnapshot(shardPath: string, snapshotPath: string, expect: ShardExpectation): void {
  const db = new DatabaseSync(snapshotPath);
  const reject = (problem: ShardProblem, message: string): never => {
    throw new ShardRejected(shardPath, problem, message);
  };
  try {
    let check: string[];
    try {
      check = (db.prepare("PRAGMA integrity_check").all() as Record<string, string>[]).map((r) =>
        String(Object.values(r)[0])
      );
    } catch (e) {
      return reject(
        "corrupt",
        `the shard is damaged or truncated (${(e as Error).message}); nothing was merged`,
      );
    }
    if (check.length !== 1 || check[0] !== "ok") {
      return reject(
        "corrupt",
        `the shard fails SQLite's integrity check (${check.slice(0, 3).join("; ")}); nothing was merged`,
      );
    }
    const tables = new Set(
      (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all() as { name: string }[]).map((
        t,
      ) => t.name),
    );
    for (
      const t of ["meta", "studies", "points", "study_points", "realisations", "scalars", "series", "frames"]
    ) {
      if (!tables.has(t)) return reject("not-a-shard", `not a spindrift shard database (no table ${t})`);
    }
    const version = db.prepare("SELECT value FROM meta WHERE key = 'schema_version'").get() as
      | { value: string }
      | undefined;
    // A shard of the previous schema version (a task that started before spindrift was updated) is upgraded:
    // the snapshot is a private copy, so this never touches the shard itself.
    if (Number(version?.value) === 1) migrateDatabase(db, 1);
    else if (Number(version?.value) !== SCHEMA_VERSION) {
      return reject(
        "schema-version",
        `the shard has database schema version ${version?.value ?? "unknown"}, this spindrift uses ` +
          `${SCHEMA_VERSION}; it was written by another spindrift version`,
      );
    }
    const studies = db.prepare("SELECT study_hash, engine_id, engine_version FROM studies").all() as {
      study_hash: string;
      engine_id: string;
      engine_version: string;
    }[];
    const realisationCount = Number(
      (db.prepare("SELECT COUNT(*) AS n FROM realisations").get() as { n: number }).n,
    );
    if (studies.length === 0 && realisationCount > 0) {
      return reject("not-a-shard", "the shard has realisations but no study record");
    }
    for (const s of studies) {
      if (s.study_hash !== expect.studyHash) {
        return reject(
          "other-study",
          `the shard belongs to study hash ${s.study_hash.slice(0, 12)}…, not to this study ` +
            `(${
              expect.studyHash.slice(0, 12)
            }…): it was computed for another study or another revision of it`,
        );
      }
      if (s.engine_id !== expect.engineId || s.engine_version !== expect.engineVersion) {
        return reject(
          "engine-version",
          `the shard was computed with engine ${s.engine_id} ${s.engine_version}, this study uses ` +
            `${expect.engineId} ${expect.engineVersion}`,
        );
      }
    }
    const engines = db.prepare("SELECT DISTINCT engine_id, engine_version FROM realisations").all() as {
      engine_id: string;
      engine_version: string;
    }[];
    for (const e of engines) {
      if (e.engine_id !== expect.engineId || e.engine_version !== expect.engineVersion) {
        return reject(
          "engine-version",
          `the shard holds realisations of engine ${e.engine_id} ${e.engine_version}, this study uses ` +
            `${expect.engineId} ${expect.engineVersion}`,
        );
      }
    }
  } finally {
    db.close();
  }
}

/**
 * Merges one shard into the study database (see the module comment).
 * @throws ShardRejected when the shard is unreadable, damaged, from another spindrift schema version, another
 * study or another engine version; the study database is then untouched.
 */
export async function mergeShard(
  store: StudyStore,
  shardPath: string,
  expect: ShardExpectation,
): Promise<MergeResult> {
  const snap = await snapshot(shardPath);
  try {
    checkSnapshot(shardPath, snap.path, expect);
    // Rows are copied through prepared statements rather than ATTACH: Deno allows ATTACH only with every
    // permission, and the launcher runs with narrow ones.
    const src = new DatabaseSync(snap.path, { readOnly: true });
    try {
      return store.transaction(() => copyAll(src, store.db, shardPath));
    } finally {
      src.close();
    }
  } finally {
    Deno.removeSync(snap.dir, { recursive: true });
  }
}

type Row = Record<string, SQLInputValue>;

/** Inserts every row of `rows` with `sql`, binding the named columns in order (optionally replaced). */
function insertAll(
  dst: DatabaseSync,
  sql: string,
  columns: readonly string[],
  rows: Iterable<unknown>,
  replace: Readonly<Record<string, SQLInputValue>> = {},
): void {
  const stmt = dst.prepare(sql);
  for (const r of rows as Iterable<Row>) stmt.run(...columns.map((c) => (c in replace ? replace[c] : r[c])));
}

function placeholders(n: number): string {
  return Array.from({ length: n }, () => "?").join(", ");
}

function copyAll(src: DatabaseSync, dst: DatabaseSync, shardPath: string): MergeResult {
  const studyCols = STUDY_COLUMNS.split(", ");
  insertAll(
    dst,
    `INSERT OR IGNORE INTO studies (${STUDY_COLUMNS}) VALUES (${placeholders(studyCols.length)})`,
    studyCols,
    src.prepare(`SELECT ${STUDY_COLUMNS} FROM studies`).iterate(),
  );
  const pointCols = POINT_COLUMNS.split(", ");
  insertAll(
    dst,
    `INSERT OR IGNORE INTO points (${POINT_COLUMNS}) VALUES (${placeholders(pointCols.length)})`,
    pointCols,
    src.prepare(`SELECT ${POINT_COLUMNS} FROM points`).iterate(),
  );
  const studyId = dst.prepare("SELECT id FROM studies WHERE study_hash = ?");
  const link = dst.prepare(
    `INSERT OR IGNORE INTO study_points (study_id, point_index, point_hash, label, varied_json)
     VALUES (?, ?, ?, ?, ?)`,
  );
  for (
    const sp of src.prepare(
      `SELECT s.study_hash, sp.point_index, sp.point_hash, sp.label, sp.varied_json
       FROM study_points sp JOIN studies s ON s.id = sp.study_id`,
    ).iterate() as Iterable<Row>
  ) {
    const id = (studyId.get(sp.study_hash) as { id: number }).id;
    link.run(id, sp.point_index, sp.point_hash, sp.label, sp.varied_json);
  }

  const realisationCols = REALISATION_COLUMNS.split(", ");
  const rows = src.prepare(`SELECT id, ${REALISATION_COLUMNS} FROM realisations ORDER BY realisation_key`)
    .all() as Row[];
  const stored = dst.prepare("SELECT status FROM realisations WHERE realisation_key = ?");
  const remove = dst.prepare("DELETE FROM realisations WHERE realisation_key = ?");
  const insert = dst.prepare(
    `INSERT INTO realisations (${REALISATION_COLUMNS}) VALUES (${placeholders(realisationCols.length)})`,
  );
  const children: { select: StatementSync; sql: string; columns: string[] }[] = [
    ["scalars", "name, value"],
    ["series", "name, k, t, value"],
    ["events", "seq, t, kind, ids_json, data_json"],
    ["frames", "k, t, n, layout, data"],
    ...(hasSnapshotTable(src) ? [["field_snapshots", FIELD_SNAPSHOT_COLUMNS]] : []),
  ].map(([table, cols]) => {
    const columns = cols.split(", ");
    return {
      select: src.prepare(`SELECT ${cols} FROM ${table} WHERE realisation_id = ?`),
      sql: `INSERT INTO ${table} (realisation_id, ${cols}) VALUES (${placeholders(columns.length + 1)})`,
      columns: ["realisation_id", ...columns],
    };
  });
  let added = 0, replaced = 0, alreadyStored = 0, unfinished = 0;
  for (const r of rows) {
    if (r.status !== "done" && r.status !== "failed") {
      unfinished++;
      continue;
    }
    const have = (stored.get(r.realisation_key) as { status: string } | undefined)?.status;
    if (have === "done" || (have === "failed" && r.status === "failed")) {
      alreadyStored++;
      continue;
    }
    remove.run(r.realisation_key);
    const newId = Number(insert.run(...realisationCols.map((c) => r[c])).lastInsertRowid);
    for (const c of children) {
      insertAll(dst, c.sql, c.columns, c.select.iterate(r.id), { realisation_id: newId });
    }
    if (have === undefined) added++;
    else replaced++;
  }
  return { shard: shardPath, added, replaced, alreadyStored, unfinished };
}
