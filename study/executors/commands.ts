/**
 * The cluster commands as the command line runs them: flags in, text lines out (through `write`), an exit code
 * back. `cli/main.ts` only parses arguments and calls these.
 *
 * - `clusterRunCommand`: `spindrift run STUDY --cluster [--dry-run] [--wait]`
 * - `collectCommand`: `spindrift collect STUDY`
 * - `runSliceCommand`: `spindrift run-slice MANIFEST --slice K --shard FILE` (what an array task runs)
 * - `clusterStatusLines`: the cluster part of `spindrift status DB`
 *
 * @example
 * ```ts
 * const code = await collectCommand(study, { dbPath: "film.sqlite" }, { write: console.log, provenance, batch });
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { dirname, resolve } from "node:path";
import type { NormalizedStudy } from "../normalize.ts";
import type { Provenance } from "../runner.ts";
import type { PointProgress } from "./cluster_progress.ts";
import type { MissingReport } from "./cluster_progress.ts";
import { type ClusterStatus, clusterStatus } from "./cluster_status.ts";
import { collectStudy } from "./collect.ts";
import { ExecutorError } from "./errors.ts";
import { runSliceTask } from "./shard.ts";
import type { BatchSystem } from "./slurm.ts";
import {
  checkClusterFlags,
  type ClusterResources,
  clusterSectionOf,
  type ClusterSettings,
  resolveClusterResources,
} from "./slurm_schema.ts";
import { submitStudy, waitForJob } from "./submit.ts";
import { defaultResultsDir } from "./submission.ts";

/** What the commands need from their surroundings. */
export interface CommandEnv {
  /** Writes one line of normal output (stdout). */
  readonly write: (line: string) => void;
  /** Writes one line of side information (stderr). */
  readonly note?: (line: string) => void;
  readonly provenance: Provenance;
  readonly batch: BatchSystem;
  /** Stops `--wait` early (Ctrl-C and SIGTERM do too). */
  readonly signal?: AbortSignal;
}

