/**
 * Per-point progress of a study whose realisations may live in three places: the study database, shards not
 * collected yet, and array tasks still queued or running. Used by `spindrift status` and `spindrift collect`.
 *
 * Counting, per parameter point (realisation indices below the study's realisation count):
 * - done / failed: stored `done` (or `failed` and not done anywhere) in the database or in a shard;
 * - uncollected: how many of those are only in shards (or stored with another status in the database);
 * - running: not finished, and `running` in the database (a local run) or in a running array task;
 * - queued: not finished, in an array task still pending;
 * - missing: the rest.
 *
 * @example
 * ```ts
 * const rows = pointProgress(points, 50, { stored, shards, inFlight });
 * rows[0]; // { label: "initial.count=48", done: 31, failed: 1, uncollected: 4, running: 8, queued: 10, … }
 * ```
 */
import { DatabaseSync } from "node:sqlite";
import { join } from "node:path";
import type { QueueSnapshot } from "./slurm.ts";
import { isActiveState } from "./slurm.ts";
import { logFileName, type SubmissionManifest } from "./submission.ts";

export type RealisationState = "running" | "done" | "failed";

/** A realisation as a database or shard stores it. */
export interface RealisationRef {
  readonly key: string;
  readonly pointHash: string;
  readonly idx: number;
  readonly status: RealisationState;
}

/** A realisation of a still active array task. */
export interface InFlightTask {
  readonly state: "queued" | "running";
  readonly jobId: string;
  readonly task: number;
  readonly pointHash: string;
  readonly index: number;
}

export interface PointRef {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
}

export interface PointProgress {
  readonly pointIndex: number;
  readonly label: string;
  readonly planned: number;
  readonly done: number;
  readonly failed: number;
  readonly uncollected: number;
  readonly running: number;
  readonly queued: number;
  readonly missing: number;
}

/** Every realisation row of an open study or shard database. */
export function readRealisationRefs(db: DatabaseSync): RealisationRef[] {
  return (db.prepare("SELECT realisation_key, point_hash, idx, status FROM realisations").all() as {
    realisation_key: string;
    point_hash: string;
    idx: number;
    status: RealisationState;
  }[]).map((r) => ({ key: r.realisation_key, pointHash: r.point_hash, idx: r.idx, status: r.status }));
}

/**
 * The finished realisations of shard files (read-only). Shards that cannot be read now (being written, left
 * half-written by a killed task, damaged) are listed with the reason instead.
 */
export function readShardRefs(paths: readonly string[]): {
  refs: RealisationRef[];
  unreadable: { path: string; reason: string }[];
} {
  const refs: RealisationRef[] = [];
  const unreadable: { path: string; reason: string }[] = [];
  for (const path of paths) {
    let db: DatabaseSync | undefined;
    try {
      db = new DatabaseSync(path, { readOnly: true });
      db.exec("PRAGMA busy_timeout = 5000");
      for (const r of readRealisationRefs(db)) if (r.status !== "running") refs.push(r);
    } catch (e) {
      unreadable.push({ path, reason: (e as Error).message });
    } finally {
      db?.close();
    }
  }
  return { refs, unreadable };
}

/** Realisation key → the active array task that will compute it, from the manifests and the queue. */
export function inFlightKeys(
  manifests: readonly SubmissionManifest[],
  queue: QueueSnapshot,
): Map<string, InFlightTask> {
  const out = new Map<string, InFlightTask>();
  for (const m of manifests) {
    if (m.jobId === null) continue;
    const tasks = queue.get(m.jobId);
    if (!tasks) continue;
    for (const [task, slurmState] of tasks) {
      const state = isActiveState(slurmState);
      const slice = m.slices[task];
      if (!state || !slice) continue;
      for (const e of slice) {
        const before = out.get(e.key);
        if (!before || (before.state === "queued" && state === "running")) {
          out.set(e.key, { state, jobId: m.jobId, task, pointHash: e.pointHash, index: e.index });
        }
      }
    }
  }
  return out;
}

/** The best known state of each key: done beats failed beats running. */
function bestByKey(refs: readonly RealisationRef[]): Map<string, RealisationRef> {
  const rank = { done: 2, failed: 1, running: 0 } as const;
  const out = new Map<string, RealisationRef>();
  for (const r of refs) {
    const before = out.get(r.key);
    if (!before || rank[r.status] > rank[before.status]) out.set(r.key, r);
  }
  return out;
}

