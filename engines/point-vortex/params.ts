/**
 * The `parameters` section of a `point-vortex-2d` study: a zod 4 schema, the single source of truth for the
 * format (the study loader validates against it and the editor JSON Schema is generated from it).
 *
 * Units: κ = 1 (circulation unit), lengths in the study's length unit ℓ (label `lengthUnit`), time in ℓ²/κ.
 *
 * @example
 * ```ts
 * import { pointVortexParamsSchema } from "./params.ts";
 * const params = pointVortexParamsSchema.parse({
 *   domain: { kind: "unbounded" },
 *   initial: { kind: "random-cloud", count: 64, radius: 8, minSeparation: 0.2 },
 *   annihilationDistance: 0.1,
 * });
 * params.friction.alpha; // 0 (default)
 * ```
 */
import { z } from "zod";

const finite = () => z.number().refine(Number.isFinite, { message: "must be a finite number" });
const positive = () => z.number().positive().refine(Number.isFinite, { message: "must be a finite number" });
const nonNegative = () =>
  z.number().nonnegative().refine(Number.isFinite, { message: "must be a finite number" });

/** Domain: unbounded plane, a disk with an impenetrable wall, or a doubly periodic square box. */
export const domainSchema = z.discriminatedUnion("kind", [
  z.object({
    kind: z.literal("unbounded").describe("The unbounded plane (Kirchhoff's equations)."),
  }).strict(),
  z.object({
    kind: z.literal("disk").describe("Disk centred at the origin with a solid wall (method of images)."),
    radius: positive().describe("Disk radius, in length units ℓ."),
  }).strict(),
  z.object({
    kind: z.literal("periodic").describe(
      "Doubly periodic square box [−side/2, side/2)², Weiss–McWilliams image series.",
    ),
    side: positive().describe("Box side, in length units ℓ."),
    neutralizingBackground: z.boolean().default(false).describe(
      "Accept a nonzero total circulation ΣΓ, compensated by a uniform background vorticity −ΣΓ/side² " +
        "(the zero-mean periodic solution). When false (default), ΣΓ must be 0.",
    ),
  }).strict(),
]).describe("Flow domain.");

const pointSchema = z.tuple([finite(), finite()]);

/** A random ± cloud (methods §3.2). */
export const randomCloudSchema = z.object({
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
  radius: positive().describe("Cloud radius R_c (uniform-disk) or Gaussian σ, in length units ℓ."),
  minSeparation: nonNegative().default(0).describe(
    "Hard-core minimum distance between any two vortices, in length units ℓ (enforced by rejection; 0 = off).",
  ),
  centre: pointSchema.default([0, 0]).describe("Cloud centre [x, y], in length units ℓ."),
}).strict();

/** One vortex given explicitly. */
export const explicitVortexSchema = z.object({
  x: finite().describe("x position, in length units ℓ."),
  y: finite().describe("y position, in length units ℓ."),
  circulation: finite().refine((g) => g !== 0, { message: "circulation must be nonzero" }).describe(
    "Signed circulation Γ, in units of κ (quantized vortices: ±1).",
  ),
}).strict();

export const explicitInitialSchema = z.object({
  kind: z.literal("explicit").describe("Vortices listed one by one."),
  vortices: z.array(explicitVortexSchema).min(1).describe("The vortices (ids are their list positions)."),
}).strict();

export const initialSchema = z.discriminatedUnion("kind", [randomCloudSchema, explicitInitialSchema])
  .describe(
    "Initial vortex configuration.",
  );

export const frictionSchema = z.object({
  alpha: nonNegative().default(0).describe("Mutual-friction coefficient α (dimensionless, ≥ 0)."),
  alphaPrime: finite().default(0).describe("Mutual-friction coefficient α′ (dimensionless)."),
  normalVelocity: pointSchema.default([0, 0]).describe(
    "Uniform normal-fluid velocity v_n = [vx, vy], in κ/ℓ (length units per time unit ℓ²/κ).",
  ),
}).strict().describe("Mutual friction: dr/dt = v_s + α s ẑ×(v_n − v_s) + α′(v_n − v_s).");

export const integratorSchema = z.object({
  absoluteTolerance: positive().default(1e-12).describe(
    "Absolute position tolerance of the Dormand–Prince 5(4) error estimate, in length units ℓ: each step's " +
      "local position error must stay below absoluteTolerance + run.tolerance × d_min (d_min the current " +
      "minimum separation).",
  ),
  stepCapFactor: positive().default(0.2).describe(
    "Step cap c in Δt ≤ c·d_min²/κ, d_min the current minimum separation (dimensionless).",
  ),
  maxSteps: z.number().int().min(1).default(100_000_000).describe(
    "Maximum number of attempted steps per realisation (dimensionless); exceeding it fails the run.",
  ),
}).strict().describe(
  "Adaptive Dormand–Prince 5(4) integrator (max-norm error control); the relative tolerance is run.tolerance, " +
    "relative to the current minimum vortex separation.",
);

/** Largest packing fraction N·d²/(4R_c²) accepted for a uniform-disk cloud with a minimum separation. */
export const MAX_PACKING_FRACTION = 0.5;

