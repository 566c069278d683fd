/**
 * Cluster resources of a study run through Slurm: the zod schema of the study file's `run.cluster` section, the
 * same checks for the command-line flags, and the defaults. Resources never change results, so they are not
 * part of any hash (like `run.workers`).
 *
 * Precedence: command-line flag > `run.cluster` in the study file > `CLUSTER_DEFAULTS`.
 *
 * @example
 * ```ts
 * // study file:  run: { duration: 40, sampleInterval: 0.5, cluster: { partition: short, timeLimit: "4:00:00" } }
 * const r = resolveClusterResources(clusterSectionOf(study), { memory: "8G" });
 * r.timeLimit; // "4:00:00"; r.memory: "8G"; r.cpusPerTask: 1
 * ```
 */
import { z } from "zod";
import type { NormalizedStudy } from "../normalize.ts";
import { ExecutorError } from "./errors.ts";

/** Slurm time formats: minutes, min:sec, h:min:sec, days-h, days-h:min, days-h:min:sec, or UNLIMITED. */
const TIME_LIMIT =
  /^(?:\d+|\d+:\d{1,2}|\d+:\d{1,2}:\d{1,2}|\d+-\d+|\d+-\d+:\d{1,2}|\d+-\d+:\d{1,2}:\d{1,2}|UNLIMITED|INFINITE)$/;
/** Memory per node as sbatch --mem takes it: an integer with an optional unit K, M (default), G or T. */
const MEMORY = /^\d+[KMGT]?$/;
const NAME = /^[A-Za-z0-9_.+-]+$/;
const NAMES = /^[A-Za-z0-9_.+-]+(?:,[A-Za-z0-9_.+-]+)*$/;
/** An extra sbatch option: "--qos=long" or "#SBATCH --qos=long", on one line (sbatch reads it, not the shell). */
const EXTRA_LINE = /^(?:#SBATCH\s+)?-[^\n\r]*$/;

/** The `run.cluster` section of a study file (every field optional; see `CLUSTER_DEFAULTS`). */
export const clusterSchema = z.strictObject({
  partition: z.string().regex(NAMES, { error: "must be a partition name (or names separated by commas)" })
    .optional().describe("Slurm partition(s), comma-separated (default: the cluster's default partition)."),
  timeLimit: z.union([
    z.string().regex(TIME_LIMIT, {
      error: 'must be a Slurm time limit such as "90", "4:00:00", "1-12:00:00" or "UNLIMITED"',
    }),
    z.int().min(1),
  ]).optional().describe(
    'Wall-clock limit of each array task: minutes, "h:mm:ss" or "days-h:mm:ss" (default "24:00:00"). ' +
      "Make it cover sliceSize realisations.",
  ),
  memory: z.string().regex(MEMORY, { error: 'must be an amount such as "2G", "500M" or "4000" (megabytes)' })
    .optional().describe('Memory per array task, with unit K, M, G or T (default "2G").'),
  cpusPerTask: z.int().min(1).max(1024).optional().describe(
    "CPUs per array task (a count, dimensionless); that many realisations of the task's slice run in parallel (default 1).",
  ),
  account: z.string().regex(NAME, { error: "must be an account name (letters, digits, _ . + -)" }).optional()
    .describe("Slurm account to charge (default: the user's default account)."),
  extraLines: z.array(
    z.string().regex(EXTRA_LINE, {
      error: 'must be one sbatch option starting with "-", such as "--qos=long", on one line',
    }),
  ).optional().describe('Further sbatch options, one per entry, e.g. ["--qos=long", "--constraint=avx2"].'),
  sliceSize: z.int().min(1).optional().describe(
    "Realisations per array task (a count, dimensionless; default: one per task, more when the study has over 1000 to run).",
  ),
  maxConcurrent: z.int().min(1).optional().describe(
    "At most this many array tasks run at the same time (a count, dimensionless; sbatch --array throttle; default: no limit).",
  ),
}).describe(
  "Resources of `spindrift run --cluster` (never part of a hash: results do not depend on them).",
);

/** The `run.cluster` section as written (fields optional). */
export type ClusterSettings = z.infer<typeof clusterSchema>;

/** Resources after defaults: what the sbatch script uses. */
export interface ClusterResources {
  readonly partition?: string;
  readonly timeLimit: string;
  readonly memory: string;
  readonly cpusPerTask: number;
  readonly account?: string;
  readonly extraLines: readonly string[];
  readonly sliceSize?: number;
  readonly maxConcurrent?: number;
}

export const CLUSTER_DEFAULTS: ClusterResources = {
  timeLimit: "24:00:00",
  memory: "2G",
  cpusPerTask: 1,
  extraLines: [],
};

/** Command-line names of the settings, for messages. */
const FLAG_NAMES: Readonly<Record<keyof ClusterSettings, string>> = {
  partition: "--partition",
  timeLimit: "--time-limit",
  memory: "--memory",
  cpusPerTask: "--cpus-per-task",
  account: "--account",
  extraLines: "--sbatch-line",
  sliceSize: "--slice-size",
  maxConcurrent: "--max-concurrent",
};

/**
 * The study's `run.cluster` section, when the study format has one and the study sets it; validated.
 * @throws ExecutorError when the section is present but invalid (the study loader normally refuses it first).
 */
export function clusterSectionOf(study: NormalizedStudy): ClusterSettings | undefined {
  const section = (study.run as { readonly cluster?: unknown }).cluster;
  if (section === undefined) return undefined;
  const parsed = clusterSchema.safeParse(section);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new ExecutorError(
      `run.cluster.${issue.path.join(".")} in the study: ${issue.message}`,
      "fix the study file and check it with: spindrift check STUDY.yaml",
    );
  }
  return parsed.data;
}

/**
 * Checks settings given as command-line flags (undefined = not given); messages name the flag.
 * @throws ExecutorError naming the flag and what it accepts.
 */
export function checkClusterFlags(flags: ClusterSettings): ClusterSettings {
  const given = Object.fromEntries(Object.entries(flags).filter(([, v]) => v !== undefined));
  const parsed = clusterSchema.safeParse(given);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const key = issue.path[0] as keyof ClusterSettings;
    const value = given[key];
    throw new ExecutorError(
      `${FLAG_NAMES[key] ?? String(key)} ${
        JSON.stringify(Array.isArray(value) ? value[issue.path[1] as number] : value)
      }: ` +
        issue.message,
    );
  }
  return parsed.data;
}

/** Defaults, then the study's section, then flags. */
export function resolveClusterResources(
  fromStudy: ClusterSettings | undefined,
  fromFlags: ClusterSettings = {},
): ClusterResources {
  const merged: Record<string, unknown> = { ...CLUSTER_DEFAULTS };
  for (const source of [fromStudy ?? {}, fromFlags]) {
    for (const [k, v] of Object.entries(source)) if (v !== undefined) merged[k] = v;
  }
  const timeLimit = merged.timeLimit;
  return { ...merged, timeLimit: String(timeLimit) } as unknown as ClusterResources;
}
