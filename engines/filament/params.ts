/**
 * Parameters of the 3D vortex-filament engine (the study file's `parameters` section): the zod schema is the
 * single source of truth; types are inferred from it.
 *
 * Units. `units: physical` — lengths in metres, times in seconds, temperatures in kelvin, κ of ⁴He
 * = 9.9693e-8 m²/s (h/m₄, CODATA 2018) and core parameter a₀ = 1e-10 m by default. `units: dimensionless` —
 * κ = 1, lengths in a unit ℓ of the study's choosing (state it in the study; usually the initial intervortex
 * spacing), times in ℓ²/κ; a₀ must then be given in ℓ.
 *
 * Shapes at t = 0 (`initial.kind`): ring, ring-pair, helix (periodic box only), ring-ball, given (loops listed
 * or read from a file). The normal fluid moves uniformly with `normalVelocity` (default at rest); `heater` adds
 * a heated wire along the z axis. Earlier spellings (`colliding-rings`, `kelvin-wave`, `ring-cloud`, `loops`,
 * and the `normalFluid` section) are accepted for one release by `upgradeFilamentParams` (`upgrade.ts`).
 *
 * @example
 * ```ts
 * import { filamentParamsSchema } from "./params.ts";
 * const p = filamentParamsSchema.parse({
 *   units: "dimensionless", coreRadius: 1e-6, resolution: 0.05,
 *   initial: { kind: "ring", radius: 1 },
 * });
 * ```
 */
import { z } from "zod";
import { heliumAt, HeliumRangeError } from "./helium.ts";
import { FMM_DEFAULTS } from "./velocity.ts";
import { INTEGRATOR_DEFAULTS } from "./simulation.ts";
import { ACCURACY_CHECK_DEFAULTS } from "./accuracy.ts";

/** κ of ⁴He, m²/s: h/m₄ from CODATA 2018 h and the ⁴He atomic mass (docs/check-values.md §0). */
export const KAPPA_HE4 = 9.9693e-8;
/** Default core parameter a₀ in metres (Schwarz used 1.3e-10 m; docs/check-values.md §0). */
export const A0_DEFAULT_M = 1e-10;

const LEN = "length: metres (units: physical) or the study length unit ℓ (units: dimensionless)";
const VEL = "velocity: m/s (physical) or κ/ℓ (dimensionless)";

const pos = (what: string) => z.number().positive().finite().describe(what);
const vec3 = (what: string) =>
  z.tuple([z.number().finite(), z.number().finite(), z.number().finite()]).describe(what);
const point = z.tuple([z.number().finite(), z.number().finite(), z.number().finite()]);

const ringSchema = z.strictObject({
  kind: z.literal("ring"),
  radius: pos(`ring radius R (${LEN})`),
  centre: vec3(`ring centre (${LEN})`).default([0, 0, 0]),
  normal: vec3("direction of motion (ring normal), any non-zero vector (dimensionless)").default([0, 0, 1]),
}).describe("one circular ring; it moves along +normal");

const ringPairSchema = z.strictObject({
  kind: z.literal("ring-pair"),
  radius: pos(`radius of both rings (${LEN})`),
  separation: pos(`distance between the ring centres along x (${LEN})`),
  offset: z.number().finite().default(0).describe(`lateral offset of the centres along y (${LEN})`),
  angle: z.number().min(0).max(Math.PI / 2).default(Math.PI / 4).describe(
    "tilt ψ of each ring plane towards the other, radians in [0, π/2]: normals (±cos ψ, 0, −sin ψ)",
  ),
}).describe("two rings approaching each other along x whose leaning rims meet first");

const helixSchema = z.strictObject({
  kind: z.literal("helix"),
  waves: z.number().int().min(1).default(1).describe(
    "wavelengths per box side (k = 2π·waves/L), an integer count (dimensionless)",
  ),
  amplitude: pos(`helix amplitude A (${LEN}); linear theory needs kA ≪ 1`),
}).describe("straight periodic line along z with a helical Kelvin wave (requires the periodic domain)");

const radiusLaw = z.union([
  pos(`fixed ring radius (${LEN})`),
  z.strictObject({
    mean: pos(`mean μ of the ring radius (${LEN})`),
    sd: z.number().min(0).finite().describe(`standard deviation σ of the ring radius (${LEN})`),
  }).describe("normal radius law truncated below at max(3δ, μ − 3σ) by resampling"),
]);

