/**
 * The runner: executes a study's plan on a pool of workers and stores every realisation.
 *
 * ```
 *  study text ──load──▶ StudyFile ──normalize──▶ NormalizedStudy ──plan──▶ PlannedRealisation[]
 *                                                                             │ skip keys already done
 *                                                                             ▼
 *   main thread (only writer)  ◀── frames / outcome ──  worker k: engine → classifier → observables
 *        │ appendFrames (pending)        executeRealisation (study/execute.ts), one realisation at a time
 *        │ finishRealisation (one transaction: frames, scalars, series, events, status)
 *        ▼
 *   SQLite study database (store/) ──▶ reports/
 * ```
 *
 * Reproducibility: a realisation's numbers depend only on (engine id/version, normalized parameters, run
 * controls, seed state derived from (master seed, parameter hash, index)), never on the worker that ran it or
 * the order of completion, so 1 or N workers store bit-identical numbers.
 *
 * Resume: realisations whose key is stored as `done` are skipped; `failed` ones and those a crash left
 * `running` are run again. `fresh` deletes the stored realisations of the study's points first.
 */
import { dirname } from "node:path";
import { findEngine } from "../engines/registry.ts";
import { applicableObservables } from "../engines/observables/mod.ts";
import type { NormalizedStudy } from "./normalize.ts";
import { type PlannedRealisation, planStudy } from "./plan.ts";
import type { RealisationTask } from "./execute.ts";
import type { RealisationOutcome } from "../store/db.ts";
import { type PoolHooks, runRealisations } from "./pool.ts";
import { StudyStore } from "../store/db.ts";
import { canonicalJson } from "./hash.ts";
import type { Progress } from "./progress.ts";
import { preflight } from "./preflight.ts";
import { countDone } from "../store/status.ts";

export interface Provenance {
  readonly toolVersion: string;
  readonly denoVersion: string;
  readonly gitCommit: string | null;
}

export interface RunOptions {
  readonly dbPath: string;
  readonly workers: number;
  readonly fresh?: boolean;
  /** Keep failed realisations instead of running them again. */
  readonly keepFailed?: boolean;
  /** Run into a database created for a study of another name (see `StudyStore.recordStudy`). */
  readonly allowOtherStudy?: boolean;
  readonly progress: Progress;
  readonly provenance: Provenance;
  /** Aborting stops dispatching, terminates workers and keeps every finished realisation. */
  readonly signal?: AbortSignal;
  /** Lines the user should see before the run starts (a database upgrade, a stale lock taken over, warnings). */
  readonly onNote?: (line: string) => void;
  /** Run even past the pre-flight's hard limits (`preflight.ts`). */
  readonly force?: boolean;
  /**
   * Only these realisations of the plan (e.g. `r.index < 8` for a pilot, or the next batch of a sequential
   * run); the others are neither run nor counted. Default: all.
   */
  readonly only?: (r: PlannedRealisation) => boolean;
  /** Called after each realisation is stored, with its outcome (including the worker's measured `usage`). */
  readonly onFinished?: (r: PlannedRealisation, outcome: RealisationOutcome) => void;
  /** Skip the pre-flight (the caller made its own). */
  readonly skipPreflight?: boolean;
  /** Notes recorded with the study revision (e.g. how `run --until` extended it), beside the skipped observables. */
  readonly notes?: readonly { readonly kind: string; readonly id: string; readonly reason: string }[];
}

export interface FailureSummary {
  readonly pointLabel: string;
  readonly index: number;
  readonly kind: string;
  readonly error: string;
}

/** A point computed again because an input file changed since it was last run. */
export interface InputChange {
  readonly pointLabel: string;
  readonly files: readonly { readonly path: string; readonly before: string; readonly after: string }[];
}

export interface RunReport {
  readonly studyId: number;
  /** Points whose input files changed since an earlier run (their earlier results stay stored). */
  readonly inputChanges: readonly InputChange[];
  readonly planned: number;
  readonly skipped: number;
  readonly completed: number;
  readonly failed: number;
  readonly interrupted: boolean;
  readonly discardedUnfinished: number;
  readonly failures: readonly FailureSummary[];
  readonly wallSeconds: number;
}

/** Hostname for the realisation rows, or "unknown" without the permission. */
export function hostName(): string {
  try {
    return Deno.hostname();
  } catch {
    return "unknown";
  }
}

/** Builds the worker task for one planned realisation. */
export function taskFor(study: NormalizedStudy, r: PlannedRealisation): RealisationTask {
  const point = study.points[r.pointIndex];
  return {
    engineId: study.engine.id,
    engineVersion: study.engine.version,
    params: point.params,
    controls: {
      duration: study.run.duration,
      sampleInterval: study.run.sampleInterval,
      tolerance: study.run.tolerance,
      maxDistance: study.run.maxDistance,
    },
    seedState: r.seedState,
    realisationIndex: r.index,
    baseDirectory: study.sourcePath ? dirname(study.sourcePath) : undefined,
    observables: study.observables,
    ...(study.run.threads !== undefined ? { threads: study.run.threads } : {}),
  };
}

