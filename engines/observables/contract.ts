/**
 * The observable contract: physics computed from any engine's frames, as streaming accumulators.
 *
 * Per realisation the runner builds one `Classifier` (chosen by the engine's capabilities, never by its id)
 * and the `Observable`s the study records whose `needs` the engine meets. For each frame, in time order:
 *
 *   labels = classifier.classify(frame)          // main / evaporated / stray, sticky
 *   for each accumulator: accumulator.push(frame, labels)
 *
 * and at the end each accumulator's `finish()` gives series, scalars and events for the store.
 * Accumulators keep O(objects) state, never O(frames × objects).
 *
 * The classifier's own events (kinds `evaporation`, `recapture`, `stray`: the per-object decision log with the
 * criteria values, docs/methods.md §4) arrive in `Classification.events`; the runner stores them as they come, like
 * engine events. Observables do not repeat them.
 */
import type {
  Dimension,
  EngineCapabilities,
  EngineEvent,
  Frame,
  FrameField,
  RunControls,
} from "../contract.ts";

/** Classification thresholds from the study file (docs/methods.md §4: evaporation criteria, sticky labels). */
export interface ClassificationConfig {
  /** 2D: dipole separation must be < f·ℓ (ℓ = mean intervortex distance of the main cluster). 3D: R_eff < f·ℓ. */
  readonly separationFactor: number;
  /** Object must be farther than k·R_rms(main) from the cluster centre. */
  readonly radiusFactor: number;
  /** Consecutive frames the criteria must hold before the label sticks. */
  readonly stickyFrames: number;
  /** Minimum cosine between the object's velocity and its outward direction. */
  readonly outwardCosine: number;
  /**
   * 2D: relative tolerance of the pair speed against κ/(2πd) (the direction must then lie within
   * asin(speedTolerance) of the self-propulsion direction). 3D: the loop speed must lie within a factor
   * (1 + speedTolerance) of the ring speed (κ/4πR_eff)[ln(8R_eff/a₀) − C].
   */
  readonly speedTolerance: number;
}

/** What observables are told about the run. */
export interface ObservableContext {
  readonly capabilities: EngineCapabilities;
  readonly controls: RunControls;
  readonly classification: ClassificationConfig;
  /** Vortex core parameter a₀ in the engine length unit, when the engine has one (3D ring-speed check). */
  readonly coreRadius?: number;
  /** Circulation quantum κ in the engine's units, for engines whose frames carry no circulation (default 1). */
  readonly circulation?: number;
  /** Ring-speed constant β of the engine's velocity model (default 3/4 − γ_E, straight-segment sums). */
  readonly ringConstant?: number;
  /** Radial-profile binning of the `cluster` observable (study `observables.profile`; defaults when absent). */
  readonly profile?: ProfileBinning;
}

/** Radial-profile bins: `bins` annuli/shells of width `binFraction` × R_rms of the first frame. */
export interface ProfileBinning {
  readonly bins: number;
  readonly binFraction: number;
}

/**
 * Per-frame labels (one Uint8 per object, values from `Label`), plus events from the classifier.
 * Like frame arrays, `labels` may be longer than `frame.n` and is overwritten by the next `classify` call:
 * copy what you keep.
 */
export interface Classification {
  readonly labels: Uint8Array;
  /** Cluster centre used for this frame (length = dimension). */
  readonly centre: readonly number[];
  /** RMS radius of the main cluster about `centre`. */
  readonly rmsRadius: number;
  readonly events: readonly EngineEvent[];
}

export interface Classifier {
  classify(frame: Frame): Classification;
}

/** A named time series produced by an observable; times are frame times. */
export interface SeriesOutput {
  readonly t: readonly number[];
  readonly v: readonly number[];
}

export interface ObservableResult {
  readonly series: Readonly<Record<string, SeriesOutput>>;
  readonly scalars: Readonly<Record<string, number>>;
  readonly events: readonly EngineEvent[];
}

export interface Accumulator {
  push(frame: Frame, classification: Classification): void;
  finish(): ObservableResult;
}

export interface Observable {
  /** Name used in the study's `observables.record` list. */
  readonly id: string;
  readonly title: string;
  /** What the observable requires of the engine; the runner skips (and reports) observables whose needs fail. */
  readonly needs: {
    readonly dimension?: Dimension;
    readonly fields: readonly FrameField[];
    /** Extra fields needed only when the engine's objects are of this kind (e.g. 3D MSD needs markers). */
    readonly fieldsByObjects?: Readonly<
      Partial<Record<EngineCapabilities["objects"], readonly FrameField[]>>
    >;
  };
  /** Series names it produces, with meaning and unit (documented in reports and DEVELOPERS.md). */
  readonly produces: Readonly<Record<string, string>>;
  create(ctx: ObservableContext): Accumulator;
}
