/**
 * `spindrift collect`: folds every shard of a study's results folder into its database and reports what is
 * still missing. Safe to run at any time, also while array tasks are still running, and as often as wanted:
 * each shard is checked, then merged in one transaction (`store/merge.ts`); merging again adds nothing.
 *
 * @example
 * ```ts
 * const report = await collectStudy(study, {
 *   dbPath: "film.sqlite", resultsDir: "film-cluster", provenance, batch: slurmCommands(),
 * });
 * report.missing.inFlight; // realisations of tasks still queued or running
 * ```
 */
import { planStudy } from "../plan.ts";
import type { NormalizedStudy } from "../normalize.ts";
import { type Provenance, recordStudy } from "../runner.ts";
import { salvageHint, StoreError, StudyStore } from "../../store/db.ts";
import { type MergeResult, mergeShard, type ShardProblem, ShardRejected } from "../../store/merge.ts";
import {
  explainMissing,
  inFlightKeys,
  type MissingReport,
  type PointProgress,
  pointProgress,
  readRealisationRefs,
} from "./cluster_progress.ts";
import type { BatchSystem, QueueSnapshot } from "./slurm.ts";
import { listShards, listSubmissions } from "./submission.ts";
import { ExecutorError } from "./errors.ts";

export interface CollectOptions {
  readonly dbPath: string;
  readonly resultsDir: string;
  readonly provenance: Provenance;
  /** Asked which array tasks are still active; without it (or when it fails) the queue state is unknown. */
  readonly batch?: BatchSystem;
  /** Collect into a database created for a study of another name (see `StudyStore.recordStudy`). */
  readonly allowOtherStudy?: boolean;
}

export interface CollectReport {
  readonly shards: number;
  readonly merged: readonly MergeResult[];
  readonly rejected: readonly {
    readonly shard: string;
    readonly problem: ShardProblem;
    readonly message: string;
  }[];
  /** Manifests that could not be read. */
  readonly manifestProblems: readonly string[];
  readonly points: readonly PointProgress[];
  readonly missing: MissingReport;
  /** Why the queue state is unknown, when it is. */
  readonly queueProblem?: string;
}

/** Asks the batch system for its queue; a failure becomes a reason instead of an error. */
export async function tryQueue(
  batch: BatchSystem | undefined,
): Promise<{ queue?: QueueSnapshot; problem?: string }> {
  if (!batch) return { problem: "the batch system was not asked" };
  try {
    return { queue: await batch.queue() };
  } catch (e) {
    return { problem: (e as Error).message };
  }
}

/**
 * Collects a study's shards into its database.
 * @throws ExecutorError when the results folder does not exist; StoreError when the database cannot be used.
 */
export async function collectStudy(study: NormalizedStudy, opts: CollectOptions): Promise<CollectReport> {
  try {
    Deno.statSync(opts.resultsDir);
  } catch {
    throw new ExecutorError(
      `there is no cluster results folder ${opts.resultsDir}`,
      "submit the study first (spindrift run STUDY.yaml --cluster), or give the folder with --results",
    );
  }
  const { manifests, problems } = listSubmissions(opts.resultsDir);
  const shardPaths = listShards(opts.resultsDir);
  const expect = { studyHash: study.hash, engineId: study.engine.id, engineVersion: study.engine.version };
  const merged: MergeResult[] = [];
  const rejected: { shard: string; problem: ShardProblem; message: string }[] = [];
  const store = StudyStore.open(opts.dbPath, { command: "collect" });
  let stored;
  try {
    // A merge writes many rows at once: check the whole file first (the open ran only the quick check).
    const problems = store.integrityProblems();
    if (problems.length > 0) {
      throw new StoreError(
        `${opts.dbPath} fails SQLite's integrity check (${
          problems.slice(0, 3).join("; ")
        }); nothing was merged`,
        { reason: "corrupt", hint: salvageHint(opts.dbPath) },
      );
    }
    recordStudy(store, study, opts.provenance, { allowOtherStudy: opts.allowOtherStudy });
    for (const shard of shardPaths) {
      try {
        merged.push(await mergeShard(store, shard, expect));
      } catch (e) {
        if (!(e instanceof ShardRejected)) throw e;
        rejected.push({ shard, problem: e.problem, message: e.message });
      }
    }
    stored = readRealisationRefs(store.db);
  } finally {
    store.close();
  }
  const { queue, problem } = await tryQueue(opts.batch);
  const mine = manifests.filter((m) => m.manifest.studyHash === study.hash);
  const inFlight = inFlightKeys(mine.map((m) => m.manifest), queue ?? new Map());
  const keys = new Set(planStudy(study).map((r) => r.key));
  const points = pointProgress(
    study.points.map((p) => ({ index: p.index, label: p.label, pointHash: p.pointHash })),
    study.realisations,
    { stored, inFlight, keys },
  );
  const finished = new Set(stored.filter((r) => r.status !== "running").map((r) => r.key));
  const missingKeys = [...keys].filter((k) => !finished.has(k));
  return {
    shards: shardPaths.length,
    merged,
    rejected,
    manifestProblems: problems,
    points,
    missing: explainMissing(missingKeys, { submissions: mine, inFlight, queueKnown: queue !== undefined }),
    ...(queue === undefined ? { queueProblem: problem } : {}),
  };
}