/** Progress table rows, one per point (see the module comment). */
export function pointProgress(
  points: readonly PointRef[],
  planned: number,
  sources: {
    readonly stored: readonly RealisationRef[];
    readonly shards?: readonly RealisationRef[];
    readonly inFlight?: ReadonlyMap<string, InFlightTask>;
    /** The study's planned keys: rows of the same points under another master seed are not counted. */
    readonly keys?: ReadonlySet<string>;
  },
): PointProgress[] {
  const stored = bestByKey(sources.stored);
  const all = bestByKey([...sources.stored, ...(sources.shards ?? [])]);
  const inFlight = sources.inFlight ?? new Map<string, InFlightTask>();
  const rows = new Map(points.map((p) => [p.pointHash, {
    pointIndex: p.index,
    label: p.label,
    planned,
    done: 0,
    failed: 0,
    uncollected: 0,
    running: 0,
    queued: 0,
    missing: 0,
  }]));
  for (const [key, r] of all) {
    const row = rows.get(r.pointHash);
    if (!row || r.idx >= planned || (sources.keys !== undefined && !sources.keys.has(key))) continue;
    if (r.status === "done" || r.status === "failed") {
      row[r.status]++;
      if (stored.get(key)?.status !== r.status) row.uncollected++;
    } else if (inFlight.get(key)?.state === "queued") row.queued++;
    else row.running++;
  }
  for (const [key, t] of inFlight) {
    if (all.has(key)) continue;
    const row = rows.get(t.pointHash);
    if (!row || t.index >= planned) continue;
    row[t.state === "queued" ? "queued" : "running"]++;
  }
  return [...rows.values()].map((row) => ({
    ...row,
    missing: Math.max(0, row.planned - row.done - row.failed - row.running - row.queued),
  }));
}

/** Where the realisations not stored anywhere are: in active tasks, in tasks that ended, or never submitted. */
export interface MissingReport {
  readonly count: number;
  /** In tasks still queued or running. */
  readonly inFlight: number;
  /** In tasks that are no longer in the queue but stored nothing for them (killed, timed out, crashed). */
  readonly lostTasks: readonly { jobId: string; task: number; count: number; log: string }[];
  /** Submitted, but the queue state is unknown (squeue could not be asked). */
  readonly queueUnknown: number;
  /** Never part of a submission. */
  readonly neverSubmitted: number;
}

/**
 * Classifies missing keys (planned, and neither done nor failed anywhere).
 * `queueKnown` false: the queue could not be asked, so submitted keys are "queueUnknown".
 */
export function explainMissing(
  missing: readonly string[],
  ctx: {
    readonly submissions: readonly { readonly dir: string; readonly manifest: SubmissionManifest }[];
    readonly inFlight: ReadonlyMap<string, InFlightTask>;
    readonly queueKnown: boolean;
  },
): MissingReport {
  const { submissions, inFlight, queueKnown } = ctx;
  const lastTask = new Map<string, { jobId: string; task: number; dir: string }>();
  for (const { dir, manifest } of submissions) {
    if (manifest.jobId === null) continue;
    manifest.slices.forEach((slice, task) => {
      for (const e of slice) lastTask.set(e.key, { jobId: manifest.jobId as string, task, dir });
    });
  }
  let inFlightCount = 0, queueUnknown = 0, neverSubmitted = 0;
  const lost = new Map<string, { jobId: string; task: number; count: number; log: string }>();
  for (const key of missing) {
    if (inFlight.has(key)) {
      inFlightCount++;
      continue;
    }
    const t = lastTask.get(key);
    if (!t) neverSubmitted++;
    else if (!queueKnown) queueUnknown++;
    else {
      const id = `${t.jobId}_${t.task}`;
      const entry = lost.get(id) ??
        { jobId: t.jobId, task: t.task, count: 0, log: join(t.dir, logFileName(t.jobId, t.task)) };
      entry.count++;
      lost.set(id, entry);
    }
  }
  return {
    count: missing.length,
    inFlight: inFlightCount,
    lostTasks: [...lost.values()],
    queueUnknown,
    neverSubmitted,
  };
}
