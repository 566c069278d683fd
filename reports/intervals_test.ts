import assert from "node:assert/strict";
import { studentTQuantile } from "../analysis/estimators/mod.ts";
import { intervalFromMoments, meanInterval, NO_INTERVAL_N0, NO_INTERVAL_N1, Welford } from "./intervals.ts";
import { assertClose } from "./_testing.ts";

// Student-t two-sided 95 % quantiles t_{0.975,ν}: Abramowitz & Stegun (1964) Table 26.10; NIST/SEMATECH
// e-Handbook §1.3.6.7.2 (as tabulated in docs/check-values.md §6.3, 4 decimals).
const T_975: readonly [number, number][] = [
  [1, 12.7062],
  [2, 4.3027],
  [3, 3.1824],
  [4, 2.7764],
  [5, 2.5706],
  [6, 2.4469],
  [7, 2.3646],
  [8, 2.3060],
  [9, 2.2622],
  [10, 2.2281],
  [12, 2.1788],
  [15, 2.1314],
  [19, 2.0930],
  [20, 2.0860],
  [24, 2.0639],
  [29, 2.0452],
  [30, 2.0423],
  [40, 2.0211],
  [60, 2.0003],
  [120, 1.9799],
  [Infinity, 1.9600],
];

Deno.test("studentTQuantile matches the A&S Table 26.10 / NIST t_{0.975,ν} values to 1e-4", () => {
  for (const [nu, table] of T_975) {
    const got = studentTQuantile(0.975, nu);
    // Relative tolerance 1e-4 (the table has 4 decimals); also the value must round to the table entry.
    assertClose(got, table, 1e-4, `t_{0.975,${nu}}`);
    assert.equal(Math.round(got * 1e4) / 1e4, table, `t_{0.975,${nu}} = ${got} does not round to ${table}`);
  }
});

Deno.test("studentTQuantile is antisymmetric about p = 0.5 and refuses bad arguments", () => {
  // Symmetry of the t distribution: t_{1−p} = −t_p (A&S §26.7). Relative tolerance 1e-12.
  assertClose(studentTQuantile(0.025, 7), -studentTQuantile(0.975, 7), 1e-12, "t_{0.025,7}");
  assert.throws(() => studentTQuantile(1, 3), /probability must be in \(0, 1\)/);
  assert.throws(() => studentTQuantile(0.5, 0), /degrees of freedom must be a positive/);
});

Deno.test("meanInterval on [2,4,4,4,5,5,7,9] equals the hand computation", () => {
  // By hand: mean = 40/8 = 5; Σ(x − 5)² = 9+1+1+1+0+0+4+16 = 32; s² = 32/7; s/√8 = √(32/56) = √(4/7);
  // half-width = t_{0.975,7} · √(4/7) with t_{0.975,7} = 2.3646 (A&S Table 26.10) → 1.78750.
  // Relative tolerance 1e-4: the table quantile has 4 decimals.
  const ci = meanInterval([2, 4, 4, 4, 5, 5, 7, 9]);
  const half = 2.3646 * Math.sqrt(4 / 7);
  assert.equal(ci.n, 8);
  assertClose(ci.mean, 5, 1e-15, "mean");
  assertClose(ci.sd, Math.sqrt(32 / 7), 1e-14, "sd");
  assertClose(ci.sem, Math.sqrt(4 / 7), 1e-14, "sem");
  assertClose(ci.lower!, 5 - half, 1e-4, "lower");
  assertClose(ci.upper!, 5 + half, 1e-4, "upper");
  assert.equal(ci.level, 0.95);
  assert.equal(ci.note, null);
});

Deno.test("meanInterval on [1,2,3] at 95 % and 90 % equals the hand computation", () => {
  // By hand: mean 2, s = 1, s/√3; t_{0.975,2} = 4.3027 (A&S Table 26.10 / NIST §1.3.6.7.2, docs/check-values.md §6.3);
  // t_{0.95,2} = 2.920 (same tables; this one value quoted from memory). Relative tolerance 1e-4.
  const ci95 = meanInterval([1, 2, 3]);
  assertClose(ci95.upper!, 2 + 4.3027 / Math.sqrt(3), 1e-4, "upper 95 %");
  assertClose(ci95.lower!, 2 - 4.3027 / Math.sqrt(3), 1e-4, "lower 95 %");
  const ci90 = meanInterval([1, 2, 3], { level: 0.9 });
  assertClose(ci90.upper!, 2 + 2.92 / Math.sqrt(3), 1e-4, "upper 90 %");
});

Deno.test("meanInterval with n = 1 gives the mean and no interval, n = 0 gives neither", () => {
  const one = meanInterval([3.5]);
  assert.equal(one.n, 1);
  assert.equal(one.mean, 3.5);
  assert.equal(one.lower, null);
  assert.equal(one.upper, null);
  assert.ok(Number.isNaN(one.sd));
  assert.equal(one.note, NO_INTERVAL_N1);
  const none = meanInterval([]);
  assert.equal(none.n, 0);
  assert.ok(Number.isNaN(none.mean));
  assert.equal(none.note, NO_INTERVAL_N0);
});

Deno.test("meanInterval skips NaN and infinite values", () => {
  const ci = meanInterval([1, Number.NaN, 2, Infinity, 3]);
  assert.equal(ci.n, 3);
  assertClose(ci.mean, 2, 1e-15, "mean");
  assertClose(ci.sd, 1, 1e-15, "sd");
});

Deno.test("intervalFromMoments refuses a confidence level outside (0, 1)", () => {
  assert.throws(() => intervalFromMoments(3, 0, 1, 1.5), /confidence level must be in \(0, 1\)/);
});

Deno.test("Welford matches the two-pass variance and keeps precision with a large offset", () => {
  // Two-pass formula Σ(x − x̄)²/(n − 1) as reference (common practice, no source). Values 1e9 + {4, 7, 13, 16}:
  // the naive Σx² − n x̄² formula loses all digits here (Chan, Golub & LeVeque, Am. Stat. 37, 242 (1983)).
  const xs = [4, 7, 13, 16].map((d) => 1e9 + d);
  const w = new Welford();
  for (const x of xs) w.push(x);
  // By hand: offsets 4, 7, 13, 16 have mean 10 and Σ(d − 10)² = 36 + 9 + 9 + 36 = 90, s² = 30.
  assert.equal(w.n, 4);
  assertClose(w.mean, 1e9 + 10, 1e-15, "mean");
  assertClose(w.variance, 30, 1e-9, "variance");
  assertClose(w.sd, Math.sqrt(30), 1e-9, "sd");
  w.reset();
  assert.equal(w.n, 0);
  assert.ok(Number.isNaN(w.mean));
  w.push(2);
  assert.ok(Number.isNaN(w.variance), "variance of one value is undefined");
});
