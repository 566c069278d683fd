/**
 * `spindrift run --cluster`: plans the study, keeps only the realisations still to compute, cuts them
 * into slices, writes the submission (frozen study copy, manifest, sbatch script) into the results folder and
 * submits one job array. Returns at once with the job id; `collect` folds the shards in later.
 *
 * Still to compute = planned, minus stored `done` (in the database or in any shard not collected yet), minus
 * stored `failed` with `keepFailed`, minus realisations of array tasks still queued or running (asked with
 * squeue; when it cannot be asked the report says so and those are submitted again — harmless for the
 * results, which are identical, but it costs cluster time).
 *
 * @example
 * ```ts
 * const r = await submitStudy(study, {
 *   dbPath: "film.sqlite", resultsDir: "film-cluster", resources: resolveClusterResources(undefined),
 *   launcher: "/home/u/spindrift/spindrift", provenance, batch: slurmCommands(),
 * });
 * console.log(`submitted job ${r.jobId}: ${r.tasks} array tasks`);
 * ```
 */
import { join, resolve } from "node:path";
import { DatabaseSync } from "node:sqlite";
import { planStudy } from "../plan.ts";
import type { NormalizedStudy } from "../normalize.ts";
import { type Provenance, recordStudy } from "../runner.ts";
import { sha256Hex } from "../hash.ts";
import { StudyStore } from "../../store/db.ts";
import { inFlightKeys, readRealisationRefs, readShardRefs, type RealisationRef } from "./cluster_progress.ts";
import { tryQueue } from "./collect.ts";
import { type BatchSystem, isActiveState } from "./slurm.ts";
import type { ClusterResources } from "./slurm_schema.ts";
import { chooseSliceSize, sliceList } from "./slices.ts";
import { jobNameFor, renderSbatchScript } from "./sbatch_script.ts";
import {
  listShards,
  listSubmissions,
  MANIFEST_FORMAT,
  newSubmissionId,
  type SubmissionManifest,
  type SubmissionPaths,
  submissionPaths,
  writeManifest,
} from "./submission.ts";
import { ExecutorError } from "./errors.ts";

export interface SubmitOptions {
  readonly dbPath: string;
  readonly resultsDir: string;
  readonly resources: ClusterResources;
  /** Absolute path of the `spindrift` launcher the array tasks call. */
  readonly launcher: string;
  readonly provenance: Provenance;
  readonly batch: BatchSystem;
  /** Do not submit realisations that failed before. */
  readonly keepFailed?: boolean;
  /** Build the script and report, but write and submit nothing. */
  readonly dryRun?: boolean;
  /** Submit into a database created for a study of another name (see `StudyStore.recordStudy`). */
  readonly allowOtherStudy?: boolean;
  /** Clock for the submission id (tests). */
  readonly now?: Date;
}

export interface SubmitReport {
  readonly planned: number;
  /** Stored `done` in the database or in shards. */
  readonly done: number;
  /** Stored `failed` and kept (`keepFailed`). */
  readonly failedKept: number;
  /** Stored `failed` and submitted again. */
  readonly failedRerun: number;
  /** In array tasks still queued or running. */
  readonly inFlight: number;
  /** Realisations in this submission. */
  readonly submitted: number;
  readonly sliceSize: number;
  readonly tasks: number;
  /** The sbatch script (null when there is nothing to submit). */
  readonly script: string | null;
  /** Where the submission was (or, on a dry run, would be) written. */
  readonly paths: SubmissionPaths | null;
  readonly jobId: string | null;
  readonly queueProblem?: string;
  /** Shards that could not be read (their realisations count as not stored). */
  readonly unreadableShards: readonly { readonly path: string; readonly reason: string }[];
}

function storedRefs(dbPath: string): RealisationRef[] {
  try {
    Deno.statSync(dbPath);
  } catch {
    return [];
  }
  let db: DatabaseSync | undefined;
  try {
    db = new DatabaseSync(dbPath, { readOnly: true });
    db.exec("PRAGMA busy_timeout = 10000");
    const hasTable = db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'realisations'").get();
    return hasTable ? readRealisationRefs(db) : [];
  } catch (e) {
    throw new ExecutorError(`cannot read the study database ${dbPath}: ${(e as Error).message}`);
  } finally {
    db?.close();
  }
}

function exists(path: string): boolean {
  try {
    Deno.statSync(path);
    return true;
  } catch {
    return false;
  }
}

/**
 * Submits what is left of a study as one job array (see the module comment). The database is opened as its
 * writer first (single-writer lock, lineage check), so a database of another study is refused before anything
 * is submitted; a dry run only reads.
 */
export async function submitStudy(study: NormalizedStudy, opts: SubmitOptions): Promise<SubmitReport> {
  if (opts.dryRun) return await planSubmission(study, opts);
  const dbExisted = exists(opts.dbPath);
  const store = StudyStore.open(opts.dbPath, { command: "run --executor slurm" });
  let report: SubmitReport | undefined;
  try {
    recordStudy(store, study, opts.provenance, { allowOtherStudy: opts.allowOtherStudy });
    report = await planSubmission(study, opts);
    return report;
  } finally {
    store.close();
    // A submission that did not happen leaves no database behind it either.
    if (report === undefined && !dbExisted) {
      for (const suffix of ["", "-wal", "-shm"]) {
        if (exists(opts.dbPath + suffix)) Deno.removeSync(opts.dbPath + suffix);
      }
    }
  }
}

