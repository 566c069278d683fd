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
import { checkCloud, cloudReach, randomCloudSchema as randomCloudSchemaFor } from "../_cloud.ts";

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

/**
 * A random ± cloud (docs/methods.md §3.2): the shared cloud schema, with a `minSeparation` whose default depends
 * on the annihilation distance (resolved by the transform at the end of {@link pointVortexParamsSchema}).
 */
export const randomCloudSchema = randomCloudSchemaFor("length units ℓ").extend({
  minSeparation: nonNegative().optional().describe(
    "Hard-core minimum distance between any two vortices, in length units ℓ (enforced by rejection; 0 = off). " +
      "Default: 2 × annihilationDistance (0 without annihilation), so that no pair annihilates at the first step.",
  ),
});

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

export { MAX_PACKING_FRACTION } from "../_cloud.ts";

/** `minSeparation` when a random cloud leaves it out: twice the annihilation distance (0 without annihilation). */
export function defaultMinSeparation(annihilationDistance: number): number {
  return 2 * annihilationDistance;
}

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
    const minSeparation = init.minSeparation ?? defaultMinSeparation(p.annihilationDistance);
    checkCloud({ ...init, minSeparation }, ctx, {
      path: ["initial"],
      minSeparationNote: init.minSeparation === undefined
        ? " (the default, 2 × annihilationDistance)"
        : undefined,
    });
    const [cx, cy] = init.centre;
    const { reach, what } = cloudReach(init);
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
    if (p.annihilationDistance > 0 && minSeparation < p.annihilationDistance) {
      ctx.addIssue({
        code: "custom",
        path: ["initial", "minSeparation"],
        message: `minSeparation ${minSeparation} is below annihilationDistance ${p.annihilationDistance}: ` +
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
}).transform((p) => {
  const init = p.initial;
  if (init.kind !== "random-cloud") return { ...p, initial: init };
  const minSeparation = init.minSeparation ?? defaultMinSeparation(p.annihilationDistance);
  return { ...p, initial: { ...init, minSeparation } };
});

/** Validated, defaults-filled parameters of the `point-vortex-2d` engine. */
export type PointVortexParams = z.output<typeof pointVortexParamsSchema>;
