import assert from "node:assert/strict";
import { RandomStream } from "./random.ts";
import { CellList } from "./_cells.ts";

/** Every point within `d` of each query must be returned (brute-force comparison; common practice, no source). */
function check(side: number, d: number, spread: number, seed: number): void {
  const rng = RandomStream.fromState([seed, 1, 2, 3]);
  const n = 400;
  const x = Float64Array.from({ length: n }, () => (rng.uniform() - 0.5) * spread);
  const y = Float64Array.from({ length: n }, () => (rng.uniform() - 0.5) * spread);
  const cells = new CellList(n, d, side);
  for (let i = 0; i < n; i++) cells.insert(i, x[i], y[i]);
  const out = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const got = new Set(out.subarray(0, cells.query(x[i], y[i], out)));
    for (let j = 0; j < n; j++) {
      let dx = x[i] - x[j], dy = y[i] - y[j];
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      if (Math.hypot(dx, dy) < d) assert.ok(got.has(j), `point ${j} near ${i} missing (side ${side})`);
    }
  }
}

Deno.test("CellList returns every neighbour within the cell size in the plane", () => {
  check(0, 0.5, 10, 1);
  check(0, 0.5, 1e7, 2); // far-flung points (hashed cells)
});

Deno.test("CellList returns every neighbour across periodic boundaries, and all points in tiny boxes", () => {
  check(10, 0.7, 10, 3);
  check(10, 4, 10, 4); // 2 cells per side → all-pairs mode
});
