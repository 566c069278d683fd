import { RandomStream } from "../random.ts";
import { createLoopClassifier, ringSpeed, STRAIGHT_SEGMENT_CORE_CONSTANT } from "./classify_3d.ts";
import type { Classification } from "./contract.ts";
import { Label } from "./labels.ts";
import {
  assert,
  assertClose,
  assertEquals,
  assertThrows,
  CAPS_3D,
  CONFIG,
  context,
  frame3d,
  type Loop,
  ring,
  shifted,
} from "./_testing.ts";

const A0 = 1e-3;

/**
 * Thin-ring speed U = (κ/4πR)[ln(8R/a) − C], C = 3/4 − γ_E for straight-segment sums, written out here
 * independently of the module (docs/check-values.md §3.2, derived there; Saffman, Vortex Dynamics (1992) §10.2).
 */
function expectedRingSpeed(r: number): number {
  return 1 / (4 * Math.PI * r) * (Math.log(8 * r / A0) - (0.75 - 0.5772156649015329));
}

/** Effective radius length/2π of a regular M-gon of circumradius r: r·M·sin(π/M)/π (elementary geometry). */
const polygonRadius = (r: number, m: number) => r * m * Math.sin(Math.PI / m) / Math.PI;

function unit(rng: RandomStream): [number, number, number] {
  const v: [number, number, number] = [rng.normal(), rng.normal(), rng.normal()];
  const s = Math.hypot(...v);
  return [v[0] / s, v[1] / s, v[2] / s];
}

/** 20 static rings of radius 1 (32 points) with centres uniform in a ball of radius 3 (docs/methods.md §3.1). */
function tangle(rng: RandomStream, count = 20): Loop[] {
  const out: Loop[] = [];
  for (let q = 0; q < count; q++) {
    const u = unit(rng);
    const r = 3 * Math.cbrt(rng.uniform());
    out.push(ring(q, 1000 * q, [r * u[0], r * u[1], r * u[2]], unit(rng), 1, 32));
  }
  return out;
}

function labelsOfLoop(
  c: Classification,
  frame: { loop: Int32Array | null; n: number },
  loopId: number,
): number[] {
  const out = new Set<number>();
  for (let i = 0; i < frame.n; i++) if (frame.loop![i] === loopId) out.add(c.labels[i]);
  return [...out];
}

/** A small ring (radius 0.1, 16 points) at distance `dist` along û, normal û, moving by `speed·t` along û. */
function smallRing(
  t: number,
  opts: { dist: number; dir: [number, number, number]; speed: number; loop?: number },
): Loop {
  const [ux, uy, uz] = opts.dir;
  const s = opts.dist + opts.speed * t;
  return ring(opts.loop ?? 99, 99000, [s * ux, s * uy, s * uz], opts.dir, 0.1, 16);
}

Deno.test("ringSpeed matches the SI example of docs/check-values.md §3.2", () => {
  // κ = 9.9693e-8 m²/s, R = 1 µm, a₀ = 1e-10 m, C = 0.17278: v = 8.8195e-2 m/s (docs/check-values.md §3.2, derived
  // there; value printed to 5 digits).
  assertClose(ringSpeed(1e-6, { coreRadius: 1e-10, circulation: 9.9693e-8 }), 8.8195e-2, 1e-4, "ring speed");
  // Solid core C = 1/4: 8.7582e-2; hollow core C = 1/2: 8.5599e-2 (same source).
  assertClose(
    ringSpeed(1e-6, { coreRadius: 1e-10, circulation: 9.9693e-8, coreConstant: 0.25 }),
    8.7582e-2,
    1e-4,
    "C=1/4",
  );
  assertClose(
    ringSpeed(1e-6, { coreRadius: 1e-10, circulation: 9.9693e-8, coreConstant: 0.5 }),
    8.5599e-2,
    1e-4,
    "C=1/2",
  );
  assertClose(STRAIGHT_SEGMENT_CORE_CONSTANT, 0.17278, 1e-4, "C = 3/4 − γ_E");
});

