/**
 * Ensemble-level results (table `ensemble_results`): one row per (study revision, parameter point, analysis,
 * name) with a value, an optional confidence interval [lower, upper] and a JSON detail (seed, replicates,
 * window, status and reason, series for the report's charts, …). Written by `spindrift analyse`, read by the
 * report and by `spindrift query`.
 *
 * Writing replaces every row of the study revision (or of the listed analyses) in one transaction, so a rerun
 * never leaves a mixture of old and new rows. NaN and ±∞ are stored as NULL (SQLite has no NaN); inside
 * `detail_json` they become `null` (JSON has none either).
 *
 * Good results are never replaced by partial ones: when a stored row with a value would be dropped, or replaced
 * by an error row (`detail.status` "error" and no value: the computation failed), nothing is written and
 * `PartialResultsError` lists what would have been lost. Rows whose analysis was skipped or is not available
 * (any other status) replace stored values as usual.
 *
 * @example
 * ```ts
 * const store = StudyStore.open("film.sqlite");
 * replaceEnsembleResults(store, 1, [
 *   { pointHash: "ab12…", analysis: "msd-fit", name: "D", value: 0.21, lower: 0.17, upper: 0.26,
 *     detail: { seed: "…/msd", replicates: 2000 } },
 * ]);
 * store.close();
 * const db = openStoreReadOnly("film.sqlite");
 * const rows = readEnsembleResults(db, 1, { analysis: "msd-fit" });
 * ```
 */
import type { DatabaseSync, SQLOutputValue } from "node:sqlite";
import type { StudyStore } from "./db.ts";
import { StoreReadError } from "./reads.ts";

/** One result to store. */
export interface EnsembleResultInput {
  readonly pointHash: string;
  /** Analysis family, e.g. "msd-fit", "rms-fit", "sensitivity", "vinen", "correlations". */
  readonly analysis: string;
  /** Quantity within the analysis, e.g. "D", "tau_c", "window_start". */
  readonly name: string;
  readonly value: number | null;
  readonly lower?: number | null;
  readonly upper?: number | null;
  /** JSON-safe details (typed arrays must already be plain arrays). */
  readonly detail?: Readonly<Record<string, unknown>>;
}

/** One stored result. */
export interface EnsembleResult {
  readonly studyId: number;
  readonly pointHash: string;
  readonly analysis: string;
  readonly name: string;
  readonly value: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
  readonly detail: Readonly<Record<string, unknown>>;
  readonly computedAt: string;
}

/** A write refused because it would replace stored values by errors or drop them; nothing was written. */
export class PartialResultsError extends Error {
  /** "analysis/name at point <hash prefix>: <what the new run says>", one per stored value that would be lost. */
  readonly lost: readonly string[];
  constructor(lost: readonly string[]) {
    super(
      `the new analysis would replace ${lost.length} stored result${lost.length === 1 ? "" : "s"} with ` +
        `errors or nothing (${lost.slice(0, 3).join("; ")}${lost.length > 3 ? "; …" : ""}); the stored ` +
        "results were kept",
    );
    this.name = "PartialResultsError";
    this.lost = lost;
  }
}

function isErrorRow(r: EnsembleResultInput): boolean {
  return r.detail?.status === "error" && !(typeof r.value === "number" && Number.isFinite(r.value));
}

/** Stored values (of the analyses being replaced) that `rows` would drop or turn into errors. */
function lostValues(
  db: DatabaseSync,
  studyId: number,
  rows: readonly EnsembleResultInput[],
  analyses: readonly string[] | undefined,
): string[] {
  const incoming = new Map(rows.map((r) => [`${r.pointHash}\0${r.analysis}\0${r.name}`, r]));
  const lost: string[] = [];
  const stored = db.prepare(
    "SELECT point_hash, analysis, name FROM ensemble_results WHERE study_id = ? AND value IS NOT NULL",
  ).all(studyId) as { point_hash: string; analysis: string; name: string }[];
  for (const s of stored) {
    if (analyses !== undefined && !analyses.includes(s.analysis)) continue;
    const r = incoming.get(`${s.point_hash}\0${s.analysis}\0${s.name}`);
    const where = `${s.analysis}/${s.name} at point ${s.point_hash.slice(0, 8)}`;
    if (r === undefined) lost.push(`${where}: not computed`);
    else if (isErrorRow(r)) lost.push(`${where}: ${String(r.detail?.reason ?? "error")}`);
  }
  return lost;
}

/** Finite numbers as REAL, everything else as NULL. */
function real(v: number | null | undefined): number | null {
  return typeof v === "number" && Number.isFinite(v) ? v : null;
}

/**
 * Replaces the ensemble results of a study revision in one transaction: deletes its rows (all of them, or
 * only those of `opts.analyses`) and inserts `rows`. Returns the number of rows written.
 * @throws PartialResultsError (nothing written) when stored values would be dropped or replaced by errors.
 *
 * @example
 * ```ts
 * replaceEnsembleResults(store, studyId, rows, { analyses: ["vinen"] }); // keeps the other analyses
 * ```
 */
