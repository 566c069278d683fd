/**
 * Helpers for the external-program tests: load a study with the external engines available, point its work
 * folders at a temporary folder, and run realisations through the runner's own per-realisation pipeline
 * (`executeRealisation`, the code every worker and cluster task runs).
 */
import type { Engine } from "../../engines/contract.ts";
import { ENGINES } from "../../engines/registry.ts";
import { EXTERNAL_ENGINES } from "../../engines/external/mod.ts";
import { parseStudyText } from "../../study/load.ts";
import { formatProblems } from "../../study/problems.ts";
import { type NormalizedStudy, normalizeStudy } from "../../study/normalize.ts";
import { type PlannedRealisation, planStudy } from "../../study/plan.ts";
import { executeRealisation, type RealisationTask } from "../../study/execute.ts";
import { taskFor } from "../../study/runner.ts";
import type { FrameRow, RealisationOutcome } from "../../store/db.ts";

/** Every registered engine plus the external ones (in case the registry does not list them yet). */
// deno-lint-ignore no-explicit-any
export const ENGINES_WITH_EXTERNAL: readonly Engine<any>[] = [
  ...ENGINES,
  ...EXTERNAL_ENGINES.filter((e) => !ENGINES.some((r) => r.id === e.id)),
];

export const REPO = new URL("../../", import.meta.url).pathname;

/** Loads and normalizes study text as if read from `sourcePath`; throws with every problem listed. */
export function loadStudyText(text: string, sourcePath: string): NormalizedStudy {
  const loaded = parseStudyText(text, sourcePath, { engines: ENGINES_WITH_EXTERNAL });
  if (!loaded.ok) throw new Error(formatProblems(loaded.problems));
  return normalizeStudy(loaded.study, { text, sourcePath, engines: ENGINES_WITH_EXTERNAL });
}

/** The task of one planned realisation, with the work folders moved under `workDirectory`. */
export function externalTask(
  study: NormalizedStudy,
  r: PlannedRealisation,
  workDirectory: string,
): RealisationTask {
  const task = taskFor(study, r);
  return { ...task, params: { ...(task.params as Record<string, unknown>), workDirectory } };
}

/** One realisation's outcome and frames. */
export interface Ran {
  readonly r: PlannedRealisation;
  readonly outcome: RealisationOutcome;
  readonly frames: FrameRow[];
}

/** Runs a task in this thread (as a worker would) and collects its frames. */
export async function runTask(
  task: RealisationTask,
): Promise<{ outcome: RealisationOutcome; frames: FrameRow[] }> {
  const frames: FrameRow[] = [];
  const outcome = await executeRealisation(
    task,
    (f) => frames.push(...f),
    (id) => ENGINES_WITH_EXTERNAL.find((e) => e.id === id),
  );
  return { outcome, frames };
}

/** Runs every planned realisation, `parallel` at a time (programs are separate processes). */
export async function runAll(study: NormalizedStudy, workDirectory: string, parallel = 2): Promise<Ran[]> {
  const plan = planStudy(study);
  const out: Ran[] = new Array(plan.length);
  let next = 0;
  const lane = async () => {
    while (next < plan.length) {
      const i = next++;
      const { outcome, frames } = await runTask(externalTask(study, plan[i], workDirectory));
      out[i] = { r: plan[i], outcome, frames };
    }
  };
  await Promise.all(Array.from({ length: parallel }, lane));
  return out;
}

/** The "program-run" event of an outcome. */
export function programRun(outcome: RealisationOutcome) {
  const e = outcome.events.find((x) => x.kind === "program-run");
  if (e === undefined) throw new Error(`no program-run event (status ${outcome.status}: ${outcome.error})`);
  return e as typeof e & { detail: Record<string, unknown> };
}

/**
 * Per-component displacement variance over a lag t of an Ornstein–Uhlenbeck walker (stationary start), divided
 * by 2D: g(t) = t − τ(1 − e^{−t/τ}) (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930),
 * doi:10.1103/PhysRev.36.823).
 */
export function ouLag(t: number, tau: number): number {
  return t - tau * (1 - Math.exp(-t / tau));
}

/** Absolute path of the stand-in program. */
export const WALKER = new URL("./walker.mjs", import.meta.url).pathname;

/** Options of {@link walkerStudyText}. */
export interface WalkerStudyOptions {
  readonly name?: string;
  /** Faults to sweep (parameters.fault); one point each. Default ["none"]. */
  readonly faults?: readonly string[];
  readonly realisations?: number;
  readonly walkers?: number;
  readonly duration?: number;
  readonly timeoutSeconds?: number;
  readonly killGraceSeconds?: number;
  /** Milliseconds the program sleeps before writing (slow realisations). */
  readonly delayMs?: number;
  readonly keepWorkFolders?: "failed" | "always" | "never";
  readonly workDirectory?: string;
  readonly seed?: number;
  readonly workers?: number;
}

/** A study driving walker.mjs (absolute path, so the study file may live anywhere). */
export function walkerStudyText(o: WalkerStudyOptions = {}): string {
  const faults = o.faults ?? ["none"];
  const lines = [
    `name: ${o.name ?? "walkers"}`,
    "engine: external-program-2d",
    "parameters:",
    "  command:",
    "    program: node",
    `    args: [${JSON.stringify(WALKER)}, --seed, "{seed}", --diffusion, "{param.D}", --tau, "{param.tau}",`,
    `      --duration, "{run.duration}", --dt, "{run.sampleInterval}", --config, walker.json, --out, "{output}",`,
    `      --fault, "{param.fault}", --delay-ms, "{param.delay}"]`,
    "  inputFiles:",
    "    - { file: walker.json, text: '{ \"sigma0\": {param.sigma0} }' }",
    '  environment: { WALKER_COUNT: "{param.walkers}" }',
    `  parameters: { D: 0.25, tau: 0.1, sigma0: 2, walkers: ${o.walkers ?? 8}, fault: ${faults[0]}, ` +
    `delay: ${o.delayMs ?? 0} }`,
    "  output: { file: tracks.csv }",
    `  timeoutSeconds: ${o.timeoutSeconds ?? 30}`,
    `  killGraceSeconds: ${o.killGraceSeconds ?? 1}`,
    `  keepWorkFolders: ${o.keepWorkFolders ?? "failed"}`,
    ...(o.workDirectory === undefined ? [] : [`  workDirectory: ${JSON.stringify(o.workDirectory)}`]),
    ...(faults.length > 1 ? ["sweep:", `  grid: { parameters.fault: [${faults.join(", ")}] }`] : []),
    `realisations: ${o.realisations ?? 1}`,
    `seed: ${o.seed ?? 7}`,
    `run: { duration: ${o.duration ?? 2}, sampleInterval: 0.1${o.workers ? `, workers: ${o.workers}` : ""} }`,
    "observables: { record: [cluster, msd], classification: { radiusFactor: 6 } }",
  ];
  return lines.join("\n") + "\n";
}

/** Whether a process with this id exists and is not a zombie (ps from POSIX.1-2017 XCU). */
export async function alive(pid: number): Promise<boolean> {
  const out = await new Deno.Command("ps", {
    args: ["-o", "stat=", "-p", String(pid)],
    stdout: "piped",
    stderr: "null",
  })
    .output();
  const stat = new TextDecoder().decode(out.stdout).trim();
  return stat !== "" && !stat.startsWith("Z");
}
