/**
 * The `point-vortex-2d` engine: quantized point vortices (Γ = ±κ, or any nonzero Γ for explicit states) in the
 * unbounded plane, a disk or a doubly periodic square box, with optional mutual friction and annihilation.
 *
 * @example
 * ```ts
 * import { pointVortexEngine } from "./engine.ts";
 * const params = pointVortexEngine.paramsSchema.parse({
 *   initial: { kind: "random-cloud", count: 32, radius: 4 },
 * });
 * ```
 */
import type { Engine } from "../contract.ts";
import { pointVortexSizeHint } from "./size_hint.ts";
import { type PointVortexParams, pointVortexParamsSchema } from "./params.ts";
import { POINT_VORTEX_STARTER } from "./starter.ts";
import { squared } from "../units.ts";
import { simulate } from "./simulate.ts";
import { POINT_VORTEX_REFINEMENT, pointVortexConservation } from "./credibility.ts";

export const pointVortexEngine: Engine<PointVortexParams> = {
  id: "point-vortex-2d",
  version: "1.1.0",
  title: "2D point vortices (direct sum, Dormand–Prince 5(4), images / periodic box, mutual friction)",
  capabilities: {
    dimension: 2,
    fields: ["circulation"],
    objects: "vortex",
    events: {
      annihilation: "a vortex–antivortex pair closer than the annihilation distance was removed " +
        "(ids: the two vortices; data: x1, y1, x2, y2, separation)",
      "wall-annihilation":
        "a vortex closer to the disk wall than half the annihilation distance was removed " +
        "with its image (ids: the vortex; data: x, y, wallDistance)",
    },
    diagnostics: {
      hamiltonian: "interaction energy H = −(1/2π) Σ_{i<j} Γ_iΓ_j ln|r_i − r_j| (+ image terms in a disk, " +
        "periodic Green's function in a box), in κ² (energy per unit length / ρ_s)",
      impulse_x: "linear impulse Q = Σ Γ_i x_i (unwrapped positions in a periodic box), in κ·ℓ",
      impulse_y: "linear impulse P = Σ Γ_i y_i (unwrapped positions in a periodic box), in κ·ℓ",
      angular_impulse: "angular impulse I = Σ Γ_i |r_i|² (about the origin), in κ·ℓ²",
    },
    units: { length: "ℓ (the study's length unit)", time: "ℓ²/κ", circulation: "κ" },
  },
  paramsSchema: pointVortexParamsSchema,
  starter: POINT_VORTEX_STARTER,
  sizeHint: pointVortexSizeHint,
  refinement: POINT_VORTEX_REFINEMENT,
  conservation: pointVortexConservation,
  scales(params) {
    const l = params.lengthUnit;
    return { units: { length: l, time: `${squared(l)}/κ`, circulation: "κ" } };
  },
  run(input, sink) {
    return simulate(input, sink);
  },
};
