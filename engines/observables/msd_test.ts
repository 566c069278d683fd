import type { Frame } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import type { Classification, ObservableResult } from "./contract.ts";
import { Label } from "./labels.ts";
import { msdObservable } from "./msd.ts";
import {
  assert,
  assertClose,
  assertEquals,
  CAPS_2D,
  CAPS_3D,
  CONFIG,
  context,
  frame2d,
  frame3d,
  type Vortex,
} from "./_testing.ts";

/** A hand-made classification: given labels and centre (the MSD accumulator only reads these). */
function cls(labels: number[], centre: number[]): Classification {
  return { labels: Uint8Array.from(labels), centre, rmsRadius: 1, events: [] };
}

function runHand(frames: [Frame, Classification][], caps = CAPS_2D): ObservableResult {
  const acc = msdObservable.create(context(caps));
  for (const [f, c] of frames) acc.push(f, c);
  return acc.finish();
}

Deno.test("msdObservable is zero for a uniform drift of the whole cluster (centre drift removed)", () => {
  // Methods §5.1: displacement minus the displacement of the cluster centre; a rigid translation gives 0.
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  const base: Vortex[] = Array.from({ length: 300 }, (_, i) => ({
    id: i,
    x: 10 * rng.uniform() - 5,
    y: 10 * rng.uniform() - 5,
    g: i % 2 === 0 ? 1 : -1,
  }));
  const ctx = context(CAPS_2D);
  const classifier = createDipoleClassifier(ctx);
  const acc = msdObservable.create(ctx);
  for (let k = 0; k < 6; k++) {
    const f = frame2d(k, k, base.map((v) => ({ ...v, x: v.x + 1.7 * k, y: v.y - 0.9 * k })));
    acc.push(f, classifier.classify(f));
  }
  const r = acc.finish();
  for (let k = 0; k < 6; k++) {
    assert(
      Math.abs(r.series.msd.v[k]) < 1e-24,
      `frame ${k}: msd ${r.series.msd.v[k]} should be 0 to rounding`,
    );
    assertEquals(r.series.msd_count.v[k], 300);
  }
  assert(Math.abs(r.scalars.msd_final) < 1e-24);
});

Deno.test("msdObservable equals the exact mean square of a known displacement set", () => {
  // MSD(t) = ⟨|Δr_i − Δr_c|²⟩ (docs/methods.md §5.1), summed here directly from the planted displacements.
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const n = 1000;
  const x0 = Array.from({ length: n }, () => rng.normal()),
    y0 = Array.from({ length: n }, () => rng.normal());
  const dx = Array.from({ length: n }, () => 0.3 * rng.normal()),
    dy = Array.from({ length: n }, () => 0.3 * rng.normal());
  const c0 = [0.25, -0.5], c1 = [0.75, 0.125];
  const main = new Array(n).fill(Label.Main);
  const f0 = frame2d(0, 0, x0.map((x, i) => ({ id: i, x, y: y0[i], g: 1 })));
  const f1 = frame2d(1, 2, x0.map((x, i) => ({ id: i, x: x + dx[i], y: y0[i] + dy[i], g: 1 })));
  const r = runHand([[f0, cls(main, c0)], [f1, cls(main, c1)]]);
  let expected = 0;
  for (let i = 0; i < n; i++) expected += (dx[i] - (c1[0] - c0[0])) ** 2 + (dy[i] - (c1[1] - c0[1])) ** 2;
  expected /= n;
  assertEquals(r.series.msd.t, [0, 2]);
  assertEquals(r.series.msd.v[0], 0);
  assertClose(r.series.msd.v[1], expected, 1e-13, "msd");
  assertClose(r.series.msd_all.v[1], expected, 1e-13, "msd_all");
  assertClose(r.scalars.msd_final, expected, 1e-13, "msd_final");
});

