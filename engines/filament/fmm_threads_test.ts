import assert from "node:assert/strict";
import { FmmThreads } from "./fmm_threads.ts";
import { SegmentTree, SHARED } from "./tree.ts";
import { tangle, vec } from "./_testing.ts";
import { FMM_DEFAULTS } from "./velocity.ts";

Deno.test("FmmThreads gives bit-identical velocities with 1, 2 and 3 threads", () => {
  // Determinism across thread counts (the conformance rule for realisations, applied inside one): every
  // point is computed by exactly one work unit in a fixed order.
  const { s, g } = tangle(60);
  const n = s.n;
  const run = (threads: number) => {
    const tree = new SegmentTree();
    tree.useAllocator(SHARED);
    tree.build(n, s.x, s.y, s.z, g.dx, g.dy, g.dz, g.len, 0, FMM_DEFAULTS.leafSize);
    const pool = new FmmThreads(threads, FMM_DEFAULTS.order);
    const v = vec(n);
    try {
      pool.velocity(tree, n, s.x, s.y, s.z, s.prev, 1, FMM_DEFAULTS.theta, v[0], v[1], v[2]);
      // a second evaluation reuses the workers
      const w = vec(n);
      pool.velocity(tree, n, s.x, s.y, s.z, s.prev, 1, FMM_DEFAULTS.theta, w[0], w[1], w[2]);
      for (let c = 0; c < 3; c++) assert.deepEqual(w[c], v[c], "repeat evaluation");
    } finally {
      pool.close();
    }
    return v;
  };
  const one = run(1), two = run(2), three = run(3);
  for (let c = 0; c < 3; c++) {
    assert.deepEqual(two[c], one[c], `component ${c}, 2 threads`);
    assert.deepEqual(three[c], one[c], `component ${c}, 3 threads`);
  }
});
