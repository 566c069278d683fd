/**
 * What `spindrift audit` varies for the 3D filament engine, and which invariants the analysis checks.
 *
 * Refinement (edit here when the numerics change — e.g. when the nonlocal sum or the time stepping gets new
 * settings): the point spacing δ halved (the reconnection distance δ_r = reconnectionFactor·δ and the band
 * [δ_min, δ] follow it, since both are set relative to δ), the time-step factor halved (dt = c·h_min²/(κΛ),
 * on top of the ÷4 that δ/2 brings), the tree's opening angle θ halved (periodic boxes use the tree), and the
 * fast multipole method's opening parameter × 0.7 (unbounded domains from 2000 points: its error falls as θ^p,
 * p = 5 by default, so × 0.7 cuts it about sixfold while the cost grows about threefold). The physics pass halves and doubles the reconnection distance (reconnectionFactor ≤ 1).
 *
 * Invariants (docs/methods.md §7.2): the engine reports the relative drift of the impulse and the energy only
 * in the unbounded domain without friction or normal flow; reconnections and loop removals change both, so
 * realisations with either are not checked. Thresholds are our choice, well above what the default numerics
 * give: a single ring keeps both to round-off (symmetry), three interacting rings at δ = 0.2R drifted by
 * ≤ 5e-5 (energy) and ≤ 7e-4 (impulse, through the remeshing's new points) over about one ring crossing time
 * (our measurement).
 */
import type { ConservationCheck, RefinementTable, RunControls } from "../contract.ts";
import type { FilamentParams } from "./params.ts";
import { heliumAt } from "./helium.ts";

export const FILAMENT_REFINEMENT: RefinementTable = {
  variants: [
    {
      id: "numerics",
      pass: "numerics",
      rules: [
        { path: "resolution", factor: 0.5 },
        { path: "numerics.dtFactor", factor: 0.5 },
        { path: "numerics.theta", factor: 0.5 },
        { path: "numerics.fmm.theta", factor: 0.7 },
      ],
    },
    {
      id: "reconnectionFactor*0.5",
      pass: "physics",
      rules: [{ path: "numerics.reconnectionFactor", factor: 0.5 }],
    },
    {
      id: "reconnectionFactor*2",
      pass: "physics",
      rules: [{ path: "numerics.reconnectionFactor", factor: 2 }],
    },
  ],
  notes: [
    "the physics pass varies the reconnection distance, the 3D counterpart of the annihilation distance",
  ],
};

const SKIP = [
  { scalar: "reconnections", reason: "reconnections change the energy and the impulse" },
  { scalar: "loops_removed", reason: "removed loops take energy and impulse with them" },
];

/** The invariants of a filament point (see the module comment). */
export function filamentConservation(p: FilamentParams, _controls: RunControls): ConservationCheck {
  const f = p.friction;
  const [alpha, alphaPrime] = f.kind === "coefficients"
    ? [f.alpha, f.alphaPrime]
    : f.kind === "temperature"
    ? [heliumAt(f.temperature).alpha, heliumAt(f.temperature).alphaPrime]
    : [0, 0];
  const why: string[] = [];
  if (p.domain.kind !== "unbounded") why.push("the periodic box's images exchange energy and impulse");
  if (alpha !== 0 || alphaPrime !== 0) {
    why.push(`mutual friction (α = ${alpha.toPrecision(3)}, α′ = ${alphaPrime.toPrecision(3)}) acts`);
  }
  if (p.heater !== undefined || p.normalVelocity.some((v) => v !== 0)) {
    why.push("a normal-fluid flow drives the lines");
  }
  if (why.length > 0) {
    const reason = why.join("; ");
    return {
      invariants: [],
      notConserved: [{ quantity: "energy", reason }, { quantity: "impulse", reason }],
    };
  }
  return {
    invariants: [
      {
        scalar: "drift.energy",
        quantity: "energy",
        threshold: 1e-3,
        basis: "our choice: 20× the drift of three interacting rings at default numerics (5e-5)",
        unlessNonzero: SKIP,
      },
      {
        scalar: "drift.impulse",
        quantity: "impulse",
        threshold: 1e-2,
        basis:
          "our choice: 14× the drift of three interacting rings at default numerics (7e-4, from remeshing)",
        unlessNonzero: SKIP,
      },
    ],
    notConserved: [],
  };
}