const ringBallSchema = z.strictObject({
  kind: z.literal("ring-ball"),
  count: z.number().int().min(1).optional().describe(
    "number of rings (a count, dimensionless; give this or targetLineDensity)",
  ),
  targetLineDensity: z.number().positive().finite().optional().describe(
    "target line length per volume of the cloud ball (1/length², physical: m⁻²; dimensionless: ℓ⁻²)",
  ),
  radius: radiusLaw,
  cloudRadius: pos(`radius R_c of the ball holding the ring centres (${LEN})`),
  centre: vec3(`centre of the cloud ball (${LEN})`).default([0, 0, 0]),
}).describe("random cloud of rings: centres uniform in a ball, orientations uniform, random phase");

const givenSchema = z.strictObject({
  kind: z.literal("given"),
  loops: z.array(z.array(point).min(3)).min(1).optional().describe(
    `explicit closed loops, each an ordered list of [x, y, z] points (${LEN}); the last links to the first`,
  ),
  file: z.string().min(1).optional().describe(
    'path of a JSON file ({"loops": [[[x,y,z],…],…]} or a bare array of loops) or CSV file ' +
      `(columns loop,x,y,z; optional header) holding closed loops (${LEN})`,
  ),
}).describe("closed loops given explicitly or read from a file (give exactly one of loops, file)");

const initialSchema = z.discriminatedUnion("kind", [
  ringSchema,
  ringPairSchema,
  helixSchema,
  ringBallSchema,
  givenSchema,
]).describe("the vortex lines at t = 0");

const frictionSchema = z.discriminatedUnion("kind", [
  z.strictObject({ kind: z.literal("none") }).describe("T = 0: no mutual friction (α = α′ = 0)"),
  z.strictObject({
    kind: z.literal("temperature"),
    temperature: z.number().min(0).finite().describe(
      "temperature, kelvin: α, α′ (and ρ_n/ρ_s) interpolated from the He II table (0 K, or 1.30–1.90 K)",
    ),
  }).describe("He II mutual friction looked up from temperature (Donnelly & Barenghi 1998)"),
  z.strictObject({
    kind: z.literal("coefficients"),
    alpha: z.number().min(0).finite().describe("mutual friction coefficient α (dimensionless)"),
    alphaPrime: z.number().finite().describe("mutual friction coefficient α′ (dimensionless)"),
  }).describe("mutual friction coefficients given directly"),
]);

const heaterSchema = z.strictObject({
  radius: pos(`wire radius r_h: points closer to the z axis are absorbed (${LEN})`),
  referenceRadius: pos(`reference distance r_ref from the wire (z axis) (${LEN})`),
  referenceVelocity: pos(
    `normal-fluid speed at r_ref (${VEL}); equals q′/(2π r_ref ρ s T) for heater power q′ per length`,
  ),
  normalToSuperRatio: z.number().positive().finite().optional().describe(
    "ρ_n/ρ_s for the counter-superflow v_s = −(ρ_n/ρ_s)v_n (dimensionless); default from the temperature table",
  ),
}).describe(
  "a heated wire along the z axis: radial normal outflow v_n = u_ref r_ref/r with counter-superflow " +
    "(unbounded domain only; the normal fluid is otherwise at rest)",
);

const domainSchema = z.discriminatedUnion("kind", [
  z.strictObject({ kind: z.literal("unbounded") }).describe("open space (no images)"),
  z.strictObject({
    kind: z.literal("periodic"),
    size: pos(`side L of the periodic cube [−L/2, L/2)³ (${LEN})`),
  }).describe("periodic cube: minimum image plus the 26 neighbouring images"),
]);

const fmmSchema = z.strictObject({
  order: z.number().int().min(3).max(6).default(FMM_DEFAULTS.order).describe(
    "expansion order p of the fast multipole method (dimensionless; error ∝ θ^p)",
  ),
  theta: z.number().gt(0).lt(1).default(FMM_DEFAULTS.theta).describe(
    "FMM opening parameter: cells interact through expansions when r_target + r_source < θ·distance " +
      "(dimensionless)",
  ),
  leafSize: z.number().int().min(1).max(256).default(FMM_DEFAULTS.leafSize).describe(
    "maximum segments per FMM tree leaf (a count, dimensionless)",
  ),
  nearKernel: z.enum(["simd-f32", "f64"]).default(FMM_DEFAULTS.nearKernel).describe(
    "exact near-field sums: WebAssembly f32x4 SIMD (compiled by the install step) or f64 TypeScript",
  ),
}).describe(
  "fast multipole settings (defaults: 99th-percentile velocity error ≈ 4e-4 v_rms on dense ring tangles)",
);

