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
  /**
   * Field snapshots the engine may send through `FrameSink.snapshot` (field name → meaning and unit); absent for
   * engines without a field (see {@link FieldSnapshot}).
   */
  readonly snapshots?: Readonly<Record<string, string>>;
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
   * Set when the user may stop the run (Ctrl-C, SIGTERM, a batch system's time limit). Call
   * `input.stop?.check()` between steps and inside any other loop that can run for long (building initial
   * conditions, reading files); see `StopRequest`.
   */
  readonly stop?: StopRequest;
  /**
   * Threads the engine may use inside this realisation (default 1). Engines that use them must give
   * bit-identical results for any thread count, and stop their threads before `run` returns.
   */
  readonly threads?: number;
}

/**
 * A request from outside to stop computing. `check()` costs one shared-memory read: call it every step (at
 * least every ~0.1 s of work). Once a stop is requested it throws `RealisationStopped`; let it propagate (do not
 * catch it, or catch and rethrow it). The realisation is then neither stored nor counted as failed: it is left
 * for the next run, which computes it again from the start. Engines that start processes stop them first.
 * The frame sink also checks at every frame, so an engine that never checks stops at its next frame.
 */
export interface StopRequest {
  /** True once a stop was requested. */
  readonly requested: boolean;
  /** Throws `RealisationStopped` once a stop was requested. */
  check(): void;
}

/** Thrown by `StopRequest.check` (and by engines that noticed `requested`): the run was stopped from outside. */
export class RealisationStopped extends Error {
  constructor(
    message = "stopped from outside (Ctrl-C or SIGTERM); the realisation is left for the next run",
  ) {
    super(message);
    this.name = "RealisationStopped";
  }
}

/** A `StopRequest` reading `flag[0]` (non-zero: stop), typically an Int32Array on a SharedArrayBuffer. */
export function stopRequestFromFlag(flag: Int32Array): StopRequest {
  return {
    get requested() {
      return Atomics.load(flag, 0) !== 0;
    },
    check() {
      if (Atomics.load(flag, 0) !== 0) throw new RealisationStopped();
    },
  };
}

/**
 * Field snapshots (optional channel, separate from frames): a downsampled image of an engine's field at one
 * stored frame, e.g. the Gross–Pitaevskii density and phase. Values are row-major — value (i, j), column i and
 * row j, at index j·nx + i — on cells centred at (x0 + (i + ½)dx, y0 + (j + ½)dy). The sink keeps what it is
 * given (the engine must not reuse the arrays) and the store writes it with the realisation's other rows.
 */
export interface FieldSnapshot {
  /** Index of the frame this image belongs to (`Frame.index`). */
  readonly frameIndex: number;
  /** Simulation time, as in the frame. */
  readonly t: number;
  readonly nx: number;
  readonly ny: number;
  /** Lower-left corner and cell size, in the engine's length unit. */
  readonly x0: number;
  readonly y0: number;
  readonly dx: number;
  readonly dy: number;
  /** Field name (declared in `capabilities.snapshots`) → nx·ny values. */
  readonly fields: Readonly<Record<string, Float32Array>>;
}

/** Receives frames and events in time order. Throws `EngineFailure` to stop a run (e.g. NaN guard). */
export interface FrameSink {
  frame(frame: Frame): void;
  event(event: EngineEvent): void;
  /** Field snapshots (optional channel; sinks that do not store images leave it out). */
  snapshot?(snapshot: FieldSnapshot): void;
}

/** What one frame of an engine holds, as far as it can be told from the parameters (see `Engine.sizeHint`). */
export interface SizeHint {
  /** Objects (vortices, filament points, …) in the first frame. */
  readonly objects: number;
  /** Most objects a frame can reach when their number grows (e.g. a point cap); default `objects`. */
  readonly maxObjects?: number;
  /** Warnings about the cost of these parameters (e.g. O(N²) work per step at large N), one sentence each. */
  readonly notes?: readonly string[];
  /** Memory of one realisation's engine state beyond the per-object estimate (e.g. a field on a grid), bytes. */
  readonly stateBytes?: number;
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
   * False when a realisation draws no random numbers (its input alone decides it, e.g. imported files): the
   * study's `seed` may then be left out. Default true.
   */
  readonly usesSeed?: boolean;
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
   * Optional: the files whose contents determine the results (imported data, input templates), as the
   * parameters name them: relative to the study file's folder, or absolute. The study's normalizer hashes their
   * contents into the point's identity, so a file replaced under the same name gives a new point, computed
   * again, instead of stale stored results. `realisations` is the study's count (file patterns expand per
   * realisation).
   */
  inputFiles?(params: P, realisations: number): readonly string[];
  /**
   * Optional: how many objects a frame of these parameters holds, for the pre-flight estimate of database size
   * and memory that `check` and `run` make before anything runs (study/preflight.ts). Pure and fast: no files
   * read, nothing drawn from a generator. Leave it out (or return undefined) when the count cannot be known in
   * advance.
   */
  sizeHint?(params: P, controls: RunControls): SizeHint | undefined;
  /**
   * Optional: what `run(input)` would do, as lines for `spindrift check` (e.g. the exact command an external
   * program would run for this realisation). Runs and writes nothing. Throws `EngineFailure` with a clear
   * message when the realisation could not start (a missing template file, a program not found).
   */
  describeRealisation?(input: EngineRunInput<P>): readonly string[] | Promise<readonly string[]>;
  /**
   * Optional: rewrites parameters written in an earlier spelling (accepted for one release after a rename) into
   * the current one, with a deprecation note per change; the study loader applies it before checking and shows
   * the notes. Gets plain YAML values, possibly only a part of the parameters (a swept value); returns what it
   * does not know unchanged.
   */
  upgradeParams?(params: Readonly<Record<string, unknown>>): ParamsUpgrade;
  /** What `spindrift new` writes for this engine (the starter test requires one for every registered engine). */
  readonly starter?: EngineStarter;
  /**
   * Optional: how `spindrift audit` refines this engine's numerics and varies its physics (a small table, see
   * {@link RefinementTable} and `engines/_refine.ts`). Engines without one cannot be audited (imported data).
   */
  readonly refinement?: RefinementTable;
  /**
   * Optional: which `drift.*` scalars of these parameters measure integration error (with the threshold the
   * analysis checks them against) and which quantities the dynamics does not conserve, with the reason.
   */
  conservation?(params: P, controls: RunControls): ConservationCheck;
}

