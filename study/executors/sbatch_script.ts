/**
 * The sbatch job-array script of a submission: one array task per slice; each task runs
 * `spindrift run-slice` (the same `executeRealisation` code path as a local worker) and writes its own shard.
 *
 * Every path is absolute and single-quoted for the shell; the `#SBATCH` lines are read by sbatch, not by the
 * shell, so they carry no quoting and the paths in them must not contain white space (checked).
 *
 * @example
 * ```ts
 * const text = renderSbatchScript({
 *   jobName: "spindrift-film", tasks: 12, resources: CLUSTER_DEFAULTS, launcher: "/home/u/spindrift/spindrift",
 *   manifestPath: "/scratch/film-cluster/20261201T101500Z/manifest.json",
 *   submissionDir: "/scratch/film-cluster/20261201T101500Z", description: "study film (hash 1a2b…)",
 * });
 * ```
 */
import type { ClusterResources } from "./slurm_schema.ts";
import { ExecutorError } from "./errors.ts";

export interface SbatchScriptInput {
  /** Job name shown by squeue. */
  readonly jobName: string;
  /** Number of array tasks (slices). */
  readonly tasks: number;
  readonly resources: ClusterResources;
  /** Absolute path of the `spindrift` launcher. */
  readonly launcher: string;
  /** Absolute path of the submission's manifest.json. */
  readonly manifestPath: string;
  /** Absolute path of the submission folder (task logs and shards go there). */
  readonly submissionDir: string;
  /** One line for the comment at the top (study name, hash, how to collect). */
  readonly description: string;
}

/** The text as a single-quoted shell word. */
export function shellQuote(text: string): string {
  return `'${text.replaceAll("'", `'"'"'`)}'`;
}

/** A job name squeue and sacct show cleanly: letters, digits and _ . - only. */
export function jobNameFor(studyName: string): string {
  return `spindrift-${studyName.replace(/[^A-Za-z0-9_.-]+/g, "_")}`.slice(0, 64);
}

function checkPath(what: string, path: string): void {
  if (!path.startsWith("/")) throw new ExecutorError(`internal: the ${what} path must be absolute (${path})`);
  if (/[\s"'\\]/.test(path)) {
    throw new ExecutorError(
      `the ${what} path ${JSON.stringify(path)} contains white space, quotes or backslashes, which sbatch ` +
        "directives cannot carry",
      "choose a results folder (--results) and a checkout location without spaces",
    );
  }
}

/** The script text (POSIX sh). */
export function renderSbatchScript(input: SbatchScriptInput): string {
  const r = input.resources;
  if (!Number.isInteger(input.tasks) || input.tasks < 1) {
    throw new ExecutorError(`internal: an array job needs at least one task, got ${input.tasks}`);
  }
  checkPath("submission folder", input.submissionDir);
  checkPath("manifest", input.manifestPath);
  if (!input.launcher.startsWith("/")) {
    throw new ExecutorError(`internal: the launcher path must be absolute (${input.launcher})`);
  }
  const throttle = r.maxConcurrent !== undefined ? `%${r.maxConcurrent}` : "";
  const directives = [
    `--job-name=${input.jobName}`,
    `--array=0-${input.tasks - 1}${throttle}`,
    "--nodes=1",
    "--ntasks=1",
    `--cpus-per-task=${r.cpusPerTask}`,
    `--mem=${r.memory}`,
    `--time=${r.timeLimit}`,
    ...(r.partition !== undefined ? [`--partition=${r.partition}`] : []),
    ...(r.account !== undefined ? [`--account=${r.account}`] : []),
    // "%%" is a literal percent sign in sbatch file name patterns.
    `--output=${input.submissionDir.replaceAll("%", "%%")}/task-%A_%a.log`,
    "--open-mode=append",
  ];
  const extra = r.extraLines.map((l) => (l.startsWith("#SBATCH") ? l : `#SBATCH ${l}`));
  const shardDir = shellQuote(input.submissionDir);
  return [
    "#!/bin/sh",
    `# spindrift cluster job: ${input.description.replace(/[\r\n]+/g, " ")}`,
    `# ${input.tasks} array task(s); task k runs slice k of manifest.json and writes its own shard database`,
    "# shard-<job>-<k>.sqlite in this folder. Collect the shards into the study database with",
    "# 'spindrift collect STUDY.yaml' (also while tasks are still running).",
    ...directives.map((d) => `#SBATCH ${d}`),
    ...extra,
    "set -eu",
    `exec ${shellQuote(input.launcher)} run-slice ${shellQuote(input.manifestPath)} \\`,
    '  --slice "$SLURM_ARRAY_TASK_ID" \\',
    `  --shard ${shardDir}/"shard-$SLURM_ARRAY_JOB_ID-$SLURM_ARRAY_TASK_ID.sqlite" \\`,
    `  --workers ${r.cpusPerTask}`,
    "",
  ].join("\n");
}
