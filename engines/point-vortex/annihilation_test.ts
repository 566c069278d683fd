import assert from "node:assert/strict";
import { AnnihilationSearch } from "./annihilation.ts";

/** Runs one search over [x, y, Γ, id] rows. */
function search(
  rows: [number, number, number, number][],
  d: number,
  domain: ConstructorParameters<typeof AnnihilationSearch>[2],
) {
  const n = rows.length;
  const s = new AnnihilationSearch(n, d, domain);
  const col = (k: number) => Float64Array.from(rows, (r) => r[k]);
  const id = Int32Array.from(rows, (r) => r[3]);
  const removed = s.find(n, col(0), col(1), col(2), id);
  const pairs = Array.from(
    { length: s.pairCount },
    (_, k) => [id[s.pairI[k]], id[s.pairJ[k]]].sort((a, b) => a - b),
  );
  const wall = Array.from(s.wall.subarray(0, s.wallCount), (i) => id[i]);
  return { removed, pairs, wall, separations: Array.from(s.pairSeparation.subarray(0, s.pairCount)) };
}

Deno.test("AnnihilationSearch takes the closest opposite-sign pairs first, each vortex once", () => {
  // Greedy in increasing distance (docs/methods.md §1.6). A chain − + − with gaps 0.03 and 0.04: only the 0.03 pair goes.
  const r = search([[0, 0, -1, 10], [0.03, 0, 1, 11], [0.07, 0, -1, 12], [3, 3, 1, 13]], 0.1, {
    kind: "unbounded",
  });
  assert.equal(r.removed, 2);
  assert.deepEqual(r.pairs, [[10, 11]]);
  assert.ok(Math.abs(r.separations[0] - 0.03) < 1e-15);
});

Deno.test("AnnihilationSearch breaks exact distance ties by the smaller ids", () => {
  // Tie rule: common practice, no source (docs/methods.md §1.6 asks for ties broken by vortex id).
  // + at the origin, − at ±0.05 (exactly equal distances); ids chosen so array order disagrees with id order.
  const r = search([[0.05, 0, -1, 7], [0, 0, 1, 5], [-0.05, 0, -1, 6]], 0.1, { kind: "unbounded" });
  assert.deepEqual(r.pairs, [[5, 6]]);
  const r2 = search([[-0.05, 0, -1, 9], [0, 0, 1, 5], [0.05, 0, -1, 6]], 0.1, { kind: "unbounded" });
  assert.deepEqual(r2.pairs, [[5, 6]]);
});

Deno.test("AnnihilationSearch ignores same-sign pairs and pairs at or beyond d_ann", () => {
  const r = search([[0, 0, 1, 0], [0.01, 0, 1, 1], [1, 0, -1, 2], [1.1, 0, 1, 3]], 0.1, {
    kind: "unbounded",
  });
  assert.equal(r.removed, 0);
});

Deno.test("AnnihilationSearch finds pairs across far-apart cells and across a periodic boundary", () => {
  // Far-flung vortices (hashed cells) and the minimum-image distance in a periodic box (Allen & Tildesley §5.3).
  const far = search([[1e6, -1e6, 1, 0], [1e6 + 0.05, -1e6, -1, 1], [0, 0, 1, 2]], 0.1, {
    kind: "unbounded",
  });
  assert.deepEqual(far.pairs, [[0, 1]]);
  const L = 10;
  const box = search([[-L / 2 + 0.02, 1, 1, 0], [L / 2 - 0.03, 1, -1, 1], [0, 0, 1, 2]], 0.1, {
    kind: "periodic",
    side: L,
  });
  assert.deepEqual(box.pairs, [[0, 1]]);
  assert.ok(Math.abs(box.separations[0] - 0.05) < 1e-12);
  // A box with fewer than three cells per side falls back to all pairs.
  const tiny = search([[-0.14, 0, 1, 0], [0.14, 0, -1, 1]], 0.1, { kind: "periodic", side: 0.3 });
  assert.deepEqual(tiny.pairs, [[0, 1]]);
});

Deno.test("AnnihilationSearch removes disk vortices closer to the wall than d_ann/2", () => {
  // docs/methods.md §1.6: R − |z| < d_ann/2 annihilates with the image.
  const r = search([[0.96, 0, 1, 0], [0, 0.94, -1, 1], [0, 0, 1, 2]], 0.1, { kind: "disk", radius: 1 });
  assert.deepEqual(r.wall, [0]);
  assert.equal(r.removed, 1);
});

Deno.test("AnnihilationSearch handles many simultaneous candidates", () => {
  // 100 tight ± pairs on a line, each pair 0.01 apart and pairs 1 apart: all 100 pairs annihilate.
  const rows: [number, number, number, number][] = [];
  for (let k = 0; k < 100; k++) rows.push([k, 0, 1, 2 * k], [k + 0.01, 0, -1, 2 * k + 1]);
  const r = search(rows, 0.1, { kind: "unbounded" });
  assert.equal(r.removed, 200);
  assert.equal(r.pairs.length, 100);
});
