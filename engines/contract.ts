/**
 * The engine contract: what every engine (2D point vortices, 3D filaments, imported tracks, …) provides
 * and what the runner gives it. Shared code never switches on an engine's id; it reads `capabilities`.
 *
 * Data flow inside one realisation (all in one worker):
 *
 *   params + controls + seeded RandomStream → engine.run → FrameSink.frame(t = 0, Δt, 2Δt, …)
 *                                                       → FrameSink.event(annihilation, reconnection, …)
 *                                                       → EngineRunSummary (scalars)
 *
 * The sink labels each frame (main cluster / evaporated / stray), feeds the shared observables and streams
 * the encoded frame to the store, so memory does not grow with the run's duration.
 *
 * @example
 * ```ts
 * import { getEngine } from "./registry.ts";
 * const engine = getEngine("point-vortex-2d");
 * const params = engine.paramsSchema.parse({ ... });
 * const summary = engine.run({ params, controls, rng }, sink);
 * ```
 */
import type { z } from "zod";
import type { RandomStream } from "./random.ts";

export type Dimension = 2 | 3;

/** Per-object fields a frame may carry beyond positions and ids. */
export type FrameField = "circulation" | "loop" | "marker";

/** What an engine produces, so observables and reports can decide what applies. */
export interface EngineCapabilities {
  /** Space dimension of positions. */
  readonly dimension: Dimension;
  /** Optional per-object fields present in every frame. */
  readonly fields: readonly FrameField[];
  /**
   * What one object in a frame is: "vortex" (2D point vortex, id persistent for its lifetime) or
   * "filament-point" (3D discretisation point listed in loop order; only markers keep ids through
   * remeshing).
   */
  readonly objects: "vortex" | "filament-point";
  /** Event kinds the engine may emit, with a one-line meaning each. */
  readonly events: Readonly<Record<string, string>>;
  /** Diagnostics carried in `Frame.diagnostics` (name → meaning and unit). Stored as time series. */
  readonly diagnostics: Readonly<Record<string, string>>;
  /** Units the engine works in, shown in reports (e.g. { length: "ℓ (study unit)", time: "ℓ²/κ" }). */
  readonly units: Readonly<{ length: string; time: string; circulation: string }>;
}

/**
 * One sampled state. Arrays may be longer than `n` (engines reuse buffers); only the first `n` entries are
 * meaningful, and the engine may overwrite them after `FrameSink.frame` returns, so sinks copy what they keep.
 *
 * Positions are unwrapped where the engine tracks periodic images (so displacements are physical).
 * For filaments, points are listed loop by loop, each loop contiguous and in order along the line
 * (the last point of a loop links back to its first).
 */
export interface Frame {
  /** Frame counter from 0 (frame k is at t ≈ k · sampleInterval). */
  readonly index: number;
  /** Simulation time in the engine's time unit. */
  readonly t: number;
  /** Number of objects (vortices or filament points). */
  readonly n: number;
  /** Persistent object id (vortex id; filament point id, persistent for markers). */
  readonly id: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** Present iff dimension = 3. */
  readonly z: Float64Array | null;
  /** Signed circulation in units of κ (field "circulation"). */
  readonly circulation: Float64Array | null;
  /** Loop id of each point (field "loop"). */
  readonly loop: Int32Array | null;
  /** 1 where the point is a Lagrangian marker (field "marker"). */
  readonly marker: Uint8Array | null;
  /** Engine diagnostics at this time (names declared in capabilities.diagnostics). */
  readonly diagnostics: Readonly<Record<string, number>>;
}

/** Something that happened between frames: an annihilation, a reconnection, a loop removal, … */
export interface EngineEvent {
  readonly t: number;
  /** One of the kinds declared in capabilities.events, or an observable's own kind. */
  readonly kind: string;
  /** Object ids involved. */
  readonly ids: readonly number[];
  /** Numeric details (positions, separation, length removed, …). */
  readonly data: Readonly<Record<string, number>>;
  /**
   * Optional text details of events that record how a realisation was produced rather than physics (e.g. the
   * external-program engines' "program-run": command line, environment additions, output tails). JSON-safe;
   * stored with the event, never read by observables.
   */
  readonly detail?: Readonly<Record<string, JsonValue>>;
}

/** A value with an exact JSON form. */
export type JsonValue = string | number | boolean | null | readonly JsonValue[] | {
  readonly [key: string]: JsonValue;
};