/** The run controls and observable settings stored with every point (`points.controls_json`). */
function pointControls(study: NormalizedStudy) {
  return {
    duration: study.run.duration,
    sampleInterval: study.run.sampleInterval,
    tolerance: study.run.tolerance,
    maxDistance: study.run.maxDistance,
    observables: study.observables,
  };
}

/** Points of `study` whose input files differ from those of an earlier run of the same parameters. */
export function inputChanges(store: StudyStore, study: NormalizedStudy): InputChange[] {
  const controlsJson = canonicalJson(pointControls(study));
  const out: InputChange[] = [];
  for (const p of study.points) {
    if (Object.keys(p.inputs).length === 0) continue;
    // Already computed with the current content (an earlier run announced it): nothing to say.
    if (countDone(store.db, [p.pointHash], { seed: study.seed, realisations: study.realisations }) > 0) {
      continue;
    }
    const earlier = store.earlierInputs({
      pointHash: p.pointHash,
      paramsHash: p.paramsHash,
      engineId: study.engine.id,
      controlsJson,
    });
    if (earlier.length === 0) continue;
    const files = Object.entries(p.inputs)
      .filter(([path, after]) => earlier[0][path] !== after)
      .map(([path, after]) => ({ path, before: earlier[0][path] ?? "absent", after }));
    if (files.length > 0) out.push({ pointLabel: p.label, files });
  }
  return out;
}

/**
 * The units stored with a study revision: the engine's labels (length, time, circulation) for the first point,
 * plus `kappa`, κ in those units as a decimal string, when the engine states it (backward compatible: older
 * databases have no `kappa`, and readers treat κ as unknown there unless the time unit is length²/κ).
 */
function recordedUnits(
  engine: ReturnType<typeof findEngine>,
  study: NormalizedStudy,
): Record<string, string> | undefined {
  const scales = study.points.length > 0 ? engine?.scales?.(study.points[0].params as never) : undefined;
  const labels = scales?.units ?? engine?.capabilities.units;
  if (labels === undefined) return undefined;
  const kappa = scales?.circulation;
  return kappa !== undefined && Number.isFinite(kappa) && kappa > 0
    ? { ...labels, kappa: String(kappa) }
    : { ...labels };
}

/**
 * Records the study and its points in the store; returns the study id.
 * @throws StoreError ("other-study") when the database belongs to another study and `opts.allowOtherStudy` is
 * not set; nothing is written then.
 */
export function recordStudy(
  store: StudyStore,
  study: NormalizedStudy,
  provenance: Provenance,
  opts: {
    readonly allowOtherStudy?: boolean;
    readonly notes?: readonly { readonly kind: string; readonly id: string; readonly reason: string }[];
  } = {},
): number {
  const engine = findEngine(study.engine.id);
  const skipped = engine ? applicableObservables(study.observables.record, engine.capabilities).skipped : [];
  const controls = pointControls(study);
  const { text: _text, sourcePath: _sourcePath, ...normalized } = study;
  return store.recordStudy(
    {
      name: study.name,
      description: study.description,
      studyHash: study.hash,
      sourcePath: study.sourcePath,
      text: study.text,
      normalizedJson: canonicalJson(normalized),
      engineId: study.engine.id,
      engineVersion: study.engine.version,
      toolVersion: provenance.toolVersion,
      denoVersion: provenance.denoVersion,
      gitCommit: provenance.gitCommit,
      notes: [
        ...skipped.map((s) => ({ kind: "observable-skipped", id: s.id, reason: s.reason })),
        ...(opts.notes ?? []),
      ],
      units: recordedUnits(engine, study),
    },
    study.points.map((p) => ({
      pointIndex: p.index,
      pointHash: p.pointHash,
      paramsHash: p.paramsHash,
      label: p.label,
      variedJson: canonicalJson(p.varied),
      paramsJson: canonicalJson(p.params),
      controlsJson: canonicalJson(controls),
      inputsJson: canonicalJson(p.inputs),
    })),
    { allowOtherStudy: opts.allowOtherStudy },
  );
}

