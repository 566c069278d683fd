import assert from "node:assert/strict";
import { EngineFailure } from "../contract.ts";
import { assertAbs, assertBelow, assertRel } from "./_testing.ts";
import { DormandPrince } from "./integrator.ts";
import { velocityUnbounded } from "./velocity.ts";

const g = Float64Array.of(1, 1);
const rhs = (n: number, x: Float64Array, y: Float64Array, u: Float64Array, v: Float64Array) =>
  velocityUnbounded(n, x, y, g, u, v);

/** Co-rotating unit pair at (±1/2, 0): rigid rotation at Ω = κ/(πd²) = 1/π (Saffman 1992 §7.3). */
function pair(
  options: { relativeTolerance: number; absoluteTolerance: number; maxSteps?: number },
): DormandPrince {
  const dp = new DormandPrince(2, rhs, { maxSteps: 1e7, ...options });
  dp.x.set([-0.5, 0.5]);
  dp.y.set([0, 0]);
  dp.start(2, 0);
  return dp;
}

/** Position error of vortex 1 after time T against the exact rotation. */
function errorAfter(dp: DormandPrince, T: number): number {
  const th = T / Math.PI;
  return Math.hypot(dp.x[1] - 0.5 * Math.cos(th), dp.y[1] - 0.5 * Math.sin(th));
}

Deno.test("DormandPrince converges at fifth order or better at fixed steps", () => {
  // Dormand & Prince, J. Comput. Appl. Math. 6, 19 (1980): the propagated solution has order 5, so halving a
  // fixed step divides the global error by at least ≈ 2⁵. (DP5's fifth-order error constants are small, so the
  // observed order at moderate steps often lies above 5; a wrong tableau entry drops it to ≤ 4.) Generic
  // three-vortex motion, Γ = (1, 2, −1/2); reference: the same integrator at tolerance 1e-14 (convergence
  // study, docs/methods.md §7.1). Loose tolerances keep the controller out of the way.
  const g3 = Float64Array.of(1, 2, -0.5);
  const rhs3 = (n: number, x: Float64Array, y: Float64Array, u: Float64Array, v: Float64Array) =>
    velocityUnbounded(n, x, y, g3, u, v);
  const make = (tol: number) => {
    const dp = new DormandPrince(3, rhs3, { relativeTolerance: tol, absoluteTolerance: tol, maxSteps: 1e7 });
    dp.x.set([0, 1, 0.3]);
    dp.y.set([0, 0.2, 1.1]);
    dp.start(3, 0);
    return dp;
  };
  const T = 10;
  const ref = make(1e-14);
  while (ref.t < T) ref.step(T, Infinity);
  const errors: number[] = [];
  for (const steps of [80, 160, 320]) {
    const dp = make(1);
    const h = T / steps;
    dp.proposedStep = h;
    for (let k = 1; k <= steps; k++) while (dp.t < k * h) dp.step(k * h, h);
    assert.equal(dp.accepted, steps, "one accepted step per target");
    let e = 0;
    for (let i = 0; i < 3; i++) e = Math.max(e, Math.hypot(dp.x[i] - ref.x[i], dp.y[i] - ref.y[i]));
    errors.push(e);
  }
  for (let k = 1; k < errors.length; k++) {
    const order = Math.log2(errors[k - 1] / errors[k]);
    console.log(`observed order ${order.toFixed(3)} (errors ${errors[k - 1]} → ${errors[k]})`);
    assertAbs(order, 6.1, 1.4, `observed order, steps ${80 << (k - 1)} → ${80 << k}`);
  }
});

Deno.test("DormandPrince adaptive error falls with the tolerance and lands exactly on the target time", () => {
  // Rotation rate Ω = κ/(πd²): docs/check-values.md §1.3. Global error should track the tolerance (common practice,
  // no source: for a well-conditioned rotation the global error over one period is within ~10³ × tol).
  const T = 2 * Math.PI * Math.PI;
  let previous = Infinity;
  for (const tol of [1e-6, 1e-8, 1e-10, 1e-12]) {
    const dp = pair({ relativeTolerance: tol, absoluteTolerance: tol });
    while (dp.t < T) dp.step(T, Infinity);
    assert.equal(dp.t, T, "t lands exactly on the target");
    const err = errorAfter(dp, T);
    assertBelow(err, 1e3 * tol, `error at tol ${tol}`);
    assertBelow(err, previous, `error decreases with tol (${tol})`);
    previous = err;
  }
});

Deno.test("DormandPrince respects the step cap and reports the minimum separation", () => {
  const dp = pair({ relativeTolerance: 1e-10, absoluteTolerance: 1e-12 });
  assertRel(dp.minSeparation2, 1, 1e-15, "d_min² at start");
  let last = 0;
  while (dp.t < 1) {
    dp.step(1, 0.01);
    assertBelow(dp.t - last, 0.01 * (1 + 1e-12), "step size");
    last = dp.t;
  }
  // The pair distance is invariant (co-rotation), so d_min² stays 1.
  assertRel(dp.minSeparation2, 1, 1e-9, "d_min² after steps");
});

Deno.test("DormandPrince fails with step-underflow when maxSteps is used up", () => {
  const dp = pair({ relativeTolerance: 1e-10, absoluteTolerance: 1e-12, maxSteps: 3 });
  assert.throws(
    () => {
      while (dp.t < 100) dp.step(100, 0.01);
    },
    (e: unknown) => e instanceof EngineFailure && e.kind === "step-underflow" && /maxSteps/.test(e.message),
  );
});

Deno.test("DormandPrince refuses to start from coincident vortices with a nan failure", () => {
  const dp = new DormandPrince(2, rhs, { relativeTolerance: 1e-10, absoluteTolerance: 1e-12, maxSteps: 10 });
  dp.x.set([0.5, 0.5]);
  dp.y.set([0, 0]);
  assert.throws(() => dp.start(2, 0), (e: unknown) => e instanceof EngineFailure && e.kind === "nan");
});
