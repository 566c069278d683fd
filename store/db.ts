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
import { SCHEMA_SQL, SCHEMA_VERSION } from "./schema.ts";
import { type FieldSnapshotRow, insertFieldSnapshots } from "./snapshots.ts";

/** A problem with the database file itself (not a spindrift database, wrong version, locked, …). */
export class StoreError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "StoreError";
  }
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
}

export interface RealisationStart {
  readonly key: string;
  readonly pointHash: string;
  readonly index: number;
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
}

export type RealisationStatus = "running" | "done" | "failed";

const ROWS_PER_INSERT = 100;

function nowIso(): string {
  return new Date().toISOString();
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

  private constructor(db: DatabaseSync, path: string) {
    this.db = db;
    this.path = path;
    const placeholders = Array.from({ length: ROWS_PER_INSERT }, () => "(?, ?, ?, ?, ?)").join(", ");
    this.#seriesBatch = db.prepare(
      `INSERT INTO series (realisation_id, name, k, t, value) VALUES ${placeholders}`,
    );
    this.#pendingInsert = db.prepare(
      "INSERT OR REPLACE INTO pending_frames (realisation_id, k, t, n, layout, data) VALUES (?, ?, ?, ?, ?, ?)",
    );
  }

  /** Opens (creating if needed) a study database for writing, in WAL mode, and checks its schema version. */
  static open(path: string): StudyStore {
    let db: DatabaseSync;
    try {
      db = new DatabaseSync(path);
    } catch (e) {
      throw new StoreError(`cannot open database ${path}: ${(e as Error).message}`);
    }
    try {
      db.exec("PRAGMA busy_timeout = 10000");
      db.exec("PRAGMA journal_mode = WAL");
      db.exec("PRAGMA synchronous = NORMAL");
      db.exec("PRAGMA foreign_keys = ON");
      const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all() as {
        name: string;
      }[];
      const hasMeta = tables.some((t) => t.name === "meta");
      if (tables.length > 0 && !hasMeta) {
        throw new StoreError(
          `${path} is an SQLite file but not a spindrift study database; choose another --db path`,
        );
      }
      if (hasMeta) {
        const row = db.prepare("SELECT value FROM meta WHERE key = 'schema_version'").get() as
          | { value: string }
          | undefined;
        if (!row || Number(row.value) !== SCHEMA_VERSION) {
          throw new StoreError(
            `${path} has database schema version ${row?.value ?? "unknown"}, this spindrift writes version ` +
              `${SCHEMA_VERSION}; run the study into a new database file`,
          );
        }
      }
      db.exec(SCHEMA_SQL);
      db.prepare("INSERT OR IGNORE INTO meta (key, value) VALUES ('schema_version', ?)").run(
        String(SCHEMA_VERSION),
      );
      return new StudyStore(db, path);
    } catch (e) {
      db.close();
      if (e instanceof StoreError) throw e;
      throw new StoreError(`cannot use database ${path}: ${(e as Error).message}`);
    }
  }

  close(): void {
    if (this.db.isOpen) this.db.close();
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
   */
  recordStudy(study: StudyRecord, points: readonly PointRecord[]): number {
    return this.transaction(() => {
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
           controls_json, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)`,
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
        );
        insLink.run(id, p.pointIndex, p.pointHash, p.label, p.variedJson);
      }
      return id;
    });
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

  /** Deletes every realisation (and its data) of the given points: `--fresh`. */
  deleteRealisationsOf(pointHashes: readonly string[]): number {
    return this.transaction(() => {
      const del = this.db.prepare("DELETE FROM realisations WHERE point_hash = ?");
      let n = 0;
      for (const h of pointHashes) n += Number(del.run(h).changes);
      return n;
    });
  }

  /** Marks a realisation as running (replacing an earlier failed attempt); returns its row id. */
  beginRealisation(r: RealisationStart): number {
    return this.transaction(() => {
      this.db.prepare("DELETE FROM realisations WHERE realisation_key = ? OR (point_hash = ? AND idx = ?)")
        .run(r.key, r.pointHash, r.index);
      const res = this.db.prepare(
        `INSERT INTO realisations (realisation_key, point_hash, idx, seed, status, engine_id, engine_version,
           started_at, host) VALUES (?, ?, ?, ?, 'running', ?, ?, ?, ?)`,
      ).run(r.key, r.pointHash, r.index, r.seedHex, r.engineId, r.engineVersion, nowIso(), r.host);
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