/** The `parameters` schema of the `point-vortex-2d` engine (output type: {@link PointVortexParams}). */
export const pointVortexParamsSchema = z.object({
  lengthUnit: z.string().min(1).default("ℓ").describe(
    'Label of the length unit shown in reports (e.g. "ℓ₀", "µm"); the numerics use κ = 1.',
  ),
  domain: domainSchema.default({ kind: "unbounded" }),
  initial: initialSchema,
  friction: frictionSchema.default({ alpha: 0, alphaPrime: 0, normalVelocity: [0, 0] }),
  annihilationDistance: nonNegative().default(0).describe(
    "Opposite-sign vortices closer than this annihilate (disk: a vortex closer than half of it to the wall " +
      "annihilates with its image), in length units ℓ; 0 = no annihilation.",
  ),
  integrator: integratorSchema.default({
    absoluteTolerance: 1e-12,
    stepCapFactor: 0.2,
    maxSteps: 100_000_000,
  }),
}).strict().superRefine((p, ctx) => {
  const init = p.initial;
  const dom = p.domain;
  if (init.kind === "random-cloud") {
    const n = init.count;
    const nPlusExact = n * (1 + init.polarity) / 2;
    // zod runs this refinement even when a field failed: a count that is not a whole number ≥ 1 is reported
    // by its own rule, with nothing more to say about it here.
    const countOk = Number.isInteger(n) && n >= 1;
    if (countOk && init.polarity === 0 && n % 2 !== 0) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "count"],
        message:
          `count ${n} is odd: with polarity 0 the cloud has N/2 vortices of each sign, so N must be even`,
      });
    } else if (countOk && Math.abs(nPlusExact - Math.round(nPlusExact)) > 1e-9) {
      const allowed = Array.from({ length: Math.min(n, 8) + 1 }, (_, k) => `${(2 * k - n) / n}`).join(", ");
      ctx.addIssue({
        code: "custom",
        path: ["initial", "polarity"],
        message:
          `polarity ${init.polarity} with count ${n} gives N₊ = N(1+p)/2 = ${nPlusExact}, not an integer; ` +
          `allowed values are p = (2N₊ − N)/N for integer N₊ in 0..N (e.g. ${allowed}${n > 8 ? ", …" : ""})`,
      });
    }
    const [cx, cy] = init.centre;
    const reach = init.shape === "uniform-disk" ? init.radius : 3 * init.radius;
    const what = init.shape === "uniform-disk" ? "radius" : "3σ (3 × radius)";
    if (dom.kind === "disk") {
      const extent = Math.hypot(cx, cy) + reach;
      if (extent >= dom.radius) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "radius"],
          message: `the cloud (|centre| + ${what} = ${extent}) must lie inside the disk domain of radius ` +
            `${dom.radius}`,
        });
      }
    }
    if (dom.kind === "periodic" && 2 * reach > dom.side) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "radius"],
        message: `the cloud (diameter 2 × ${what} = ${
          2 * reach
        }) must fit in the periodic box of side ${dom.side}`,
      });
    }
    if (dom.kind === "periodic" && !dom.neutralizingBackground && init.polarity !== 0) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "polarity"],
        message: "a periodic box needs zero total circulation (polarity 0), or set " +
          "domain.neutralizingBackground: true to accept a uniform compensating background vorticity",
      });
    }
    if (init.shape === "uniform-disk" && init.minSeparation > 0) {
      const packing = n * init.minSeparation ** 2 / (4 * init.radius ** 2);
      if (packing > MAX_PACKING_FRACTION) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "minSeparation"],
          message:
            `minSeparation ${init.minSeparation} is too large for ${n} vortices in radius ${init.radius}: ` +
            `packing fraction N·d²/(4R_c²) = ${packing.toPrecision(3)} exceeds ${MAX_PACKING_FRACTION} ` +
            "(random sequential placement jams near 0.55)",
        });
      }
    }
    if (p.annihilationDistance > 0 && init.minSeparation < p.annihilationDistance) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "minSeparation"],
        message:
          `minSeparation ${init.minSeparation} is below annihilationDistance ${p.annihilationDistance}: ` +
          "opposite-sign pairs would annihilate at the first step (use minSeparation ≥ 2 × annihilationDistance)",
      });
    }
  } else {
    const vs = init.vortices;
    let total = 0;
    for (let i = 0; i < vs.length; i++) {
      total += vs[i].circulation;
      if (dom.kind === "disk" && Math.hypot(vs[i].x, vs[i].y) >= dom.radius) {
        ctx.addIssue({
          code: "custom",
          path: ["initial", "vortices", i],
          message: `vortex at (${vs[i].x}, ${vs[i].y}) is not inside the disk domain of radius ${dom.radius}`,
        });
      }
    }
    if (vs.length <= 5000) {
      for (let i = 0; i < vs.length; i++) {
        for (let j = 0; j < i; j++) {
          let dx = vs[i].x - vs[j].x;
          let dy = vs[i].y - vs[j].y;
          if (dom.kind === "periodic") {
            dx -= dom.side * Math.round(dx / dom.side);
            dy -= dom.side * Math.round(dy / dom.side);
          }
          if (dx === 0 && dy === 0) {
            ctx.addIssue({
              code: "custom",
              path: ["initial", "vortices", i],
              message: `vortex ${i} sits on vortex ${j} (${vs[j].x}, ${
                vs[j].y
              }): coincident vortices are singular`,
            });
          }
        }
      }
    }
    if (dom.kind === "periodic" && !dom.neutralizingBackground && Math.abs(total) > 1e-12 * vs.length) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "vortices"],
        message: `total circulation ΣΓ = ${total}: a periodic box needs ΣΓ = 0, or set ` +
          "domain.neutralizingBackground: true to accept a uniform compensating background vorticity",
      });
    }
  }
});

/** Validated, defaults-filled parameters of the `point-vortex-2d` engine. */
export type PointVortexParams = z.infer<typeof pointVortexParamsSchema>;