Deno.test("createLoopClassifier labels a small ring moving outward at the ring speed evaporated after K frames", () => {
  // Methods §4.2 criteria, §7.4 ("planted rings far from a cluster → labelled").
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  const base = tangle(rng);
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  const dt = 0.05;
  for (let k = 0; k <= 6; k++) {
    const f = frame3d(k, k * dt, [...base, smallRing(k * dt, { dist: 12, dir, speed: U })]);
    const c = classifier.classify(f);
    assertEquals(labelsOfLoop(c, f, 99), [k >= 3 ? Label.Evaporated : Label.Main], `frame ${k} ring labels`);
    for (let q = 0; q < base.length; q++) {
      assertEquals(labelsOfLoop(c, f, q), [Label.Main], `tangle loop ${q}`);
    }
    if (k === 3) {
      assertEquals(c.events.length, 1);
      const e = c.events[0];
      assertEquals(e.kind, "evaporation");
      assertEquals(e.ids, [99000, 99004, 99008, 99012], "marker ids of the ring");
      assertClose(e.data.speedRatio, 1, 1e-9, "speed / ring speed");
      assertClose(e.data.effectiveRadius, polygonRadius(0.1, 16), 1e-12, "R_eff");
      // Outward cosine between V ∥ û and X − X_c, with X = (12 + U t) û and the event's own centre X_c.
      const s = 12 + U * k * dt;
      const r = [s * dir[0] - e.data.centreX, s * dir[1] - e.data.centreY, s * dir[2] - e.data.centreZ];
      const cos = (r[0] * dir[0] + r[1] * dir[1] + r[2] * dir[2]) / Math.hypot(r[0], r[1], r[2]);
      assertClose(e.data.outwardCosine, cos, 1e-9, "outward cosine");
      assertClose(e.data.distance, Math.hypot(r[0], r[1], r[2]), 1e-12, "distance from the centre");
    } else assertEquals(c.events.length, 0, `frame ${k} events`);
  }
});

Deno.test("createLoopClassifier follows loops by markers when the engine relabels and reorders them", () => {
  // Methods §4.2: loop identity by shared ids. Each frame gets new loop ids and a reversed loop order.
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const base = tangle(rng);
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  const dt = 0.05;
  for (let k = 0; k <= 4; k++) {
    const loops = [...base, smallRing(k * dt, { dist: 12, dir, speed: U })].map((l, q) => ({
      ...l,
      loop: 100 * k + q,
    }));
    if (k % 2 === 1) loops.reverse();
    const f = frame3d(k, k * dt, loops);
    const c = classifier.classify(f);
    assertEquals(
      labelsOfLoop(c, f, 100 * k + base.length),
      [k >= 3 ? Label.Evaporated : Label.Main],
      `frame ${k}`,
    );
  }
});

Deno.test("createLoopClassifier falls back to engine loop ids for loops without markers", () => {
  const rng = RandomStream.fromState([9, 10, 11, 12]);
  const base = tangle(rng).map((l) => ({ ...l, markerEvery: 0 }));
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  for (let k = 0; k <= 3; k++) {
    const f = frame3d(k, k * 0.05, [...base, {
      ...smallRing(k * 0.05, { dist: 12, dir, speed: U }),
      markerEvery: 0,
    }]);
    const c = classifier.classify(f);
    assertEquals(labelsOfLoop(c, f, 99), [k >= 3 ? Label.Evaporated : Label.Main], `frame ${k}`);
    if (k === 3) assertEquals(c.events[0].ids, [], "no marker ids");
  }
});

Deno.test("createLoopClassifier finds no evaporator in a static tangle", () => {
  // Methods §7.4: "a cluster without evaporators → none".
  const rng = RandomStream.fromState([13, 14, 15, 16]);
  const base = tangle(rng, 30);
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  for (let k = 0; k < 6; k++) {
    const jiggled = base.map((l) =>
      shifted(l, 0.01 * rng.normal(), 0.01 * rng.normal(), 0.01 * rng.normal())
    );
    const c = classifier.classify(frame3d(k, k, jiggled));
    assertEquals(c.events.length, 0, `frame ${k}`);
    for (let i = 0; i < c.labels.length && i < 30 * 32; i++) assertEquals(c.labels[i], Label.Main);
  }
});

