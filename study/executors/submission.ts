/**
 * The results folder of cluster runs and the submissions in it. Everything an array task needs is written
 * there at submission, so editing the study file afterwards cannot change a queued or running job:
 *
 * ```
 * <results>/                          default: "<database name>-cluster/" next to the database
 *   study-<hash 16>.yaml              the study text as submitted (one per study hash)
 *   <submission id>/                  one per submission, e.g. 20261201T101500Z (UTC; sorts by time)
 *     manifest.json                   study hash, engine, resources, the realisation keys of every slice, job id
 *     job.sbatch                      the job-array script that was submitted
 *     task-<job>_<task>.log           output of each array task
 *     shard-<job>-<task>.sqlite       the task's own database (collected with `spindrift collect`)
 * ```
 *
 * Only the submitting command writes manifests; each array task writes only its own shard and log, so no file
 * is shared between writers (no locking over network file systems).
 *
 * @example
 * ```ts
 * const dir = defaultResultsDir("/data/film.sqlite"); // "/data/film-cluster"
 * const { manifests } = listSubmissions(dir);
 * ```
 */
import { basename, dirname, extname, join, resolve } from "node:path";
import { z } from "zod";
import { parseStudyText } from "../load.ts";
import { formatProblems } from "../problems.ts";
import { type NormalizedStudy, normalizeStudy } from "../normalize.ts";
import { sha256Hex } from "../hash.ts";
import { ExecutorError } from "./errors.ts";

/** Version of the manifest format; bump on incompatible changes. */
export const MANIFEST_FORMAT = 1;

/** The cluster results folder used when none is given: "<database without extension>-cluster". */
export function defaultResultsDir(dbPath: string): string {
  const abs = resolve(dbPath);
  const ext = extname(abs);
  return join(dirname(abs), `${basename(abs, ext)}-cluster`);
}

/** File name of the frozen study copy for a study hash. */
export function studyCopyName(studyHash: string): string {
  return `study-${studyHash.slice(0, 16)}.yaml`;
}

/** Paths of one submission. */
export interface SubmissionPaths {
  readonly dir: string;
  readonly manifest: string;
  readonly script: string;
  /** sbatch --output pattern (%A job id, %a task index). */
  readonly logPattern: string;
}

export function submissionPaths(resultsDir: string, id: string): SubmissionPaths {
  const dir = join(resolve(resultsDir), id);
  return {
    dir,
    manifest: join(dir, "manifest.json"),
    script: join(dir, "job.sbatch"),
    logPattern: join(dir, "task-%A_%a.log"),
  };
}

/** Shard file of an array task. */
export function shardFileName(jobId: string, task: number): string {
  return `shard-${jobId}-${task}.sqlite`;
}

/** Log file of an array task (what sbatch makes of `logPattern`). */
export function logFileName(jobId: string, task: number): string {
  return `task-${jobId}_${task}.log`;
}

const HEX = /^[0-9a-f]+$/;

const sliceEntrySchema = z.strictObject({
  key: z.string().regex(HEX),
  pointHash: z.string().regex(HEX),
  index: z.int().min(0),
});

/** manifest.json of a submission. */
export const manifestSchema = z.strictObject({
  format: z.literal(MANIFEST_FORMAT),
  id: z.string().min(1),
  studyName: z.string(),
  studyHash: z.string().regex(HEX),
  engine: z.strictObject({ id: z.string(), version: z.string() }),
  /** Frozen study copy, relative to the results folder. */
  studyFile: z.string().min(1),
  studyTextSha256: z.string().regex(HEX),
  /** Where the study file was when submitted: relative paths inside it resolve against its folder. */
  sourcePath: z.string(),
  database: z.string(),
  toolVersion: z.string(),
  createdAt: z.string(),
  resources: z.strictObject({
    partition: z.string().optional(),
    timeLimit: z.string(),
    memory: z.string(),
    cpusPerTask: z.int().min(1),
    account: z.string().optional(),
    extraLines: z.array(z.string()),
    sliceSize: z.int().min(1).optional(),
    maxConcurrent: z.int().min(1).optional(),
  }),
  sliceSize: z.int().min(1),
  slices: z.array(z.array(sliceEntrySchema).min(1)).min(1),
  /** Set once sbatch has accepted the job. */
  jobId: z.string().nullable(),
});

export type SubmissionManifest = z.infer<typeof manifestSchema>;
export type SliceEntry = z.infer<typeof sliceEntrySchema>;

/** Writes a manifest atomically (temporary file + rename), so a reader never sees half of it. */
export function writeManifest(path: string, manifest: SubmissionManifest): void {
  const tmp = `${path}.tmp`;
  Deno.writeTextFileSync(tmp, JSON.stringify(manifest, null, 1) + "\n");
  Deno.renameSync(tmp, path);
}

