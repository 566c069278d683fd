/**
 * The external-program engines: each realisation runs the group's own simulation program (Fortran, C++,
 * Python, …) and imports what it wrote, so sweeps, seeded ensembles, resume, the database, confidence intervals
 * and reports work for it exactly as for the built-in engines.
 *
 * Per realisation (in a worker):
 *
 *   params + seed ──prepareInvocation──▶ argv, environment, input files, work folder, output path
 *        ──prepareWorkFolder──▶ empty work folder with the input files
 *        ──runProgram──▶ exit code / signal / timeout, stdout and stderr tails       ──▶ event "program-run"
 *        ──imported-data engine──▶ frames and "track-end" events (same readers, column mapping and checks)
 *
 * Two engines share this code, as the imported-data engines do, because capabilities are static:
 * `external-program-2d` (2D point-vortex tracks) and `external-program-3d` (3D filament snapshots).
 *
 * Failures end only their own realisation, with the reason: "timeout" (past `timeoutSeconds`; the program is
 * stopped), "program-failed" (it could not start, exited nonzero, crashed on a signal, or wrote no output),
 * "killed" (ended from outside by SIGINT/SIGTERM/SIGHUP/SIGKILL), "invalid-state" (its output cannot be read:
 * the message names file, row and column). The error text carries the exit status, the program's last output
 * lines, the command line and the work folder.
 *
 * Record ("program-run" event at t = 0, stored with the realisation whether it succeeds or fails):
 * - `data` (numbers): exit_code (−1 after a signal), signal (number, 0 if none), timed_out (0/1), stdout_bytes,
 *   stderr_bytes, seed_high, seed_low (the 32-bit halves of {seed}), index;
 * - `detail` (text): argv (exactly as started), command (the same, shell-quoted), environment (the additions),
 *   work_folder, program (as written), version (command.version or null), seed (decimal), input_files, output,
 *   signal_name, stdout_tail, stderr_tail (last 2 KiB each), pipes_left_open.
 * Wall time: the realisation's `wall_seconds`. Nothing time-dependent goes into the event or the error text, so
 * repeated, resumed and cluster runs store identical records (for a program that is itself deterministic).
 *
 * @example
 * ```ts
 * import { externalProgram2dEngine } from "./engine.ts";
 * const params = externalProgram2dEngine.paramsSchema.parse({
 *   command: { program: "./sim", args: ["--seed", "{seed}", "--out", "{output}"] },
 *   output: { file: "tracks.csv" },
 *   timeoutSeconds: 600,
 * });
 * await externalProgram2dEngine.run({ params, controls, rng, realisationIndex: 0, baseDirectory: "." }, sink);
 * ```
 */
import { relative } from "node:path";
import {
  type Engine,
  type EngineCapabilities,
  type EngineEvent,
  EngineFailure,
  type EngineRunInput,
  type EngineRunSummary,
  type FailureKind,
  type FrameSink,
} from "../contract.ts";
import {
  filaments3dParamsSchema,
  importedFilaments3dEngine,
  importedTracks2dEngine,
  lengthInStudyUnits,
  studyUnitLabels,
  tracks2dParamsSchema,
} from "../imported/mod.ts";
import { type Invocation, prepareInvocation } from "./invocation.ts";
import { commandLine, environmentWords } from "./program_path.ts";
import { EXTERNAL_2D_ID, EXTERNAL_3D_ID } from "./ids.ts";
import {
  type External2dParams,
  external2dParamsSchema,
  type External3dParams,
  external3dParamsSchema,
  type ExternalParams,
} from "./params.ts";
import { prepareWorkFolder, type ProgramResult, runProgram } from "./run_program.ts";
import { lastLines } from "./tail.ts";
import { EXTERNAL_2D_STARTER, EXTERNAL_3D_STARTER } from "./starter.ts";

/** Version of both external-program engines (bumped when the same program output could give other frames). */
export const EXTERNAL_ENGINE_VERSION = "1.0.0";

