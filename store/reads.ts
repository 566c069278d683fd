/**
 * Read-only queries over a study database (schema in `schema.ts`). Everything a report needs, as plain typed
 * objects: the study revision and its provenance, its parameter points, per point the realisations with
 * status and timings, their scalars, their series aligned by frame index `k`, and event counts.
 *
 * Nothing here writes: the database is opened with SQLite's read-only flag, so a report can be rebuilt while
 * a run is still writing (WAL readers do not block the writer) and can never damage results.
 *
 * Hot reads (series, scalars) use prepared statements in array mode (`setReturnArrays`), about 3× faster
 * than row objects.
 *
 * @example
 * ```ts
 * const db = openStoreReadOnly("film-patch.sqlite");
 * const study = readStudy(db);                       // latest revision
 * const points = readStudyPoints(db, study.id);
 * const runs = readRealisations(db, points[0].pointHash, { seed: study.seed });
 * const done = runs.filter((r) => r.status === "done").map((r) => r.id);
 * const msd = readAlignedSeries(db, done, "msd");    // msd.values[i][j] ↔ realisation done[i], frame msd.k[j]
 * db.close();
 * ```
 */
import type { DatabaseSync, SQLOutputValue, StatementSync } from "node:sqlite";
import { SCHEMA_VERSION } from "./schema.ts";
import {
  checkHeader,
  DatabaseProblem,
  openReadOnlyConnection,
  quickCheck,
  schemaVersion,
  type StoreProblem,
} from "./_open.ts";

/**
 * A database that cannot be read as a spindrift study database (missing file, not SQLite, another program's
 * database, a newer version, damaged). `reason` says which; `hint` what to do.
 */
export class StoreReadError extends Error {
  readonly reason: StoreProblem | "other";
  readonly hint?: string;
  constructor(message: string, opts: { reason?: StoreProblem; hint?: string } = {}) {
    super(message);
    this.name = "StoreReadError";
    this.reason = opts.reason ?? "other";
    this.hint = opts.hint;
  }
}

/** Realisation status as stored: `running` rows are runs in progress or left by a crash. */
export type RealisationStatus = "running" | "done" | "failed";

/** One study revision with its provenance. */
export interface StudyRecord {
  readonly id: number;
  readonly name: string;
  readonly description: string;
  readonly studyHash: string;
  /** The master seed (as text); its realisations are those stored with this seed. */
  readonly seed: string | null;
  readonly sourcePath: string | null;
  /** The study file text exactly as it was run. */
  readonly text: string;
  /** The normalized study (parsed `normalized_json`); its shape belongs to `study/normalize.ts`. */
  readonly normalized: unknown;
  readonly engineId: string;
  readonly engineVersion: string;
  readonly toolVersion: string;
  readonly denoVersion: string;
  readonly gitCommit: string | null;
  readonly createdAt: string;
  readonly lastRunAt: string | null;
  /** Notes recorded by the runner, e.g. observables skipped because the engine cannot provide their needs. */
  readonly notes: readonly { readonly kind: string; readonly id: string; readonly reason: string }[];
  /**
   * The engine's units ({ length, time, circulation }, and `kappa`, κ in those units as a decimal string, when
   * recorded: see `recordedKappa` in engines/units.ts), empty when unknown.
   */
  readonly units: Readonly<Record<string, string>>;
}

/** A short line per study revision, for listings and messages. */
export interface StudySummary {
  readonly id: number;
  readonly name: string;
  readonly studyHash: string;
  readonly createdAt: string;
  readonly lastRunAt: string | null;
}

/** A parameter point of a study revision, in sweep order. */
export interface PointRecord {
  readonly index: number;
  readonly pointHash: string;
  readonly paramsHash: string;
  /** Human label, e.g. "initial.count=64" or "base". */
  readonly label: string;
  /** The swept values of this point, by dotted parameter path. */
  readonly varied: Readonly<Record<string, unknown>>;
  /** Full normalized engine parameters (parsed `params_json`). */
  readonly params: unknown;
  /** Run controls and observable settings (parsed `controls_json`). */
  readonly controls: unknown;
  /** Content fingerprints of the point's input files (path → SHA-256); empty for engines that read none. */
  readonly inputs: Readonly<Record<string, string>>;
  readonly engineId: string;
  readonly engineVersion: string;
}

