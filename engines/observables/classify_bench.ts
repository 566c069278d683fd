/**
 * Per-frame cost of the classifiers against object count (`deno bench engines/observables/`). Frames are built
 * outside the timed loop; each iteration classifies one jiggled frame. Linear scaling shows as a constant
 * time per object across sizes.
 */
import type { Frame } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import { createLoopClassifier } from "./classify_3d.ts";
import { CAPS_2D, CAPS_3D, CONFIG, context, frame2d, frame3d, type Loop, ring } from "./_testing.ts";

function cloudFrames(n: number, count: number): Frame[] {
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  const radius = Math.sqrt(n / Math.PI);
  const v = Array.from({ length: n }, (_, i) => {
    const r = radius * Math.sqrt(rng.uniform()), th = 2 * Math.PI * rng.uniform();
    return { id: i, x: r * Math.cos(th), y: r * Math.sin(th), g: i % 2 === 0 ? 1 : -1 };
  });
  return Array.from(
    { length: count },
    (_, k) => frame2d(k, 0.1 * k, v.map((p) => ({ ...p, x: p.x + 0.01 * rng.normal() }))),
  );
}

function tangleFrames(rings: number, count: number): Frame[] {
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const rc = Math.cbrt(rings) * 1.5;
  const loops: Loop[] = [];
  for (let q = 0; q < rings; q++) {
    const c: [number, number, number] = [rc * rng.normal(), rc * rng.normal(), rc * rng.normal()];
    const nrm: [number, number, number] = [rng.normal(), rng.normal(), rng.normal()];
    const s = Math.hypot(...nrm);
    loops.push(ring(q, 100 * q, c, [nrm[0] / s, nrm[1] / s, nrm[2] / s], 1, 32));
  }
  return Array.from({ length: count }, (_, k) => frame3d(k, 0.1 * k, loops));
}

for (const n of [1_000, 10_000, 100_000]) {
  const frames = cloudFrames(n, 8);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  let k = 0;
  Deno.bench({ name: `dipole classifier, N = ${n} vortices`, group: "2d", baseline: n === 1_000 }, () => {
    const f = frames[k % frames.length];
    classifier.classify({ ...f, index: k, t: 0.1 * k });
    k++;
  });
}

for (const rings of [30, 300, 3000]) {
  const frames = tangleFrames(rings, 4);
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, 1e-3));
  let k = 0;
  Deno.bench(
    { name: `loop classifier, ${rings} rings × 32 points`, group: "3d", baseline: rings === 30 },
    () => {
      const f = frames[k % frames.length];
      classifier.classify({ ...f, index: k, t: 0.1 * k });
      k++;
    },
  );
}
