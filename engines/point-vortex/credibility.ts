/**
 * What `spindrift audit` varies for the 2D point-vortex engine, and which invariants the analysis checks.
 *
 * Refinement (edit here when the numerics change): the relative tolerance ÷10 and the step cap c (Δt ≤
 * c·d_min²/κ) at its default 0.2 when a study raised it, else ÷10; the physics pass halves and doubles the
 * annihilation distance (studies without annihilation skip it).
 *
 * Invariants (docs/methods.md §1.1, §7.1): without friction H, the linear impulse (not in a disk) and the
 * angular impulse (not in a periodic box) are conserved; the engine reports their relative drift only then
 * (`simulate.ts`), adding back what annihilated vortices carried away. Thresholds are our choice: 1e-6 for H
 * and I — a 50-vortex cloud integrated over 20 time units at the default tolerance drifts by at most 5e-8 (our
 * measurement; Dormand–Prince with a max-norm error control is not symplectic, so H drifts slowly) — and 1e-9
 * for the linear impulse, which the antisymmetric direct sum conserves to round-off (E. Hairer, C. Lubich,
 * G. Wanner, Geometric Numerical Integration, 2nd ed. (Springer, 2006), §IV.1: Runge–Kutta methods conserve
 * linear invariants).
 */
import type { ConservationCheck, RefinementTable, RunControls } from "../contract.ts";
import type { PointVortexParams } from "./params.ts";

/** Default step cap factor of the integrator (params.ts). */
const DEFAULT_STEP_CAP = 0.2;

export const POINT_VORTEX_REFINEMENT: RefinementTable = {
  variants: [
    {
      id: "numerics",
      pass: "numerics",
      rules: [
        { path: "run.tolerance", factor: 0.1 },
        { path: "integrator.stepCapFactor", factor: 0.1, default: DEFAULT_STEP_CAP },
      ],
    },
    {
      id: "annihilationDistance*0.5",
      pass: "physics",
      rules: [{ path: "annihilationDistance", factor: 0.5, zeroMeans: "no annihilation in this study" }],
    },
    {
      id: "annihilationDistance*2",
      pass: "physics",
      rules: [{ path: "annihilationDistance", factor: 2, zeroMeans: "no annihilation in this study" }],
    },
  ],
  notes: [
    "velocities are exact direct sums: there is no summation accuracy to refine",
  ],
};

/** The invariants of a point-vortex point (see the module comment). */
export function pointVortexConservation(p: PointVortexParams, _controls: RunControls): ConservationCheck {
  const f = p.friction;
  const dissipative = f.alpha > 0 ||
    (f.alphaPrime !== 0 && (f.normalVelocity[0] !== 0 || f.normalVelocity[1] !== 0));
  if (dissipative) {
    const why =
      `mutual friction (α = ${f.alpha}, α′ = ${f.alphaPrime}) dissipates energy and changes the impulses`;
    return {
      invariants: [],
      notConserved: [
        { quantity: "Hamiltonian H", reason: why },
        { quantity: "linear impulse", reason: why },
        { quantity: "angular impulse", reason: why },
      ],
    };
  }
  const basisH = "our choice: 20× the largest drift of a 50-vortex cloud over 20 time units at the default " +
    "tolerance (5e-8)";
  const invariants: ConservationCheck["invariants"][number][] = [
    { scalar: "drift.hamiltonian", quantity: "Hamiltonian H", threshold: 1e-6, basis: basisH },
  ];
  const notConserved: ConservationCheck["notConserved"][number][] = [];
  if (p.domain.kind === "disk") {
    notConserved.push({ quantity: "linear impulse", reason: "the wall (image vortices) exchanges impulse" });
  } else {
    invariants.push({
      scalar: "drift.impulse",
      quantity: "linear impulse",
      threshold: 1e-9,
      basis: "round-off: the antisymmetric direct sum conserves it exactly in exact arithmetic",
    });
  }
  if (p.domain.kind === "periodic") {
    notConserved.push({ quantity: "angular impulse", reason: "a periodic box has no rotational symmetry" });
  } else {
    invariants.push({
      scalar: "drift.angular_impulse",
      quantity: "angular impulse",
      threshold: 1e-6,
      basis: "our choice, as for H (quadratic invariant, not conserved exactly by Runge–Kutta methods)",
    });
  }
  const notes = p.annihilationDistance > 0
    ? [
      "annihilations remove vortices; the engine adds back the energy and impulse they carried, so the drift " +
      "measures the integration error",
    ]
    : [];
  return { invariants, notConserved, notes };
}
