import assert from "node:assert/strict";
import { assertClose, assertWithin } from "./_check.ts";
import { pointDifference, trendFit } from "./compare_points.ts";
import { streamFromSeed } from "./seed.ts";

/** B normal replicates with mean m and standard deviation s. */
function normalReplicates(seed: string, m: number, s: number, B = 20_000): Float64Array {
  const rng = streamFromSeed(seed);
  return Float64Array.from({ length: B }, () => m + s * rng.normal());
}

Deno.test("pointDifference: the interval of D_a − D_b from independent replicates is (D_a − D_b) ± 1.96√(s_a² + s_b²)", () => {
  // Difference of independent normal estimates: variance s_a² + s_b² (elementary statistics); the percentile
  // interval of replicate differences (Efron & Tibshirani 1993, ch. 13) approaches it for large B.
  const a = { D: 0.46, replicates: normalReplicates("a", 0.46, 0.02) };
  const b = { D: 0.42, replicates: normalReplicates("b", 0.42, 0.015) };
  const { difference, ratio } = pointDifference(a, b);
  const half = 1.959964 * Math.hypot(0.02, 0.015);
  assertClose(difference.value, 0.04, { abs: 1e-15 }, "ΔD");
  assertClose(difference.interval!.lower, 0.04 - half, { abs: 0.002 }, "lower");
  assertClose(difference.interval!.upper, 0.04 + half, { abs: 0.002 }, "upper");
  assert.equal(difference.method, "percentile");
  assert.equal(difference.detectable, 0.04 - half > 0);
  assertClose(ratio.value, 0.46 / 0.42, { rel: 1e-12 }, "ratio");
  assertWithin(
    1,
    ratio.interval!.lower - 1e-9,
    ratio.interval!.upper,
    "ratio interval holds 1 when ΔD's holds 0",
  );
  // A clear difference is detectable; leave-one-out values switch the interval to BCa.
  const c = {
    D: 0.6,
    replicates: normalReplicates("c", 0.6, 0.02),
    jackknife: Float64Array.from({ length: 30 }, (_, i) => 0.6 + 0.001 * (i - 14.5)),
  };
  const d = {
    D: 0.4,
    replicates: normalReplicates("d", 0.4, 0.02),
    jackknife: Float64Array.from({ length: 30 }, (_, i) => 0.4 + 0.001 * (i - 14.5)),
  };
  const cd = pointDifference(c, d).difference;
  assert.equal(cd.detectable, true);
  assert.equal(cd.method, "bca");
  assert.throws(
    () => pointDifference(a, { D: 1, replicates: new Float64Array(3) }),
    /same number of replicates/,
  );
});

Deno.test("trendFit: weighted slope of D against a parameter with its bootstrap interval", () => {
  // D = 0.3 + 0.002·x exactly at x = 50, 100, 150, replicates with standard error 0.01: weighted least squares
  // (Bevington & Robinson (2003) ch. 6) gives the exact slope and an interval of ±1.96·se/√Σ(x − x̄)².
  const x = [50, 100, 150];
  const answers = x.map((v, i) => ({
    D: 0.3 + 0.002 * v,
    replicates: normalReplicates(`t${i}`, 0.3 + 0.002 * v, 0.01),
  }));
  const fit = trendFit(x, answers);
  assertClose(fit.slope.value, 0.002, { rel: 1e-12 }, "slope");
  const half = (1.959964 * 0.01) / Math.sqrt(5000);
  assertClose(fit.slope.interval!.lower, 0.002 - half, { abs: 1e-5 }, "lower");
  assertClose(fit.slope.interval!.upper, 0.002 + half, { abs: 1e-5 }, "upper");
  assert.equal(fit.slope.detectable, true);
  assertClose(fit.reducedChi2!, 0, { abs: 1e-20 }, "points on the line");
  const flat = trendFit([1, 2], [{ D: 0.4, replicates: normalReplicates("f1", 0.4, 0.05) }, {
    D: 0.41,
    replicates: normalReplicates("f2", 0.41, 0.05),
  }]);
  assert.equal(flat.slope.detectable, false);
  assert.equal(flat.reducedChi2, null);
  assert.throws(() => trendFit([1, 1], answers.slice(0, 2)), /two distinct values/);
});