/** Runs (or resumes) a study into its database. */
export async function runStudy(study: NormalizedStudy, opts: RunOptions): Promise<RunReport> {
  const t0 = performance.now();
  const engine = findEngine(study.engine.id);
  if (!engine) throw new Error(`engine ${study.engine.id} is not registered`);
  // Sizes first, from counts alone: a study too large for the disk or the memory is refused before the
  // database is touched or a plan is built.
  if (!opts.skipPreflight) {
    const verdict = preflight(study, { dbPath: opts.dbPath, workers: opts.workers, force: opts.force });
    for (const r of verdict.refusals) opts.onNote?.(`warning (run anyway, --force): ${r}`);
    for (const w of verdict.warnings) opts.onNote?.(`warning: ${w}`);
  }
  const store = StudyStore.open(opts.dbPath, { command: "run" });
  try {
    for (const n of store.notes) opts.onNote?.(n);
    const studyId = recordStudy(store, study, opts.provenance, {
      allowOtherStudy: opts.allowOtherStudy,
      notes: opts.notes,
    });
    const changes = inputChanges(store, study);
    for (const c of changes) opts.onNote?.(describeInputChange(c));
    // The lock guarantees no other writer: `running` rows are what a killed run left.
    const discardedUnfinished = store.discardUnfinished();
    const only = opts.only;
    const plan = only ? planStudy(study).filter((r) => only(r)) : planStudy(study);
    if (opts.fresh) store.deleteRealisations(plan.map((r) => r.key));
    const statuses = store.realisationStatuses();
    const todo = plan.filter((r) => {
      const s = statuses.get(r.key);
      return !(s === "done" || (s === "failed" && opts.keepFailed));
    });
    const skipped = plan.length - todo.length;
    const result = await runPool(study, interleavePoints(todo), store, opts, plan.length, skipped);
    return {
      studyId,
      inputChanges: changes,
      planned: plan.length,
      skipped,
      completed: result.completed,
      failed: result.failures.length,
      interrupted: result.interrupted,
      discardedUnfinished,
      failures: result.failures,
      wallSeconds: (performance.now() - t0) / 1000,
    };
  } finally {
    store.close();
  }
}

/** "point base: input data/w.csv changed since its last run (sha256:1a2b3c4d… → sha256:5e6f7a8b…); …". */
export function describeInputChange(c: InputChange): string {
  const short = (f: string) => f.startsWith("sha256:") ? `${f.slice(0, 15)}…` : f;
  const files = c.files.map((f) => `${f.path} (${short(f.before)} → ${short(f.after)})`).join(", ");
  return `point ${c.pointLabel}: input ${files} changed since it was last run; its realisations are computed ` +
    "again (the earlier results stay in the database under the old content)";
}

/**
 * Dispatch order: realisation 0 of every point, then realisation 1 of every point, … Costs differ between points
 * (e.g. with the vortex count), so interleaving keeps the expensive ones from piling up at the end and leaving
 * workers idle. The order changes no stored number.
 */
export function interleavePoints(todo: readonly PlannedRealisation[]): PlannedRealisation[] {
  return [...todo].sort((a, b) => a.index - b.index || a.pointIndex - b.pointIndex);
}

interface PoolResult {
  completed: number;
  failures: FailureSummary[];
  interrupted: boolean;
}

/**
 * Pool hooks that store into `store` (the only writer) and count outcomes; `onFinished` runs after each
 * realisation is stored, with the number finished so far.
 */
export function storingHooks(
  store: StudyStore,
  study: NormalizedStudy,
  host: string,
  onFinished: (r: PlannedRealisation, outcome: RealisationOutcome, finished: number) => void,
): { hooks: PoolHooks; failures: FailureSummary[]; completed: () => number } {
  const failures: FailureSummary[] = [];
  let completed = 0;
  const hooks: PoolHooks = {
    begin: (r) =>
      store.beginRealisation({
        key: r.key,
        pointHash: r.pointHash,
        index: r.index,
        masterSeed: study.seed,
        seedHex: r.seedHex,
        engineId: study.engine.id,
        engineVersion: study.engine.version,
        host,
      }),
    frames: (rowId, frames) => store.appendFrames(rowId, frames),
    finish: (r, rowId, outcome) => {
      store.finishRealisation(rowId, outcome);
      if (outcome.status === "failed") failures.push(failureSummary(study, r, outcome));
      else completed++;
      onFinished(r, outcome, completed + failures.length);
    },
  };
  return { hooks, failures, completed: () => completed };
}

async function runPool(
  study: NormalizedStudy,
  todo: readonly PlannedRealisation[],
  store: StudyStore,
  opts: RunOptions,
  total: number,
  skipped: number,
): Promise<PoolResult> {
  opts.progress.start(total, skipped);
  try {
    const run = storingHooks(store, study, hostName(), (r, outcome, finished) => {
      opts.progress.update(skipped + finished, run.failures.length);
      opts.onFinished?.(r, outcome);
    });
    const { interrupted } = await runRealisations(study, todo, opts.workers, run.hooks, opts.signal);
    // Finished realisations are committed; the ones in flight are discarded and rerun next time.
    if (interrupted) store.discardUnfinished();
    return { completed: run.completed(), failures: run.failures, interrupted };
  } finally {
    opts.progress.stop();
  }
}

/** The one-line summary of a failed realisation. */
export function failureSummary(
  study: NormalizedStudy,
  r: PlannedRealisation,
  outcome: RealisationOutcome,
): FailureSummary {
  return {
    pointLabel: study.points[r.pointIndex].label,
    index: r.index,
    kind: outcome.failureKind ?? "exception",
    error: outcome.error ?? "",
  };
}