const integratorSchema = z.strictObject({
  kind: z.enum(["multirate", "rk4"]).default(INTEGRATOR_DEFAULTS.kind).describe(
    "multirate: one nonlocal (far-field) evaluation per step, extrapolated in time, with the local term and " +
      "the near field in RK4 substeps; rk4: classical RK4 on the whole right-hand side (4 nonlocal " +
      "evaluations per step). The LIA model always uses rk4",
  ),
  order: z.number().int().min(1).max(4).default(INTEGRATOR_DEFAULTS.order).describe(
    "multirate: order of the time extrapolation of the far field (= order of accuracy; dimensionless)",
  ),
  slowFactor: z.number().min(1).max(2).default(INTEGRATOR_DEFAULTS.slowFactor).describe(
    "multirate: step limit as a multiple of the local term's stable step c·h_min²/(κΛ) (dimensionless; " +
      "the advective limit applies as well)",
  ),
  window: z.number().min(1).max(4).default(INTEGRATOR_DEFAULTS.window).describe(
    "multirate: near-field window r_w/δ — segments within r_w are integrated with the local term, " +
      "tapering to none at 2r_w (dimensionless)",
  ),
}).describe("time integration (defaults: multirate, order 4)");

const accuracySchema = z.strictObject({
  every: z.number().int().min(0).default(ACCURACY_CHECK_DEFAULTS.every).describe(
    "check the tree/FMM sum every this many steps against the exact sum (a count, dimensionless; 0 = off)",
  ),
  samples: z.number().int().min(1).max(1024).default(ACCURACY_CHECK_DEFAULTS.samples).describe(
    "points compared per check (a count, dimensionless)",
  ),
  tolerance: z.number().positive().default(ACCURACY_CHECK_DEFAULTS.tolerance).describe(
    "warn (event accuracy-warning) when the 99th percentile of |Δv|/v_rms between frames exceeds this " +
      "(dimensionless)",
  ),
}).describe("run-time accuracy check of the fast nonlocal sum (stored as diagnostic velocity_error)");

const numericsSchema = z.strictObject({
  minSpacingFactor: z.number().gt(0).lt(1).default(0.5).describe("δ_min/δ (dimensionless)"),
  reconnectionFactor: z.number().gt(0).max(1).default(0.5).describe(
    "reconnection distance δ_r/δ (dimensionless)",
  ),
  dtFactor: z.number().positive().max(6).default(3).describe(
    "c in dt = c·h_min²/(κΛ), Λ = ln(h_max/a₀) (dimensionless; RK4 stability needs c ≲ 6.7)",
  ),
  summation: z.enum(["auto", "direct", "tree", "fmm"]).default("auto").describe(
    "nonlocal Biot–Savart sum: direct O(N²), Barnes–Hut tree, fast multipole method (unbounded domain; " +
      "a periodic box uses the tree), or auto = FMM (periodic: tree) from treeThreshold points on",
  ),
  treeThreshold: z.number().int().min(1).default(2000).describe(
    "points from which `auto` uses the FMM or tree (a count, dimensionless)",
  ),
  theta: z.number().gt(0).max(1).default(0.4).describe("tree opening parameter θ (dimensionless)"),
  leafSize: z.number().int().min(1).max(64).default(16).describe(
    "maximum segments per tree leaf (a count, dimensionless)",
  ),
  fmm: fmmSchema.default(FMM_DEFAULTS),
  integrator: integratorSchema.default(INTEGRATOR_DEFAULTS),
  accuracyCheck: accuracySchema.default(ACCURACY_CHECK_DEFAULTS),
  markerEvery: z.number().int().min(1).max(64).default(6).describe(
    "one Lagrangian marker every m initial points (a count, dimensionless)",
  ),
  maxPoints: z.number().int().min(10).default(200000).describe(
    "point-count cap (a count, dimensionless; invalid-state failure beyond)",
  ),
}).describe("numerical settings (defaults: docs/methods.md §8)");