Deno.test("createLoopClassifier rejects inward, too slow and too fast rings", () => {
  // Methods §4.2 criteria 2 (speed within the factor 1 + tol = 1.25 of the ring speed) and 3 (outward).
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const cases: [string, number, number, boolean][] = [
    ["outward at 1.2 U", 12, 1.2 * U, true],
    ["outward at U/1.2", 12, U / 1.2, true],
    ["outward at 1.3 U", 12, 1.3 * U, false],
    ["outward at 0.5 U", 12, 0.5 * U, false],
    ["inward at U", 20, -U, false],
  ];
  for (const [what, dist, speed, evaporates] of cases) {
    const rng = RandomStream.fromState([17, 18, 19, 20]);
    const base = tangle(rng);
    const dir = unit(rng);
    const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
    let labels: number[] = [];
    for (let k = 0; k <= 4; k++) {
      const f = frame3d(k, k * 0.05, [...base, smallRing(k * 0.05, { dist, dir, speed })]);
      labels = labelsOfLoop(classifier.classify(f), f, 99);
    }
    assertEquals(labels.includes(Label.Evaporated), evaporates, what);
  }
});

Deno.test("createLoopClassifier accepts an isolated ring inside k·R_rms but not one next to another loop", () => {
  // Methods §4.2 criterion 4: isolated (no other loop within ℓ) or beyond k·R_rms. Tangle: 40 rings on a
  // sphere of radius 5 (R_rms ≈ 5, ℓ ≈ 2.5); a small ring near the empty middle is isolated, one touching a
  // tangle ring is not.
  const rng = RandomStream.fromState([21, 22, 23, 24]);
  const shell: Loop[] = [];
  for (let q = 0; q < 40; q++) {
    const u = unit(rng);
    shell.push(ring(q, 1000 * q, [5 * u[0], 5 * u[1], 5 * u[2]], unit(rng), 1, 32));
  }
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  for (
    const [what, start, evaporates] of [["isolated", [0.5, 0, 0], true], ["touching", null, false]] as const
  ) {
    const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
    // "touching": 0.3 from a point of tangle ring 0, on its far side from the centre direction.
    const p0: [number, number, number] = start === null
      ? [shell[0].x[0] * 0.94, shell[0].y[0] * 0.94, shell[0].z[0] * 0.94]
      : [start[0], start[1], start[2]];
    const r0 = Math.hypot(...p0);
    const dir: [number, number, number] = [p0[0] / r0, p0[1] / r0, p0[2] / r0];
    let labels: number[] = [];
    for (let k = 0; k <= 3; k++) {
      const f = frame3d(k, k * 0.002, [...shell, smallRing(k * 0.002, { dist: r0, dir, speed: U })]);
      const c = classifier.classify(f);
      assert(r0 < 2 * c.rmsRadius, `${what}: the ring is inside k·R_rms`);
      labels = labelsOfLoop(c, f, 99);
    }
    assertEquals(labels, [evaporates ? Label.Evaporated : Label.Main], what);
  }
});

Deno.test("createLoopClassifier logs a recapture of a ring back inside k·R_rms for K frames", () => {
  const rng = RandomStream.fromState([25, 26, 27, 28]);
  const base = tangle(rng);
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  for (let k = 0; k <= 7; k++) {
    const small = k <= 3
      ? smallRing(k * 0.05, { dist: 12, dir, speed: U })
      : smallRing(0, { dist: 1, dir, speed: 0 });
    const f = frame3d(k, k * 0.05, [...base, small]);
    const c = classifier.classify(f);
    const expected = k < 3 ? Label.Main : k < 6 ? Label.Evaporated : Label.Main;
    assertEquals(labelsOfLoop(c, f, 99), [expected], `frame ${k}`);
    if (k === 6) {
      assertEquals(c.events.map((e) => e.kind), ["recapture"]);
      assertEquals(c.events[0].data.fromLabel, Label.Evaporated);
    }
  }
});

Deno.test("createLoopClassifier keeps the label of an evaporated loop through a split", () => {
  // Loop identity by majority of shared markers (docs/methods.md §4.2): the piece with more markers keeps the track,
  // the other starts a new track inheriting the label; no second evaporation event.
  const rng = RandomStream.fromState([29, 30, 31, 32]);
  const base = tangle(rng);
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  let evaporations = 0;
  for (let k = 0; k <= 5; k++) {
    const small = smallRing(k * 0.05, { dist: 12, dir, speed: U });
    let loops: Loop[] = [...base, small];
    if (k >= 4) {
      // Split into points 0..10 (markers 0, 4, 8) and 11..15 (marker 12): two loops 99 and 98.
      const part = (a: number, b: number, id: number): Loop => ({
        loop: id,
        ids: small.ids.slice(a, b),
        x: small.x.slice(a, b),
        y: small.y.slice(a, b),
        z: small.z.slice(a, b),
        markerEvery: 0,
      });
      loops = [...base, part(0, 11, 99), part(11, 16, 98)];
    }
    const f = frame3d(k, k * 0.05, loops);
    if (k >= 4) {
      // Markers keep their ids: flag them by id (multiples of 4 from 99000).
      for (let i = 0; i < f.n; i++) (f.marker as Uint8Array)[i] = f.id[i] % 4 === 0 ? 1 : 0;
    }
    const c = classifier.classify(f);
    evaporations += c.events.filter((e) => e.kind === "evaporation").length;
    if (k >= 4) {
      assertEquals(labelsOfLoop(c, f, 99), [Label.Evaporated], `frame ${k} larger piece`);
      assertEquals(labelsOfLoop(c, f, 98), [Label.Evaporated], `frame ${k} smaller piece`);
    }
  }
  assertEquals(evaporations, 1);
});

