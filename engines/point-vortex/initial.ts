/**
 * Initial vortex configurations: explicit lists or random ± clouds.
 *
 * Method (random cloud): `sampleCloud` (engines/_cloud.ts), shared with the Gross–Pitaevskii engine; a disk
 * domain refuses draws closer to the wall than d_ann/2 (they would annihilate at once), a periodic box uses
 * minimum-image separations. Positions are returned unwrapped (the engine wraps them into a periodic box itself).
 *
 * @example
 * ```ts
 * import { RandomStream } from "../random.ts";
 * import { pointVortexParamsSchema } from "./params.ts";
 * import { initialVortices } from "./initial.ts";
 * const params = pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", count: 10, radius: 2 } });
 * const s = initialVortices(params, RandomStream.fromState([1, 2, 3, 4]));
 * s.n; // 10, five of each sign
 * ```
 */
import { type CloudRegion, sampleCloud } from "../_cloud.ts";
import type { RandomStream } from "../random.ts";
import type { PointVortexParams } from "./params.ts";

/** A vortex configuration (struct of arrays, length n). */
export interface VortexSet {
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** Circulation in units of κ. */
  readonly g: Float64Array;
  readonly id: Int32Array;
  /**
   * Nominal number density of a random cloud (uniform disk: N/(πR_c²); Gaussian: central density N/(2πσ²)),
   * in vortices per length²; null for explicit lists.
   */
  readonly density: number | null;
}

export { MAX_PLACEMENT_TRIES } from "../_cloud.ts";

/** Builds the initial configuration described by `params.initial`, drawing from `rng` (random clouds only). */
export function initialVortices(params: PointVortexParams, rng: RandomStream): VortexSet {
  const init = params.initial;
  if (init.kind === "explicit") {
    const n = init.vortices.length;
    const s = {
      n,
      x: new Float64Array(n),
      y: new Float64Array(n),
      g: new Float64Array(n),
      id: new Int32Array(n),
    };
    init.vortices.forEach((v, i) => {
      s.x[i] = v.x;
      s.y[i] = v.y;
      s.g[i] = v.circulation;
      s.id[i] = i;
    });
    return { ...s, density: null };
  }
  const dom = params.domain;
  const wallLimit = dom.kind === "disk" ? dom.radius - 0.5 * params.annihilationDistance : Infinity;
  const region: CloudRegion = {
    accepts: dom.kind === "disk" ? (px, py) => Math.hypot(px, py) < wallLimit : () => true,
    periodicSide: dom.kind === "periodic" ? dom.side : 0,
    describe: dom.kind === "disk" ? `, disk radius ${dom.radius}` : "",
  };
  return sampleCloud(init, region, rng);
}