export function replaceEnsembleResults(
  store: StudyStore,
  studyId: number,
  rows: readonly EnsembleResultInput[],
  opts: {
    readonly analyses?: readonly string[];
    readonly computedAt?: string;
    /**
     * The rows describe one run of a command as a whole (e.g. an audit, which may compare other variants than
     * the previous one): the previous rows of `analyses` are replaced even where the new run has no value.
     */
    readonly whole?: boolean;
  } = {},
): number {
  const now = opts.computedAt ?? new Date().toISOString();
  return store.transaction(() => {
    const db = store.db;
    const lost = opts.whole && opts.analyses !== undefined
      ? []
      : lostValues(db, studyId, rows, opts.analyses);
    if (lost.length > 0) throw new PartialResultsError(lost);
    if (opts.analyses === undefined) {
      db.prepare("DELETE FROM ensemble_results WHERE study_id = ?").run(studyId);
    } else {
      const del = db.prepare("DELETE FROM ensemble_results WHERE study_id = ? AND analysis = ?");
      for (const a of opts.analyses) del.run(studyId, a);
    }
    const ins = db.prepare(
      `INSERT OR REPLACE INTO ensemble_results
         (study_id, point_hash, analysis, name, value, lower, upper, detail_json, computed_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`,
    );
    for (const r of rows) {
      ins.run(
        studyId,
        r.pointHash,
        r.analysis,
        r.name,
        real(r.value),
        real(r.lower),
        real(r.upper),
        JSON.stringify(r.detail ?? {}),
        now,
      );
    }
    return rows.length;
  });
}

/**
 * Rows as `readEnsembleResults` would return them after `replaceEnsembleResults` stored them (non-finite
 * numbers become null, the detail goes through JSON), without writing anything: for a provisional analysis.
 */
export function asStoredResults(
  studyId: number,
  rows: readonly EnsembleResultInput[],
  computedAt: string,
): EnsembleResult[] {
  return rows.map((r) => ({
    studyId,
    pointHash: r.pointHash,
    analysis: r.analysis,
    name: r.name,
    value: real(r.value),
    lower: real(r.lower),
    upper: real(r.upper),
    detail: JSON.parse(JSON.stringify(r.detail ?? {})),
    computedAt,
  }));
}

/**
 * The stored ensemble results of a study revision, optionally limited to one analysis or one point, ordered
 * by point (sweep order), analysis and name.
 *
 * @example
 * ```ts
 * const d = readEnsembleResults(db, study.id, { analysis: "msd-fit" }).filter((r) => r.name === "D");
 * ```
 */
export function readEnsembleResults(
  db: DatabaseSync,
  studyId: number,
  opts: { readonly analysis?: string; readonly pointHash?: string } = {},
): EnsembleResult[] {
  const where = ["e.study_id = ?"];
  const args: (string | number)[] = [studyId];
  if (opts.analysis !== undefined) {
    where.push("e.analysis = ?");
    args.push(opts.analysis);
  }
  if (opts.pointHash !== undefined) {
    where.push("e.point_hash = ?");
    args.push(opts.pointHash);
  }
  const rows = db.prepare(
    `SELECT e.study_id, e.point_hash, e.analysis, e.name, e.value, e.lower, e.upper, e.detail_json,
            e.computed_at
       FROM ensemble_results e
       LEFT JOIN study_points sp ON sp.study_id = e.study_id AND sp.point_hash = e.point_hash
      WHERE ${where.join(" AND ")}
      ORDER BY sp.point_index, e.analysis, e.name`,
  ).all(...args);
  return rows.map((r) => ({
    studyId: Number(r.study_id),
    pointHash: String(r.point_hash),
    analysis: String(r.analysis),
    name: String(r.name),
    value: numOrNull(r.value),
    lower: numOrNull(r.lower),
    upper: numOrNull(r.upper),
    detail: parseDetail(r.detail_json, `${r.analysis}/${r.name}`),
    computedAt: String(r.computed_at),
  }));
}

/** Number of stored ensemble results of a study revision (0 when `spindrift analyse` never ran on it). */
export function countEnsembleResults(db: DatabaseSync, studyId: number): number {
  const row = db.prepare("SELECT COUNT(*) AS c FROM ensemble_results WHERE study_id = ?").get(studyId);
  return Number(row?.c ?? 0);
}

function numOrNull(v: SQLOutputValue | undefined): number | null {
  return v === null || v === undefined ? null : Number(v);
}

function parseDetail(v: SQLOutputValue | undefined, what: string): Record<string, unknown> {
  try {
    const parsed = JSON.parse(String(v ?? "{}"));
    return typeof parsed === "object" && parsed !== null && !Array.isArray(parsed) ? parsed : {};
  } catch (e) {
    throw new StoreReadError(
      `corrupt database: ensemble_results.detail_json of ${what} is not JSON (${(e as Error).message})`,
    );
  }
}
