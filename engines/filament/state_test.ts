import assert from "node:assert/strict";
import { compactInto, FilamentState, IdCounters } from "./state.ts";
import type { RemovedLoop } from "./state.ts";
import { ringPoints } from "./initial.ts";
import { assertRelClose } from "./_assert.ts";

Deno.test("FilamentState.appendLoop links a closed loop and seeds markers every m points", () => {
  const s = new FilamentState(4);
  const ids = new IdCounters();
  s.appendLoop(ringPoints(1, [0, 0, 0], [0, 0, 1], 0.3, 0), ids, 5);
  assert.equal(s.n, 21);
  assert.equal(s.next[20], 0);
  assert.equal(s.prev[0], 20);
  assert.deepEqual(Array.from(s.marker.subarray(0, 21)).map((m, i) => m ? i : -1).filter((i) => i >= 0), [
    0,
    5,
    10,
    15,
    20,
  ]);
});

Deno.test("compactInto keeps loop order and ids, drops tiny loops and reports them", () => {
  // Tiny-loop rule of docs/methods.md §2.6: < 5 points or length < 3δ.
  const s = new FilamentState();
  const ids = new IdCounters();
  s.appendLoop(ringPoints(1, [0, 0, 0], [0, 0, 1], 0.3, 0), ids, 5);
  s.appendLoop([[5, 0, 0], [5.1, 0, 0], [5, 0.1, 0], [4.9, 0, 0]], ids, 2);
  s.appendLoop(ringPoints(0.1, [9, 0, 0], [0, 0, 1], 0.05, 0), ids, 5);
  // Delete point 3 of the first loop.
  s.next[2] = 4;
  s.prev[4] = 2;
  s.alive[3] = 0;
  const out = new FilamentState();
  const removed: RemovedLoop[] = [];
  compactInto(s, out, {
    boxSize: 0,
    minPoints: 5,
    minLength: 0.7,
    ids,
    relabel: null,
    onRemoved: (r) => removed.push(r),
  });
  assert.equal(out.nLoops, 1);
  assert.equal(out.n, 20);
  assert.equal(out.loopId[0], 0);
  assert.deepEqual(removed.map((r) => [r.loopId, r.points]), [[1, 4], [2, 13]]);
  assertRelClose(removed[1].length, 2 * 13 * 0.1 * Math.sin(Math.PI / 13), 1e-12, "removed length");
  assert.deepEqual(removed[0].markerIds, [21, 23]);
  assert.equal(out.id[3], 4, "point after the deleted one");
});

Deno.test("compactInto assigns new loop ids to loops touched by a reconnection", () => {
  const s = new FilamentState();
  const ids = new IdCounters();
  s.appendLoop(ringPoints(1, [0, 0, 0], [0, 0, 1], 0.3, 0), ids, 5);
  s.appendLoop(ringPoints(1, [3, 0, 0], [0, 0, 1], 0.3, 0), ids, 5);
  const relabel = new Uint8Array(s.n);
  relabel[25] = 1;
  const out = new FilamentState();
  compactInto(s, out, { boxSize: 0, minPoints: 5, minLength: 0, ids, relabel, onRemoved: () => {} });
  assert.deepEqual(Array.from(out.loopId.subarray(0, 2)), [0, 2]);
});
