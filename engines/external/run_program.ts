/**
 * Runs one realisation's program: prepares its work folder, starts the program directly (argument vector, no
 * shell unless the study asked for one), enforces the time limit, keeps the last bytes of its standard output
 * and error in memory and the whole streams in the work folder, and reports how it ended.
 *
 * Stopping: at the time limit the program gets SIGTERM, then SIGKILL after the grace period. When the runner
 * stops a study (Ctrl-C, SIGTERM) it terminates its workers, and Deno then kills each worker's running child
 * with SIGKILL, so no program outlives its realisation. A process that the program itself starts is the
 * program's to stop (wrapper scripts should `exec` the real program); if such a process keeps the output pipes
 * open after the program has exited, reading stops after a short drain period and the record says so.
 *
 * @example
 * ```ts
 * await prepareWorkFolder(invocation);
 * const result = await runProgram(invocation, { timeoutSeconds: 60, killGraceSeconds: 5 });
 * result.exitCode; // 0
 * ```
 */
import { dirname, join } from "node:path";
import { EngineFailure, RealisationStopped, type StopRequest } from "../contract.ts";
import type { Invocation } from "./invocation.ts";
import { STDERR_LOG, STDOUT_LOG } from "./params.ts";
import { TailBuffer, type TailText } from "./tail.ts";

/** Bytes of each stream kept in memory (and in the realisation's record). */
export const TAIL_BYTES = 2048;

/** How one program run ended. */
export interface ProgramResult {
  /** Exit code, or null when a signal ended the program. */
  readonly exitCode: number | null;
  /** The signal that ended the program (e.g. "SIGSEGV"), or null. */
  readonly signal: Deno.Signal | null;
  /** Its number (Linux numbering as reported by the system: exit status − 128), or 0. */
  readonly signalNumber: number;
  /** True when spindrift stopped the program at its time limit. */
  readonly timedOut: boolean;
  /** Wall-clock seconds from start to exit. */
  readonly wallSeconds: number;
  readonly stdout: TailText;
  readonly stderr: TailText;
  /** True when the output pipes stayed open after the program exited (a process it started still ran). */
  readonly pipesLeftOpen: boolean;
}

/** Options of {@link runProgram}. */
export interface RunProgramOptions {
  /** Wall-clock limit (s). */
  readonly timeoutSeconds: number;
  /** Seconds between SIGTERM and SIGKILL at the limit. */
  readonly killGraceSeconds: number;
  /** Milliseconds to wait for the output pipes to close after the program exited (default 2000). */
  readonly drainMilliseconds?: number;
  /** The run's stop request: once set, the program gets SIGTERM (SIGKILL after the grace period). */
  readonly stop?: StopRequest;
}

/** How often a running program's realisation looks at the stop request. */
const STOP_POLL_MS = 100;

/**
 * Creates the invocation's work folder empty (removing what an earlier, interrupted attempt left) and writes
 * its input files.
 *
 * @throws EngineFailure "invalid-state" when the folder or a file cannot be written.
 */
export async function prepareWorkFolder(inv: Invocation): Promise<void> {
  try {
    await Deno.remove(inv.workFolder, { recursive: true });
  } catch (e) {
    if (!(e instanceof Deno.errors.NotFound)) {
      throw new EngineFailure(
        "invalid-state",
        `cannot clear the work folder ${inv.workFolder}: ${(e as Error).message}`,
      );
    }
  }
  try {
    await Deno.mkdir(inv.workFolder, { recursive: true });
    for (const f of inv.inputFiles) {
      const path = join(inv.workFolder, f.name);
      await Deno.mkdir(dirname(path), { recursive: true });
      await Deno.writeTextFile(path, f.content);
    }
    await Deno.mkdir(dirname(inv.outputFile), { recursive: true });
  } catch (e) {
    throw new EngineFailure(
      "invalid-state",
      `cannot prepare the work folder ${inv.workFolder}: ${(e as Error).message}`,
    );
  }
}

async function writeAll(file: Deno.FsFile, chunk: Uint8Array): Promise<void> {
  let off = 0;
  while (off < chunk.length) off += await file.write(chunk.subarray(off));
}

/** Copies a stream into a log file and a tail buffer until it ends or is cancelled. */
async function pump(
  reader: ReadableStreamDefaultReader<Uint8Array>,
  log: Deno.FsFile,
  tail: TailBuffer,
): Promise<void> {
  for (;;) {
    let r: ReadableStreamReadResult<Uint8Array>;
    try {
      r = await reader.read();
    } catch {
      return; // cancelled
    }
    if (r.done) return;
    tail.write(r.value);
    await writeAll(log, r.value);
  }
}

