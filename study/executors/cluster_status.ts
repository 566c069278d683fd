/**
 * `spindrift status` for a study with a cluster results folder: per point, what the database holds, what
 * shards hold that is not collected yet, and what array tasks are still queued or running. Reads only: the
 * database and the shards are opened read-only, the queue is asked with squeue.
 *
 * @example
 * ```ts
 * const db = new DatabaseSync("film.sqlite", { readOnly: true });
 * const s = await clusterStatus(db, { resultsDir: "film-cluster", batch: slurmCommands() });
 * s?.points[0].uncollected; // finished on the cluster, not collected yet
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { studyStatus } from "../../store/status.ts";
import { planStudy } from "../plan.ts";
import type { NormalizedStudy } from "../normalize.ts";
import {
  explainMissing,
  inFlightKeys,
  type MissingReport,
  type PointProgress,
  pointProgress,
  readRealisationRefs,
  readShardRefs,
} from "./cluster_progress.ts";
import { tryQueue } from "./collect.ts";
import { type BatchSystem, isActiveState } from "./slurm.ts";
import { listShards, listSubmissions } from "./submission.ts";

export interface JobSummary {
  readonly submission: string;
  readonly jobId: string | null;
  readonly tasks: number;
  readonly queued: number;
  readonly running: number;
}

export interface ClusterStatus {
  readonly studyId: number;
  readonly name: string;
  readonly lastRunAt: string | null;
  readonly points: readonly PointProgress[];
  readonly shards: number;
  readonly unreadableShards: readonly { readonly path: string; readonly reason: string }[];
  readonly jobs: readonly JobSummary[];
  readonly missing: MissingReport;
  readonly queueProblem?: string;
  readonly manifestProblems: readonly string[];
}

/** Status of the latest study revision in `db`, with the cluster results folder; undefined without a study. */
export async function clusterStatus(
  db: DatabaseSync,
  opts: { readonly resultsDir: string; readonly batch?: BatchSystem },
): Promise<ClusterStatus | undefined> {
  const { resultsDir, batch } = opts;
  const base = studyStatus(db);
  if (!base) return undefined;
  const row = db.prepare("SELECT study_hash, normalized_json FROM studies WHERE id = ?").get(
    base.studyId,
  ) as {
    study_hash: string;
    normalized_json: string;
  };
  const points = (db.prepare(
    "SELECT point_index, label, point_hash FROM study_points WHERE study_id = ? ORDER BY point_index",
  ).all(base.studyId) as { point_index: number; label: string; point_hash: string }[])
    .map((p) => ({ index: p.point_index, label: p.label, pointHash: p.point_hash }));
  // The stored normalized study lacks only the text and source path, which planning does not use.
  const normalized = { ...JSON.parse(row.normalized_json), text: "", sourcePath: "" } as NormalizedStudy;
  const planned = normalized.realisations;
  const stored = readRealisationRefs(db);
  const shardPaths = listShards(resultsDir);
  const shards = readShardRefs(shardPaths);
  const { manifests, problems } = listSubmissions(resultsDir);
  const mine = manifests.filter((m) => m.manifest.studyHash === row.study_hash);
  const { queue, problem } = mine.some((m) => m.manifest.jobId !== null)
    ? await tryQueue(batch)
    : { queue: new Map(), problem: undefined };
  const inFlight = inFlightKeys(mine.map((m) => m.manifest), queue ?? new Map());
  const finished = new Set(
    [...stored, ...shards.refs].filter((r) => r.status !== "running").map((r) => r.key),
  );
  const keys = new Set(planStudy(normalized).map((r) => r.key));
  const missingKeys = [...keys].filter((k) => !finished.has(k));
  const jobs = mine.map(({ manifest }) => {
    let queued = 0, running = 0;
    for (const state of (manifest.jobId !== null ? queue?.get(manifest.jobId)?.values() : undefined) ?? []) {
      const a = isActiveState(state);
      if (a === "queued") queued++;
      else if (a === "running") running++;
    }
    return { submission: manifest.id, jobId: manifest.jobId, tasks: manifest.slices.length, queued, running };
  });
  return {
    studyId: base.studyId,
    name: base.name,
    lastRunAt: base.lastRunAt,
    points: pointProgress(points, planned, { stored, shards: shards.refs, inFlight, keys }),
    shards: shardPaths.length,
    unreadableShards: shards.unreadable,
    jobs,
    missing: explainMissing(missingKeys, { submissions: mine, inFlight, queueKnown: queue !== undefined }),
    ...(queue === undefined ? { queueProblem: problem } : {}),
    manifestProblems: problems,
  };
}
