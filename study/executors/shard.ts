/**
 * Running one slice of a study into a shard database: what a cluster array task does.
 *
 * The code path is the local one: `planStudy` gives the realisations (keys, seeds), `taskFor` the worker task,
 * `executeRealisation` computes, and `StudyStore` stores (`recordStudy`, `beginRealisation`, `appendFrames`,
 * `finishRealisation`) through the same worker pool (`study/pool.ts`), so a realisation computed here is
 * bit-identical to the same realisation computed by a local `spindrift run`.
 *
 * The shard uses a rollback journal instead of WAL: WAL's shared-memory index does not work when the writer (a
 * compute node) and a reader (`spindrift collect` on the login node) are different hosts on a network file
 * system. A rerun of the same task (requeue) resumes the shard: finished realisations are kept.
 *
 * @example
 * ```ts
 * const manifest = readManifest("/scratch/film-cluster/20261201T101500Z/manifest.json");
 * const study = loadSubmittedStudy("/scratch/film-cluster", manifest);
 * await executeSlice(study, manifest.slices[3].map((e) => e.key), { shardPath: "…/shard-4711-3.sqlite" });
 * ```
 */
import { type PlannedRealisation, planStudy } from "../plan.ts";
import type { NormalizedStudy } from "../normalize.ts";
import { type FailureSummary, hostName, type Provenance, recordStudy, storingHooks } from "../runner.ts";
import { runRealisations } from "../pool.ts";
import { type RealisationOutcome, StudyStore } from "../../store/db.ts";
import { ExecutorError } from "./errors.ts";
import { loadSubmittedStudy, readManifest } from "./submission.ts";
import { dirname, resolve } from "node:path";

export interface SliceOptions {
  readonly shardPath: string;
  /** Realisations computed at the same time (default 1: one after another in this thread). */
  readonly workers?: number;
  readonly provenance: Provenance;
  /** Host name stored with each realisation. */
  readonly host?: string;
  /** Aborting stops the slice (see `runRealisations`); unfinished realisations are discarded from the shard. */
  readonly signal?: AbortSignal;
  /** Called after each finished realisation (for log lines). */
  readonly onFinished?: (
    r: PlannedRealisation,
    outcome: RealisationOutcome,
    done: number,
    total: number,
  ) => void;
}

export interface SliceReport {
  readonly planned: number;
  /** Already finished in the shard (a resumed task). */
  readonly skipped: number;
  readonly completed: number;
  readonly failures: readonly FailureSummary[];
  readonly wallSeconds: number;
  /** Stopped from outside before the end. */
  readonly interrupted: boolean;
}

/**
 * Creates a new shard with its schema and study record under a temporary name and renames it into place, so a
 * `collect` running meanwhile never sees a shard without tables (it would refuse it as "not a shard"). An
 * existing shard (a resumed task) is left as it is; a temporary file left by a killed task is replaced.
 */
function createShard(study: NormalizedStudy, opts: SliceOptions): void {
  try {
    Deno.statSync(opts.shardPath);
    return;
  } catch (e) {
    if (!(e instanceof Deno.errors.NotFound)) throw e;
  }
  const part = `${opts.shardPath}.part`;
  for (const f of [part, `${part}-journal`, `${part}-wal`, `${part}-shm`]) {
    try {
      Deno.removeSync(f);
    } catch {
      // not there
    }
  }
  const store = StudyStore.open(part, { command: "run-slice", lock: false });
  try {
    store.db.exec("PRAGMA journal_mode = DELETE");
    recordStudy(store, study, opts.provenance);
  } finally {
    store.close();
  }
  Deno.renameSync(part, opts.shardPath);
}

/**
 * Runs the realisations with the given keys into the shard database (created if needed).
 * @throws ExecutorError when a key is not part of the study (the slice does not belong to it).
 */
export async function executeSlice(
  study: NormalizedStudy,
  keys: readonly string[],
  opts: SliceOptions,
): Promise<SliceReport> {
  const t0 = performance.now();
  const byKey = new Map(planStudy(study).map((r) => [r.key, r]));
  const slice = keys.map((k) => {
    const r = byKey.get(k);
    if (!r) {
      throw new ExecutorError(
        `realisation ${k.slice(0, 12)}… of the slice is not part of study ${study.name}`,
      );
    }
    return r;
  });
  // A shard has exactly one writer, its array task; shards may live on a network file system without locks.
  createShard(study, opts);
  const store = StudyStore.open(opts.shardPath, { command: "run-slice", lock: false });
  try {
    try {
      store.db.exec("PRAGMA journal_mode = DELETE");
    } catch {
      // A reader holds the file open; WAL stays, which is safe on a local file system.
    }
    store.discardUnfinished();
    recordStudy(store, study, opts.provenance);
    const statuses = store.realisationStatuses();
    const todo = slice.filter((r) => statuses.get(r.key) !== "done");
    const host = opts.host ?? hostName();
    const run = storingHooks(store, study, host, (r, outcome, finished) => {
      opts.onFinished?.(r, outcome, finished, todo.length);
    });
    const { interrupted } = await runRealisations(study, todo, opts.workers ?? 1, run.hooks, opts.signal);
    if (interrupted) store.discardUnfinished();
    const completed = run.completed();
    const failures = run.failures;
    return {
      planned: slice.length,
      skipped: slice.length - todo.length,
      completed,
      failures,
      wallSeconds: (performance.now() - t0) / 1000,
      interrupted,
    };
  } finally {
    store.close();
  }
}

/**
 * What an array task runs: slice `slice` of the submission whose manifest is at `manifestPath`, into the
 * shard `shardPath`. The study comes from the frozen copy in the results folder (the manifest's parent's
 * parent), checked against the submitted study hash.
 * @throws ExecutorError for a bad manifest, a changed study copy, a changed engine or a slice out of range.
 */
export async function runSliceTask(
  manifestPath: string,
  slice: number,
  opts: SliceOptions,
): Promise<SliceReport> {
  const manifest = readManifest(manifestPath);
  if (!Number.isInteger(slice) || slice < 0 || slice >= manifest.slices.length) {
    throw new ExecutorError(
      `slice ${slice} does not exist: submission ${manifest.id} has slices 0 to ${
        manifest.slices.length - 1
      }`,
    );
  }
  const study = loadSubmittedStudy(dirname(dirname(resolve(manifestPath))), manifest);
  return await executeSlice(study, manifest.slices[slice].map((e) => e.key), opts);
}
