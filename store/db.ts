/**
 * Opening a study database and writing to it. The runner's main thread is the only writer.
 *
 * Transactions: one per realisation at its end (`finishRealisation`), which moves its streamed frames from
 * `pending_frames` into `frames` and inserts its scalars, series and events, so a crash never leaves half a
 * realisation visible. Frames stream in during the run (`appendFrames`, small batches), so memory does not grow
 * with the run's duration.
 *
 * @example
 * ```ts
 * const store = StudyStore.open("film.sqlite");
 * const studyId = store.recordStudy({ ... });
 * ```
 */
import { DatabaseSync, type StatementSync } from "node:sqlite";
import { dirname } from "node:path";
import { SCHEMA_SQL, SCHEMA_VERSION } from "./schema.ts";
import { type FieldSnapshotRow, insertFieldSnapshots } from "./snapshots.ts";
import { DatabaseProblem, inspectDatabase, integrityProblems, type StoreProblem } from "./_open.ts";
import { acquireWriterLock, describeHolder, type LockHolder, type WriterLock } from "./lock.ts";
import { migrateDatabase, type MigrationReport } from "./migrate.ts";

export type { StoreProblem } from "./_open.ts";
export { salvageHint } from "./_open.ts";

/**
 * A problem with the database file itself or its use: not a spindrift database, damaged, of a newer version,
 * locked by another writer, in a read-only folder, or holding another study. `reason` says which (errors as
 * data); `hint` says what to do.
 */
export class StoreError extends Error {
  readonly reason: StoreProblem | "other";
  readonly hint?: string;
  constructor(message: string, opts: { reason?: StoreProblem; hint?: string } = {}) {
    super(message);
    this.name = "StoreError";
    this.reason = opts.reason ?? "other";
    this.hint = opts.hint;
  }
}

/** Options of `StudyStore.open`. */
export interface OpenOptions {
  /** The command that writes (shown to a second writer that is refused); default "write". */
  readonly command?: string;
  /** Take the single-writer lock (default true; only private files such as a salvage target skip it). */
  readonly lock?: boolean;
}

/** Options of `StudyStore.recordStudy`. */
export interface RecordOptions {
  /** Accept a study whose name differs from the one the database was created for (see `recordStudy`). */
  readonly allowOtherStudy?: boolean;
}

export interface StudyRecord {
  readonly name: string;
  readonly description: string;
  readonly studyHash: string;
  readonly sourcePath: string | null;
  readonly text: string;
  readonly normalizedJson: string;
  readonly engineId: string;
  readonly engineVersion: string;
  readonly toolVersion: string;
  readonly denoVersion: string;
  readonly gitCommit: string | null;
  /** Notes for the report, e.g. observables skipped because the engine cannot provide what they need. */
  readonly notes?: readonly { readonly kind: string; readonly id: string; readonly reason: string }[];
  /** The engine's units (length, time, circulation), for axis labels. */
  readonly units?: Readonly<Record<string, string>>;
}

export interface PointRecord {
  readonly pointIndex: number;
  readonly pointHash: string;
  readonly paramsHash: string;
  readonly label: string;
  readonly variedJson: string;
  readonly paramsJson: string;
  readonly controlsJson: string;
  /** Content fingerprints of the point's input files (path → SHA-256), as JSON; default "{}". */
  readonly inputsJson?: string;
}

export interface RealisationStart {
  readonly key: string;
  readonly pointHash: string;
  readonly index: number;
  /** The study's master seed (with point and index it determines the key). */
  readonly masterSeed: string;
  readonly seedHex: string;
  readonly engineId: string;
  readonly engineVersion: string;
  readonly host: string;
}

export interface FrameRow {
  readonly k: number;
  readonly t: number;
  readonly n: number;
  readonly layout: string;
  readonly data: Uint8Array;
}

export interface SeriesData {
  readonly t: ArrayLike<number>;
  readonly v: ArrayLike<number>;
}

export interface EventRow {
  readonly t: number;
  readonly kind: string;
  readonly ids: readonly number[];
  readonly data: Readonly<Record<string, number>>;
  /** Text details (e.g. an external program's command line), stored in data_json under "detail". */
  readonly detail?: Readonly<Record<string, unknown>>;
}

