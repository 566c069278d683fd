/**
 * Executes one realisation: engine → classifier → observables → encoded frames. The same code runs in a
 * local worker, in the main thread (tests) and in a cluster array task, so all three give identical numbers.
 *
 * The caller receives frames in batches through `emitFrames` (to stream them to the store) and the outcome
 * (scalars, series, events, failure) at the end.
 *
 * Stopping: when `task.stopFlag[0]` becomes non-zero (the pool sets it on Ctrl-C or SIGTERM), the engine's
 * `input.stop.check()` and the frame sink throw `RealisationStopped`, which `executeRealisation` rethrows instead
 * of turning it into a failed outcome: a stopped realisation is not a result and is left for the next run.
 */
import {
  type Engine,
  type EngineEvent,
  EngineFailure,
  type FieldSnapshot,
  type Frame,
  type FrameSink,
  RealisationStopped,
  type RunControls,
  type StopRequest,
  stopRequestFromFlag,
} from "../engines/contract.ts";
import { findEngine } from "../engines/registry.ts";
import { type GeneratorState, RandomStream } from "../engines/random.ts";
import type {
  Accumulator,
  ClassificationConfig,
  Classifier,
  ObservableContext,
  ProfileBinning,
} from "../engines/observables/contract.ts";
import { applicableObservables, createClassifier } from "../engines/observables/mod.ts";
import { type Column, encodeFrame } from "../store/frame_codec.ts";
import type { EventRow, FrameRow, RealisationOutcome, SeriesData } from "../store/db.ts";

/** Everything a worker needs to compute one realisation (structured-cloneable). */
export interface RealisationTask {
  readonly engineId: string;
  readonly engineVersion: string;
  readonly params: unknown;
  readonly controls: RunControls;
  readonly seedState: GeneratorState;
  readonly realisationIndex: number;
  /** Folder of the study file (relative paths in parameters resolve against it). */
  readonly baseDirectory?: string;
  /** Threads the engine may use inside the realisation (results do not depend on it). */
  readonly threads?: number;
  readonly observables: {
    readonly record: readonly string[];
    readonly classification: ClassificationConfig;
    readonly profile?: ProfileBinning;
  };
  /** Stop flag shared with the pool (Int32Array on a SharedArrayBuffer; non-zero: stop). */
  readonly stopFlag?: Int32Array;
}

/** Frames are handed over in batches of about this many bytes (and at least every this many frames). */
const BATCH_BYTES = 4 << 20;
const BATCH_FRAMES = 64;

function growingSeries(): { t: number[]; v: number[] } {
  return { t: [], v: [] };
}

/** First non-finite coordinate in a frame, or -1. */
function firstNonFinite(f: Frame): number {
  const { n, x, y, z } = f;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i]) || (z !== null && !Number.isFinite(z[i]))) return i;
  }
  return -1;
}

/** Largest distance from the origin among the frame's objects. */
function maxRadius(f: Frame): number {
  let m = 0;
  const { n, x, y, z } = f;
  for (let i = 0; i < n; i++) {
    const r2 = x[i] * x[i] + y[i] * y[i] + (z === null ? 0 : z[i] * z[i]);
    if (r2 > m) m = r2;
  }
  return Math.sqrt(m);
}

function frameColumns(f: Frame, labels: Uint8Array): Record<string, Column> {
  const cols: Record<string, Column> = { id: f.id, x: f.x, y: f.y };
  if (f.z !== null) cols.z = f.z;
  if (f.circulation !== null) cols.circulation = f.circulation;
  if (f.loop !== null) cols.loop = f.loop;
  if (f.marker !== null) cols.marker = f.marker;
  cols.label = labels;
  return cols;
}

/**
 * Runs one realisation to the end and returns its outcome; never throws for engine or physics failures
 * (they become `status: "failed"` with a reason).
 * @throws RealisationStopped when the task's stop flag was set (see the module comment).
 */