/**
 * Reads and checks a manifest.
 * @throws ExecutorError when it is missing, not JSON, or not a manifest of this format.
 */
export function readManifest(path: string): SubmissionManifest {
  let text: string;
  try {
    text = Deno.readTextFileSync(path);
  } catch (e) {
    throw new ExecutorError(`cannot read the submission manifest ${path}: ${(e as Error).message}`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw new ExecutorError(`${path} is not valid JSON: ${(e as Error).message}`);
  }
  const parsed = manifestSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new ExecutorError(
      `${path} is not a spindrift submission manifest of format ${MANIFEST_FORMAT} ` +
        `(${issue.path.join(".") || "top level"}: ${issue.message})`,
      "it was written by another spindrift version or edited by hand; submit again",
    );
  }
  return parsed.data;
}

/** Every readable submission of a results folder (oldest first) and the problems with the others. */
export function listSubmissions(resultsDir: string): {
  manifests: { readonly dir: string; readonly manifest: SubmissionManifest }[];
  problems: string[];
} {
  const manifests: { dir: string; manifest: SubmissionManifest }[] = [];
  const problems: string[] = [];
  for (const name of subfolders(resultsDir)) {
    const paths = submissionPaths(resultsDir, name);
    try {
      Deno.statSync(paths.manifest);
    } catch {
      continue; // not a submission folder
    }
    try {
      manifests.push({ dir: paths.dir, manifest: readManifest(paths.manifest) });
    } catch (e) {
      problems.push((e as Error).message);
    }
  }
  return { manifests, problems };
}

/** Every shard file of a results folder, in a stable order (by submission, then name). */
export function listShards(resultsDir: string): string[] {
  const out: string[] = [];
  for (const name of subfolders(resultsDir)) {
    const dir = join(resolve(resultsDir), name);
    const files: string[] = [];
    for (const e of Deno.readDirSync(dir)) {
      if (e.isFile && /^shard-.+\.sqlite$/.test(e.name)) files.push(join(dir, e.name));
    }
    out.push(...files.sort(byNumbers));
  }
  return out;
}

/** Compares "shard-12-10" after "shard-12-9": digit runs as numbers. */
function byNumbers(a: string, b: string): number {
  return a.localeCompare(b, "en", { numeric: true });
}

function subfolders(resultsDir: string): string[] {
  const names: string[] = [];
  try {
    for (const e of Deno.readDirSync(resultsDir)) if (e.isDirectory) names.push(e.name);
  } catch (e) {
    if (e instanceof Deno.errors.NotFound) return [];
    throw new ExecutorError(`cannot read the results folder ${resultsDir}: ${(e as Error).message}`);
  }
  return names.sort();
}

/** A new submission id from the time (UTC, to the second), unique within the results folder. */
export function newSubmissionId(resultsDir: string, now: Date): string {
  const base = now.toISOString().replace(/[-:]/g, "").replace(/\.\d+Z$/, "Z");
  const taken = new Set(subfolders(resultsDir));
  if (!taken.has(base)) return base;
  for (let i = 2;; i++) if (!taken.has(`${base}-${i}`)) return `${base}-${i}`;
}

/**
 * The study of a submission, from its frozen copy, normalized as at submission time (relative paths resolve
 * against the original study file's folder).
 * @throws ExecutorError when the copy was changed or this build of spindrift gives the study another hash
 * (an engine's version changed since submission).
 */
export function loadSubmittedStudy(resultsDir: string, manifest: SubmissionManifest): NormalizedStudy {
  const copy = join(resolve(resultsDir), manifest.studyFile);
  let text: string;
  try {
    text = Deno.readTextFileSync(copy);
  } catch (e) {
    throw new ExecutorError(`cannot read the submitted study copy ${copy}: ${(e as Error).message}`);
  }
  if (sha256Hex(text) !== manifest.studyTextSha256) {
    throw new ExecutorError(
      `the submitted study copy ${copy} was changed after submission`,
      "submit the study again: spindrift run STUDY.yaml --cluster",
    );
  }
  const loaded = parseStudyText(text, copy);
  if (!loaded.ok) {
    throw new ExecutorError(
      `the submitted study copy ${copy} no longer passes this spindrift's checks:\n` +
        formatProblems(loaded.problems),
    );
  }
  const study = normalizeStudy(loaded.study, { text, sourcePath: manifest.sourcePath });
  if (study.hash !== manifest.studyHash) {
    throw new ExecutorError(
      `this spindrift computes study hash ${study.hash.slice(0, 12)}… for the submitted study, but it was ` +
        `submitted as ${manifest.studyHash.slice(0, 12)}… (engine ${manifest.engine.id} ` +
        `${manifest.engine.version} then, ${study.engine.version} now): the code changed since submission`,
      "results of different engine versions are never mixed; submit the study again",
    );
  }
  return study;
}