/** One realisation row. Times are ISO strings as stored; numbers are null where the run did not get there. */
export interface RealisationRecord {
  readonly id: number;
  readonly key: string;
  readonly pointHash: string;
  readonly index: number;
  readonly seed: string;
  readonly status: RealisationStatus;
  readonly failureKind: string | null;
  readonly error: string | null;
  readonly engineId: string;
  readonly engineVersion: string;
  readonly startedAt: string | null;
  readonly finishedAt: string | null;
  readonly wallSeconds: number | null;
  readonly simTimeReached: number | null;
  readonly frameCount: number | null;
  readonly host: string | null;
}

/**
 * One series name over several realisations, aligned by frame index: `values[i][j]` is realisation
 * `realisationIds[i]` at frame `k[j]`, time `t[j]`; NaN where that realisation has no row or a NULL value.
 */
export interface AlignedSeries {
  readonly name: string;
  readonly realisationIds: readonly number[];
  /** Union of the frame indices present, ascending. */
  readonly k: Int32Array;
  /** Time of each frame index, taken from the first realisation (in `realisationIds` order) that has it. */
  readonly t: Float64Array;
  /** Largest |t_i(k) − t(k)| over realisations and frames: 0 when all realisations sample the same times. */
  readonly tSpread: number;
  readonly values: readonly Float64Array[];
}

/**
 * Opens a study database read-only and checks it at the door (`_open.ts`): the file exists, is SQLite, is a
 * spindrift database of a version this code reads, and passes SQLite's quick check. In a read-only folder it
 * is opened as an unchanging snapshot. Nothing is written to the file. Files of schema version 1 are read
 * through temporary views that give them the columns of version 2 (the first writing command upgrades them).
 * Throws `StoreReadError` with a message and a hint for the user.
 *
 * @example
 * ```ts
 * const db = openStoreReadOnly("runs/film-patch.sqlite");
 * ```
 */
export function openStoreReadOnly(path: string): DatabaseSync {
  let info: Deno.FileInfo;
  try {
    info = Deno.statSync(path);
  } catch (e) {
    if (e instanceof Deno.errors.NotFound) {
      throw new StoreReadError(`database file not found: ${path}`, { reason: "missing" });
    }
    throw new StoreReadError(`cannot read database file ${path}: ${(e as Error).message}`, {
      reason: "unreadable",
    });
  }
  if (!info.isFile) {
    throw new StoreReadError(`not a database file (it is a directory or device): ${path}`, {
      reason: "unreadable",
    });
  }
  if (info.size === 0) {
    throw new StoreReadError(`${path} is empty, not a spindrift database`, { reason: "foreign" });
  }
  let db: DatabaseSync | undefined;
  try {
    checkHeader(path);
    const opened = openReadOnlyConnection(path);
    db = opened.db;
    for (const w of opened.warnings) console.error(`spindrift: warning: ${w}`);
    const version = schemaVersion(db, path);
    if (version === 0) {
      throw new DatabaseProblem(
        "foreign",
        `${path} is an SQLite file but not a spindrift database (no tables)`,
      );
    }
    quickCheck(db, path);
    if (version < SCHEMA_VERSION) readAsCurrentVersion(db);
    return db;
  } catch (e) {
    db?.close();
    if (e instanceof DatabaseProblem) throw new StoreReadError(e.message, { reason: e.reason, hint: e.hint });
    throw new StoreReadError(`${path} is not a spindrift database: ${(e as Error).message}`, {
      reason: "foreign",
    });
  }
}

/** Temporary views (in the connection's own temp schema) that show a version-1 file with version-2 columns. */
function readAsCurrentVersion(db: DatabaseSync): void {
  // (An in-memory snapshot of a read-only folder is query_only; temp views change no database file.)
  const queryOnly = Number(Object.values(db.prepare("PRAGMA query_only").get() ?? {})[0] ?? 0);
  db.exec("PRAGMA query_only = OFF");
  db.exec(`
    CREATE TEMP VIEW realisations AS SELECT *, NULL AS master_seed FROM main.realisations;
    CREATE TEMP VIEW points AS SELECT *, '{}' AS inputs_json FROM main.points;
  `);
  if (queryOnly) db.exec("PRAGMA query_only = ON");
}