async function planSubmission(study: NormalizedStudy, opts: SubmitOptions): Promise<SubmitReport> {
  const resultsDir = resolve(opts.resultsDir);
  const shards = readShardRefs(listShards(resultsDir));
  const status = new Map<string, string>();
  for (const r of [...storedRefs(opts.dbPath), ...shards.refs]) {
    if (status.get(r.key) !== "done") status.set(r.key, r.status);
  }
  const { queue, problem } = await tryQueue(opts.batch);
  const mine = listSubmissions(resultsDir).manifests.map((m) => m.manifest).filter((m) =>
    m.studyHash === study.hash
  );
  const inFlight = inFlightKeys(mine, queue ?? new Map());
  const plan = planStudy(study);
  let done = 0, failedKept = 0, failedRerun = 0, inFlightCount = 0;
  const todo = plan.filter((r) => {
    const s = status.get(r.key);
    if (s === "done") {
      done++;
      return false;
    }
    if (s === "failed" && opts.keepFailed) {
      failedKept++;
      return false;
    }
    if (inFlight.has(r.key)) {
      inFlightCount++;
      return false;
    }
    if (s === "failed") failedRerun++;
    return true;
  });
  const base = {
    planned: plan.length,
    done,
    failedKept,
    failedRerun,
    inFlight: inFlightCount,
    ...(queue === undefined ? { queueProblem: problem } : {}),
    unreadableShards: shards.unreadable,
  };
  const sliceSize = chooseSliceSize(todo.length, { sliceSize: opts.resources.sliceSize });
  if (todo.length === 0) {
    return { ...base, submitted: 0, sliceSize, tasks: 0, script: null, paths: null, jobId: null };
  }
  const slices = sliceList(todo, sliceSize);
  const id = newSubmissionId(resultsDir, opts.now ?? new Date());
  const paths = submissionPaths(resultsDir, id);
  const studyFile = `study-${study.hash.slice(0, 16)}-${sha256Hex(study.text).slice(0, 8)}.yaml`;
  const manifest: SubmissionManifest = {
    format: MANIFEST_FORMAT,
    id,
    studyName: study.name,
    studyHash: study.hash,
    engine: { id: study.engine.id, version: study.engine.version },
    studyFile,
    studyTextSha256: sha256Hex(study.text),
    sourcePath: resolve(study.sourcePath),
    database: resolve(opts.dbPath),
    toolVersion: opts.provenance.toolVersion,
    createdAt: (opts.now ?? new Date()).toISOString(),
    resources: { ...opts.resources, extraLines: [...opts.resources.extraLines] },
    sliceSize,
    slices: slices.map((s) => s.map((r) => ({ key: r.key, pointHash: r.pointHash, index: r.index }))),
    jobId: null,
  };
  const script = renderSbatchScript({
    jobName: jobNameFor(study.name),
    tasks: slices.length,
    resources: opts.resources,
    launcher: opts.launcher,
    manifestPath: paths.manifest,
    submissionDir: paths.dir,
    description: `study ${study.name} (hash ${study.hash.slice(0, 12)}…), submission ${id}, ` +
      `${todo.length} realisation(s), ${sliceSize} per task`,
  });
  const report = { ...base, submitted: todo.length, sliceSize, tasks: slices.length, script, paths };
  if (opts.dryRun) return { ...report, jobId: null };

  const resultsExisted = exists(resultsDir);
  const copy = join(resultsDir, studyFile);
  const copyExisted = exists(copy);
  try {
    Deno.mkdirSync(paths.dir, { recursive: true });
    if (!copyExisted) Deno.writeTextFileSync(copy, study.text);
    writeManifest(paths.manifest, manifest);
    Deno.writeTextFileSync(paths.script, script);
  } catch (e) {
    throw new ExecutorError(`cannot write the submission into ${resultsDir}: ${(e as Error).message}`);
  }
  let jobId: string;
  try {
    jobId = await opts.batch.submit(paths.script);
  } catch (e) {
    // Leave no trace of a submission that did not happen.
    Deno.removeSync(paths.dir, { recursive: true });
    if (!copyExisted) Deno.removeSync(copy);
    if (!resultsExisted) Deno.removeSync(resultsDir, { recursive: true });
    throw e;
  }
  writeManifest(paths.manifest, { ...manifest, jobId });
  return { ...report, jobId };
}

/**
 * Waits until no task of the job is queued or running any more, polling the queue: first after 2 s, then
 * 1.5 times longer each time up to 60 s (short jobs are noticed quickly, long ones cost few squeue calls), or
 * every `pollSeconds` when given.
 * @throws BatchSystemError when the queue cannot be asked.
 */
export async function waitForJob(
  batch: BatchSystem,
  jobId: string,
  opts: {
    readonly pollSeconds?: number;
    readonly signal?: AbortSignal;
    readonly onPoll?: (queued: number, running: number) => void;
  } = {},
): Promise<void> {
  let pause = opts.pollSeconds ?? 2;
  for (;;) {
    const tasks = (await batch.queue()).get(jobId);
    let queued = 0, running = 0;
    for (const state of tasks?.values() ?? []) {
      const active = isActiveState(state);
      if (active === "running") running++;
      else if (active === "queued") queued++;
    }
    if (queued + running === 0) return;
    opts.onPoll?.(queued, running);
    if (opts.signal?.aborted) return;
    await new Promise<void>((resolve) => {
      const timer = setTimeout(resolve, pause * 1000);
      opts.signal?.addEventListener("abort", () => {
        clearTimeout(timer);
        resolve();
      }, { once: true });
    });
    if (opts.signal?.aborted) return;
    if (opts.pollSeconds === undefined) pause = Math.min(60, pause * 1.5);
  }
}
