import assert from "node:assert/strict";
import type { EngineEvent } from "../contract.ts";
import { Detections } from "./detect.ts";
import { Tracker } from "./track.ts";
import { assertAbsClose } from "./_testing.ts";

function detections(points: [number, number, number][]): Detections {
  const d = new Detections();
  for (const [x, y, s] of points) d.push(x, y, s);
  return d;
}

function tracker(periodicSide = 0, wallX = Infinity, grace = 0): Tracker {
  return new Tracker({
    maxDisplacement: 2,
    pairDistance: 4,
    grace,
    periodicSide,
    nearBoundary: (x) => Math.abs(x) > wallX,
  });
}

const noRef = {
  n: 0,
  x: new Float64Array(0),
  y: new Float64Array(0),
  s: new Float64Array(0),
  id: new Int32Array(0),
};

function idAt(t: Tracker, x: number): number {
  for (let k = 0; k < t.count; k++) if (Math.abs(t.wx[k] - x) < 1e-12) return t.id[k];
  return -1;
}

Deno.test("Tracker keeps both ids where greedy nearest-neighbour linking would lose one", () => {
  // Optimal assignment (Kuhn 1955; Munkres 1957) with gating: the rule maximises gated matches, then minimises
  // Σd². Greedy linking pairs B with the nearest new point (0.1 away) and leaves A beyond the 2 ξ gate.
  const t = tracker();
  t.start(detections([[0, 0, 1], [1.5, 0, 1]]), noRef);
  const [a, b] = [idAt(t, 0), idAt(t, 1.5)];
  const events: EngineEvent[] = [];
  t.update(1, detections([[1.4, 0, 1], [2.9, 0, 1]]), (e) => events.push(e));
  assert.deepEqual(events, []);
  assert.equal(idAt(t, 1.4), a);
  assert.equal(idAt(t, 2.9), b);
});

Deno.test("Tracker turns vanishing pairs into annihilations and lone endings into wall exits or disappearances", () => {
  const t = tracker(0, 10);
  t.start(detections([[0, 0, 1], [1.5, 0.5, -1], [11, 0, 1], [-3, 5, -1]]), noRef);
  const ids = [idAt(t, 0), idAt(t, 1.5), idAt(t, 11), idAt(t, -3)];
  const events: EngineEvent[] = [];
  t.update(2, detections([]), (e) => events.push(e));
  assert.deepEqual(events.map((e) => e.kind).sort(), ["annihilation", "disappearance", "wall-exit"]);
  const ann = events.find((e) => e.kind === "annihilation")!;
  assert.deepEqual(ann.ids, [Math.min(ids[0], ids[1]), Math.max(ids[0], ids[1])]);
  assertAbsClose(ann.data.separation, Math.hypot(1.5, 0.5), 1e-12, "last separation");
  assert.deepEqual(events.find((e) => e.kind === "wall-exit")!.ids, [ids[2]]);
  assert.equal(t.counts.annihilations, 1);
  assert.equal(t.count, 0);
});

Deno.test("Tracker gives new ids to appearing vortices: pair creation, wall entry, appearance", () => {
  const t = tracker(0, 10);
  t.start(detections([[0, 0, 1]]), noRef);
  const events: EngineEvent[] = [];
  t.update(
    1,
    detections([[0.5, 0, 1], [5, 5, 1], [6, 5, -1], [12, 0, -1], [-4, -6, 1]]),
    (e) => events.push(e),
  );
  assert.deepEqual(events.map((e) => e.kind).sort(), ["appearance", "pair-creation", "wall-entry"]);
  assert.equal(new Set(Array.from(t.id.subarray(0, t.count))).size, 5, "ids are distinct");
  assert.equal(idAt(t, 0.5), 0);
});

Deno.test("Tracker follows a vortex across a periodic edge and reports its unwrapped position", () => {
  // Minimum-image displacements (Allen & Tildesley, Computer Simulation of Liquids (2017) §1.6).
  const t = tracker(20);
  t.start(detections([[9.5, 0, 1]]), noRef);
  t.update(1, detections([[-9.7, 0.1, 1]]), () => {});
  assert.equal(t.id[0], 0);
  assertAbsClose(t.x[0], 10.3, 1e-12, "unwrapped x");
  assertAbsClose(t.wx[0], -9.7, 1e-12, "wrapped x");
});

Deno.test("Tracker.start takes the ids of the nearest imprinted vortices", () => {
  const t = tracker();
  const ref = {
    n: 2,
    x: Float64Array.of(3, -3),
    y: Float64Array.of(0, 0),
    s: Float64Array.of(1, -1),
    id: Int32Array.of(7, 4),
  };
  const found = t.start(detections([[-2.9, 0.1, -1], [3.05, 0, 1], [0, 8, 1]]), ref);
  assert.equal(found, 2);
  assert.equal(idAt(t, 3.05), 7);
  assert.equal(idAt(t, -2.9), 4);
  assert.equal(idAt(t, 0), 8, "an unexpected vortex gets the next free id");
});

Deno.test("Tracker revives a pair that vanishes for one detection (grace) instead of counting it twice", () => {
  const t = tracker(0, Infinity, 2);
  t.start(detections([[0, 0, 1], [1, 0, -1], [9, 9, 1], [10, 9, -1]]), noRef);
  const events: EngineEvent[] = [];
  const emit = (e: EngineEvent) => events.push(e);
  t.update(1, detections([]), emit);
  assert.equal(events.length, 0, "endings wait for the grace");
  t.update(2, detections([[0.2, 0.1, 1], [0.9, 0.2, -1]]), emit);
  assert.equal(events.length, 0, "the first pair came back");
  assert.deepEqual(Array.from(t.id.subarray(0, t.count)).sort(), [0, 1]);
  t.update(3, detections([[0.3, 0.1, 1], [0.8, 0.2, -1]]), emit);
  assert.deepEqual(
    events.map((e) => [e.kind, e.t, e.ids]),
    [["annihilation", 1, [2, 3]]],
    "the second pair annihilated at t = 1",
  );
  t.update(4, detections([]), emit);
  t.finish(emit);
  assert.deepEqual(events.map((e) => [e.kind, e.t]).slice(1), [["annihilation", 4]]);
  assert.equal(t.counts.annihilations, 2);
});