const UNITS = {
  length: "study length unit (parameters.units.length; as in the program's output when no units are given)",
  time: "study time unit (parameters.units.time, or ℓ²/κ with parameters.units.kappa)",
  circulation: "κ",
} as const;

const PROGRAM_RUN =
  "the realisation's program ran (t = 0; data: exit_code, signal, timed_out, stdout_bytes, stderr_bytes, " +
  "seed_high, seed_low, index; detail: argv, command, environment, work_folder, version, seed, input and " +
  "output files, stdout_tail, stderr_tail)";

/** Signals that mean the program was stopped from outside rather than crashed. */
const STOP_SIGNALS: readonly string[] = ["SIGINT", "SIGTERM", "SIGHUP", "SIGKILL"];

function programRunEvent(inv: Invocation, r: ProgramResult): EngineEvent {
  return {
    t: 0,
    kind: "program-run",
    ids: [],
    data: {
      exit_code: r.exitCode ?? -1,
      signal: r.signalNumber,
      timed_out: r.timedOut ? 1 : 0,
      stdout_bytes: r.stdout.bytes,
      stderr_bytes: r.stderr.bytes,
      seed_high: inv.seed.high,
      seed_low: inv.seed.low,
      index: inv.index,
    },
    detail: {
      argv: [...inv.argv],
      command: commandLine(inv.argv),
      environment: { ...inv.environment },
      work_folder: inv.workFolder,
      program: inv.program,
      version: inv.version ?? null,
      seed: inv.seed.text,
      input_files: inv.inputFiles.map((f) => f.name),
      output: inv.outputFile,
      signal_name: r.signal,
      stdout_tail: r.stdout.text,
      stderr_tail: r.stderr.text,
      pipes_left_open: r.pipesLeftOpen,
    },
  };
}

/** "…; last output (stderr): a | b; command: …; work folder: … (kept)" for error texts. */
function context(inv: Invocation, r: ProgramResult | null, kept: boolean): string {
  const parts: string[] = [];
  if (r !== null) {
    const stream = r.stderr.text.trim() !== "" ? "stderr" : r.stdout.text.trim() !== "" ? "stdout" : null;
    if (stream !== null) {
      const text = lastLines(stream === "stderr" ? r.stderr.text : r.stdout.text, 6, 600);
      parts.push(`last output (${stream}): ${text.split("\n").map((l) => l.trimEnd()).join(" | ")}`);
    } else parts.push("no output on stdout or stderr");
    if (r.pipesLeftOpen) parts.push("a process started by the program kept its output open after it exited");
  }
  parts.push(`command: ${commandLine(inv.argv)}`);
  parts.push(`work folder: ${inv.workFolder}${kept ? " (kept)" : ""}`);
  return parts.join("; ");
}

/** The failure a finished program run means, or null when it exited with 0. */
function runFailure(
  inv: Invocation,
  r: ProgramResult,
  p: ExternalParams,
  kept: boolean,
): EngineFailure | null {
  let kind: FailureKind;
  let what: string;
  if (r.timedOut) {
    kind = "timeout";
    const how = r.signal === "SIGKILL" ? `SIGTERM, then SIGKILL after ${p.killGraceSeconds} s` : "SIGTERM";
    what = `the program ran past timeoutSeconds = ${p.timeoutSeconds} s and was stopped (${how})`;
  } else if (r.signal !== null) {
    kind = STOP_SIGNALS.includes(r.signal) ? "killed" : "program-failed";
    const number = r.signalNumber > 0 ? ` (${r.signalNumber})` : "";
    what = `the program was ended by signal ${r.signal}${number}`;
  } else if (r.exitCode !== 0) {
    kind = "program-failed";
    what = `the program exited with code ${r.exitCode}`;
  } else return null;
  return new EngineFailure(kind, `${what}; ${context(inv, r, kept)}`);
}

