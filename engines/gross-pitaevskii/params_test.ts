import assert from "node:assert/strict";
import { gpParamsSchema, snapshotResolution } from "./params.ts";

const base = {
  grid: { points: 128, spacing: 0.5 },
  trap: { kind: "disk", radius: 20 },
  initial: { kind: "random-cloud", count: 8, radius: 8, minSeparation: 3 },
};

function issues(p: unknown): { path: string; message: string }[] {
  const r = gpParamsSchema.safeParse(p);
  return r.success ? [] : r.error.issues.map((i) => ({ path: i.path.join("."), message: i.message }));
}

Deno.test("gpParamsSchema fills defaults: no damping, μ-fixed core relaxation, snapshots of realisation 0", () => {
  const p = gpParamsSchema.parse(base);
  assert.equal(p.damping, 0);
  assert.equal(p.relaxation.constraint, "chemical-potential");
  assert.deepEqual(p.trap.kind === "disk" && p.trap.wall, { profile: "tanh", height: 10, width: 1 });
  assert.equal(snapshotResolution(p), 128);
  const small = { ...base, grid: { points: 64, spacing: 0.8 }, trap: { kind: "periodic" } };
  assert.equal(snapshotResolution(gpParamsSchema.parse(small)), 64);
});

Deno.test("gpParamsSchema refuses grids that are not powers of two, with the field path", () => {
  const got = issues({ ...base, grid: { points: 100, spacing: 0.5 } });
  assert.equal(got[0].path, "grid.points");
  assert.match(got[0].message, /power of two/);
});

Deno.test("gpParamsSchema refuses a trap that leaves no padding before the periodic grid edge", () => {
  const got = issues({ ...base, trap: { kind: "box", side: 60 } });
  assert.equal(got[0].path, "trap.side");
  assert.match(got[0].message, /padding/);
});

Deno.test("gpParamsSchema refuses a cloud reaching into the wall clearance, and a polarised periodic cloud", () => {
  assert.equal(issues({ ...base, initial: { ...base.initial, radius: 18 } })[0].path, "initial.radius");
  const periodic = issues({
    ...base,
    trap: { kind: "periodic" },
    initial: { kind: "random-cloud", count: 8, radius: 8, polarity: 0.5 },
  });
  assert.equal(periodic[0].path, "initial.polarity");
  const explicit = issues({
    ...base,
    trap: { kind: "periodic" },
    initial: { kind: "explicit", vortices: [{ x: 1, y: 1, circulation: 1 }] },
  });
  assert.equal(explicit[0].path, "initial.vortices");
});

Deno.test("gpParamsSchema refuses a wall lower than μ and an oversized snapshot", () => {
  const low = issues({ ...base, trap: { kind: "disk", radius: 20, wall: { profile: "tanh", height: 0.5 } } });
  assert.equal(low[0].path, "trap.wall.height");
  const big = issues({ ...base, snapshots: { resolution: 256 } });
  assert.equal(big[0].path, "snapshots.resolution");
});