Deno.test("msdObservable of Gaussian displacements matches 2σ² within the chi-square spread", () => {
  // For N independent 2D Gaussian displacements of variance σ² per component, Σ|Δr|²/σ² ~ χ²_{2N}: the mean
  // square is 2σ² with relative standard deviation 1/√N (docs/check-values.md §6.2; Einstein 1905 for 2dDt = 2σ²).
  const rng = RandomStream.fromState([9, 10, 11, 12]);
  const n = 20000, sigma = 0.5;
  const start = Array.from({ length: n }, (_, i) => ({ id: i, x: 0, y: 0, g: 1 }));
  const moved = start.map((v) => ({ ...v, x: sigma * rng.normal(), y: sigma * rng.normal() }));
  const main = new Array(n).fill(Label.Main);
  const r = runHand([[frame2d(0, 0, start), cls(main, [0, 0])], [frame2d(1, 1, moved), cls(main, [0, 0])]]);
  const got = r.series.msd.v[1];
  const expected = 2 * sigma * sigma;
  const sd = expected / Math.sqrt(n);
  assert(
    Math.abs(got - expected) < 5 * sd,
    `msd ${got}, expected ${expected} ± ${sd} (5σ band), diff ${got - expected}`,
  );
});

Deno.test("msdObservable averages survivors for msd, everyone for msd_all, and censors vanished objects", () => {
  // Methods §5.1 (a) main at both ends, and all objects up to their end time; censoring at the last frame.
  const at = (k: number, pts: [number, number, number][]) =>
    frame2d(k, k, pts.map(([id, x, y]) => ({ id, x, y, g: 1 })));
  const M = Label.Main, E = Label.Evaporated;
  const r = runHand([
    // t0: A, B, C main; D evaporated (never tracked).
    [at(0, [[1, 0, 0], [2, 0, 0], [3, 0, 0], [4, 0, 0]]), cls([M, M, M, E], [0, 0])],
    // t1: A moved (1,0) main; B (0,2) now evaporated; C (3,0) main; D anywhere.
    [at(1, [[1, 1, 0], [2, 0, 2], [3, 3, 0], [4, 9, 9]]), cls([M, E, M, E], [0, 0])],
    // t2: C gone (annihilated); A (2,0).
    [at(2, [[1, 2, 0], [2, 0, 2], [4, 9, 9]]), cls([M, E, E], [0, 0])],
    // t3: C reappears with the same id: stays censored.
    [at(3, [[1, 2, 0], [2, 0, 2], [3, 5, 0]]), cls([M, E, M], [0, 0])],
  ]);
  assertEquals(r.series.msd.v, [0, (1 + 9) / 2, 4, 4]);
  assertEquals(r.series.msd_count.v, [3, 2, 1, 1]);
  assertEquals(r.series.msd_all.v, [0, (1 + 4 + 9) / 3, (4 + 4) / 2, (4 + 4) / 2]);
  assertEquals(r.series.msd_all_count.v, [3, 3, 2, 2]);
});

Deno.test("msdObservable tracks 3D markers only and removes the 3D centre drift", () => {
  // Methods §2.10 and §5.1: per-vortex MSD in 3D uses Lagrangian markers.
  const loop = (dz: number, shift: number) => ({
    loop: 0,
    ids: [0, 1, 2, 3],
    x: [1 + shift, 0, -1, 0],
    y: [0, 1, 0, -1],
    z: [dz, 0, 0, 0],
    markerEvery: 2, // markers: points 0 and 2
  });
  const M = Label.Main;
  const acc = msdObservable.create(context(CAPS_3D, CONFIG, 1e-3));
  acc.push(frame3d(0, 0, [loop(0, 0)]), cls([M, M, M, M], [0, 0, 0]));
  // Point 0 moves by (3, 0, 4), point 1 (not a marker) would add more; centre moves by (0, 0, 1).
  acc.push(frame3d(1, 1, [{ ...loop(4, 3), x: [4, 50, -1, 0] }]), cls([M, M, M, M], [0, 0, 1]));
  const r = acc.finish();
  // Marker 0: (3, 0, 4 − 1) → 18; marker 2: (0, 0, −1) → 1. Mean 9.5.
  assertEquals(r.series.msd.v, [0, 9.5]);
  assertEquals(r.series.msd_count.v, [2, 2]);
});

Deno.test("msdObservable gives NaN when nothing is tracked", () => {
  const r = runHand([[
    frame2d(0, 0, [{ id: 1, x: 0, y: 0, g: 1 }]),
    cls([Label.Stray], [Number.NaN, Number.NaN]),
  ]]);
  assert(Number.isNaN(r.series.msd.v[0]) && Number.isNaN(r.scalars.msd_final));
  assertEquals(r.series.msd_count.v, [0]);
});