/** Run controls shared by every engine (from the study's `run` section). */
export interface RunControls {
  /** Simulated duration, in the engine's time unit (> 0). */
  readonly duration: number;
  /** Time between stored frames (> 0, ≤ duration). */
  readonly sampleInterval: number;
  /** Relative tolerance of adaptive integrators (engines without error control use it for their own checks). */
  readonly tolerance: number;
  /** Blow-up guard: fail if any object gets farther than this from the origin (engine length unit). */
  readonly maxDistance: number;
}

/** What the runner hands to an engine for one realisation. */
export interface EngineRunInput<P> {
  /** Validated, normalized parameters (already passed `paramsSchema`). */
  readonly params: P;
  readonly controls: RunControls;
  /** The realisation's own seeded stream: the only source of randomness. */
  readonly rng: RandomStream;
  /** Index of this realisation within its parameter point (0-based); engines that read data use it. */
  readonly realisationIndex?: number;
  /** Folder of the study file: relative file paths in parameters resolve against it. */
  readonly baseDirectory?: string;
  /**
   * Threads the engine may use inside this realisation (default 1). Engines that use them must give
   * bit-identical results for any thread count, and stop their threads before `run` returns.
   */
  readonly threads?: number;
}

/** Receives frames and events in time order. Throws `EngineFailure` to stop a run (e.g. NaN guard). */
export interface FrameSink {
  frame(frame: Frame): void;
  event(event: EngineEvent): void;
}

/** Scalars an engine reports at the end (relative invariant drifts, step counts, initial density, …). */
export interface EngineRunSummary {
  readonly scalars: Readonly<Record<string, number>>;
}

/** An engine: a pure function from (params, controls, seed) to a stream of frames and events. */
export interface Engine<P = unknown> {
  /** Stable identifier used in study files, e.g. "point-vortex-2d". */
  readonly id: string;
  /** Bumped whenever results for the same parameters could change; part of every content hash. */
  readonly version: string;
  /** One-line human title. */
  readonly title: string;
  readonly capabilities: EngineCapabilities;
  /**
   * zod schema of the engine's `parameters` section. Every dimensional field documents its unit in
   * `.describe()`. Cross-field rules (e.g. odd vortex count with zero polarity) are refinements with a path.
   */
  readonly paramsSchema: z.ZodType<P>;
  /** Physical scales observables need (e.g. the core parameter a₀ for the 3D ring-speed check). */
  scales?(params: P): {
    /** Vortex core parameter a₀ (engine length unit). */
    readonly coreRadius?: number;
    /** Circulation quantum κ in the engine's units (1 when lengths and times are in κ units). */
    readonly circulation?: number;
    /** Constant β of the ring speed (κ/4πR)[ln(8R/a₀) − β] this engine's velocity model reproduces. */
    readonly ringConstant?: number;
    /** The units these parameters put the results in, when they differ from `capabilities.units`. */
    readonly units?: Readonly<{ length: string; time: string; circulation: string }>;
  };
  /**
   * Runs one realisation, streaming frames into the sink in time order. Compute engines are synchronous;
   * engines that read files may return a promise.
   */
  run(input: EngineRunInput<P>, sink: FrameSink): EngineRunSummary | Promise<EngineRunSummary>;
  /**
   * Optional: what `run(input)` would do, as lines for `spindrift check` (e.g. the exact command an external
   * program would run for this realisation). Runs and writes nothing. Throws `EngineFailure` with a clear
   * message when the realisation could not start (a missing template file, a program not found).
   */
  describeRealisation?(input: EngineRunInput<P>): readonly string[] | Promise<readonly string[]>;
}

/**
 * Why a realisation failed, as stored in the database. "timeout": an external program ran past its time limit;
 * "program-failed": an external program could not start, exited with a nonzero code or a fatal signal, or wrote
 * no output; "killed": stopped from outside (e.g. an external program ended by SIGINT or SIGTERM).
 */
export type FailureKind =
  | "nan"
  | "blow-up"
  | "step-underflow"
  | "invalid-state"
  | "exception"
  | "killed"
  | "timeout"
  | "program-failed";

/** Thrown by engines and sinks to end a realisation as failed with a reason; other realisations go on. */
export class EngineFailure extends Error {
  readonly kind: FailureKind;
  readonly t: number;
  constructor(kind: FailureKind, message: string, t = Number.NaN) {
    super(message);
    this.name = "EngineFailure";
    this.kind = kind;
    this.t = t;
  }
}