async function filesIn(folder: string): Promise<string[]> {
  const names: string[] = [];
  try {
    for await (const e of Deno.readDir(folder)) names.push(e.isDirectory ? `${e.name}/` : e.name);
  } catch {
    // Listing is only for the message.
  }
  return names.sort();
}

async function checkOutputWritten(inv: Invocation, r: ProgramResult, kept: boolean): Promise<void> {
  let exists = false;
  try {
    await Deno.stat(inv.outputFile);
    exists = true;
  } catch (e) {
    if (!(e instanceof Deno.errors.NotFound)) throw e;
  }
  if (exists) return;
  const names = await filesIn(inv.workFolder);
  const listing = names.length === 0 ? "the folder is empty" : `the folder holds ${names.join(", ")}`;
  throw new EngineFailure(
    "program-failed",
    `the program exited with code 0 but wrote no output file ` +
      `'${relative(inv.workFolder, inv.outputFile)}' (${listing}); ${context(inv, r, kept)}`,
  );
}

function defined(o: Record<string, unknown>): Record<string, unknown> {
  return Object.fromEntries(Object.entries(o).filter(([, v]) => v !== undefined));
}

/** Reads the program's output with the imported-data engine of the same dimension. */
async function importOutput(
  dimension: 2 | 3,
  inv: Invocation,
  input: EngineRunInput<ExternalParams>,
  sink: FrameSink,
): Promise<EngineRunSummary> {
  const p = input.params;
  const source = defined({
    file: inv.outputFile,
    format: p.output.format,
    delimiter: p.output.delimiter,
    comment: p.output.comment,
    header: p.output.header,
    group: inv.outputGroup,
  });
  const base = { source, columns: p.columns, units: p.units, timing: p.timing };
  const run = { controls: input.controls, rng: input.rng, realisationIndex: 0 };
  if (dimension === 2) {
    const parsed = tracks2dParamsSchema.safeParse(base);
    if (!parsed.success) {
      throw new EngineFailure("invalid-state", `output settings: ${parsed.error.issues[0].message}`);
    }
    return await importedTracks2dEngine.run({ ...run, params: parsed.data }, sink);
  }
  const p3 = p as External3dParams;
  const parsed = filaments3dParamsSchema.safeParse(
    defined({ ...base, coreRadius: p3.coreRadius, markersWithoutColumn: p3.markersWithoutColumn }),
  );
  if (!parsed.success) {
    throw new EngineFailure("invalid-state", `output settings: ${parsed.error.issues[0].message}`);
  }
  return await importedFilaments3dEngine.run({ ...run, params: parsed.data }, sink);
}

async function cleanUp(inv: Invocation, keep: ExternalParams["keepWorkFolders"], ok: boolean): Promise<void> {
  if (keep === "always" || (!ok && keep === "failed")) return;
  try {
    await Deno.remove(inv.workFolder, { recursive: true });
  } catch {
    // Best effort: the next attempt of this realisation empties the folder anyway.
  }
}

async function runExternal(
  dimension: 2 | 3,
  engineId: string,
  input: EngineRunInput<ExternalParams>,
  sink: FrameSink,
): Promise<EngineRunSummary> {
  const p = input.params;
  const inv = await prepareInvocation(engineId, input);
  const keptOnFailure = p.keepWorkFolders !== "never";
  let ok = false;
  try {
    await prepareWorkFolder(inv);
    const result = await runProgram(inv, { ...p, stop: input.stop });
    sink.event(programRunEvent(inv, result));
    const failure = runFailure(inv, result, p, keptOnFailure);
    if (failure !== null) throw failure;
    await checkOutputWritten(inv, result, keptOnFailure);
    let summary: EngineRunSummary;
    try {
      summary = await importOutput(dimension, inv, input, sink);
    } catch (e) {
      if (!(e instanceof EngineFailure)) throw e;
      throw new EngineFailure(
        e.kind,
        `in the program's output: ${e.message}; ${context(inv, null, keptOnFailure)}`,
        e.t,
      );
    }
    ok = true;
    return summary;
  } finally {
    await cleanUp(inv, p.keepWorkFolders, ok);
  }
}