/**
 * True for errors of the database itself (SQLite errors such as a damaged page, and `StoreReadError`): code
 * that turns its own failures into per-item results must let these through, since every later read is suspect.
 */
export function isDatabaseError(e: unknown): boolean {
  return e instanceof StoreReadError || (e as { code?: unknown })?.code === "ERR_SQLITE_ERROR";
}

/** All key/value pairs of the `meta` table. */
export function readMeta(db: DatabaseSync): Record<string, string> {
  const out: Record<string, string> = {};
  for (const row of db.prepare("SELECT key, value FROM meta ORDER BY key").all()) {
    out[String(row.key)] = String(row.value);
  }
  return out;
}

/** Every study revision in the database, oldest first. */
export function listStudies(db: DatabaseSync): StudySummary[] {
  return db.prepare("SELECT id, name, study_hash, created_at, last_run_at FROM studies ORDER BY id").all()
    .map(
      (r) => ({
        id: num(r.id),
        name: String(r.name),
        studyHash: String(r.study_hash),
        createdAt: String(r.created_at),
        lastRunAt: strOrNull(r.last_run_at),
      }),
    );
}

/**
 * A study revision: the one with `opts.studyId`, or else the latest (highest id, i.e. the most recently
 * added revision). Throws `StoreReadError` when the database holds no study or not that id.
 */
export function readStudy(db: DatabaseSync, opts: { studyId?: number } = {}): StudyRecord {
  const sql = `SELECT id, name, description, study_hash, source_path, text, normalized_json,
    CAST(json_extract(normalized_json, '$.seed') AS TEXT) AS seed, engine_id,
    engine_version, tool_version, deno_version, git_commit, created_at, last_run_at, notes_json, units_json
    FROM studies`;
  const row = opts.studyId === undefined
    ? db.prepare(`${sql} ORDER BY id DESC LIMIT 1`).get()
    : db.prepare(`${sql} WHERE id = ?`).get(opts.studyId);
  if (row === undefined) {
    if (opts.studyId === undefined) {
      throw new StoreReadError("the database holds no study yet (nothing was run)");
    }
    const ids = listStudies(db).map((s) => s.id);
    throw new StoreReadError(
      `no study with id ${opts.studyId}; ` +
        (ids.length ? `the database has ids ${ids.join(", ")}` : "it has none"),
    );
  }
  return {
    id: num(row.id),
    name: String(row.name),
    description: String(row.description),
    studyHash: String(row.study_hash),
    seed: strOrNull(row.seed),
    sourcePath: strOrNull(row.source_path),
    text: String(row.text),
    normalized: parseJson(row.normalized_json, `studies.normalized_json of study ${row.id}`),
    engineId: String(row.engine_id),
    engineVersion: String(row.engine_version),
    toolVersion: String(row.tool_version),
    denoVersion: String(row.deno_version),
    gitCommit: strOrNull(row.git_commit),
    createdAt: String(row.created_at),
    lastRunAt: strOrNull(row.last_run_at),
    notes: (parseJson(row.notes_json ?? "[]", `studies.notes_json of study ${row.id}`) ?? []) as StudyRecord[
      "notes"
    ],
    units: (parseJson(row.units_json ?? "{}", `studies.units_json of study ${row.id}`) ?? {}) as StudyRecord[
      "units"
    ],
  };
}

/** The parameter points of a study revision in sweep order. */
export function readStudyPoints(db: DatabaseSync, studyId: number): PointRecord[] {
  const rows = db.prepare(
    `SELECT sp.point_index, sp.point_hash, sp.label, sp.varied_json, p.params_hash, p.params_json,
            p.controls_json, p.inputs_json, p.engine_id, p.engine_version
       FROM study_points sp JOIN points p ON p.point_hash = sp.point_hash
      WHERE sp.study_id = ? ORDER BY sp.point_index`,
  ).all(studyId);
  return rows.map((r) => {
    const varied = parseJson(r.varied_json, `study_points.varied_json of point ${r.point_index}`);
    return {
      index: num(r.point_index),
      pointHash: String(r.point_hash),
      paramsHash: String(r.params_hash),
      label: String(r.label),
      varied: isRecord(varied) ? varied : {},
      params: parseJson(r.params_json, `points.params_json of point ${r.point_index}`),
      controls: parseJson(r.controls_json, `points.controls_json of point ${r.point_index}`),
      inputs:
        (parseJson(r.inputs_json ?? "{}", `points.inputs_json of point ${r.point_index}`) ?? {}) as Record<
          string,
          string
        >,
      engineId: String(r.engine_id),
      engineVersion: String(r.engine_version),
    };
  });
}

