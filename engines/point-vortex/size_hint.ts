/**
 * The point-vortex engine's pre-flight hint: vortices per frame (they only disappear, by annihilation), and a
 * warning when the direct O(N²) velocity sums make every step slow.
 *
 * Cost model: one velocity evaluation visits N(N−1)/2 pairs; a Dormand–Prince step takes 6 evaluations (the
 * 7th stage is reused). At about 1e9 pairs/s (the symmetric TypeScript kernel, N = 4000: 16.8 ms per
 * evaluation on the project's reference machine, notes in DEVELOPERS.md) a step costs 3e-9·N² s.
 */
import type { SizeHint } from "../contract.ts";
import type { PointVortexParams } from "./params.ts";

/** Pairs per second assumed for the warning (order of magnitude; machine-dependent). */
const PAIRS_PER_SECOND = 1e9;
/** Warn when one step is estimated to take longer than this (seconds). */
const SLOW_STEP_S = 10;

export function pointVortexSizeHint(params: PointVortexParams): SizeHint {
  const n = params.initial.kind === "random-cloud" ? params.initial.count : params.initial.vortices.length;
  const stepSeconds = (6 * n * (n - 1) / 2) / PAIRS_PER_SECOND;
  const notes = stepSeconds > SLOW_STEP_S
    ? [
      `${n} vortices: every integration step sums 6 × N²/2 = ${(3 * n * n).toExponential(1)} vortex pairs ` +
      `(direct O(N²) sums), about ${Math.round(stepSeconds)} s per step at 1e9 pairs/s, and a frame takes ` +
      "many steps: expect hours per frame; fewer vortices or a shorter run give results this week",
    ]
    : [];
  return { objects: n, notes };
}
