import assert from "node:assert/strict";
import { assertClose } from "./_check.ts";
import { brentMinimize } from "./brent.ts";

// Accuracy of Brent's method: x within about 3ε|x| + t of the minimiser (Brent 1973, ch. 5, §5), ε = √eps.
const EPS = Math.sqrt(Number.EPSILON);

Deno.test("brentMinimize finds the minimum of cos on [3, 4] at π", () => {
  // cos has its minimum −1 at π (exact).
  const r = brentMinimize(Math.cos, 3, 4, { tolerance: 1e-12 });
  assert.ok(r.converged);
  assertClose(r.x, Math.PI, { abs: 3 * EPS * Math.PI + 1e-12 }, "x");
  assertClose(r.fx, -1, { abs: 1e-14 }, "f(x)");
});

Deno.test("brentMinimize locates the minimum of x³ − 2x − 5 on [0, 2] at √(2/3)", () => {
  // Forsythe, Malcolm & Moler (1977) §8.2 use f(x) = x³ − 2x − 5 for fmin [from memory]; f'(x) = 3x² − 2 = 0.
  const r = brentMinimize((x) => x * x * x - 2 * x - 5, 0, 2, { tolerance: 1e-10 });
  assertClose(r.x, Math.sqrt(2 / 3), { abs: 3 * EPS + 1e-10 }, "x");
});

Deno.test("brentMinimize converges superlinearly on a parabola", () => {
  // Parabolic interpolation is exact for a quadratic (Brent 1973, ch. 5): far fewer evaluations than the
  // ≈ log(5/1e-8)/log(1.618) ≈ 41 a pure golden-section search needs for the same tolerance.
  const r = brentMinimize((x) => (x - 2) ** 2 + 1, 0, 5, { tolerance: 1e-8 });
  assertClose(r.x, 2, { abs: 3 * EPS * 2 + 1e-8 }, "x");
  assert.ok(r.evaluations < 20, `evaluations ${r.evaluations}`);
});

Deno.test("brentMinimize handles a non-smooth minimum and a minimum at the interval edge", () => {
  // |x − 0.3| has its kink minimum at 0.3; x on [1, 2] is minimal at the left end (exact).
  const k = brentMinimize((x) => Math.abs(x - 0.3), 0, 1, { tolerance: 1e-10 });
  assertClose(k.x, 0.3, { abs: 3 * EPS * 0.3 + 1e-9 }, "kink");
  const e = brentMinimize((x) => x, 1, 2, { tolerance: 1e-9 });
  assertClose(e.x, 1, { abs: 3 * EPS + 1e-8 }, "left end");
});

Deno.test("brentMinimize reports non-convergence when the evaluation budget runs out", () => {
  const r = brentMinimize(Math.cos, 3, 4, { tolerance: 1e-12, maxEvaluations: 3 });
  assert.equal(r.converged, false);
  assert.equal(r.evaluations, 3);
});

Deno.test("brentMinimize rejects bad intervals and NaN objectives", () => {
  assert.throws(() => brentMinimize(Math.cos, 4, 3), /finite interval/);
  assert.throws(() => brentMinimize(() => Number.NaN, 0, 1), /NaN/);
});
