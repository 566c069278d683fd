/**
 * The `parameters` section of a `gross-pitaevskii-2d` study: a zod 4 schema, the single source of truth for the
 * format.
 *
 * Units. Lengths in the healing length ξ = ħ/√(mμ) (so the bulk density is n₀ = μ/g and the speed of sound is
 * c = √(μ/m)); energies in μ; densities in n₀. Every time in the study — run.duration, run.sampleInterval,
 * frame times, `timeStep`, relaxation and preparation times — is in ξ²/κ, the unit every spindrift engine uses so
 * that a fitted D is D/κ directly: with κ = h/m = 2πħ/m, one ξ²/κ is ħ/(2πμ) = ξ/(2πc), i.e. 1 ξ/c = 2π ξ²/κ
 * (the GP equation itself is integrated in ξ/c).
 *
 * @example
 * ```ts
 * import { gpParamsSchema } from "./params.ts";
 * const p = gpParamsSchema.parse({
 *   grid: { points: 128, spacing: 0.5 },
 *   trap: { kind: "disk", radius: 28 },
 *   initial: { kind: "random-cloud", count: 10, radius: 10, minSeparation: 4 },
 * });
 * p.damping; // 0
 * ```
 */
import { z } from "zod";
import { checkCloud, cloudReach, randomCloudSchema } from "../_cloud.ts";

const finite = () => z.number().refine(Number.isFinite, { message: "must be a finite number" });
const positive = () => z.number().positive().refine(Number.isFinite, { message: "must be a finite number" });
const nonNegative = () =>
  z.number().nonnegative().refine(Number.isFinite, { message: "must be a finite number" });

/** Conversion factor: one GP time unit ξ/c is 2π study time units ξ²/κ. */
export const STUDY_TIME_PER_GP_TIME = 2 * Math.PI;

export const gridSchema = z.object({
  points: z.number().int().describe(
    "Grid points per side n (dimensionless): a power of two from 16 to 1024 (the FFT needs powers of two).",
  ),
  spacing: positive().describe(
    "Grid spacing h, in length units ξ (0.25–1; 0.5 resolves a vortex core well). The grid is the periodic square " +
      "[−nh/2, nh/2)².",
  ),
}).strict().describe("The computational grid.");

export const wallSchema = z.discriminatedUnion("profile", [
  z.object({
    profile: z.literal("tanh").describe(
      "V = V₀·½[1 + tanh((d − d_w)/w)], d the distance measure of the trap.",
    ),
    height: positive().default(10).describe(
      "Wall height V₀, in units of μ (> 1, so the wall holds the condensate).",
    ),
    width: positive().default(1).describe("Wall width w, in length units ξ."),
  }).strict(),
  z.object({
    profile: z.literal("power").describe("V = V₀·min(1, (d/d_w)^p): a power-law wall capped at V₀."),
    height: positive().default(10).describe("Wall height V₀, in units of μ (> 1)."),
    exponent: positive().default(40).describe("Exponent p (dimensionless; steep walls: p ≥ 20)."),
  }).strict(),
]).describe("Wall profile of a disk or box trap.");

const defaultWall = { profile: "tanh" as const, height: 10, width: 1 };

export const trapSchema = z.discriminatedUnion("kind", [
  z.object({
    kind: z.literal("disk").describe("Flat-bottomed disk centred at the origin (d = r, d_w = radius)."),
    radius: positive().describe("Wall position R, in length units ξ."),
    wall: wallSchema.default(defaultWall),
  }).strict(),
  z.object({
    kind: z.literal("box").describe(
      "Flat-bottomed square box centred at the origin; the wall acts on x and y separately " +
        "(V = V_wall(|x|) + V_wall(|y|), d_w = side/2).",
    ),
    side: positive().describe("Box side S (wall to wall), in length units ξ."),
    wall: wallSchema.default(defaultWall),
  }).strict(),
  z.object({
    kind: z.literal("periodic").describe(
      "No trap: the doubly periodic grid square itself (uniform density 1).",
    ),
  }).strict(),
]).describe("Trapping potential V(r).");

/** A random ± cloud in ξ, with the wall clearance of trapped condensates. */
export const gpCloudSchema = randomCloudSchema("length units ξ").extend({
  wallClearance: nonNegative().default(3).describe(
    "Vortices are drawn at least this far inside the wall position (trap radius or box half-side), in length units ξ; " +
      "ignored in a periodic domain.",
  ),
});

export const gpExplicitSchema = z.object({
  kind: z.literal("explicit").describe("Vortices listed one by one."),
  vortices: z.array(
    z.object({
      x: finite().describe("x position, in length units ξ."),
      y: finite().describe("y position, in length units ξ."),
      circulation: z.union([z.literal(1), z.literal(-1)]).describe("Sign of the circulation, ±1 (in κ)."),
    }).strict(),
  ).min(1).describe("The vortices (ids are their list positions)."),
}).strict();