export interface RealisationOutcome {
  readonly status: "done" | "failed";
  readonly failureKind?: string;
  readonly error?: string;
  readonly wallSeconds: number;
  readonly simTimeReached: number;
  readonly scalars: Readonly<Record<string, number>>;
  readonly series: Readonly<Record<string, SeriesData>>;
  readonly events: readonly EventRow[];
  /** Field images sent through the engine's optional snapshot channel (store/snapshots.ts). */
  readonly snapshots?: readonly FieldSnapshotRow[];
  /** What computing it cost, as the worker measured it (`spindrift pilot`); not stored. */
  readonly usage?: ResourceUsage;
}

/** Resources one realisation used in its worker (study/usage.ts). */
export interface ResourceUsage {
  /** CPU time of the worker thread (s); null where the system does not tell. */
  readonly cpuSeconds: number | null;
  /** Largest memory of the worker's JavaScript heap plus typed-array buffers seen (bytes). */
  readonly peakBytes: number;
}

export type RealisationStatus = "running" | "done" | "failed";

const ROWS_PER_INSERT = 100;

function nowIso(): string {
  return new Date().toISOString();
}

function staleNote(path: string, h: LockHolder): string {
  return `the writer lock of ${path} was left by ${describeHolder(h)}, which ended without releasing it ` +
    "(killed?); it no longer holds it";
}

function migrationNote(path: string, m: MigrationReport): string {
  const unmatched = m.unmatchedSeeds > 0
    ? `; ${m.unmatchedSeeds} realisation(s) match no recorded study seed and are counted as before`
    : "";
  return `upgraded ${path} from database schema version ${m.from} to ${m.to} (${m.realisations} ` +
    `realisations kept)${unmatched}`;
}

