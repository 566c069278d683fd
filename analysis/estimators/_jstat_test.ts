import assert from "node:assert/strict";
import { assertClose } from "./_check.ts";
import { chiSquareCdf, chiSquareQuantile, normalCdf, normalQuantile, studentTQuantile } from "./_jstat.ts";

// The Student-t table check (docs/check-values.md §6.3) lives in reports/intervals_test.ts, which uses this wrapper.

Deno.test("normalQuantile and normalCdf give the standard 1.959964 and are inverse to each other", () => {
  // Abramowitz & Stegun 1964, Table 26.5: Φ⁻¹(0.975) = 1.959964.
  assertClose(normalQuantile(0.975), 1.959964, { abs: 1e-6 }, "Φ⁻¹(0.975)");
  for (const p of [0.001, 0.025, 0.3, 0.5, 0.9]) {
    assertClose(normalCdf(normalQuantile(p)), p, { rel: 1e-7 }, `Φ(Φ⁻¹(${p}))`);
  }
});

Deno.test("chiSquareQuantile matches tabulated chi-square critical values", () => {
  // NIST/SEMATECH e-Handbook §1.3.6.7.4 (critical values of χ²), 3 decimals [from memory of the table].
  assertClose(chiSquareQuantile(0.975, 10), 20.483, { abs: 6e-4 }, "χ²_{10,0.975}");
  assertClose(chiSquareQuantile(0.025, 10), 3.247, { abs: 6e-4 }, "χ²_{10,0.025}");
  assertClose(chiSquareQuantile(0.975, 20), 34.170, { abs: 6e-4 }, "χ²_{20,0.975}");
  assertClose(chiSquareQuantile(0.025, 20), 9.591, { abs: 6e-4 }, "χ²_{20,0.025}");
  // χ²_2 is exponential with mean 2: P(X ≤ x) = 1 − e^{−x/2} (A&S 26.4.21, exact).
  assertClose(chiSquareCdf(3, 2), 1 - Math.exp(-1.5), { rel: 1e-10 }, "χ²_2 cdf");
  assertClose(chiSquareQuantile(0.5, 2), 2 * Math.LN2, { rel: 1e-8 }, "χ²_2 median 2 ln 2");
});

Deno.test("distribution wrappers reject probabilities outside (0, 1) and bad degrees of freedom", () => {
  assert.throws(() => normalQuantile(1), /probability must be in \(0, 1\)/);
  assert.throws(() => chiSquareQuantile(0.5, 0), /degrees of freedom/);
  assert.throws(() => studentTQuantile(Number.NaN, 3), /probability/);
});