Deno.test("createLoopClassifier gives a merged loop the track sharing most markers", () => {
  // Loop identity by majority of shared markers (docs/methods.md §4.2): an evaporated ring (4 markers) merging with a
  // tangle ring (8 markers) continues the tangle ring's track, whose label is main, even though the
  // evaporated ring's points come first.
  const rng = RandomStream.fromState([33, 34, 35, 36]);
  const base = tangle(rng);
  const dir = unit(rng);
  const U = expectedRingSpeed(polygonRadius(0.1, 16));
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  for (let k = 0; k <= 4; k++) {
    const small = smallRing(k * 0.05, { dist: 12, dir, speed: U });
    const loops: Loop[] = k < 4 ? [...base, small] : [
      ...base.slice(1),
      {
        loop: 7,
        ids: [...small.ids, ...base[0].ids],
        x: [...small.x, ...base[0].x],
        y: [...small.y, ...base[0].y],
        z: [...small.z, ...base[0].z],
        markerEvery: 4,
      },
    ];
    const f = frame3d(k, k * 0.05, loops);
    const c = classifier.classify(f);
    if (k === 3) assertEquals(labelsOfLoop(c, f, 99), [Label.Evaporated], "evaporated before the merge");
    if (k === 4) {
      assertEquals(labelsOfLoop(c, f, 7), [Label.Main], "merged loop");
      assertEquals(c.events.length, 0);
    }
  }
});

Deno.test("createLoopClassifier centre and R_rms of symmetric rings are exact", () => {
  // Length-weighted centroid of segment midpoints (docs/methods.md §4.3). A regular M-gon of circumradius R has all
  // midpoints at R·cos(π/M) (elementary geometry, common practice, no source).
  const classifier = createLoopClassifier(context(CAPS_3D, CONFIG, A0));
  const c0: [number, number, number] = [1.5, -2.25, 0.5];
  const one = classifier.classify(frame3d(0, 0, [ring(0, 0, c0, [0, 0, 1], 2, 24)]));
  for (let d = 0; d < 3; d++) assertClose(one.centre[d], c0[d], 1e-14, `ring centre ${d}`);
  assertClose(one.rmsRadius, 2 * Math.cos(Math.PI / 24), 1e-14, "R_rms = R cos(π/M)");

  // Two rings at c0 ± (D, 0, 0) in planes ⟂ ẑ: R_rms² = D² + R² cos²(π/M).
  const D = 3;
  const two = createLoopClassifier(context(CAPS_3D, CONFIG, A0)).classify(frame3d(0, 0, [
    ring(0, 0, [c0[0] + D, c0[1], c0[2]], [0, 0, 1], 2, 24),
    ring(1, 100, [c0[0] - D, c0[1], c0[2]], [0, 0, 1], 2, 24),
  ]));
  for (let d = 0; d < 3; d++) assertClose(two.centre[d], c0[d], 1e-14, `pair centre ${d}`);
  assertClose(two.rmsRadius, Math.sqrt(D * D + 4 * Math.cos(Math.PI / 24) ** 2), 1e-14, "pair R_rms");
});

Deno.test("createLoopClassifier refuses a missing core radius and missing loop field", () => {
  assertThrows(() => createLoopClassifier(context(CAPS_3D, CONFIG)), RangeError, "core radius a₀");
  assertThrows(
    () => createLoopClassifier(context({ ...CAPS_3D, fields: ["marker"] }, CONFIG, A0)),
    RangeError,
    "frame field 'loop'",
  );
});
