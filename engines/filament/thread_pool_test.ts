import assert from "node:assert/strict";
import { FilamentSimulation } from "./simulation.ts";
import { ringCloud } from "./initial.ts";
import { RandomStream } from "../random.ts";
import { simConfig } from "./_testing.ts";
import type { VelocityConfig } from "./velocity.ts";

/** Positions, ids and time after `steps` multirate steps of a dense cloud of `rings` rings on `threads` threads. */
function runTangle(threads: number, steps: number, vel: Partial<VelocityConfig>, rings = 24) {
  const cloud = ringCloud(
    { count: rings, radius: { mean: 0.5, sd: 0.15 }, cloudRadius: 0.8, centre: [0, 0, 0] },
    0.06,
    0.1,
    RandomStream.fromState([5, 6, 7, 8]),
  );
  const sim = new FilamentSimulation(
    simConfig(0.06, {}, { alpha: 0.1, alphaPrime: 0.02, ...vel, threads }),
    cloud.loops,
    () => {},
  );
  let substeps = 0, pairs = 0;
  try {
    for (let k = 0; k < steps; k++) {
      sim.advance(1);
      substeps = Math.max(substeps, sim.lastSubsteps);
      // deno-lint-ignore no-explicit-any
      pairs = Math.max(pairs, (sim as any).near.pairs);
    }
  } finally {
    sim.field.close();
  }
  const s = sim.state;
  return {
    n: s.n,
    t: sim.t,
    substeps,
    pairs,
    reconnections: sim.reconnections,
    x: s.x.slice(0, s.n),
    y: s.y.slice(0, s.n),
    z: s.z.slice(0, s.n),
    id: s.id.slice(0, s.n),
  };
}

function assertSame(a: ReturnType<typeof runTangle>, b: ReturnType<typeof runTangle>, what: string): void {
  assert.equal(b.n, a.n, `${what}: point count`);
  assert.ok(Object.is(b.t, a.t), `${what}: time ${b.t} vs ${a.t}`);
  assert.deepEqual(b.id, a.id, `${what}: ids`);
  for (const c of ["x", "y", "z"] as const) {
    for (let i = 0; i < a.n; i++) {
      if (!Object.is(b[c][i], a[c][i])) assert.fail(`${what}: ${c}[${i}] = ${b[c][i]}, expected ${a[c][i]}`);
    }
  }
}

Deno.test("ThreadPool: multirate FMM steps (near field on threads) give bit-identical positions on 1, 2 and 3 threads", () => {
  // Determinism across thread counts (the engine contract's rule for run controls, applied inside one
  // realisation): every point's near-field pairs and sums are taken in the same order by whichever thread.
  const vel = { summation: "fmm" as const };
  const one = runTangle(1, 9, vel);
  assert.ok(one.n > 1000, `points ${one.n}`);
  assert.ok(one.pairs > 10 * one.n, `near pairs ${one.pairs}`);
  assert.ok(one.substeps >= 1, `substeps ${one.substeps}`);
  assertSame(one, runTangle(2, 9, vel), "2 threads");
  assertSame(one, runTangle(3, 9, vel), "3 threads");
});

Deno.test("ThreadPool: multirate steps in a periodic box give bit-identical positions on 1 and 2 threads", () => {
  // The minimum-image branches of the near-field search and sum (tree summation in a box).
  const vel = { summation: "tree" as const, boxSize: 2 };
  const one = runTangle(1, 6, vel, 8);
  assert.ok(one.pairs > 10 * one.n, `near pairs ${one.pairs}`);
  assertSame(one, runTangle(2, 6, vel, 8), "2 threads");
});