function spawnFailure(e: unknown, inv: Invocation): never {
  const exe = inv.argv[0];
  if (e instanceof Deno.errors.NotCapable || e instanceof Deno.errors.PermissionDenied) {
    if (e instanceof Deno.errors.PermissionDenied && !/run access|--allow-run/.test((e as Error).message)) {
      throw new EngineFailure("program-failed", `cannot start ${exe}: permission denied by the system`);
    }
    throw new EngineFailure(
      "program-failed",
      `spindrift may not start ${exe}: programs run only with permission. Start spindrift with ./spindrift, ` +
        `which grants it for the study's own program, or add --allow-run=${exe} to the deno command line`,
    );
  }
  if (e instanceof Deno.errors.NotFound) {
    throw new EngineFailure("program-failed", `cannot start ${exe}: no such file`);
  }
  throw new EngineFailure("program-failed", `cannot start ${exe}: ${(e as Error)?.message ?? String(e)}`);
}

function tryKill(child: Deno.ChildProcess, signal: Deno.Signal): void {
  try {
    child.kill(signal);
  } catch {
    // Already exited.
  }
}

/**
 * Runs the invocation in its (prepared) work folder and waits for it to end; never throws for a program that
 * fails (the result says how it ended), only when it cannot be started.
 *
 * @throws EngineFailure "program-failed" when the program cannot be started (missing, not permitted),
 * "invalid-state" when the work folder cannot be written.
 */
export async function runProgram(inv: Invocation, options: RunProgramOptions): Promise<ProgramResult> {
  const logOptions = { write: true, create: true, truncate: true };
  let outLog: Deno.FsFile;
  let errLog: Deno.FsFile;
  try {
    outLog = await Deno.open(join(inv.workFolder, STDOUT_LOG), logOptions);
    errLog = await Deno.open(join(inv.workFolder, STDERR_LOG), logOptions);
  } catch (e) {
    throw new EngineFailure(
      "invalid-state",
      `cannot write into the work folder ${inv.workFolder}: ${(e as Error).message}`,
    );
  }
  const started = performance.now();
  let child: Deno.ChildProcess;
  try {
    child = new Deno.Command(inv.argv[0], {
      args: inv.argv.slice(1),
      cwd: inv.workFolder,
      env: { ...inv.environment },
      stdin: "null",
      stdout: "piped",
      stderr: "piped",
    }).spawn();
  } catch (e) {
    outLog.close();
    errLog.close();
    spawnFailure(e, inv);
  }
  const outTail = new TailBuffer(TAIL_BYTES);
  const errTail = new TailBuffer(TAIL_BYTES);
  const outReader = child.stdout.getReader();
  const errReader = child.stderr.getReader();
  const pumps = Promise.all([pump(outReader, outLog, outTail), pump(errReader, errLog, errTail)]);

  let timedOut = false;
  let stopped = false;
  let killTimer: ReturnType<typeof setTimeout> | undefined;
  const terminate = () => {
    tryKill(child, "SIGTERM");
    killTimer = setTimeout(() => tryKill(child, "SIGKILL"), options.killGraceSeconds * 1000);
  };
  const limitTimer = setTimeout(() => {
    timedOut = true;
    terminate();
  }, options.timeoutSeconds * 1000);
  const stopPoll = options.stop === undefined ? undefined : setInterval(() => {
    if (stopped || !options.stop!.requested) return;
    stopped = true;
    clearTimeout(limitTimer);
    terminate();
  }, STOP_POLL_MS);
  let status: Deno.CommandStatus;
  try {
    status = await child.status;
  } finally {
    clearTimeout(limitTimer);
    clearInterval(stopPoll);
    if (killTimer !== undefined) clearTimeout(killTimer);
  }
  const wallSeconds = (performance.now() - started) / 1000;

  // Drain what the pipes still hold; a process the program started may keep them open, so stop waiting.
  let drainTimer: ReturnType<typeof setTimeout> | undefined;
  const drained = await Promise.race([
    pumps.then(() => true),
    new Promise<boolean>((r) => drainTimer = setTimeout(() => r(false), options.drainMilliseconds ?? 2000)),
  ]);
  clearTimeout(drainTimer);
  if (!drained) {
    await Promise.all([outReader.cancel().catch(() => {}), errReader.cancel().catch(() => {})]);
    await pumps;
  }
  outLog.close();
  errLog.close();
  if (stopped) throw new RealisationStopped();
  const signal = status.signal;
  return {
    exitCode: signal === null ? status.code : null,
    signal,
    signalNumber: signal === null ? 0 : status.code > 128 ? status.code - 128 : 0,
    timedOut,
    wallSeconds,
    stdout: outTail.text(),
    stderr: errTail.text(),
    pipesLeftOpen: !drained,
  };
}