export const relaxationSchema = z.object({
  constraint: z.enum(["norm", "chemical-potential"]).default("chemical-potential").describe(
    "What the vortex-core relaxation holds fixed: the chemical potential μ = 1 (default: the bulk density, " +
      "hence ξ and c, keep their unit values), or the norm (atom number) of the ground state, so imprinting " +
      "neither adds nor removes atoms (the bulk density then rises by the cores' deficit; see scalar relaxed_mu).",
  ),
  coreTime: nonNegative().default(30).describe(
    "Imaginary time of the core relaxation with the imprinted phase pinned, in ξ²/κ (30 ξ²/κ ≈ 4.8 ξ/c).",
  ),
  tolerance: positive().default(1e-9).describe(
    "Ground state: relaxation stops when the residual ‖(H − μ)ψ‖/‖ψ‖ falls below this (in units of μ).",
  ),
  maxIterations: z.number().int().min(1).default(20_000).describe(
    "Most relaxation iterations per ground-state solve (dimensionless); the realisation fails beyond it.",
  ),
}).strict().describe(
  "Imaginary-time relaxation: ground state at fixed norm (chosen so μ = 1), then vortex cores with the phase " +
    "pinned.",
);

export const preparationSchema = z.object({
  time: nonNegative().default(0).describe(
    "Damped real-time evolution after imprinting and before t = 0, in ξ²/κ (removes sound; vortices move).",
  ),
  damping: nonNegative().default(0.05).describe("Damping γ during the preparation (dimensionless)."),
}).strict().describe("Optional damped real-time preparation before t = 0.");

export const detectionSchema = z.object({
  densityThreshold: positive().max(1).default(0.5).describe(
    "Plaquettes count only where the vortex-free ground-state density exceeds this fraction of the bulk " +
      "density (dimensionless): the wall region, where the density falls to zero, makes no false vortices.",
  ),
}).strict().describe("Vortex detection by phase winding on grid plaquettes.");

export const trackingSchema = z.object({
  interval: positive().default(2 * Math.PI).describe(
    "Time between detections used for tracking, in ξ²/κ (shortened so it divides the sample interval; " +
      "default 2π ξ²/κ = 1 ξ/c).",
  ),
  maxDisplacement: positive().default(2).describe(
    "Largest distance a vortex may move between two detections and keep its id, in length units ξ.",
  ),
  grace: z.number().int().min(0).default(2).describe(
    "Detections a vanished vortex waits to be found again (within maxDisplacement) and keep its id before its " +
      "ending becomes an event (dimensionless; 0 = end at once).",
  ),
  pairDistance: positive().default(4).describe(
    "A vanished vortex and a vanished antivortex whose last positions are closer than this annihilated " +
      "together (event 'annihilation'), in length units ξ; the same distance pairs appearing vortices ('pair-creation').",
  ),
}).strict().describe(
  "Tracking: per sign, the assignment between consecutive detections that matches the most vortices within " +
    "maxDisplacement and, among those, has the least total squared displacement (Kuhn–Munkres).",
);

export const snapshotsSchema = z.object({
  realisations: z.number().int().min(0).default(1).describe(
    "Store density/phase images for realisations with index below this (dimensionless; 0 = none).",
  ),
  stride: z.number().int().min(0).default(0).describe(
    "Also store every stride-th frame (dimensionless; 0 = first and last frame only).",
  ),
  resolution: z.number().int().min(8).optional().describe(
    "Image pixels per side (dimensionless; a power of two ≤ grid.points; block averages of the grid). " +
      "Default: the smaller of 128 and grid.points.",
  ),
}).strict().describe("Downsampled density and phase images stored with the realisation (for the report).");