/** The engine's parameter schema. */
export const filamentParamsSchema = z.strictObject({
  units: z.enum(["physical", "dimensionless"]).default("physical").describe(
    "physical: m, s, K, κ(⁴He) = 9.9693e-8 m²/s; dimensionless: κ = 1, lengths in ℓ, times in ℓ²/κ",
  ),
  kappa: z.number().positive().finite().optional().describe(
    "quantum of circulation κ (m²/s); physical units only, default 9.9693e-8 (⁴He)",
  ),
  coreRadius: z.number().positive().finite().optional().describe(
    `vortex core parameter a₀ (${LEN}); default 1e-10 m in physical units, required in dimensionless units`,
  ),
  resolution: pos(`point spacing δ = δ_max (${LEN}); choose δ ≤ ℓ/10 and ≥ 10 points per smallest ring`),
  velocity: z.enum(["biot-savart", "lia"]).default("biot-savart").describe(
    "desingularised Biot–Savart (local term + nonlocal sum) or local induction approximation",
  ),
  domain: domainSchema.default({ kind: "unbounded" }),
  friction: frictionSchema.default({ kind: "none" }),
  initial: initialSchema,
  normalVelocity: vec3(`uniform normal-fluid velocity v_n (${VEL}); acts through mutual friction`).default([
    0,
    0,
    0,
  ]),
  heater: heaterSchema.optional(),
  removeBeyond: z.number().positive().optional().describe(
    `loops whose centroid gets farther than this from the origin are removed (${LEN}); default never`,
  ),
  numerics: numericsSchema.default({
    minSpacingFactor: 0.5,
    reconnectionFactor: 0.5,
    dtFactor: 3,
    summation: "auto",
    treeThreshold: 2000,
    theta: 0.4,
    leafSize: 16,
    fmm: FMM_DEFAULTS,
    integrator: INTEGRATOR_DEFAULTS,
    accuracyCheck: ACCURACY_CHECK_DEFAULTS,
    markerEvery: 6,
    maxPoints: 200000,
  }),
}).superRefine((p, ctx) => {
  if (p.units === "dimensionless" && p.coreRadius === undefined) {
    ctx.addIssue({
      code: "custom",
      path: ["coreRadius"],
      message: "coreRadius (a₀ in the study length unit) is required with units: dimensionless",
    });
  }
  if (p.units === "dimensionless" && p.kappa !== undefined) {
    ctx.addIssue({
      code: "custom",
      path: ["kappa"],
      message: "kappa is fixed to 1 with units: dimensionless",
    });
  }
  const a0 = p.coreRadius ?? A0_DEFAULT_M;
  if (p.resolution <= 10 * a0) {
    ctx.addIssue({
      code: "custom",
      path: ["resolution"],
      message: `resolution ${p.resolution} must exceed 10·a₀ = ${10 * a0} (thin-core model)`,
    });
  }
  const periodic = p.domain.kind === "periodic";
  if (p.initial.kind === "helix" && !periodic) {
    ctx.addIssue({
      code: "custom",
      path: ["initial", "kind"],
      message: "helix requires domain.kind: periodic (the line closes through the box)",
    });
  }
  if (periodic && p.domain.kind === "periodic" && p.domain.size < 10 * p.resolution) {
    ctx.addIssue({
      code: "custom",
      path: ["domain", "size"],
      message: `periodic box side ${p.domain.size} must be at least 10·resolution = ${10 * p.resolution}`,
    });
  }
  if (p.initial.kind === "ring-ball") {
    const c = p.initial;
    if ((c.count === undefined) === (c.targetLineDensity === undefined)) {
      ctx.addIssue({
        code: "custom",
        path: ["initial"],
        message: "ring-ball needs exactly one of count, targetLineDensity",
      });
    }
    const mu = typeof c.radius === "number" ? c.radius : c.radius.mean;
    if (mu < 3 * p.resolution) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "radius"],
        message: `ring radius ${mu} is below 3·resolution = ${
          3 * p.resolution
        } (rings that small are removed)`,
      });
    }
  }
  if (p.initial.kind === "given" && (p.initial.loops === undefined) === (p.initial.file === undefined)) {
    ctx.addIssue({ code: "custom", path: ["initial"], message: "given needs exactly one of loops, file" });
  }
  if (p.friction.kind === "temperature") {
    try {
      heliumAt(p.friction.temperature);
    } catch (e) {
      if (!(e instanceof HeliumRangeError)) throw e;
      ctx.addIssue({ code: "custom", path: ["friction", "temperature"], message: e.message });
    }
  }
  if (
    p.heater !== undefined && p.heater.normalToSuperRatio === undefined && p.friction.kind !== "temperature"
  ) {
    ctx.addIssue({
      code: "custom",
      path: ["heater", "normalToSuperRatio"],
      message: "a heater needs normalToSuperRatio (ρ_n/ρ_s) unless friction is given by temperature",
    });
  }
  if (p.heater !== undefined && periodic) {
    ctx.addIssue({
      code: "custom",
      path: ["heater"],
      message: "a heater is only available in the unbounded domain (its outflow is not periodic)",
    });
  }
  if (p.heater !== undefined && p.normalVelocity.some((v) => v !== 0)) {
    ctx.addIssue({
      code: "custom",
      path: ["normalVelocity"],
      message: "a uniform normal velocity and a heater cannot be combined: give one of them",
    });
  }
});

/** Parsed, defaults-filled parameters. */
export type FilamentParams = z.output<typeof filamentParamsSchema>;
/** Parameters as written in a study file. */
export type FilamentParamsInput = z.input<typeof filamentParamsSchema>;
