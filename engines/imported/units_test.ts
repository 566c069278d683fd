import { assertClose } from "./_test_helpers.ts";
import { circulationReading, lengthFactor, lengthInStudyUnits, timeFactor, UnitError } from "./units.ts";
import { deepStrictEqual as assertEquals } from "node:assert/strict";

// SI prefixes: BIPM, The International System of Units (SI), 9th ed. (2019), Table 7:
// centi 1e-2, milli 1e-3, micro 1e-6, nano 1e-9.

Deno.test("lengthFactor: metric units convert by the SI prefixes", () => {
  const cases: [string, string, number][] = [
    ["um", "mm", 1e-3], // 1 µm = 1e-3 mm
    ["nm", "um", 1e-3],
    ["mm", "m", 1e-3],
    ["cm", "mm", 10],
    ["m", "nm", 1e9],
    ["µm", "um", 1], // micro sign U+00B5
    ["μm", "cm", 1e-4], // Greek mu U+03BC
  ];
  for (const [from, to, expected] of cases) {
    // deno-lint-ignore no-explicit-any
    const got = lengthFactor({ unit: from as any }, { length: to as any });
    assertClose(got, expected, 1e-15, `${from} → ${to}`);
  }
});

Deno.test("lengthFactor: a study unit with a multiplier divides by it (ℓ₀ = 2.5 µm)", () => {
  // 1 nm = 1e-3 µm = 1e-3 / 2.5 ℓ₀ (SI, Table 7).
  assertClose(
    lengthFactor({ unit: "nm" }, { length: { value: 2.5, unit: "um" } }),
    4e-4,
    1e-15,
    "nm → 2.5 µm",
  );
  // Pixel size 0.16 µm given as a scale: 10 px = 1.6 µm = 0.64 ℓ₀.
  assertClose(
    10 * lengthFactor({ unit: "um", scale: 0.16 }, { length: { value: 2.5, unit: "um" } }),
    0.64,
    1e-15,
    "10 px",
  );
});

Deno.test("lengthFactor: equal units and no scale give exactly 1 (data are not perturbed)", () => {
  // Exactness requirement of the round trip (common practice, no source).
  assertEquals(lengthFactor({ unit: "um" }, { length: "um" }), 1);
  assertEquals(lengthFactor({ unit: "xi" }, { length: "ξ" }), 1);
  assertEquals(lengthFactor({}, {}), 1);
  assertEquals(timeFactor({ unit: "ms" }, { time: "ms" }), 1);
  assertEquals(timeFactor({}, {}), 1);
});

Deno.test("lengthFactor: ξ meets a metric unit through units.healingLength", () => {
  // Study unit 1 µm, data in ξ with ξ = 0.4 µm: 1 ξ = 0.4 study units (definition of the healing length unit).
  const units = { length: "um" as const, healingLength: { value: 0.4, unit: "um" as const } };
  assertClose(lengthFactor({ unit: "xi" }, units), 0.4, 1e-15, "ξ → µm");
  // Study unit 4ξ, data in nm with ξ = 500 nm: 1 nm = 1/2000 study units.
  const u2 = {
    length: { value: 4, unit: "xi" as const },
    healingLength: { value: 500, unit: "nm" as const },
  };
  assertClose(lengthFactor({ unit: "nm" }, u2), 1 / 2000, 1e-15, "nm → 4ξ");
});

Deno.test("lengthFactor: ξ with a metric unit and no healing length is refused with the fix", () => {
  try {
    lengthFactor({ unit: "xi" }, { length: "um" }, "x");
    throw new Error("expected a UnitError");
  } catch (err) {
    if (!(err instanceof UnitError)) throw err;
    assertEquals(err.path, ["units", "healingLength"]);
    if (!err.message.includes("give units.healingLength")) throw new Error(err.message);
  }
});

Deno.test("lengthFactor: a column unit without a study length unit is refused", () => {
  try {
    lengthFactor({ unit: "um" }, {}, "x");
    throw new Error("expected a UnitError");
  } catch (err) {
    if (!(err instanceof UnitError)) throw err;
    assertEquals(err.path, ["units", "length"]);
    if (!err.message.includes("column 'x' is in um")) throw new Error(err.message);
  }
});

Deno.test("timeFactor: metric time units and a multiplier", () => {
  // SI, Table 7: 1 ms = 1e-3 s; study unit 2 s → 1 ms = 5e-4 study units.
  assertClose(timeFactor({ unit: "ms" }, { time: { value: 2, unit: "s" } }), 5e-4, 1e-15, "ms → 2 s");
  assertClose(timeFactor({ unit: "us" }, { time: "ms" }), 1e-3, 1e-15, "µs → ms");
  assertClose(timeFactor({ unit: "ns", scale: 4 }, { time: "us" }), 4e-3, 1e-15, "4 ns → µs");
});

Deno.test("timeFactor: units.kappa makes the study time unit ℓ²/κ", () => {
  // ⁴He: κ = h/m₄ = 9.97e-8 m²/s (Donnelly, Quantized Vortices in Helium II (1991), value from memory).
  // With ℓ = 10 µm, T = ℓ²/κ = 1e-10 / 9.97e-8 s = 1.00301e-3 s; 1 ms is 1e-3/T study time units.
  const units = { length: { value: 10, unit: "um" as const }, kappa: 9.97e-8 };
  const T = 1e-10 / 9.97e-8;
  assertClose(timeFactor({ unit: "ms" }, units), 1e-3 / T, 1e-14, "ms → ℓ²/κ");
});

Deno.test("timeFactor: a column unit without a study time unit is refused", () => {
  try {
    timeFactor({ unit: "s" }, {}, "t");
    throw new Error("expected a UnitError");
  } catch (err) {
    if (!(err instanceof UnitError)) throw err;
    assertEquals(err.path, ["units", "time"]);
  }
});

Deno.test("circulationReading: kappa multiplies by the scale, sign keeps only the sign", () => {
  // GP units (ħ = m = 1): κ = 2π, so a circulation column in those units has scale 1/(2π)
  // (docs/check-values.md §8, convention A).
  assertEquals(circulationReading({ unit: "kappa", scale: 1 / (2 * Math.PI) }), {
    asSign: false,
    factor: 1 / (2 * Math.PI),
  });
  assertEquals(circulationReading({ unit: "sign" }).asSign, true);
  assertEquals(circulationReading({}).factor, 1);
});

Deno.test("lengthInStudyUnits: numbers are study units, quantities are converted", () => {
  assertEquals(lengthInStudyUnits(0.01, {}, "coreRadius"), 0.01);
  // ⁴He core a₀ ≈ 1e-8 cm (docs/methods.md §0) = 1e-4 µm.
  assertClose(
    lengthInStudyUnits({ value: 1e-8, unit: "cm" }, { length: "um" }, "coreRadius"),
    1e-4,
    1e-15,
    "a₀",
  );
});
