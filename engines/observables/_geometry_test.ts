import { RandomStream } from "../random.ts";
import { medianInPlace, newCentreResult, trimmedCentre } from "./_geometry.ts";
import { IdTable } from "./_id_table.ts";
import { assertClose, assertEquals } from "./_testing.ts";

Deno.test("medianInPlace agrees with the median of a sorted copy, with ties and even counts", () => {
  // Median definition (common practice, no source): middle order statistic, mean of the two middle ones for even k.
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  for (let trial = 0; trial < 300; trial++) {
    const k = 1 + Math.floor(60 * rng.uniform());
    const a = Float64Array.from(
      { length: k },
      () => Math.floor(8 * rng.uniform()) * (trial % 2 === 0 ? 1 : rng.uniform()),
    );
    const s = [...a].sort((p, q) => p - q);
    const expected = k % 2 === 1 ? s[(k - 1) / 2] : 0.5 * (s[k / 2 - 1] + s[k / 2]);
    assertEquals(medianInPlace(a, k), expected, `trial ${trial} (k = ${k})`);
  }
  assertEquals(Number.isNaN(medianInPlace(new Float64Array(3), 0)), true);
});

Deno.test("IdTable maps arbitrary int32 ids through growth and clear", () => {
  const t = new IdTable(2);
  const ids = [0, -1, 2147483647, -2147483648, 7, 1 << 20, 99];
  for (let r = 0; r < 2000; r++) ids.push(r * 7919 - 5_000_000);
  ids.forEach((id, i) => t.set(id, i));
  ids.forEach((id, i) => assertEquals(t.get(id), i, `id ${id}`));
  assertEquals(t.size, ids.length);
  assertEquals(t.get(123456789), -1);
  t.clear();
  assertEquals(t.get(7), -1);
  assertEquals(t.size, 0);
});

Deno.test("trimmedCentre weights points and skips non-finite ones", () => {
  // Weighted centroid Σwx/Σw and R_rms² = Σw|x − c|²/Σw (docs/methods.md §4.3): points 0 and 3 with weights 3 and 1
  // give c = 0.75, R_rms² = (3·0.5625 + 1·5.0625)/4 = 1.6875.
  const x = Float64Array.from([0, 3, Number.NaN]);
  const y = new Float64Array(3);
  const w = Float64Array.from([3, 1, 1]);
  const keep = Uint8Array.from([1, 1, 1]);
  const c = trimmedCentre(3, x, y, null, w, keep, newCentreResult());
  assertClose(c.cx, 0.75, 1e-15, "centre");
  assertClose(c.rms, Math.sqrt(1.6875), 1e-15, "R_rms");
  assertEquals([c.count, c.weight, [...keep]], [2, 4, [1, 1, 0]]);
});
