import { meanAndSd, projectedHalfWidth, realisationsFor, steinInterval, steinSampleSize } from "./stein.ts";
import { assert, assertClose, assertEquals, assertThrows } from "../../test/_assert.ts";

// Stein's two-stage procedure: C. Stein, Ann. Math. Statist. 16, 243 (1945), doi:10.1214/aoms/1177731088.

Deno.test("steinSampleSize: N = max(n₀, ⌈(t·s/h)²⌉) with Student's t at n₀ − 1 degrees of freedom", () => {
  // t_{0.975, 9} = 2.262157 (standard tables, e.g. Abramowitz & Stegun table 26.10).
  const p = steinSampleSize({ n: 10, sd: 2 }, { halfWidth: 0.5 });
  assertClose(p.t, 2.262157, 1e-6, "t quantile");
  assertEquals(p.required, Math.ceil((2.262157 * 2 / 0.5) ** 2));
  assertEquals(p.total, 82);
  assert(p.reachable);
  const small = steinSampleSize({ n: 10, sd: 0.1 }, { halfWidth: 0.5 });
  assertEquals(small.total, 10, "never fewer than the first stage");
  const capped = steinSampleSize({ n: 10, sd: 2 }, { halfWidth: 0.5, cap: 40 });
  assertEquals(capped.total, 40);
  assert(!capped.reachable);
});

Deno.test("steinInterval: half-width t·s₁/√N is at most the target when the cap does not bind", () => {
  const p = steinSampleSize({ n: 12, sd: 3.1 }, { halfWidth: 0.7 });
  const ci = steinInterval(p, 5, p.total);
  assert(ci.halfWidth <= 0.7 + 1e-12, `half-width ${ci.halfWidth} > 0.7`);
  assertClose(ci.upper - ci.lower, 2 * ci.halfWidth, 1e-12, "width");
});

Deno.test("steinSampleSize: refuses a first stage below 2, a non-positive target and a cap below n₀", () => {
  assertThrows(() => steinSampleSize({ n: 1, sd: 1 }, { halfWidth: 1 }), RangeError, "≥ 2");
  assertThrows(() => steinSampleSize({ n: 5, sd: 1 }, { halfWidth: 0 }), RangeError, "half-width");
  assertThrows(() => steinSampleSize({ n: 5, sd: 1 }, { halfWidth: 1, cap: 3 }), RangeError, "cap");
  assertThrows(() => steinSampleSize({ n: 5, sd: Number.NaN }, { halfWidth: 1 }), RangeError, "sd");
});

Deno.test("projectedHalfWidth and realisationsFor are inverse to each other", () => {
  // t_{0.975, 63} = 1.998341 (tables).
  assertClose(projectedHalfWidth(1, 64), 1.998341 / 8, 1e-5, "hw at N = 64");
  const N = realisationsFor(1, 0.25);
  assert(projectedHalfWidth(1, N) <= 0.25 && projectedHalfWidth(1, N - 1) > 0.25, `N = ${N}`);
  assertEquals(realisationsFor(0, 0.1), 2);
  assertEquals(realisationsFor(Number.NaN, 0.1), Infinity);
});

Deno.test("meanAndSd: skips non-finite values; sd needs two", () => {
  const m = meanAndSd([1, 2, Number.NaN, 3]);
  assertEquals(m.n, 3);
  assertClose(m.mean, 2, 1e-15, "mean");
  assertClose(m.sd, 1, 1e-15, "sd");
  assert(Number.isNaN(meanAndSd([4]).sd));
});
