/**
 * The plan: every realisation of a normalized study, in a fixed order, each with its own key and generator
 * state. The plan is a pure function of the normalized study: the worker count and the order in which
 * realisations are executed change nothing.
 *
 * - Order: point-major (all realisations of point 0, then of point 1, …), realisation index ascending.
 * - `key` = SHA-256("spindrift-realisation-v1" + canonical JSON of { pointHash, index, seed }) (`store/keys.ts`):
 *   the identity of a stored realisation (a rerun of the same study finds it and skips it; a seed edit gives
 *   new keys, and the old realisations stay stored).
 * - `seedState` = `deriveSeedState(seed, paramsHash, index)` (`seeds.ts`): depends on the parameters, not on
 *   the point's position in the sweep, so adding or reordering points keeps every other realisation's seed.
 *
 * @example
 * ```ts
 * const plan = planStudy(study);
 * plan.length === study.points.length * study.realisations; // true
 * const rng = RandomStream.fromState(plan[0].seedState);
 * ```
 */
import type { GeneratorState } from "../engines/random.ts";
import { realisationKey } from "../store/keys.ts";
import type { NormalizedStudy } from "./normalize.ts";
import { deriveSeedState, seedStateHex } from "./seeds.ts";

/** One realisation to run. */
export interface PlannedRealisation {
  /** Hash of point hash + realisation index + master seed: identifies the stored realisation. */
  readonly key: string;
  readonly pointIndex: number;
  readonly pointHash: string;
  /** Realisation index within its point, from 0. */
  readonly index: number;
  /** The full 128-bit state of the realisation's generator. */
  readonly seedState: GeneratorState;
  /** `seedState` as 32 hex characters. */
  readonly seedHex: string;
}

/** Every realisation of the study, point-major. */
export function planStudy(study: NormalizedStudy): PlannedRealisation[] {
  const plan: PlannedRealisation[] = [];
  for (const point of study.points) {
    for (let index = 0; index < study.realisations; index++) {
      const seedState = deriveSeedState(study.seed, point.paramsHash, index);
      plan.push({
        key: realisationKey(point.pointHash, index, study.seed),
        pointIndex: point.index,
        pointHash: point.pointHash,
        index,
        seedState,
        seedHex: seedStateHex(seedState),
      });
    }
  }
  return plan;
}
