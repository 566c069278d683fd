import assert from "node:assert/strict";
import { assertClose, assertWithin } from "./_check.ts";
import { chiSquareDiffusionInterval } from "./chi2.ts";
import { streamFromSeed } from "./seed.ts";

Deno.test("chiSquareDiffusionInterval returns dnD̂/χ² bounds with the tabulated quantiles", () => {
  // docs/check-values.md §6.2: exact CI [dnD̂/χ²_{dn,0.975}, dnD̂/χ²_{dn,0.025}]; d = 2, n = 10 → dof 20,
  // χ²_{20,0.975} = 34.170, χ²_{20,0.025} = 9.591 (NIST/SEMATECH §1.3.6.7.4) [table values from memory].
  const sq = Array.from({ length: 10 }, (_, i) => 0.1 + 0.02 * i); // Σ = 1.9
  const ci = chiSquareDiffusionInterval(sq, { dimension: 2, dt: 0.5 });
  assertClose(ci.D, 1.9 / (2 * 2 * 10 * 0.5), { rel: 1e-14 }, "D̂ = Σ|Δr|²/(2dnΔt)");
  assert.equal(ci.dof, 20);
  assertClose(ci.lower, (20 * ci.D) / 34.170, { rel: 2e-5 }, "lower");
  assertClose(ci.upper, (20 * ci.D) / 9.591, { rel: 5e-5 }, "upper");
});

Deno.test("chiSquareDiffusionInterval covers the true D 95% of the time on synthetic Brownian increments", () => {
  // docs/check-values.md §6.2 (dnD̂/D ~ χ²_dn, exact) and §6.4: coverage 0.95 ± 2√(0.95·0.05/M); with four checks we
  // allow 3 binomial sd (a correct interval fails one of them with probability ≈ 1%).
  const M = 20000;
  const D = 0.37;
  const dt = 0.2;
  const rng = streamFromSeed("chi2-coverage");
  for (const d of [2, 3] as const) {
    for (const n of [3, 25]) {
      let covered = 0;
      const sq = new Float64Array(n);
      for (let m = 0; m < M; m++) {
        for (let i = 0; i < n; i++) {
          let s = 0;
          for (let c = 0; c < d; c++) s += (Math.sqrt(2 * D * dt) * rng.normal()) ** 2;
          sq[i] = s;
        }
        const ci = chiSquareDiffusionInterval(sq, { dimension: d, dt });
        if (ci.lower <= D && D <= ci.upper) covered++;
      }
      const band = 3 * Math.sqrt((0.95 * 0.05) / M);
      console.log(`d = ${d}, n = ${n}: coverage ${covered / M} over ${M}`);
      assertWithin(covered / M, 0.95 - band, 0.95 + band, `coverage d = ${d}, n = ${n}`);
    }
  }
});

Deno.test("chiSquareDiffusionInterval rejects bad input", () => {
  assert.throws(() => chiSquareDiffusionInterval([], { dimension: 2, dt: 1 }), /at least one increment/);
  assert.throws(() => chiSquareDiffusionInterval([1], { dimension: 2, dt: 0 }), /dt must be/);
  assert.throws(() => chiSquareDiffusionInterval([1, -1], { dimension: 2, dt: 1 }), /squared displacement 1/);
  assert.throws(() => chiSquareDiffusionInterval([1], { dimension: 4 as 3, dt: 1 }), /dimension/);
});
