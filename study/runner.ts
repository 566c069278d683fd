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
  readonly progress: Progress;
  readonly provenance: Provenance;
  /** Aborting stops dispatching, terminates workers and keeps every finished realisation. */
  readonly signal?: AbortSignal;
}

export interface FailureSummary {
  readonly pointLabel: string;
  readonly index: number;
  readonly kind: string;
  readonly error: string;
}

export interface RunReport {
  readonly studyId: number;
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

/** Records the study and its points in the store; returns the study id. */
export function recordStudy(store: StudyStore, study: NormalizedStudy, provenance: Provenance): number {
  const engine = findEngine(study.engine.id);
  const skipped = engine ? applicableObservables(study.observables.record, engine.capabilities).skipped : [];
  const controls = {
    duration: study.run.duration,
    sampleInterval: study.run.sampleInterval,
    tolerance: study.run.tolerance,
    maxDistance: study.run.maxDistance,
    observables: study.observables,
  };
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
      notes: skipped.map((s) => ({ kind: "observable-skipped", id: s.id, reason: s.reason })),
      units:
        (study.points.length > 0 ? engine?.scales?.(study.points[0].params as never)?.units : undefined) ??
          engine?.capabilities.units,
    },
    study.points.map((p) => ({
      pointIndex: p.index,
      pointHash: p.pointHash,
      paramsHash: p.paramsHash,
      label: p.label,
      variedJson: canonicalJson(p.varied),
      paramsJson: canonicalJson(p.params),
      controlsJson: canonicalJson(controls),
    })),
  );
}

/** Runs (or resumes) a study into its database. */
export async function runStudy(study: NormalizedStudy, opts: RunOptions): Promise<RunReport> {
  const t0 = performance.now();
  const engine = findEngine(study.engine.id);
  if (!engine) throw new Error(`engine ${study.engine.id} is not registered`);
  const store = StudyStore.open(opts.dbPath);
  try {
    const discardedUnfinished = store.discardUnfinished();
    const studyId = recordStudy(store, study, opts.provenance);
    if (opts.fresh) store.deleteRealisationsOf(study.points.map((p) => p.pointHash));
    const plan = planStudy(study);
    const statuses = store.realisationStatuses();
    const todo = plan.filter((r) => {
      const s = statuses.get(r.key);
      return !(s === "done" || (s === "failed" && opts.keepFailed));
    });
    const skipped = plan.length - todo.length;
    const result = await runPool(study, interleavePoints(todo), store, opts, plan.length, skipped);
    return {
      studyId,
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
    const run = storingHooks(store, study, hostName(), (_r, _o, finished) => {
      opts.progress.update(skipped + finished, run.failures.length);
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