/** Flags of `run --cluster`. */
export interface ClusterRunFlags extends ClusterSettings {
  readonly dbPath: string;
  readonly results?: string;
  readonly dryRun?: boolean;
  readonly wait?: boolean;
  readonly keepFailed?: boolean;
  /** Accept a database created for a study of another name. */
  readonly allowOtherStudy?: boolean;
  /** Seconds between queue polls with `wait` (default: from 2 s growing to 60 s). */
  readonly pollSeconds?: number;
  /** Absolute path of the launcher the array tasks call. */
  readonly launcher: string;
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? "" : "s"}`;
}

function describeResources(r: ClusterResources): string {
  const parts = [
    r.partition !== undefined ? `partition ${r.partition}` : "default partition",
    `time limit ${r.timeLimit}`,
    `memory ${r.memory}`,
    plural(r.cpusPerTask, "CPU") + " per task",
  ];
  if (r.account !== undefined) parts.push(`account ${r.account}`);
  if (r.maxConcurrent !== undefined) parts.push(`at most ${r.maxConcurrent} tasks at once`);
  for (const l of r.extraLines) parts.push(l.replace(/^#SBATCH\s+/, ""));
  return parts.join(", ");
}

/** `spindrift run STUDY --cluster`; returns the exit code. */
export async function clusterRunCommand(
  study: NormalizedStudy,
  flags: ClusterRunFlags,
  env: CommandEnv,
): Promise<number> {
  const dbPath = flags.dbPath;
  const note = env.note ?? env.write;
  const fromFlags = checkClusterFlags({
    partition: flags.partition,
    timeLimit: flags.timeLimit,
    memory: flags.memory,
    cpusPerTask: flags.cpusPerTask,
    account: flags.account,
    extraLines: flags.extraLines?.length ? flags.extraLines : undefined,
    sliceSize: flags.sliceSize,
    maxConcurrent: flags.maxConcurrent,
  });
  const resources = resolveClusterResources(clusterSectionOf(study), fromFlags);
  const resultsDir = flags.results ?? defaultResultsDir(dbPath);
  const r = await submitStudy(study, {
    dbPath,
    resultsDir,
    resources,
    launcher: flags.launcher,
    provenance: env.provenance,
    batch: env.batch,
    keepFailed: flags.keepFailed,
    dryRun: flags.dryRun,
    allowOtherStudy: flags.allowOtherStudy,
  });
  const known: string[] = [`${r.done} done`];
  if (r.failedKept) known.push(`${r.failedKept} failed (kept)`);
  if (r.inFlight) known.push(`${r.inFlight} queued or running in earlier jobs`);
  if (r.queueProblem !== undefined) {
    note(
      `warning: cannot ask Slurm which earlier tasks are still queued or running (${r.queueProblem}); ` +
        "their realisations are submitted again (same results, extra cluster time)",
    );
  }
  for (const u of r.unreadableShards) {
    note(`warning: cannot read shard ${u.path} now (${u.reason}); its realisations count as not stored`);
  }
  if (r.script === null) {
    env.write(`nothing to submit: of ${plural(r.planned, "realisation")}, ${known.join(", ")}`);
    if (r.inFlight) env.write(`follow them with: spindrift status ${dbPath}`);
    return 0;
  }
  const what = `${plural(r.submitted, "realisation")} of ${r.planned}` +
    (r.failedRerun ? ` (${r.failedRerun} failed before)` : "") + `; already: ${known.join(", ")}`;
  const shape = `${plural(r.tasks, "array task")} × ${r.sliceSize} realisation${
    r.sliceSize === 1 ? "" : "s"
  }`;
  if (flags.dryRun) {
    env.write(r.script.trimEnd());
    note(`dry run: nothing written or submitted; would submit ${shape}: ${what}`);
    note(`  submission folder: ${r.paths?.dir}`);
    note(`  resources: ${describeResources(resources)}`);
    return 0;
  }
  env.write(`submitted job ${r.jobId}: ${shape}: ${what}`);
  env.write(`  submission folder: ${r.paths?.dir} (job.sbatch, manifest.json, task logs, shards)`);
  env.write(`  resources: ${describeResources(resources)}`);
  if (!flags.wait) {
    env.write(`next: spindrift status ${dbPath}    (progress, also before collecting)`);
    env.write(
      `      spindrift collect ${study.sourcePath}${collectFlags(dbPath, study, flags.results)}` +
        "    (fold finished shards into the database; any time, as often as wanted)",
    );
    return 0;
  }
  // Ctrl-C stops waiting, not the job.
  const controller = new AbortController();
  env.signal?.addEventListener("abort", () => controller.abort(), { once: true });
  const onSignal = () => controller.abort();
  const signals: Deno.Signal[] = ["SIGINT", "SIGTERM"];
  for (const s of signals) Deno.addSignalListener(s, onSignal);
  let last = "";
  try {
    await waitForJob(env.batch, r.jobId as string, {
      pollSeconds: flags.pollSeconds,
      signal: controller.signal,
      onPoll: (queued, running) => {
        const line = `job ${r.jobId}: ${running} running, ${queued} queued`;
        if (line !== last) note(line);
        last = line;
      },
    });
  } finally {
    for (const s of signals) Deno.removeSignalListener(s, onSignal);
  }
  if (controller.signal.aborted) {
    env.write(`stopped waiting; the job keeps running. Collect later: spindrift collect ${study.sourcePath}`);
    return 130;
  }
  env.write(`job ${r.jobId} finished; collecting`);
  return await collectCommand(study, {
    dbPath,
    results: flags.results,
    allowOtherStudy: flags.allowOtherStudy,
  }, env);
}

/** The flags `collect` needs to find the same database and results folder. */
function collectFlags(dbPath: string, study: NormalizedStudy, results: string | undefined): string {
  const parts: string[] = [];
  if (resolve(dbPath) !== resolve(dirname(study.sourcePath), `${study.name}.sqlite`)) {
    parts.push(` --db ${dbPath}`);
  }
  if (results !== undefined) parts.push(` --results ${results}`);
  return parts.join("");
}

function progressTable(points: readonly PointProgress[], extra: boolean): string[] {
  const w = Math.max(5, ...points.map((p) => p.label.length));
  const head = ["done", "failed", "running", "queued", "missing", ...(extra ? ["not collected"] : [])];
  const lines = [`  ${"point".padEnd(w)}  ${head.join("  ")}`];
  for (const p of points) {
    const values = [p.done, p.failed, p.running, p.queued, p.missing, ...(extra ? [p.uncollected] : [])];
    lines.push(
      `  ${p.label.padEnd(w)}  ${values.map((v, i) => String(v).padStart(head[i].length)).join("  ")}`,
    );
  }
  return lines;
}

function missingLines(m: MissingReport, study: string): string[] {
  if (m.count === 0) return [];
  const parts: string[] = [];
  if (m.inFlight) parts.push(`${m.inFlight} in array tasks still queued or running`);
  const lost = m.lostTasks.reduce((s, t) => s + t.count, 0);
  if (lost) {
    parts.push(`${lost} in ${plural(m.lostTasks.length, "array task")} that ended without storing them`);
  }
  if (m.queueUnknown) parts.push(`${m.queueUnknown} submitted (queue state unknown)`);
  if (m.neverSubmitted) parts.push(`${m.neverSubmitted} never submitted`);
  const lines = [`missing: ${plural(m.count, "realisation")}: ${parts.join("; ")}`];
  for (const t of m.lostTasks.slice(0, 5)) {
    lines.push(
      `  task ${t.jobId}_${t.task} stored ${t.count} fewer than planned (killed, time limit, ` +
        `out of memory?); see ${t.log}`,
    );
  }
  if (m.lostTasks.length > 5) lines.push(`  … and ${m.lostTasks.length - 5} more tasks`);
  if (lost + m.neverSubmitted + m.queueUnknown > 0) {
    lines.push(`submit them with: spindrift run ${study} --cluster`);
  }
  return lines;
}

/** `spindrift collect STUDY`; returns the exit code (1 when a shard was refused). */
export async function collectCommand(
  study: NormalizedStudy,
  flags: { readonly dbPath: string; readonly results?: string; readonly allowOtherStudy?: boolean },
  env: CommandEnv,
): Promise<number> {
  const dbPath = flags.dbPath;
  const note = env.note ?? env.write;
  const resultsDir = flags.results ?? defaultResultsDir(dbPath);
  const r = await collectStudy(study, {
    dbPath,
    resultsDir,
    provenance: env.provenance,
    batch: env.batch,
    allowOtherStudy: flags.allowOtherStudy,
  });
  const sum = (f: (m: typeof r.merged[number]) => number) => r.merged.reduce((s, m) => s + f(m), 0);
  const parts = [
    `${sum((m) => m.added)} realisations added`,
    `${sum((m) => m.replaced)} replaced (failed or unfinished before)`,
    `${sum((m) => m.alreadyStored)} already stored`,
  ];
  const unfinished = sum((m) => m.unfinished);
  if (unfinished) parts.push(`${unfinished} still running in their task`);
  env.write(
    `collected ${plural(r.merged.length, "shard")} of ${r.shards} from ${resultsDir}: ${parts.join(", ")}`,
  );
  for (const x of r.rejected) env.write(`refused ${x.message}`);
  for (const p of r.manifestProblems) note(`warning: ${p}`);
  if (r.queueProblem !== undefined && r.missing.count > 0) note(`queue state unknown: ${r.queueProblem}`);
  env.write(`database ${dbPath}, study ${study.name}:`);
  for (const l of progressTable(r.points, false)) env.write(l);
  const failed = r.points.reduce((s, p) => s + p.failed, 0);
  if (r.missing.count === 0) {
    env.write(
      `all ${plural(r.points.length * study.realisations, "realisation")} are stored` +
        (failed ? ` (${failed} failed: see spindrift status and the report)` : ""),
    );
  } else for (const l of missingLines(r.missing, study.sourcePath)) env.write(l);
  if (r.rejected.length) {
    env.write("refused shards were left as they are; the database holds nothing from them");
    return 1;
  }
  return 0;
}

/** `spindrift run-slice MANIFEST --slice K --shard FILE`; returns the exit code (1 when a realisation failed). */
export async function runSliceCommand(
  manifestPath: string,
  flags: {
    readonly slice: string;
    readonly shard: string;
    readonly workers?: number;
    readonly signal?: AbortSignal;
  },
  env: Omit<CommandEnv, "batch">,
): Promise<number> {
  const slice = Number(flags.slice);
  if (!/^\d+$/.test(flags.slice.trim()) || !Number.isSafeInteger(slice)) {
    throw new ExecutorError(`--slice must be a whole number ≥ 0, got '${flags.slice}'`);
  }
  const started = new Date().toISOString();
  env.write(`${started} slice ${flags.slice} of ${manifestPath} → ${flags.shard}`);
  const r = await runSliceTask(manifestPath, slice, {
    shardPath: flags.shard,
    workers: flags.workers,
    provenance: env.provenance,
    signal: flags.signal,
    onFinished: (p, outcome, done, total) => {
      const what = outcome.status === "done"
        ? `done in ${outcome.wallSeconds.toFixed(1)} s`
        : `FAILED [${outcome.failureKind}] ${outcome.error}`;
      env.write(
        `${new Date().toISOString()} ${done}/${total} point ${p.pointIndex} realisation ${p.index}: ${what}`,
      );
    },
  });
  env.write(
    `${new Date().toISOString()} slice ${flags.slice} ${
      r.interrupted ? "stopped" : "finished"
    }: ${r.completed} done, ${r.failures.length} failed, ` +
      `${r.skipped} already in the shard, ${r.wallSeconds.toFixed(1)} s`,
  );
  return r.failures.length ? 1 : 0;
}

/** The cluster part of `spindrift status DB`, or null when the database has no results folder. */
export async function clusterStatusLines(
  db: DatabaseSync,
  flags: { readonly dbPath: string; readonly results?: string; readonly batch: BatchSystem },
): Promise<string[] | null> {
  const { dbPath, batch } = flags;
  const resultsDir = flags.results ?? defaultResultsDir(dbPath);
  try {
    Deno.statSync(resultsDir);
  } catch {
    if (flags.results !== undefined) {
      throw new ExecutorError(`there is no cluster results folder ${resultsDir}`);
    }
    return null;
  }
  const s = await clusterStatus(db, { resultsDir, batch });
  if (!s) return null;
  return clusterStatusText(s, resultsDir);
}

/** The text of `spindrift status` for a study with a cluster results folder. */
export function clusterStatusText(s: ClusterStatus, resultsDir: string): string[] {
  const lines = [`study ${s.name} (last run ${s.lastRunAt ?? "never"})`, ...progressTable(s.points, true)];
  lines.push(`cluster results folder ${resultsDir}: ${plural(s.shards, "shard")}`);
  for (const j of s.jobs) {
    const state = j.jobId === null
      ? "not submitted (sbatch did not answer)"
      : j.queued + j.running === 0
      ? "no task queued or running"
      : `${j.running} running, ${j.queued} queued`;
    lines.push(`  submission ${j.submission}: job ${j.jobId ?? "-"}, ${plural(j.tasks, "task")}: ${state}`);
  }
  if (s.queueProblem !== undefined) lines.push(`  queue state unknown: ${s.queueProblem}`);
  const uncollected = s.points.reduce((n, p) => n + p.uncollected, 0);
  if (uncollected) {
    lines.push(
      `${
        plural(uncollected, "finished realisation")
      } in shards not collected yet: spindrift collect STUDY.yaml`,
    );
  }
  if (s.unreadableShards.length) {
    lines.push(
      `${plural(s.unreadableShards.length, "shard")} cannot be read now (being written, or left by a ` +
        "killed task): collect recovers them",
    );
  }
  for (const p of s.manifestProblems) lines.push(`warning: ${p}`);
  lines.push(...missingLines(s.missing, "STUDY.yaml"));
  return lines;
}

/** Options of `spindrift run` that choose or configure the executor. */
export interface ExecutorOptions {
  /** `--cluster`: submit a Slurm job array instead of running on this machine. */
  readonly cluster?: boolean;
  /** The old spelling `--executor local|slurm`, accepted for one release with a deprecation message. */
  readonly executor?: string;
  readonly workers?: number;
  readonly fresh?: boolean;
  readonly results?: string;
  readonly dryRun?: boolean;
  readonly wait?: boolean;
  readonly sliceSize?: number;
  readonly partition?: string;
  readonly timeLimit?: string;
  readonly memory?: string;
  readonly cpusPerTask?: number;
  readonly account?: string;
  readonly sbatchLine?: readonly string[];
  readonly maxConcurrent?: number;
}

const CLUSTER_ONLY: readonly [keyof ExecutorOptions, string][] = [
  ["results", "--results"],
  ["dryRun", "--dry-run"],
  ["wait", "--wait"],
  ["sliceSize", "--slice-size"],
  ["partition", "--partition"],
  ["timeLimit", "--time-limit"],
  ["memory", "--memory"],
  ["cpusPerTask", "--cpus-per-task"],
  ["account", "--account"],
  ["sbatchLine", "--sbatch-line"],
  ["maxConcurrent", "--max-concurrent"],
];

/**
 * What the deprecated `--executor <where>` means today, with the message to show: `slurm` is `--cluster`,
 * `local` is the default (no flag).
 * @throws ExecutorError for any other value.
 */
export function deprecatedExecutor(where: string): { readonly cluster: boolean; readonly message: string } {
  const gone = "--executor is deprecated and will be removed in the next release";
  if (where === "slurm") {
    return { cluster: true, message: `${gone}: write --cluster instead of --executor slurm` };
  }
  if (where === "local") {
    return {
      cluster: false,
      message: `${gone}: leave out --executor local (running on this machine is the default)`,
    };
  }
  throw new ExecutorError(
    `--executor ${where} is not known (--executor is deprecated)`,
    "run on this machine without a flag, or submit to the cluster with --cluster",
  );
}

/**
 * Where to run (this machine or a Slurm job array), after refusing options that do not apply there. The old
 * spelling `--executor local|slurm` is accepted; its deprecation message goes to `warn`.
 * @throws ExecutorError naming the option and what to use instead.
 */
export function checkExecutorOptions(
  o: ExecutorOptions,
  warn: (line: string) => void = () => {},
): "local" | "slurm" {
  let cluster = o.cluster === true;
  if (o.executor !== undefined) {
    const old = deprecatedExecutor(o.executor);
    warn(old.message);
    if (o.cluster && !old.cluster) {
      throw new ExecutorError("--cluster and --executor local contradict each other", "leave out --executor");
    }
    cluster ||= old.cluster;
  }
  if (cluster) {
    if (o.workers !== undefined) {
      throw new ExecutorError(
        "--workers does not apply to --cluster",
        "each array task runs --cpus-per-task realisations at once; the number of tasks runs in parallel",
      );
    }
    if (o.fresh) {
      throw new ExecutorError(
        "--fresh does not apply to --cluster (the shards of earlier submissions would be collected again)",
        "to start over, delete the database and its results folder, then submit again",
      );
    }
    return "slurm";
  }
  for (const [key, flag] of CLUSTER_ONLY) {
    const v = o[key];
    if (v !== undefined && v !== false && !(Array.isArray(v) && v.length === 0)) {
      throw new ExecutorError(`${flag} only applies with --cluster`);
    }
  }
  return "local";
}
