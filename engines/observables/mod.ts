/**
 * Shared observables: the public door of `engines/observables/`.
 *
 * Per realisation the runner builds one classifier with {@link createClassifier} (chosen from the engine's
 * capabilities, never from its id) and the accumulators of the observables that apply
 * ({@link applicableObservables}); then, for each frame in time order:
 *
 * ```
 * const c = classifier.classify(frame);           // labels main / evaporated / stray (sticky), centre, R_rms
 * store c.events                                   // evaporation / recapture / stray decisions with criteria
 * for (const acc of accumulators) acc.push(frame, c);
 * ```
 *
 * and at the end stores each accumulator's `finish()` (series, scalars, events).
 *
 * @example
 * ```ts
 * import { applicableObservables, createClassifier, DEFAULT_CLASSIFICATION } from "./mod.ts";
 * const ctx = { capabilities, controls, classification: DEFAULT_CLASSIFICATION };
 * const { use, skipped } = applicableObservables(["cluster", "msd"], capabilities);
 * const classifier = createClassifier(ctx);
 * const accumulators = use.map((o) => o.create(ctx));
 * ```
 */
import type { EngineCapabilities } from "../contract.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import { createLoopClassifier } from "./classify_3d.ts";
import { clusterObservable } from "./cluster.ts";
import type { ClassificationConfig, Classifier, Observable, ObservableContext } from "./contract.ts";
import { evaporationObservable } from "./evaporation.ts";
import { msdObservable } from "./msd.ts";

export type * from "./contract.ts";
export { Label, LABEL_NAMES, type LabelValue } from "./labels.ts";
export { createDipoleClassifier } from "./classify_2d.ts";
export { createLoopClassifier, ringSpeed, STRAIGHT_SEGMENT_CORE_CONSTANT } from "./classify_3d.ts";
export {
  clusterObservable,
  type ClusterOptions,
  createClusterObservable,
  DEFAULT_PROFILE,
} from "./cluster.ts";
export { evaporationObservable } from "./evaporation.ts";
export { msdObservable } from "./msd.ts";
export { checkClassificationConfig } from "./_config.ts";

/**
 * Default classification thresholds (docs/methods.md §4 and §8): separation factor f = 0.3, radius factor k = 2,
 * K = 3 sticky frames, outward cosine 0.5, speed tolerance 0.25.
 */
export const DEFAULT_CLASSIFICATION: ClassificationConfig = Object.freeze({
  separationFactor: 0.3,
  radiusFactor: 2,
  stickyFrames: 3,
  outwardCosine: 0.5,
  speedTolerance: 0.25,
});

/** Every observable a study can record, by id: `cluster`, `evaporation`, `msd`. */
export const OBSERVABLES: readonly Observable[] = Object.freeze([
  clusterObservable,
  evaporationObservable,
  msdObservable,
]);

/** The observable with this id, or undefined. */
export function findObservable(id: string): Observable | undefined {
  return OBSERVABLES.find((o) => o.id === id);
}

/** Observable ids, for messages and suggestions. */
export function observableIds(): string[] {
  return OBSERVABLES.map((o) => o.id);
}

/**
 * The classifier that fits the engine's objects: the 2D dipole classifier for point vortices in the plane,
 * the loop classifier for 3D filament points. Throws a `RangeError` with a readable message when the
 * thresholds are invalid or no classifier fits the capabilities (e.g. 3D filaments without the `loop` field,
 * or without `ctx.coreRadius`, which the ring-speed check needs).
 *
 * @example
 * ```ts
 * const classifier = createClassifier({ capabilities, controls, classification: DEFAULT_CLASSIFICATION });
 * const { labels, centre, rmsRadius, events } = classifier.classify(frame);
 * ```
 */
export function createClassifier(ctx: ObservableContext): Classifier {
  const caps = ctx.capabilities;
  if (caps.objects === "filament-point") {
    if (caps.dimension !== 3) {
      throw new RangeError(
        `filament points need dimension 3, the engine declares dimension ${caps.dimension}`,
      );
    }
    return createLoopClassifier(ctx);
  }
  if (caps.dimension !== 2) {
    throw new RangeError(
      `no classifier for point objects in dimension ${caps.dimension}: the dipole classifier is planar (2D)`,
    );
  }
  return createDipoleClassifier(ctx);
}

/** Why an observable cannot run on an engine with these capabilities, or undefined when it can. */
export function unmetNeeds(observable: Observable, capabilities: EngineCapabilities): string | undefined {
  const needs = observable.needs;
  if (needs.dimension !== undefined && needs.dimension !== capabilities.dimension) {
    return `needs dimension ${needs.dimension}, the engine is ${capabilities.dimension}D`;
  }
  const required = [...needs.fields, ...(needs.fieldsByObjects?.[capabilities.objects] ?? [])];
  const missing = required.filter((f) => !capabilities.fields.includes(f));
  if (missing.length > 0) {
    const kind = capabilities.objects === "vortex" ? "vortices" : "filament points";
    return `needs frame field${missing.length > 1 ? "s" : ""} ${missing.map((f) => `'${f}'`).join(", ")}, ` +
      `which the engine's ${kind} do not carry`;
  }
  return undefined;
}

/**
 * Splits the requested observable ids into those that run on this engine and those skipped, each with a
 * reason (unknown id, or a need the engine does not meet). Order of `ids` is kept; duplicates are dropped.
 *
 * @example
 * ```ts
 * const { use, skipped } = applicableObservables(["cluster", "msd"], engine.capabilities);
 * for (const s of skipped) console.warn(`observable ${s.id} skipped: ${s.reason}`);
 * ```
 */
export function applicableObservables(
  ids: readonly string[],
  capabilities: EngineCapabilities,
): { use: Observable[]; skipped: { id: string; reason: string }[] } {
  const use: Observable[] = [];
  const skipped: { id: string; reason: string }[] = [];
  const seen = new Set<string>();
  for (const id of ids) {
    if (seen.has(id)) continue;
    seen.add(id);
    const observable = findObservable(id);
    if (observable === undefined) {
      skipped.push({ id, reason: `unknown observable '${id}' (known: ${observableIds().join(", ")})` });
      continue;
    }
    const reason = unmetNeeds(observable, capabilities);
    if (reason === undefined) use.push(observable);
    else skipped.push({ id, reason });
  }
  return { use, skipped };
}