/**
 * The realisations stored for a parameter point under a study's master seed (`StudyRecord.seed`), by index.
 * The seed is required: the same point may hold realisations of other seeds (an earlier revision, another
 * study), which belong to those. `seed: null` lists every seed's (for tools that show the whole file). Rows
 * whose seed is unknown (migrated from version 1 without a matching study) count for every seed.
 */
export function readRealisations(
  db: DatabaseSync,
  pointHash: string,
  opts: { readonly seed: string | null },
): RealisationRecord[] {
  const columns = `id, realisation_key, point_hash, idx, seed, status, failure_kind, error, engine_id,
            engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host`;
  const rows = opts.seed === null
    ? db.prepare(`SELECT ${columns} FROM realisations WHERE point_hash = ? ORDER BY idx`).all(pointHash)
    : db.prepare(
      `SELECT ${columns} FROM realisations WHERE point_hash = ? AND (master_seed = ? OR master_seed IS NULL)
        ORDER BY idx`,
    ).all(pointHash, opts.seed);
  return rows.map((r) => ({
    id: num(r.id),
    key: String(r.realisation_key),
    pointHash: String(r.point_hash),
    index: num(r.idx),
    seed: String(r.seed),
    status: String(r.status) as RealisationStatus,
    failureKind: strOrNull(r.failure_kind),
    error: strOrNull(r.error),
    engineId: String(r.engine_id),
    engineVersion: String(r.engine_version),
    startedAt: strOrNull(r.started_at),
    finishedAt: strOrNull(r.finished_at),
    wallSeconds: numOrNull(r.wall_seconds),
    simTimeReached: numOrNull(r.sim_time_reached),
    frameCount: numOrNull(r.frame_count),
    host: strOrNull(r.host),
  }));
}

/**
 * Scalars of each realisation: `result.get(id)[name]`. SQLite stores NaN as NULL; NULL reads back as NaN.
 * Realisations without scalars get an empty record.
 */
export function readScalars(
  db: DatabaseSync,
  realisationIds: readonly number[],
): Map<number, Record<string, number>> {
  const stmt = arrays(db.prepare("SELECT name, value FROM scalars WHERE realisation_id = ? ORDER BY name"));
  const out = new Map<number, Record<string, number>>();
  for (const id of realisationIds) {
    const rec: Record<string, number> = {};
    for (const row of stmt.all(id) as unknown as SQLOutputValue[][]) rec[String(row[0])] = numOrNaN(row[1]);
    out.set(id, rec);
  }
  return out;
}

/** The distinct series names stored for any of these realisations, sorted. */
export function readSeriesNames(db: DatabaseSync, realisationIds: readonly number[]): string[] {
  // Skip-scan over the primary key (realisation_id, name, k): one index seek per distinct name.
  const next = arrays(db.prepare("SELECT min(name) FROM series WHERE realisation_id = ? AND name > ?"));
  const names = new Set<string>();
  for (const id of realisationIds) {
    let after = "";
    for (;;) {
      const row = next.get(id, after) as unknown as SQLOutputValue[] | undefined;
      if (row === undefined || row[0] === null) break;
      after = String(row[0]);
      names.add(after);
    }
  }
  return [...names].sort();
}