/** The `parameters` schema of the `gross-pitaevskii-2d` engine (output type: {@link GpParams}). */
export const gpParamsSchema = z.object({
  grid: gridSchema,
  trap: trapSchema,
  initial: z.discriminatedUnion("kind", [gpCloudSchema, gpExplicitSchema]).describe(
    "Initial vortices, imprinted by phase and relaxed.",
  ),
  damping: nonNegative().default(0).describe(
    "Phenomenological damping γ in (i − γ)∂ψ/∂t = [−½∇² + V + |ψ|² − μ]ψ (dimensionless; γ ≈ α of the " +
      "point-vortex friction).",
  ),
  noise: nonNegative().default(0).describe(
    "Amplitude of complex white noise added after relaxation, relative to the local ground-state amplitude " +
      "√n (dimensionless; per grid point).",
  ),
  timeStep: positive().default(0.1).describe(
    "Largest split-step time step, in ξ²/κ (0.1 ξ²/κ ≈ 0.016 ξ/c); shortened so steps divide the tracking " +
      "interval.",
  ),
  relaxation: relaxationSchema.default({
    constraint: "chemical-potential",
    coreTime: 30,
    tolerance: 1e-9,
    maxIterations: 20_000,
  }),
  preparation: preparationSchema.default({ time: 0, damping: 0.05 }),
  detection: detectionSchema.default({ densityThreshold: 0.5 }),
  tracking: trackingSchema.default({ interval: 2 * Math.PI, maxDisplacement: 2, grace: 2, pairDistance: 4 }),
  snapshots: snapshotsSchema.default({ realisations: 1, stride: 0 }),
}).strict().superRefine((p, ctx) => {
  const n = p.grid.points;
  if (!(n >= 16 && n <= 1024 && (n & (n - 1)) === 0)) {
    ctx.addIssue({
      code: "custom",
      path: ["grid", "points"],
      message: `grid.points ${n} must be a power of two from 16 to 1024 (e.g. 64, 128, 256, 512)`,
    });
    return;
  }
  const half = 0.5 * n * p.grid.spacing;
  const trap = p.trap;
  let usable = half; // largest |x| (box) or r (disk) where vortices may sit
  if (trap.kind !== "periodic") {
    const wall = trap.wall;
    if (!(wall.height > 1)) {
      ctx.addIssue({
        code: "custom",
        path: ["trap", "wall", "height"],
        message: `wall height ${wall.height} must exceed the chemical potential μ = 1 to hold the condensate`,
      });
    }
    const wallAt = trap.kind === "disk" ? trap.radius : 0.5 * trap.side;
    const decay = 10 / Math.sqrt(2 * Math.max(wall.height - 1, 1e-3));
    const pad = (wall.profile === "tanh" ? 8 * wall.width : 0) + decay;
    if (wallAt + pad > half) {
      const field = trap.kind === "disk" ? "radius" : "side";
      ctx.addIssue({
        code: "custom",
        path: ["trap", field],
        message: `the trap wall at ${wallAt} ξ needs ${pad.toPrecision(3)} ξ of padding inside the grid ` +
          `half-width ${half} ξ (grid.points × grid.spacing / 2): the condensate must vanish before the ` +
          "periodic grid edge; enlarge the grid or shrink the trap",
      });
    }
    usable = wallAt;
  }
  const init = p.initial;
  if (init.kind === "random-cloud") {
    checkCloud(init, ctx, { path: ["initial"] });
    const { reach, what } = cloudReach(init);
    const [cx, cy] = init.centre;
    if (trap.kind === "periodic") {
      if (2 * reach > 2 * half) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "radius"],
          message:
            `the cloud (diameter 2 × ${what} = ${2 * reach} ξ) must fit in the periodic grid of side ` +
            `${2 * half} ξ`,
        });
      }
      if (init.polarity !== 0) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "polarity"],
          message:
            "a periodic domain needs zero total circulation (polarity 0): a periodic phase has no net " +
            "winding",
        });
      }
    } else {
      const limit = usable - init.wallClearance;
      const extent = trap.kind === "disk"
        ? Math.hypot(cx, cy) + reach
        : Math.max(Math.abs(cx), Math.abs(cy)) + reach;
      if (extent > limit) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "radius"],
          message:
            `the cloud (${trap.kind === "disk" ? "|centre|" : "max(|cx|, |cy|)"} + ${what} = ${extent} ` +
            `ξ) must lie within ${limit} ξ of the centre (wall position ${usable} ξ minus wallClearance ` +
            `${init.wallClearance} ξ)`,
        });
      }
    }
  } else {
    const vs = init.vortices;
    let total = 0;
    vs.forEach((v, i) => {
      total += v.circulation;
      const inside = trap.kind === "disk"
        ? Math.hypot(v.x, v.y) < usable
        : Math.max(Math.abs(v.x), Math.abs(v.y)) < usable;
      if (!inside) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "vortices", i],
          message: `vortex at (${v.x}, ${v.y}) lies outside the ${
            trap.kind === "periodic" ? "grid" : `${trap.kind} trap`
          } (${trap.kind === "disk" ? "radius" : "half-width"} ${usable} ξ)`,
        });
      }
    });
    if (trap.kind === "periodic" && total !== 0) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "vortices"],
        message: `total circulation ${total}: a periodic domain needs as many vortices as antivortices`,
      });
    }
  }
  const res = p.snapshots.resolution;
  if (res !== undefined && !((res & (res - 1)) === 0 && res <= n)) {
    ctx.addIssue({
      code: "custom",
      path: ["snapshots", "resolution"],
      message: `snapshots.resolution ${res} must be a power of two no larger than grid.points ${n}`,
    });
  }
});

/** Validated, defaults-filled parameters of the `gross-pitaevskii-2d` engine. */
export type GpParams = z.infer<typeof gpParamsSchema>;
export type GpTrap = GpParams["trap"];
/** Pixels per side of the stored field images. */
export function snapshotResolution(p: GpParams): number {
  return p.snapshots.resolution ?? Math.min(128, p.grid.points);
}

export type GpWall = Extract<GpTrap, { kind: "disk" }>["wall"];
