/**
 * Executors other than the local worker pool: running a study as a Slurm job array and folding the results
 * back. The public door of `study/executors/`.
 *
 * ```
 *  spindrift run STUDY --cluster                 submit.ts: plan → still to compute → slices → manifest + script
 *        │ sbatch --array                                   → sbatch (slurm.ts)
 *        ▼
 *  array task k: spindrift run-slice MANIFEST    shard.ts: frozen study → slice k → executeRealisation → shard DB
 *        │ shard-<job>-<k>.sqlite
 *        ▼
 *  spindrift collect STUDY                       collect.ts: each shard checked, merged (store/merge.ts)
 *  spindrift status DB                           cluster_progress.ts: database + shards + queue, per point
 * ```
 *
 * @example
 * ```ts
 * import { collectStudy, slurmCommands, submitStudy } from "./study/executors/mod.ts";
 * ```
 */
export { ExecutorError } from "./errors.ts";
export {
  checkClusterFlags,
  CLUSTER_DEFAULTS,
  type ClusterResources,
  clusterSchema,
  clusterSectionOf,
  type ClusterSettings,
  resolveClusterResources,
} from "./slurm_schema.ts";
export { type BatchSystem, BatchSystemError, type QueueSnapshot, slurmCommands } from "./slurm.ts";
export { renderSbatchScript, type SbatchScriptInput } from "./sbatch_script.ts";
export { chooseSliceSize, sliceList } from "./slices.ts";
export {
  defaultResultsDir,
  listShards,
  listSubmissions,
  readManifest,
  type SubmissionManifest,
} from "./submission.ts";
export { type SubmitOptions, type SubmitReport, submitStudy, waitForJob } from "./submit.ts";
export { executeSlice, runSliceTask, type SliceOptions, type SliceReport } from "./shard.ts";
export { type CollectOptions, type CollectReport, collectStudy, tryQueue } from "./collect.ts";
export {
  explainMissing,
  inFlightKeys,
  type MissingReport,
  type PointProgress,
  pointProgress,
  readRealisationRefs,
  readShardRefs,
} from "./cluster_progress.ts";
export { type ClusterStatus, clusterStatus, type JobSummary } from "./cluster_status.ts";
export {
  checkExecutorOptions,
  clusterRunCommand,
  type ClusterRunFlags,
  clusterStatusLines,
  clusterStatusText,
  collectCommand,
  type CommandEnv,
  type ExecutorOptions,
  runSliceCommand,
} from "./commands.ts";
