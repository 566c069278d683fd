/**
 * Random ± vortex clouds shared by the 2D engines (private): the study-file schema of a cloud, its
 * cross-field checks, and the sampler. The point-vortex and Gross–Pitaevskii engines draw the same cloud from
 * the same stream for the same cloud parameters and region.
 *
 * Method (positions first, then signs):
 *  - uniform disk of radius R_c: r = R_c √u, θ = 2πu′ (u, u′ uniform in [0, 1));
 *  - Gaussian of standard deviation σ: x, y independent normals (Box–Muller);
 *  - each draw is rejected if the region refuses it (outside a disk, a trap's usable area, …) or if it lies
 *    closer than `minSeparation` to an accepted vortex (minimum image in a periodic box); a vortex that cannot
 *    be placed after 10 000 draws fails the realisation with a clear message;
 *  - signs: N₊ = round(N(1 + p)/2) entries +1 and N − N₊ entries −1, put in random order by a Fisher–Yates
 *    permutation.
 * Ids are 0..N−1.
 *
 * References: D.E. Knuth, TAOCP Vol. 2, 3rd ed. (1997) §3.4.1 (uniform in a disk via √u), §3.4.2 (Fisher–Yates);
 * G.E.P. Box, M.E. Muller, Ann. Math. Stat. 29, 610 (1958), doi:10.1214/aoms/1177706645.
 */
import { z } from "zod";
import { EngineFailure } from "./contract.ts";
import type { RandomStream } from "./random.ts";
import { CellList } from "./_cells.ts";

const finite = () => z.number().refine(Number.isFinite, { message: "must be a finite number" });
const positive = () => z.number().positive().refine(Number.isFinite, { message: "must be a finite number" });
const nonNegative = () =>
  z.number().nonnegative().refine(Number.isFinite, { message: "must be a finite number" });

/** The `random-cloud` initial condition; `unit` names the length unit in the descriptions (e.g. "length units ℓ"). */
export function randomCloudSchema(unit: string) {
  return z.object({
    kind: z.literal("random-cloud").describe(
      "Random vortices of both signs in a disk-shaped or Gaussian cloud.",
    ),
    count: z.number().int().min(1).describe("Number of vortices N (dimensionless)."),
    polarity: z.number().min(-1).max(1).default(0).describe(
      "Net polarity p = (N₊ − N₋)/N, in [−1, 1] (dimensionless). N₊ = N(1 + p)/2 must be an integer.",
    ),
    shape: z.enum(["uniform-disk", "gaussian"]).default("uniform-disk").describe(
      "uniform-disk: uniform density inside `radius`; gaussian: isotropic normal with standard deviation `radius`.",
    ),
    radius: positive().describe(`Cloud radius R_c (uniform-disk) or Gaussian σ, in ${unit}.`),
    minSeparation: nonNegative().default(0).describe(
      `Hard-core minimum distance between any two vortices, in ${unit} (enforced by rejection; 0 = off).`,
    ),
    centre: z.tuple([finite(), finite()]).default([0, 0]).describe(`Cloud centre [x, y], in ${unit}.`),
  }).strict();
}

/** A validated cloud specification (the output of {@link randomCloudSchema}). */
export type RandomCloud = z.infer<ReturnType<typeof randomCloudSchema>>;

/** Largest packing fraction N·d²/(4R_c²) accepted for a uniform-disk cloud with a minimum separation. */
export const MAX_PACKING_FRACTION = 0.5;

/** Draws per vortex before placement is declared impossible. */
export const MAX_PLACEMENT_TRIES = 10_000;

/** Reach of a cloud from its centre (uniform disk: R_c; Gaussian: 3σ) and how to name it in messages. */
export function cloudReach(c: Pick<RandomCloud, "shape" | "radius">): { reach: number; what: string } {
  return c.shape === "uniform-disk"
    ? { reach: c.radius, what: "radius" }
    : { reach: 3 * c.radius, what: "3σ (3 × radius)" };
}

/**
 * Cross-field checks of a cloud that do not depend on the domain: an integer N₊ (and even N for p = 0) and a
 * packing fraction that random sequential placement can reach. Issues go to `path` + field.
 */