/** Finite numbers as REAL, everything else (NaN, ±Inf) as NULL: SQLite has no NaN. */
function real(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/** The writer side of a study database. */
export class StudyStore {
  readonly db: DatabaseSync;
  readonly path: string;
  #seriesBatch: StatementSync;
  #pendingInsert: StatementSync;

  #lock: WriterLock | null;
  /** What opening did that the user should hear about (a migration, a stale lock taken over). */
  readonly notes: readonly string[];

  private constructor(db: DatabaseSync, path: string, lock: WriterLock | null, notes: string[]) {
    this.db = db;
    this.path = path;
    this.#lock = lock;
    this.notes = notes;
    const placeholders = Array.from({ length: ROWS_PER_INSERT }, () => "(?, ?, ?, ?, ?)").join(", ");
    this.#seriesBatch = db.prepare(
      `INSERT INTO series (realisation_id, name, k, t, value) VALUES ${placeholders}`,
    );
    this.#pendingInsert = db.prepare(
      "INSERT OR REPLACE INTO pending_frames (realisation_id, k, t, n, layout, data) VALUES (?, ?, ?, ?, ?, ?)",
    );
  }

  /**
   * Opens (creating if needed) a study database for writing, in WAL mode, and takes the single-writer lock.
   * Before anything is written the file is checked at the door (`_open.ts`): a file that is not SQLite, an SQLite
   * file of another program, a damaged file (quick check) and a file of a newer spindrift are refused unchanged;
   * a file of schema version 1 is upgraded in place (`migrate.ts`).
   * @throws StoreError with a `reason` and a `hint`.
   */
  static open(path: string, opts: OpenOptions = {}): StudyStore {
    let inspection;
    try {
      inspection = inspectDatabase(path);
    } catch (e) {
      if (e instanceof DatabaseProblem) throw new StoreError(e.message, { reason: e.reason, hint: e.hint });
      throw e;
    }
    if (inspection?.immutable) {
      throw new StoreError(`${path} is in a folder spindrift cannot write to; nothing was changed`, {
        reason: "read-only",
        hint: "copy the database to a writable folder (or give another --db path); reading commands " +
          "(report, query, status, export) work where it is",
      });
    }
    let lock: WriterLock | null = null;
    const notes: string[] = [];
    if (opts.lock !== false) {
      try {
        lock = acquireWriterLock(path, opts.command ?? "write");
      } catch (e) {
        if (e instanceof DatabaseProblem) throw new StoreError(e.message, { reason: e.reason, hint: e.hint });
        throw e;
      }
      if (lock.tookOverFrom) notes.push(staleNote(path, lock.tookOverFrom));
      if (lock.unsupported) {
        notes.push(
          `the file system of ${path} cannot lock files (${lock.unsupported}): spindrift cannot keep a second ` +
            "command from writing it at the same time; run one at a time",
        );
      }
    }
    let db: DatabaseSync;
    try {
      db = new DatabaseSync(path);
    } catch (e) {
      lock?.release();
      throw new StoreError(`cannot create or open database ${path}: ${(e as Error).message}`, {
        reason: "read-only",
        hint: `check that the folder ${dirname(path)} exists and that you may write in it`,
      });
    }
    try {
      db.exec("PRAGMA busy_timeout = 10000");
      db.exec("PRAGMA journal_mode = WAL");
      db.exec("PRAGMA synchronous = NORMAL");
      db.exec("PRAGMA foreign_keys = ON");
      const version = inspection?.version ?? 0;
      if (version === 0) {
        db.exec(SCHEMA_SQL);
        const setMeta = db.prepare("INSERT OR IGNORE INTO meta (key, value) VALUES (?, ?)");
        setMeta.run("schema_version", String(SCHEMA_VERSION));
        setMeta.run("created_at", nowIso());
      }
      if (version > 0 && version < SCHEMA_VERSION) {
        notes.push(migrationNote(path, migrateDatabase(db, version)));
      }
      db.exec(SCHEMA_SQL);
      return new StudyStore(db, path, lock, notes);
    } catch (e) {
      db.close();
      lock?.release();
      if (e instanceof DatabaseProblem) throw new StoreError(e.message, { reason: e.reason, hint: e.hint });
      if (e instanceof StoreError) throw e;
      const msg = (e as Error).message;
      if (/readonly|read-only/i.test(msg)) {
        throw new StoreError(`cannot write to ${path}: ${msg}; nothing was changed`, {
          reason: "read-only",
          hint: "copy the database to a writable folder, or give another --db path",
        });
      }
      throw new StoreError(`cannot use database ${path}: ${msg}`);
    }
  }

  /** SQLite's full integrity check (indexes against tables too; O(file size)): [] when the file is sound. */
  integrityProblems(): string[] {
    return integrityProblems(this.db);
  }

  /** Closes the file and releases the writer lock. */
  close(): void {
    if (this.db.isOpen) this.db.close();
    this.#lock?.release();
    this.#lock = null;
  }

  /** Runs `fn` in one transaction (BEGIN IMMEDIATE … COMMIT, ROLLBACK on error). */
  transaction<T>(fn: () => T): T {
    this.db.exec("BEGIN IMMEDIATE");
    try {
      const out = fn();
      this.db.exec("COMMIT");
      return out;
    } catch (e) {
      this.db.exec("ROLLBACK");
      throw e;
    }
  }

  /**
   * Records the study revision (idempotent on its hash) and its points; returns the study id.
   * Points are shared across revisions by hash, so editing a study keeps unchanged points' results.
   *
   * Lineage: a database belongs to the study it was created for (`meta.study_name`, set by the first study
   * recorded). A study with another name is refused (StoreError "other-study", nothing written) unless
   * `opts.allowOtherStudy`; its name is then accepted for good (`meta.accepted_names`). Either way nothing
   * stored is ever deleted by recording or running another study: realisations are matched by key only.
   */
  recordStudy(study: StudyRecord, points: readonly PointRecord[], opts: RecordOptions = {}): number {
    return this.transaction(() => {
      this.#checkLineage(study.name, opts.allowOtherStudy ?? false);
      const now = nowIso();
      const existing = this.db.prepare("SELECT id FROM studies WHERE study_hash = ?").get(study.studyHash) as
        | { id: number }
        | undefined;
      let id: number;
      if (existing) {
        id = existing.id;
        this.db.prepare(
          "UPDATE studies SET last_run_at = ?, source_path = ?, text = ?, notes_json = ?, units_json = ? WHERE id = ?",
        )
          .run(
            now,
            study.sourcePath,
            study.text,
            JSON.stringify(study.notes ?? []),
            JSON.stringify(study.units ?? {}),
            id,
          );
      } else {
        const r = this.db.prepare(
          `INSERT INTO studies (name, description, study_hash, source_path, text, normalized_json, engine_id,
             engine_version, tool_version, deno_version, git_commit, notes_json, units_json,
             created_at, last_run_at)
           VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
        ).run(
          study.name,
          study.description,
          study.studyHash,
          study.sourcePath,
          study.text,
          study.normalizedJson,
          study.engineId,
          study.engineVersion,
          study.toolVersion,
          study.denoVersion,
          study.gitCommit,
          JSON.stringify(study.notes ?? []),
          JSON.stringify(study.units ?? {}),
          now,
          now,
        );
        id = Number(r.lastInsertRowid);
      }
      const insPoint = this.db.prepare(
        `INSERT OR IGNORE INTO points (point_hash, params_hash, engine_id, engine_version, params_json,
           controls_json, created_at, inputs_json) VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
      );
      const insLink = this.db.prepare(
        `INSERT OR REPLACE INTO study_points (study_id, point_index, point_hash, label, varied_json)
         VALUES (?, ?, ?, ?, ?)`,
      );
      for (const p of points) {
        insPoint.run(
          p.pointHash,
          p.paramsHash,
          study.engineId,
          study.engineVersion,
          p.paramsJson,
          p.controlsJson,
          now,
          p.inputsJson ?? "{}",
        );
        insLink.run(id, p.pointIndex, p.pointHash, p.label, p.variedJson);
      }
      return id;
    });
  }

  /** Refuses (inside the caller's transaction) a study of another name than the database's, unless allowed. */
  #checkLineage(name: string, allow: boolean): void {
    const meta = (key: string) =>
      (this.db.prepare("SELECT value FROM meta WHERE key = ?").get(key) as { value: string } | undefined)
        ?.value;
    const setMeta = this.db.prepare("INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?)");
    const owner = meta("study_name");
    if (owner === undefined) {
      setMeta.run("study_name", name);
      return;
    }
    if (owner === name) return;
    let accepted: string[] = [];
    try {
      const parsed = JSON.parse(meta("accepted_names") ?? "[]");
      if (Array.isArray(parsed)) accepted = parsed.map(String);
    } catch {
      // An unreadable list accepts nothing more.
    }
    if (accepted.includes(name)) return;
    if (!allow) {
      const created = meta("created_at");
      throw new StoreError(
        `${this.path} belongs to study '${owner}'${
          created ? ` (created ${created})` : ""
        }, not to '${name}'; ` +
          "nothing was changed",
        {
          reason: "other-study",
          hint:
            `run '${name}' into its own database (leave out --db, or give --db ${name}.sqlite); if it is ` +
            `a renamed revision of '${owner}', or both belong in one file, add --allow-other-study (nothing ` +
            "stored is deleted either way)",
        },
      );
    }
    setMeta.run("accepted_names", JSON.stringify([...accepted, name]));
  }

  /**
   * Earlier versions of a point whose input files changed: stored points with the same engine, parameters and
   * run controls but other input fingerprints, that hold done realisations. Returns their fingerprints (JSON
   * objects, path → fingerprint), most recent first.
   */
  earlierInputs(point: {
    readonly pointHash: string;
    readonly paramsHash: string;
    readonly engineId: string;
    readonly controlsJson: string;
  }): Record<string, string>[] {
    const rows = this.db.prepare(
      `SELECT p.inputs_json FROM points p
        WHERE p.params_hash = ? AND p.engine_id = ? AND p.controls_json = ? AND p.point_hash <> ?
          AND p.inputs_json <> '{}'
          AND EXISTS (SELECT 1 FROM realisations r WHERE r.point_hash = p.point_hash AND r.status = 'done')
        ORDER BY p.created_at DESC`,
    ).all(point.paramsHash, point.engineId, point.controlsJson, point.pointHash) as { inputs_json: string }[];
    return rows.map((r) => JSON.parse(r.inputs_json));
  }

  /** Sets a `meta` entry (e.g. a numerical audit's plan in its own database). */
  setMeta(key: string, value: string): void {
    this.db.prepare("INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?)").run(key, value);
  }

  /** Status of every stored realisation by key (for resume). */
  realisationStatuses(): Map<string, RealisationStatus> {
    const rows = this.db.prepare("SELECT realisation_key AS key, status FROM realisations").all() as {
      key: string;
      status: RealisationStatus;
    }[];
    return new Map(rows.map((r) => [r.key, r.status]));
  }

  /**
   * Discards what a crashed or killed run left: pending frames and `running` rows (their realisations will be
   * rerun). Returns how many realisations were discarded.
   */
  discardUnfinished(): number {
    return this.transaction(() => {
      this.db.exec("DELETE FROM pending_frames");
      const r = this.db.prepare("DELETE FROM realisations WHERE status = 'running'").run();
      return Number(r.changes);
    });
  }

  /** Deletes the realisations (and their data) with these keys: `--fresh`. Returns how many were stored. */
  deleteRealisations(keys: Iterable<string>): number {
    return this.transaction(() => {
      const del = this.db.prepare("DELETE FROM realisations WHERE realisation_key = ?");
      let n = 0;
      for (const k of keys) n += Number(del.run(k).changes);
      return n;
    });
  }

  /**
   * Marks a realisation as running (replacing an earlier attempt of the same key, failed or left running);
   * returns its row id. Rows of other keys — the same point and index under another master seed — stay.
   */
  beginRealisation(r: RealisationStart): number {
    return this.transaction(() => {
      this.db.prepare("DELETE FROM realisations WHERE realisation_key = ?").run(r.key);
      const res = this.db.prepare(
        `INSERT INTO realisations (realisation_key, point_hash, idx, master_seed, seed, status, engine_id,
           engine_version, started_at, host) VALUES (?, ?, ?, ?, ?, 'running', ?, ?, ?, ?)`,
      ).run(
        r.key,
        r.pointHash,
        r.index,
        r.masterSeed,
        r.seedHex,
        r.engineId,
        r.engineVersion,
        nowIso(),
        r.host,
      );
      return Number(res.lastInsertRowid);
    });
  }

  /** Streams frames of a running realisation into `pending_frames` (one small transaction per batch). */
  appendFrames(realisationId: number, frames: readonly FrameRow[]): void {
    if (frames.length === 0) return;
    this.transaction(() => {
      for (const f of frames) this.#pendingInsert.run(realisationId, f.k, f.t, f.n, f.layout, f.data);
    });
  }

  /**
   * Ends a realisation in ONE transaction: status, timings, error, scalars, series, events, and the move of its
   * frames from `pending_frames` to `frames`. Failed realisations keep the frames they produced (useful to see
   * where a blow-up started).
   */
  finishRealisation(realisationId: number, out: RealisationOutcome): void {
    this.transaction(() => {
      const db = this.db;
      db.prepare(
        `INSERT INTO frames (realisation_id, k, t, n, layout, data)
         SELECT realisation_id, k, t, n, layout, data FROM pending_frames WHERE realisation_id = ? ORDER BY k`,
      ).run(realisationId);
      const moved = db.prepare("DELETE FROM pending_frames WHERE realisation_id = ?").run(realisationId);
      const insScalar = db.prepare(
        "INSERT OR REPLACE INTO scalars (realisation_id, name, value) VALUES (?, ?, ?)",
      );
      for (const [name, value] of Object.entries(out.scalars)) {
        insScalar.run(realisationId, name, real(value));
      }
      this.#insertSeries(realisationId, out.series);
      const insEvent = db.prepare(
        "INSERT INTO events (realisation_id, seq, t, kind, ids_json, data_json) VALUES (?, ?, ?, ?, ?, ?)",
      );
      out.events.forEach((e, seq) =>
        insEvent.run(
          realisationId,
          seq,
          e.t,
          e.kind,
          JSON.stringify(e.ids),
          JSON.stringify(e.detail === undefined ? e.data : { ...e.data, detail: e.detail }),
        )
      );
      insertFieldSnapshots(db, realisationId, out.snapshots ?? []);
      db.prepare(
        `UPDATE realisations SET status = ?, failure_kind = ?, error = ?, finished_at = ?, wall_seconds = ?,
           sim_time_reached = ?, frame_count = ? WHERE id = ?`,
      ).run(
        out.status,
        out.failureKind ?? null,
        out.error ?? null,
        nowIso(),
        out.wallSeconds,
        real(out.simTimeReached),
        Number(moved.changes),
        realisationId,
      );
    });
  }

  #insertSeries(realisationId: number, series: Readonly<Record<string, SeriesData>>): void {
    const buf: (number | string | null)[] = [];
    const single = this.db.prepare(
      "INSERT INTO series (realisation_id, name, k, t, value) VALUES (?, ?, ?, ?, ?)",
    );
    for (const [name, s] of Object.entries(series)) {
      for (let k = 0; k < s.v.length; k++) {
        buf.push(realisationId, name, k, s.t[k], real(s.v[k]));
        if (buf.length === ROWS_PER_INSERT * 5) {
          this.#seriesBatch.run(...buf);
          buf.length = 0;
        }
      }
    }
    for (let i = 0; i < buf.length; i += 5) {
      single.run(buf[i], buf[i + 1], buf[i + 2], buf[i + 3], buf[i + 4]);
    }
  }
}
