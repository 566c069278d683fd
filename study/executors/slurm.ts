/**
 * Talking to Slurm: submit a script with `sbatch`, list the user's array tasks with `squeue`. The only place
 * that starts processes. Needs Deno's run permission for exactly these two programs
 * (`--allow-run=sbatch,squeue`, which the `./spindrift` launcher grants to the cluster commands only).
 *
 * `BatchSystem` is the seam for tests: they pass a fake; the command line passes `slurmCommands()`.
 *
 * @example
 * ```ts
 * const slurm = slurmCommands();
 * const jobId = await slurm.submit("/scratch/film-cluster/20261201T101500Z/job.sbatch"); // "4711"
 * const queue = await slurm.queue(); // Map { "4711" => Map { 0 => "RUNNING", 1 => "PENDING", … } }
 * ```
 */
import { ExecutorError } from "./errors.ts";

/** Array job id → task index → Slurm state (PENDING, RUNNING, COMPLETING, …). */
export type QueueSnapshot = ReadonlyMap<string, ReadonlyMap<number, string>>;

export interface BatchSystem {
  /** Submits a script; returns the job id. */
  submit(scriptPath: string): Promise<string>;
  /** The current user's array tasks still known to the scheduler. */
  queue(): Promise<QueueSnapshot>;
}

/** A batch-system command could not be run or refused the request. */
export class BatchSystemError extends ExecutorError {
  constructor(message: string, hint?: string) {
    super(message, hint);
    this.name = "BatchSystemError";
  }
}

/** Task states that mean "will still run or is running". */
export function isActiveState(state: string): "queued" | "running" | null {
  if (
    /^(PENDING|REQUEUED|REQUEUE_HOLD|REQUEUE_FED|RESV_DEL_HOLD|CONFIGURING|SUSPENDED|STOPPED)$/.test(state)
  ) {
    return "queued";
  }
  if (/^(RUNNING|COMPLETING|SIGNALING|STAGE_OUT|RESIZING)$/.test(state)) return "running";
  return null;
}

async function runCommand(
  program: string,
  args: string[],
): Promise<{ code: number; out: string; err: string }> {
  let result: Deno.CommandOutput;
  try {
    result = await new Deno.Command(program, { args, stdout: "piped", stderr: "piped", stdin: "null" })
      .output();
  } catch (e) {
    if (e instanceof Deno.errors.NotFound) {
      throw new BatchSystemError(
        `${program} was not found on PATH: this machine is not a Slurm submit host`,
        "run on your cluster's login node, or start a local test cluster with tools/slurm/start.sh",
      );
    }
    if (e instanceof Deno.errors.NotCapable || e instanceof Deno.errors.PermissionDenied) {
      throw new BatchSystemError(
        `spindrift has no permission to run ${program}`,
        "use the ./spindrift launcher (it allows sbatch and squeue for the cluster commands), or add " +
          "--allow-run=sbatch,squeue to deno run",
      );
    }
    throw new BatchSystemError(`cannot run ${program}: ${(e as Error).message}`);
  }
  const dec = new TextDecoder();
  return { code: result.code, out: dec.decode(result.stdout), err: dec.decode(result.stderr).trim() };
}

/** Parses `squeue -h -r -o "%F|%K|%T"` output. Non-array jobs (task "N/A") are left out. */
export function parseQueue(text: string): QueueSnapshot {
  const jobs = new Map<string, Map<number, string>>();
  for (const line of text.split("\n")) {
    const [job, task, state] = line.trim().split("|");
    if (!job || !task || !state || !/^\d+$/.test(task)) continue;
    let tasks = jobs.get(job);
    if (!tasks) jobs.set(job, tasks = new Map());
    tasks.set(Number(task), state);
  }
  return jobs;
}

/** The job id in `sbatch --parsable` output ("4711" or "4711;cluster"). */
export function parseJobId(text: string): string {
  const id = text.trim().split("\n").pop()?.split(";")[0].trim() ?? "";
  if (!/^\d+$/.test(id)) {
    throw new BatchSystemError(`sbatch answered without a job id: ${JSON.stringify(text)}`);
  }
  return id;
}

/** The real Slurm commands. */
export function slurmCommands(): BatchSystem {
  return {
    async submit(scriptPath) {
      const r = await runCommand("sbatch", ["--parsable", scriptPath]);
      if (r.code !== 0) {
        throw new BatchSystemError(
          `sbatch refused the job: ${r.err || `exit code ${r.code}`}`,
          "check the resources (--partition, --time-limit, --memory, --account) against your cluster's limits",
        );
      }
      return parseJobId(r.out);
    },
    async queue() {
      const r = await runCommand("squeue", ["--me", "-h", "-r", "-o", "%F|%K|%T"]);
      if (r.code !== 0) throw new BatchSystemError(`squeue failed: ${r.err || `exit code ${r.code}`}`);
      return parseQueue(r.out);
    },
  };
}
