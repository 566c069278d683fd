import assert from "node:assert/strict";
import { findEngine } from "../registry.ts";
import { RandomStream } from "../random.ts";
import type { Frame } from "../contract.ts";
import { pointVortexEngine } from "./mod.ts";

Deno.test("pointVortexEngine is registered under point-vortex-2d with its declared capabilities", () => {
  assert.equal(findEngine("point-vortex-2d"), pointVortexEngine);
  assert.equal(pointVortexEngine.version, "1.1.0");
  const c = pointVortexEngine.capabilities;
  assert.equal(c.dimension, 2);
  assert.deepEqual(c.fields, ["circulation"]);
  assert.equal(c.objects, "vortex");
  assert.deepEqual(Object.keys(c.events).sort(), ["annihilation", "wall-annihilation"]);
  assert.deepEqual(Object.keys(c.diagnostics).sort(), [
    "angular_impulse",
    "hamiltonian",
    "impulse_x",
    "impulse_y",
  ]);
  assert.deepEqual(c.units, { length: "ℓ (the study's length unit)", time: "ℓ²/κ", circulation: "κ" });
});

Deno.test("pointVortexEngine.run streams frames that carry every declared diagnostic and field", async () => {
  const params = pointVortexEngine.paramsSchema.parse({
    initial: { kind: "random-cloud", count: 12, radius: 2, minSeparation: 0.2 },
    annihilationDistance: 0.05,
  });
  const frames: Frame[] = [];
  const summary = await pointVortexEngine.run({
    params,
    controls: { duration: 1, sampleInterval: 0.25, tolerance: 1e-9, maxDistance: 100 },
    rng: RandomStream.fromState([9, 8, 7, 6]),
  }, { frame: (f) => frames.push({ ...f, diagnostics: { ...f.diagnostics } }), event: () => {} });
  assert.equal(frames.length, 5);
  for (const f of frames) {
    assert.equal(f.z, null);
    assert.ok(f.circulation !== null && f.circulation.length >= f.n);
    assert.deepEqual(
      Object.keys(f.diagnostics).sort(),
      Object.keys(pointVortexEngine.capabilities.diagnostics).sort(),
    );
    for (const v of Object.values(f.diagnostics)) assert.ok(Number.isFinite(v));
  }
  for (const v of Object.values(summary.scalars)) assert.ok(Number.isFinite(v));
});
