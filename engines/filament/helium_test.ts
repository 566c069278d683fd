import assert from "node:assert/strict";
import { HELIUM_TABLE, heliumAt, HeliumRangeError } from "./helium.ts";
import { assertRelClose } from "./_assert.ts";

Deno.test("heliumAt gives α = α′ = 0 at T = 0", () => {
  // No normal fluid at T = 0, so α = Bρ_n/2ρ = 0 and α′ = B′ρ_n/2ρ = 0 (definitions, docs/check-values.md §4 [EXACT]).
  const he = heliumAt(0);
  assert.equal(he.alpha, 0);
  assert.equal(he.alphaPrime, 0);
  assert.equal(he.normalFraction, 0);
});

Deno.test("heliumAt: α increases with T over the table range", () => {
  // Monotonic increase of α with T: Barenghi, Donnelly & Vinen, J. Low Temp. Phys. 52, 189 (1983), Fig. 1
  // (qualitative; the relation is what docs/check-values.md §4 recommends testing, not the digits).
  let prev = -1;
  for (let k = 0; k <= 12; k++) {
    const T = 1.3 + 0.05 * k;
    const a = heliumAt(Math.min(T, 1.9)).alpha;
    assert.ok(a > prev, `α(${T}) = ${a} should exceed ${prev}`);
    prev = a;
  }
  for (let k = 1; k < HELIUM_TABLE.length; k++) assert.ok(HELIUM_TABLE[k].alpha > HELIUM_TABLE[k - 1].alpha);
});

Deno.test("heliumAt: the implied B = 2αρ/ρ_n is of order one (plausibility, docs/check-values.md §4)", () => {
  // B ≈ 1–1.5 between 1.3 and 2.1 K (Donnelly & Barenghi 1998, from memory): a loose relation check.
  for (const row of HELIUM_TABLE.slice(1)) {
    const B = 2 * row.alpha / row.normalFraction;
    assert.ok(B > 0.8 && B < 1.8, `B(${row.T}) = ${B}`);
  }
});

Deno.test("heliumAt interpolates linearly between rows", () => {
  // Linear interpolation between 1.3 K and 1.5 K rows (common practice, no source).
  const he = heliumAt(1.4);
  assertRelClose(he.alpha, (0.034 + 0.07) / 2, 1e-12, "α(1.4 K)");
  assertRelClose(he.alphaPrime, (0.0138 + 0.017) / 2, 1e-12, "α′(1.4 K)");
  assertRelClose(he.normalToSuperRatio, he.normalFraction / (1 - he.normalFraction), 1e-12, "ρn/ρs");
  assert.equal(heliumAt(1.6).alpha, 0.098);
});

Deno.test("heliumAt refuses temperatures outside the table with a clear message", () => {
  for (const T of [-1, 0.5, 1.29, 2.2, 3, Number.NaN, Infinity]) {
    assert.throws(() => heliumAt(T), HeliumRangeError);
  }
  assert.throws(() => heliumAt(0.5), /outside the mutual-friction table.*alphaPrime directly/);
  assert.throws(() => heliumAt(2.05), /α′ is not tabulated/);
});