/**
 * One change of a refinement: a parameter (dotted path inside `parameters`) or run control (`run.tolerance`)
 * multiplied by `factor`; with `default`, a value above the default is first brought to it (only a value at or
 * below the default is multiplied), e.g. "the step cap at its default or ÷10".
 */
export interface RefinementRule {
  readonly path: string;
  readonly factor: number;
  readonly default?: number;
  /** Skip the rule when the value is 0 (e.g. no annihilation), with this reason. */
  readonly zeroMeans?: string;
}

/** A varied copy of a parameter point for the audit (all rules applied together). */
export interface RefinementVariant {
  /** Short id stored with the results, e.g. "numerics", "annihilationDistance*0.5". */
  readonly id: string;
  /** "numerics": should not change the answer; "physics": shows how much a modelling choice matters. */
  readonly pass: "numerics" | "physics";
  readonly rules: readonly RefinementRule[];
}

/** The refinement table of an engine (`Engine.refinement`). */
export interface RefinementTable {
  readonly variants: readonly RefinementVariant[];
  /** What the table does not cover, one sentence each (shown with the audit). */
  readonly notes?: readonly string[];
}

/** One invariant whose relative drift the analysis checks (`Engine.conservation`). */
export interface InvariantCheck {
  /** Scalar name, e.g. "drift.hamiltonian". */
  readonly scalar: string;
  /** What it is, e.g. "Hamiltonian H". */
  readonly quantity: string;
  /** Largest acceptable relative drift. */
  readonly threshold: number;
  /** Where the threshold comes from, one sentence. */
  readonly basis: string;
  /** Realisations with any of these scalars non-zero are not checked (e.g. reconnections change the energy). */
  readonly unlessNonzero?: readonly { readonly scalar: string; readonly reason: string }[];
}

/** What an engine conserves for given parameters (`Engine.conservation`). */
export interface ConservationCheck {
  readonly invariants: readonly InvariantCheck[];
  /** Quantities the dynamics does not conserve here, with the reason (e.g. mutual friction). */
  readonly notConserved: readonly { readonly quantity: string; readonly reason: string }[];
  /** Remarks that hold for every realisation (e.g. how removed vortices are accounted for). */
  readonly notes?: readonly string[];
}

/**
 * A first study for an engine, written by `spindrift new <engine>`: it must pass `spindrift check` as written and
 * explain its fields in comments. YAML snippets have their top-level keys in column 0 (the writer indents them).
 */
export interface EngineStarter {
  /** What the starter study sets up and what to change first, in plain sentences (comment lines of the file). */
  readonly about: string;
  /** The study's `description`: the question the study asks, for the user to rewrite. */
  readonly question: string;
  /** The `parameters` section, commented YAML. */
  readonly parameters: string;
  /** An optional `sweep` section (commented YAML with `grid` or `zip` at column 0). */
  readonly sweep?: string;
  /** Realisations per parameter point for a first run. */
  readonly realisations: number;
  /** `run` section: duration and sample interval in the engine's time unit, and a comment naming that unit. */
  readonly run: { readonly duration: number; readonly sampleInterval: number; readonly unit: string };
  /** Optional lines for the `observables.classification` comment (e.g. why a threshold differs here). */
  readonly classification?: string;
}

/** Parameters rewritten from an earlier spelling to the current one (`Engine.upgradeParams`). */
export interface ParamsUpgrade {
  /** The parameters in the current spelling (the input itself when nothing was old). */
  readonly params: Readonly<Record<string, unknown>>;
  /** One note per rewritten field: where it was (path inside `parameters`) and what to write instead. */
  readonly notes: readonly { readonly path: readonly (string | number)[]; readonly message: string }[];
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