/** One series name across realisations, aligned by frame index `k` (see `AlignedSeries`). */
export function readAlignedSeries(
  db: DatabaseSync,
  realisationIds: readonly number[],
  name: string,
): AlignedSeries {
  const stmt = arrays(
    db.prepare("SELECT k, t, value FROM series WHERE realisation_id = ? AND name = ? ORDER BY k"),
  );
  const perRun: { k: number[]; t: number[]; v: number[] }[] = [];
  const tByK = new Map<number, number>();
  for (const id of realisationIds) {
    const k: number[] = [];
    const t: number[] = [];
    const v: number[] = [];
    for (const row of stmt.all(id, name) as unknown as SQLOutputValue[][]) {
      const kk = num(row[0]);
      const tt = num(row[1]);
      k.push(kk);
      t.push(tt);
      v.push(numOrNaN(row[2]));
      if (!tByK.has(kk)) tByK.set(kk, tt);
    }
    perRun.push({ k, t, v });
  }
  const ks = Int32Array.from([...tByK.keys()].sort((a, b) => a - b));
  const column = new Map<number, number>();
  ks.forEach((kk, j) => column.set(kk, j));
  const t = new Float64Array(ks.length);
  ks.forEach((kk, j) => (t[j] = tByK.get(kk)!));
  let tSpread = 0;
  const values = perRun.map((run) => {
    const row = new Float64Array(ks.length).fill(Number.NaN);
    for (let i = 0; i < run.k.length; i++) {
      const j = column.get(run.k[i])!;
      row[j] = run.v[i];
      tSpread = Math.max(tSpread, Math.abs(run.t[i] - t[j]));
    }
    return row;
  });
  return { name, realisationIds: [...realisationIds], k: ks, t, tSpread, values };
}

/**
 * What each realisation occupies in the database, approximately (bytes): frame blobs plus about 24 bytes per
 * frame row, 37 per series row and 30 per scalar row (the pre-flight's per-row figures), and its events' JSON.
 * SQLite's page overhead and indices are not counted (the file grows by roughly 1.25× this).
 */
export function readStoredBytes(db: DatabaseSync, realisationIds: readonly number[]): Map<number, number> {
  const stmt = arrays(db.prepare(
    `SELECT (SELECT coalesce(sum(length(data)), 0) + 24 * count(*) FROM frames WHERE realisation_id = ?1)
          + (SELECT 37 * count(*) FROM series WHERE realisation_id = ?1)
          + (SELECT 30 * count(*) FROM scalars WHERE realisation_id = ?1)
          + (SELECT coalesce(sum(length(ids_json) + length(data_json) + 16), 0) FROM events WHERE realisation_id = ?1)`,
  ));
  const out = new Map<number, number>();
  for (const id of realisationIds) out.set(id, num((stmt.get(id) as unknown as SQLOutputValue[])[0]));
  return out;
}

/** Number of events of each kind per realisation: `result.get(id)[kind]`. */
export function readEventCounts(
  db: DatabaseSync,
  realisationIds: readonly number[],
): Map<number, Record<string, number>> {
  const stmt = arrays(db.prepare("SELECT kind, count(*) FROM events WHERE realisation_id = ? GROUP BY kind"));
  const out = new Map<number, Record<string, number>>();
  for (const id of realisationIds) {
    const rec: Record<string, number> = {};
    for (const row of stmt.all(id) as unknown as SQLOutputValue[][]) rec[String(row[0])] = num(row[1]);
    out.set(id, rec);
  }
  return out;
}

/** Switches a statement to array rows (faster than objects). Deno's bundled node:sqlite types lack the method. */
function arrays(stmt: StatementSync): StatementSync {
  (stmt as unknown as { setReturnArrays(enabled: boolean): void }).setReturnArrays(true);
  return stmt;
}

function num(v: SQLOutputValue | undefined): number {
  return Number(v);
}

function numOrNull(v: SQLOutputValue | undefined): number | null {
  return v === null || v === undefined ? null : num(v);
}

function numOrNaN(v: SQLOutputValue | undefined): number {
  return v === null || v === undefined ? Number.NaN : num(v);
}

function strOrNull(v: SQLOutputValue | undefined): string | null {
  return v === null || v === undefined ? null : String(v);
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function parseJson(v: SQLOutputValue | undefined, what: string): unknown {
  try {
    return JSON.parse(String(v));
  } catch (e) {
    throw new StoreReadError(`corrupt database: ${what} is not valid JSON (${(e as Error).message})`);
  }
}