/** Lines for `spindrift check`: the exact command realisation `input.realisationIndex` would run. */
async function describeExternal(
  dimension: 2 | 3,
  engineId: string,
  input: EngineRunInput<ExternalParams>,
): Promise<string[]> {
  const p = input.params;
  const inv = await prepareInvocation(engineId, input);
  const kept = { failed: "kept if it fails", always: "kept afterwards", never: "removed afterwards" }[
    p.keepWorkFolders
  ];
  const lines = [
    `realisation ${inv.index} would run in ${inv.workFolder} (created empty; ${kept}):`,
    `  ${commandLine(inv.argv)}`,
  ];
  if (inv.shell) lines.push("  (through /bin/sh, as command.shell: true asks)");
  lines.push(`  environment additions: ${environmentWords(inv.environment).join(" ")}`);
  for (const f of inv.inputFiles) {
    const n = f.content.split("\n").length - (f.content.endsWith("\n") ? 1 : 0);
    lines.push(`  input file ${f.name} (from ${f.source}, ${n} line${n === 1 ? "" : "s"})`);
  }
  const what = dimension === 2 ? "2D vortex tracks" : "3D filament snapshots";
  lines.push(`  output ${inv.outputFile}, read as ${what}`);
  lines.push(`  time limit ${p.timeoutSeconds} s (then SIGTERM, and SIGKILL ${p.killGraceSeconds} s later)`);
  lines.push(`  needs permission to start ${inv.argv[0]} (./spindrift run grants exactly this)`);
  return lines;
}

const capabilities2d: EngineCapabilities = {
  dimension: 2,
  fields: ["circulation"],
  objects: "vortex",
  events: { ...importedTracks2dEngine.capabilities.events, "program-run": PROGRAM_RUN },
  diagnostics: {},
  units: UNITS,
};

const capabilities3d: EngineCapabilities = {
  dimension: 3,
  fields: ["loop", "marker"],
  objects: "filament-point",
  events: { ...importedFilaments3dEngine.capabilities.events, "program-run": PROGRAM_RUN },
  diagnostics: {},
  units: UNITS,
};

/** Runs a program per realisation and imports its 2D point-vortex tracks. */
/** The template files of the input files (their contents shape every run; the program has its `version`). */
function templateFiles(p: ExternalParams): string[] {
  return p.inputFiles.flatMap((f) => f.template === undefined ? [] : [f.template]);
}

export const externalProgram2dEngine: Engine<External2dParams> = {
  id: EXTERNAL_2D_ID,
  version: EXTERNAL_ENGINE_VERSION,
  title: "Your own program, run per realisation (2D vortex tracks read from its output)",
  capabilities: capabilities2d,
  paramsSchema: external2dParamsSchema,
  starter: EXTERNAL_2D_STARTER,
  scales: (params) => ({ units: studyUnitLabels(params.units) }),
  run: (input, sink) => runExternal(2, EXTERNAL_2D_ID, input, sink),
  inputFiles: templateFiles,
  describeRealisation: (input) => describeExternal(2, EXTERNAL_2D_ID, input),
};

/** Runs a program per realisation and imports its 3D vortex-filament snapshots. */
export const externalProgram3dEngine: Engine<External3dParams> = {
  id: EXTERNAL_3D_ID,
  version: EXTERNAL_ENGINE_VERSION,
  title: "Your own program, run per realisation (3D filament snapshots read from its output)",
  capabilities: capabilities3d,
  paramsSchema: external3dParamsSchema,
  starter: EXTERNAL_3D_STARTER,
  scales: (params) => ({
    coreRadius: lengthInStudyUnits(params.coreRadius, params.units, "coreRadius"),
    units: studyUnitLabels(params.units),
  }),
  run: (input, sink) => runExternal(3, EXTERNAL_3D_ID, input, sink),
  inputFiles: templateFiles,
  describeRealisation: (input) => describeExternal(3, EXTERNAL_3D_ID, input),
};
