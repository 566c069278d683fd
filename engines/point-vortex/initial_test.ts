import assert from "node:assert/strict";
import { EngineFailure } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { assertAbs } from "./_testing.ts";
import { initialVortices } from "./initial.ts";
import { type PointVortexParams, pointVortexParamsSchema } from "./params.ts";

const rng = (s = 1) => RandomStream.fromState([s, 0x51ed, 0xbeef, 0x1234]);
const cloud = (initial: object, extra: object = {}): PointVortexParams =>
  pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", ...initial }, ...extra });

Deno.test("initialVortices gives N₊ = N(1 + p)/2 positive vortices in random order", () => {
  // docs/methods.md §3.2: N₊ = round(N(1 + p)/2), signs by a random permutation (Knuth TAOCP 2 §3.4.2).
  for (const [count, polarity] of [[100, 0], [100, 0.5], [7, 1], [9, -1 / 3]]) {
    const s = initialVortices(cloud({ count, polarity, radius: 3 }), rng());
    const plus = Array.from(s.g).filter((g) => g === 1).length;
    assert.equal(plus, Math.round(count * (1 + polarity) / 2), `N₊ for N = ${count}, p = ${polarity}`);
    assert.equal(Array.from(s.g).filter((g) => g === -1).length, count - plus);
    assert.deepEqual(Array.from(s.id), Array.from({ length: count }, (_, k) => k));
  }
  // Not sorted: for p = 0, N = 100 the first 50 are not all of one sign.
  const s = initialVortices(cloud({ count: 100, radius: 3 }), rng());
  assert.ok(new Set(Array.from(s.g.subarray(0, 50))).size === 2);
});

Deno.test("initialVortices fills a uniform disk: all inside R_c, ⟨r²⟩ = R_c²/2", () => {
  // For a uniform disk E[r²] = R²/2 and Var[r²] = R⁴/12 (elementary; r = R√u gives r² = R²u, common practice,
  // no source). N = 4000: standard error of the mean R²·0.2887/√N; accept 4 standard errors.
  const R = 2.5, N = 4000, c = [1, -2];
  const s = initialVortices(cloud({ count: N, radius: R, centre: c }), rng(2));
  let m = 0;
  for (let i = 0; i < N; i++) {
    const r2 = (s.x[i] - c[0]) ** 2 + (s.y[i] - c[1]) ** 2;
    assert.ok(r2 <= R * R);
    m += r2 / N;
  }
  assertAbs(m, R * R / 2, 4 * R * R * Math.sqrt(1 / 12) / Math.sqrt(N), "mean r²");
  assertAbs(s.density!, N / (Math.PI * R * R), 1e-12, "density N/(πR_c²)");
});

Deno.test("initialVortices draws a Gaussian cloud with variance σ² per axis", () => {
  // Sample variance of N normals has standard error σ²√(2/(N − 1)) (common practice, no source); 4 errors.
  const sigma = 1.7, N = 4000;
  const s = initialVortices(cloud({ count: N, radius: sigma, shape: "gaussian" }), rng(3));
  for (const a of [s.x, s.y]) {
    const mean = a.reduce((p, v) => p + v, 0) / N;
    const v = a.reduce((p, x) => p + (x - mean) ** 2, 0) / (N - 1);
    assertAbs(v, sigma * sigma, 4 * sigma * sigma * Math.sqrt(2 / (N - 1)), "variance");
  }
  assertAbs(s.density!, N / (2 * Math.PI * sigma * sigma), 1e-12, "central density N/(2πσ²)");
});

Deno.test("initialVortices honours minSeparation (also across a periodic boundary) and the disk wall margin", () => {
  const d = 0.3;
  const s = initialVortices(cloud({ count: 60, radius: 2, minSeparation: d }), rng(4));
  for (let i = 0; i < s.n; i++) {
    for (let j = 0; j < i; j++) assert.ok(Math.hypot(s.x[i] - s.x[j], s.y[i] - s.y[j]) >= d);
  }
  const L = 4;
  const p = initialVortices(
    cloud({ count: 40, radius: 2, minSeparation: d, centre: [2, 2] }, {
      domain: { kind: "periodic", side: L },
    }),
    rng(5),
  );
  for (let i = 0; i < p.n; i++) {
    for (let j = 0; j < i; j++) {
      let dx = p.x[i] - p.x[j], dy = p.y[i] - p.y[j];
      dx -= L * Math.round(dx / L);
      dy -= L * Math.round(dy / L);
      assert.ok(Math.hypot(dx, dy) >= d, `pair ${i}, ${j}`);
    }
  }
  const disk = initialVortices(
    cloud({ count: 150, radius: 0.999, minSeparation: 0.1 }, {
      domain: { kind: "disk", radius: 1 },
      annihilationDistance: 0.1,
    }),
    rng(6),
  );
  for (let i = 0; i < disk.n; i++) assert.ok(1 - Math.hypot(disk.x[i], disk.y[i]) >= 0.05);
});

Deno.test("initialVortices fails clearly when the separation cannot be met", () => {
  // A packing fraction N·d²/(4R_c²) of 0.9 is beyond random sequential placement, which jams near 0.547
  // (Feder, J. Theor. Biol. 87, 237 (1980) [from memory]); the schema refuses > 0.5, so bypass it here.
  const p = cloud({ count: 300, radius: 1 });
  if (p.initial.kind !== "random-cloud") throw new Error("unreachable");
  p.initial.minSeparation = 2 * Math.sqrt(0.9 / 300);
  assert.throws(
    () => initialVortices(p, rng(7)),
    (e: unknown) =>
      e instanceof EngineFailure && e.kind === "invalid-state" && /minSeparation/.test(e.message),
  );
});

Deno.test("initialVortices copies explicit vortices with ids in list order", () => {
  const p = pointVortexParamsSchema.parse({
    initial: {
      kind: "explicit",
      vortices: [{ x: 1, y: 2, circulation: 1 }, { x: -3, y: 4, circulation: -2 }],
    },
  });
  const s = initialVortices(p, rng());
  assert.deepEqual([Array.from(s.x), Array.from(s.y), Array.from(s.g), Array.from(s.id)], [[1, -3], [2, 4], [
    1,
    -2,
  ], [0, 1]]);
  assert.equal(s.density, null);
});