export async function executeRealisation(
  task: RealisationTask,
  emitFrames: (frames: FrameRow[]) => void,
  lookup: (id: string) => Engine<unknown> | undefined = findEngine,
): Promise<RealisationOutcome> {
  const started = performance.now();
  const events: EngineEvent[] = [];
  const snapshots: FieldSnapshot[] = [];
  const engine = lookup(task.engineId);
  if (!engine || engine.version !== task.engineVersion) {
    return failed(
      "exception",
      `engine ${task.engineId} ${task.engineVersion} is not available in this build`,
    );
  }
  const scales = engine.scales?.(task.params) ?? {};
  const ctx: ObservableContext = {
    capabilities: engine.capabilities,
    controls: task.controls,
    classification: task.observables.classification,
    ...(task.observables.profile ? { profile: task.observables.profile } : {}),
    coreRadius: scales.coreRadius,
    circulation: scales.circulation,
    ringConstant: scales.ringConstant,
  };
  let classifier: Classifier;
  let accumulators: Accumulator[];
  try {
    classifier = createClassifier(ctx);
    const { use } = applicableObservables(task.observables.record, engine.capabilities);
    accumulators = use.map((o) => o.create(ctx));
  } catch (e) {
    return failed("invalid-state", `cannot set up the observables: ${(e as Error).message}`);
  }
  const diagnostics: Record<string, { t: number[]; v: number[] }> = {};
  let batch: FrameRow[] = [];
  let batchBytes = 0;
  let lastT = Number.NaN;
  let frames = 0;

  const flush = () => {
    if (batch.length > 0) emitFrames(batch);
    batch = [];
    batchBytes = 0;
  };

  const stop: StopRequest | undefined = task.stopFlag ? stopRequestFromFlag(task.stopFlag) : undefined;
  const sink: FrameSink = {
    frame(f: Frame): void {
      stop?.check();
      const bad = firstNonFinite(f);
      if (bad >= 0) {
        throw new EngineFailure("nan", `non-finite position of object ${f.id[bad]} at t = ${f.t}`, f.t);
      }
      const r = maxRadius(f);
      if (r > task.controls.maxDistance) {
        throw new EngineFailure(
          "blow-up",
          `an object reached distance ${r.toPrecision(4)} from the origin at t = ${f.t} ` +
            `(blow-up guard run.maxDistance = ${task.controls.maxDistance})`,
          f.t,
        );
      }
      const cls = classifier.classify(f);
      for (const e of cls.events) events.push(e);
      for (const a of accumulators) a.push(f, cls);
      for (const [name, value] of Object.entries(f.diagnostics)) {
        const s = diagnostics[name] ??= growingSeries();
        s.t.push(f.t);
        s.v.push(value);
      }
      const enc = encodeFrame(f.n, frameColumns(f, cls.labels));
      batch.push({ k: f.index, t: f.t, n: f.n, layout: enc.layout, data: enc.data });
      batchBytes += enc.data.byteLength;
      lastT = f.t;
      frames++;
      if (batchBytes >= BATCH_BYTES || batch.length >= BATCH_FRAMES) flush();
    },
    event(e: EngineEvent): void {
      events.push(e);
    },
    snapshot(s: FieldSnapshot): void {
      snapshots.push(s);
    },
  };

  const rng = RandomStream.fromState(task.seedState);
  try {
    const summary = await engine.run(
      {
        params: task.params,
        controls: task.controls,
        rng,
        realisationIndex: task.realisationIndex,
        baseDirectory: task.baseDirectory,
        stop,
        threads: task.threads,
      },
      sink,
    );
    flush();
    const scalars: Record<string, number> = { ...summary.scalars };
    const series: Record<string, SeriesData> = {};
    for (const [name, s] of Object.entries(diagnostics)) series[`diag.${name}`] = s;
    for (const a of accumulators) {
      const res = a.finish();
      Object.assign(scalars, res.scalars);
      for (const [name, s] of Object.entries(res.series)) series[name] = s;
      for (const e of res.events) events.push(e);
    }
    if (frames === 0) return failed("invalid-state", "the engine produced no frames");
    return {
      status: "done",
      wallSeconds: (performance.now() - started) / 1000,
      simTimeReached: lastT,
      scalars,
      series,
      events: sortEvents(events),
      snapshots,
    };
  } catch (e) {
    // A stop is not a failure of the realisation, whatever the engine made of it (e.g. a killed program).
    if (e instanceof RealisationStopped || stop?.requested) throw new RealisationStopped();
    flush();
    if (e instanceof EngineFailure) return failed(e.kind, e.message, Number.isFinite(e.t) ? e.t : lastT);
    const err = e as Error;
    return failed("exception", `${err?.name ?? "Error"}: ${err?.message ?? String(e)}`, lastT);
  }

  function failed(kind: string, error: string, t = Number.NaN): RealisationOutcome {
    return {
      status: "failed",
      failureKind: kind,
      error,
      wallSeconds: (performance.now() - started) / 1000,
      simTimeReached: t,
      scalars: {},
      series: {},
      events: sortEvents(events),
      snapshots,
    };
  }
}

/** Events in time order; stable for equal times (engine events before observable events). */
function sortEvents(events: EngineEvent[]): EventRow[] {
  return events.map((e, i) => ({ e, i })).sort((a, b) => a.e.t - b.e.t || a.i - b.i).map(({ e }) => e);
}