export function checkCloud(
  c: RandomCloud,
  ctx: z.RefinementCtx,
  options: {
    path: readonly (string | number)[];
    /** Words after the value when `minSeparation` is an engine's default, not the user's (issues then go to radius). */
    minSeparationNote?: string;
  },
): void {
  const { path, minSeparationNote } = options;
  const n = c.count;
  const nPlusExact = n * (1 + c.polarity) / 2;
  // zod runs refinements even when a field failed: a count that is not a whole number ≥ 1 is reported by its
  // own rule, with nothing more to say about it here.
  const countOk = Number.isInteger(n) && n >= 1;
  if (countOk && c.polarity === 0 && n % 2 !== 0) {
    ctx.addIssue({
      code: "custom",
      path: [...path, "count"],
      message:
        `count ${n} is odd: with polarity 0 the cloud has N/2 vortices of each sign, so N must be even`,
    });
  } else if (countOk && Math.abs(nPlusExact - Math.round(nPlusExact)) > 1e-9) {
    const allowed = Array.from({ length: Math.min(n, 8) + 1 }, (_, k) => `${(2 * k - n) / n}`).join(", ");
    ctx.addIssue({
      code: "custom",
      path: [...path, "polarity"],
      message:
        `polarity ${c.polarity} with count ${n} gives N₊ = N(1+p)/2 = ${nPlusExact}, not an integer; ` +
        `allowed values are p = (2N₊ − N)/N for integer N₊ in 0..N (e.g. ${allowed}${n > 8 ? ", …" : ""})`,
    });
  }
  if (c.shape === "uniform-disk" && c.minSeparation > 0) {
    const packing = n * c.minSeparation ** 2 / (4 * c.radius ** 2);
    if (packing > MAX_PACKING_FRACTION) {
      ctx.addIssue({
        code: "custom",
        path: [...path, minSeparationNote === undefined ? "minSeparation" : "radius"],
        message:
          `minSeparation ${c.minSeparation}${
            minSeparationNote ?? ""
          } is too large for ${n} vortices in radius ${c.radius}: ` +
          `packing fraction N·d²/(4R_c²) = ${packing.toPrecision(3)} exceeds ${MAX_PACKING_FRACTION} ` +
          "(random sequential placement jams near 0.55)",
      });
    }
  }
}

/** Where cloud vortices may be placed. */
export interface CloudRegion {
  /** True when (x, y) is an allowed position (called for every draw). */
  accepts(x: number, y: number): boolean;
  /** Side of the periodic box for minimum-image separations; 0 when not periodic. */
  readonly periodicSide: number;
  /** Words for the failure message, e.g. ", disk radius 5". */
  readonly describe: string;
}

/** A sampled cloud (struct of arrays, length n). */
export interface SampledCloud {
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** Sign ±1 of each vortex. */
  readonly g: Float64Array;
  readonly id: Int32Array;
  /** Nominal number density (uniform disk: N/(πR_c²); Gaussian: central density N/(2πσ²)). */
  readonly density: number;
}

/** Draws a cloud from `rng` inside `region` (see the module comment for the method). */
export function sampleCloud(c: RandomCloud, region: CloudRegion, rng: RandomStream): SampledCloud {
  const n = c.count;
  const x = new Float64Array(n), y = new Float64Array(n), g = new Float64Array(n), id = new Int32Array(n);
  const [cx, cy] = c.centre;
  const dMin = c.minSeparation;
  const dMin2 = dMin * dMin;
  const side = region.periodicSide;
  const cells = dMin > 0 ? new CellList(n, dMin, side) : null;
  const near = new Int32Array(n);
  const uniform = c.shape === "uniform-disk";

  for (let k = 0; k < n; k++) {
    let placed = false;
    for (let tries = 0; tries < MAX_PLACEMENT_TRIES && !placed; tries++) {
      let px: number, py: number;
      if (uniform) {
        const r = c.radius * Math.sqrt(rng.uniform());
        const th = 2 * Math.PI * rng.uniform();
        px = cx + r * Math.cos(th);
        py = cy + r * Math.sin(th);
      } else {
        px = cx + c.radius * rng.normal();
        py = cy + c.radius * rng.normal();
      }
      if (!region.accepts(px, py)) continue;
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
          `(minSeparation ${dMin}, cloud radius ${c.radius}${region.describe}` +
          "); lower initial.minSeparation or initial.count, or enlarge initial.radius",
        0,
      );
    }
  }

  const nPlus = Math.round(n * (1 + c.polarity) / 2);
  for (let k = 0; k < n; k++) {
    g[k] = k < nPlus ? 1 : -1;
    id[k] = k;
  }
  rng.shuffle(g);
  const density = uniform ? n / (Math.PI * c.radius ** 2) : n / (2 * Math.PI * c.radius ** 2);
  return { n, x, y, g, id, density };
}

/** Smallest pair distance of n points (minimum image when side > 0); Infinity for n < 2. */
export function minimumSeparation(n: number, x: Float64Array, y: Float64Array, side: number): number {
  let m = Infinity;
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      let dx = x[i] - x[j], dy = y[i] - y[j];
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      m = Math.min(m, dx * dx + dy * dy);
    }
  }
  return Math.sqrt(m);
}
