/** Per-point progress of a study database: done, failed, running and missing realisations. */
import type { DatabaseSync } from "node:sqlite";

export interface PointStatus {
  readonly pointIndex: number;
  readonly label: string;
  readonly planned: number;
  readonly done: number;
  readonly failed: number;
  readonly running: number;
  readonly missing: number;
}

export interface StudyStatus {
  readonly studyId: number;
  readonly name: string;
  readonly lastRunAt: string | null;
  readonly points: readonly PointStatus[];
}

/** Status of the latest study revision (or the given one). */
export function studyStatus(db: DatabaseSync, studyId?: number): StudyStatus | undefined {
  const study = (studyId === undefined
    ? db.prepare(
      "SELECT id, name, normalized_json, last_run_at FROM studies ORDER BY last_run_at DESC, id DESC LIMIT 1",
    )
      .get()
    : db.prepare("SELECT id, name, normalized_json, last_run_at FROM studies WHERE id = ?").get(studyId)) as
      | Record<string, unknown>
      | undefined;
  if (!study) return undefined;
  const normalized = JSON.parse(String(study.normalized_json)) as { realisations: number; seed?: unknown };
  const planned = Number(normalized.realisations);
  // Realisations of this revision: its points, indices below its count, its master seed (rows of another seed
  // at the same point belong to another revision or study).
  const rows = db.prepare(
    `SELECT sp.point_index AS i, sp.label AS label,
       SUM(r.status = 'done') AS done, SUM(r.status = 'failed') AS failed, SUM(r.status = 'running') AS running
     FROM study_points sp LEFT JOIN realisations r ON r.point_hash = sp.point_hash AND r.idx < ?
       AND (r.master_seed = ? OR r.master_seed IS NULL)
     WHERE sp.study_id = ? GROUP BY sp.point_index ORDER BY sp.point_index`,
  ).all(planned, String(normalized.seed ?? ""), Number(study.id)) as Record<string, unknown>[];
  return {
    studyId: Number(study.id),
    name: String(study.name),
    lastRunAt: study.last_run_at === null ? null : String(study.last_run_at),
    points: rows.map((r) => {
      const done = Number(r.done ?? 0), failed = Number(r.failed ?? 0), running = Number(r.running ?? 0);
      return {
        pointIndex: Number(r.i),
        label: String(r.label),
        planned,
        done,
        failed,
        running,
        missing: Math.max(0, planned - done - failed - running),
      };
    }),
  };
}

/**
 * How many of a study revision's realisations are stored `done`: those of its points under its master seed with
 * index below `realisations` (for the pre-flight estimate of what is left to run, without planning).
 */
export function countDone(
  db: DatabaseSync,
  pointHashes: readonly string[],
  opts: { readonly seed: string; readonly realisations: number },
): number {
  const stmt = db.prepare(
    `SELECT COUNT(*) AS n FROM realisations WHERE point_hash = ? AND status = 'done' AND idx < ?
       AND (master_seed = ? OR master_seed IS NULL)`,
  );
  let n = 0;
  for (const h of pointHashes) n += Number(stmt.get(h, opts.realisations, opts.seed)?.n ?? 0);
  return n;
}
