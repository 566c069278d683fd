/**
 * What `spindrift audit` varies for the Gross–Pitaevskii engine, and which invariants the analysis checks.
 *
 * Refinement (edit here when the numerics change): grid spacing and time step halved, the grid doubled in
 * points so the domain stays the same (grids stop at 1024 points: a 1024-point study cannot be refined and the
 * audit says so). There is no physics pass: annihilation is resolved by the equation itself, not set by a
 * distance.
 *
 * Invariants (docs/methods.md §7.3): without damping (γ = 0) the split step keeps the norm to round-off and the
 * energy to O(dt²) (W. Bao, D. Jaksch, P.A. Markowich, J. Comput. Phys. 187, 318 (2003),
 * doi:10.1016/S0021-9991(03)00102-5); the engine then reports both drifts. Thresholds are our choice: 1e-10
 * for the norm, 1e-5 for the energy (the default step 0.1 ξ²/κ drifted by ≤ 5e-7 on a 32² box with four
 * vortices over 6 time units, dt = 1 by 6e-5; our measurement).
 */
import type { ConservationCheck, RefinementTable, RunControls } from "../contract.ts";
import type { GpParams } from "./params.ts";

export const GP_REFINEMENT: RefinementTable = {
  variants: [
    {
      id: "numerics",
      pass: "numerics",
      rules: [
        { path: "grid.spacing", factor: 0.5 },
        { path: "grid.points", factor: 2 },
        { path: "timeStep", factor: 0.5 },
      ],
    },
  ],
  notes: ["no physics pass: vortex annihilation is resolved by the equation, not set by a distance"],
};

/** The invariants of a Gross–Pitaevskii point (see the module comment). */
export function gpConservation(p: GpParams, _controls: RunControls): ConservationCheck {
  if (p.damping > 0) {
    const reason = `the damping γ = ${p.damping} removes atoms and energy`;
    return {
      invariants: [],
      notConserved: [{ quantity: "norm", reason }, { quantity: "energy", reason }],
    };
  }
  return {
    invariants: [
      {
        scalar: "drift.norm",
        quantity: "norm",
        threshold: 1e-10,
        basis: "round-off: every sub-step of the split step is unitary",
      },
      {
        scalar: "drift.energy",
        quantity: "energy",
        threshold: 1e-5,
        basis: "our choice: 20× the drift at the default time step (≤ 5e-7)",
      },
    ],
    notConserved: [],
  };
}
