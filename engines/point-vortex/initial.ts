/**
 * Initial vortex configurations: explicit lists or random ± clouds.
 *
 * Method (random cloud): positions first, then signs.
 *  - uniform disk of radius R_c: r = R_c √u, θ = 2πu′ (u, u′ uniform in [0, 1));
 *  - Gaussian of standard deviation σ: x, y independent normals (Box–Muller);
 *  - each draw is rejected if it lies outside the domain (disk: closer to the wall than d_ann/2, where it would
 *    annihilate at once) or closer than `minSeparation` to an accepted vortex (minimum image in a periodic box);
 *    a vortex that cannot be placed after 10 000 draws fails the realisation with a clear message;
 *  - signs: N₊ = round(N(1 + p)/2) entries +1 and N − N₊ entries −1, put in random order by a Fisher–Yates
 *    permutation.
 * Positions are returned unwrapped (the engine wraps them into a periodic box itself). Ids are 0..N−1.
 *
 * References: D.E. Knuth, TAOCP Vol. 2, 3rd ed. (1997) §3.4.1 (uniform in a disk via √u), §3.4.2 (Fisher–Yates);
 * G.E.P. Box, M.E. Muller, Ann. Math. Stat. 29, 610 (1958), doi:10.1214/aoms/1177706645.
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
import { EngineFailure } from "../contract.ts";
import type { RandomStream } from "../random.ts";
import { CellList } from "./_cells.ts";
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

/** Draws per vortex before placement is declared impossible. */
export const MAX_PLACEMENT_TRIES = 10_000;

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

  const n = init.count;
  const x = new Float64Array(n), y = new Float64Array(n), g = new Float64Array(n), id = new Int32Array(n);
  const [cx, cy] = init.centre;
  const dom = params.domain;
  const dMin = init.minSeparation;
  const dMin2 = dMin * dMin;
  const side = dom.kind === "periodic" ? dom.side : 0;
  const wallLimit = dom.kind === "disk" ? dom.radius - 0.5 * params.annihilationDistance : Infinity;
  const cells = dMin > 0 ? new CellList(n, dMin, side) : null;
  const near = new Int32Array(n);
  const uniform = init.shape === "uniform-disk";

  for (let k = 0; k < n; k++) {
    let placed = false;
    for (let tries = 0; tries < MAX_PLACEMENT_TRIES && !placed; tries++) {
      let px: number, py: number;
      if (uniform) {
        const r = init.radius * Math.sqrt(rng.uniform());
        const th = 2 * Math.PI * rng.uniform();
        px = cx + r * Math.cos(th);
        py = cy + r * Math.sin(th);
      } else {
        px = cx + init.radius * rng.normal();
        py = cy + init.radius * rng.normal();
      }
      if (dom.kind === "disk" && !(Math.hypot(px, py) < wallLimit)) continue;
      if (cells !== null) {
        const m = cells.query(px, py, near);
        let ok = true;
        for (let q = 0; q < m && ok; q++) {
          let dx = px - x[near[q]], dy = py - y[near[q]];
          if (side > 0) {
            dx -= side * Math.round(dx / side);
            dy -= side * Math.round(dy / side);
          }
          if (dx * dx + dy * dy < dMin2) ok = false;
        }
        if (!ok) continue;
        cells.insert(k, px, py);
      }
      x[k] = px;
      y[k] = py;
      placed = true;
    }
    if (!placed) {
      throw new EngineFailure(
        "invalid-state",
        `could not place vortex ${k + 1} of ${n} after ${MAX_PLACEMENT_TRIES} random draws ` +
          `(minSeparation ${dMin}, cloud radius ${init.radius}${
            dom.kind === "disk" ? `, disk radius ${dom.radius}` : ""
          }` +
          "); lower initial.minSeparation or initial.count, or enlarge initial.radius",
        0,
      );
    }
  }

  const nPlus = Math.round(n * (1 + init.polarity) / 2);
  for (let k = 0; k < n; k++) {
    g[k] = k < nPlus ? 1 : -1;
    id[k] = k;
  }
  rng.shuffle(g);
  const density = uniform ? n / (Math.PI * init.radius ** 2) : n / (2 * Math.PI * init.radius ** 2);
  return { n, x, y, g, id, density };
}
