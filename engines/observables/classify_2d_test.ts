import {
  assert,
  assertClose,
  assertEquals,
  assertThrows,
  CAPS_2D,
  CONFIG,
  context,
  frame2d,
  type Vortex,
} from "./_testing.ts";
import { RandomStream } from "../random.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import type { Classification } from "./contract.ts";
import { Label } from "./labels.ts";

/** 200 vortices uniform in a disk of radius 10 (docs/methods.md §3.2 sampling), random signs; ids 0..199. */
function cloud(rng: RandomStream, n = 200, radius = 10): Vortex[] {
  const out: Vortex[] = [];
  for (let i = 0; i < n; i++) {
    const r = radius * Math.sqrt(rng.uniform());
    const th = 2 * Math.PI * rng.uniform();
    out.push({ id: i, x: r * Math.cos(th), y: r * Math.sin(th), g: rng.uniform() < 0.5 ? 1 : -1 });
  }
  return out;
}

/**
 * A ± dipole of separation d whose pair centre is at P + s·k·dt·û at frame k, û = (cos θ, sin θ).
 * Self-propulsion direction sign(Γ₊) ẑ×(z₋ − z₊)/d equals û when the + vortex sits at P + (d/2) ẑ×û
 * (velocity law v = (Γ/2π) ẑ×(r − r_j)/|r − r_j|², docs/check-values.md §1.1; Saffman, Vortex Dynamics (1992) ch. 7).
 */
function dipole(
  k: number,
  opts: { id: number; dist: number; theta: number; d: number; speed: number; dt?: number; facing?: number },
): Vortex[] {
  const ux = Math.cos(opts.theta), uy = Math.sin(opts.theta);
  const facing = opts.facing ?? 1; // +1: self-propulsion along û (outward); −1: toward the centre
  const travel = opts.speed * k * (opts.dt ?? 1);
  const px = (opts.dist + travel) * ux, py = (opts.dist + travel) * uy;
  const vx = -uy * facing, vy = ux * facing; // ẑ×(facing·û)
  return [
    { id: opts.id, x: px + 0.5 * opts.d * vx, y: py + 0.5 * opts.d * vy, g: 1 },
    { id: opts.id + 1, x: px - 0.5 * opts.d * vx, y: py - 0.5 * opts.d * vy, g: -1 },
  ];
}

/** Dipole translation speed U = κ/(2πd) (docs/check-values.md §1.3; Saffman, Vortex Dynamics (1992) §7.3). */
const dipoleSpeed = (d: number) => 1 / (2 * Math.PI * d);

function labelOf(c: Classification, frameIds: Int32Array, id: number): number {
  for (let i = 0; i < frameIds.length; i++) if (frameIds[i] === id) return c.labels[i];
  throw new Error(`id ${id} not in frame`);
}

Deno.test("createDipoleClassifier labels a planted outward dipole evaporated after exactly K frames", () => {
  // Methods §4.1 criteria and §7.4 ("planted dipoles far from a cluster → labelled").
  for (const K of [3, 5]) {
    const rng = RandomStream.fromState([1, 2, 3, 4]);
    const base = cloud(rng);
    const classifier = createDipoleClassifier(context(CAPS_2D, { ...CONFIG, stickyFrames: K }));
    const d = 0.1;
    const U = dipoleSpeed(d);
    for (let k = 0; k <= K + 3; k++) {
      const f = frame2d(k, k, [...base, ...dipole(k, { id: 1000, dist: 40, theta: 0.7, d, speed: U })]);
      const c = classifier.classify(f);
      const expected = k >= K ? Label.Evaporated : Label.Main;
      assertEquals(labelOf(c, f.id, 1000), expected, `K=${K} frame ${k}: + vortex`);
      assertEquals(labelOf(c, f.id, 1001), expected, `K=${K} frame ${k}: − vortex`);
      for (let i = 0; i < base.length; i++) {
        assertEquals(c.labels[i], Label.Main, `cluster vortex ${i}, frame ${k}`);
      }
      if (k === K) {
        assertEquals(c.events.length, 1);
        const e = c.events[0];
        assertEquals(e.kind, "evaporation");
        assertEquals([...e.ids].sort(), [1000, 1001]);
        assertEquals(e.t, K);
        assertEquals(e.data.frames, K);
        // Finite-difference speed of a straight translation is exact up to rounding.
        assertClose(e.data.speed, U, 1e-12, "pair speed vs κ/(2πd)");
        assertClose(e.data.separation, d, 1e-12, "separation");
        assertClose(e.data.directionCosine, 1, 1e-12, "direction cosine");
        // Outward cosine between V ∥ û and P − c, with P = (40 + U k) û and the event's own centre c.
        const s = 40 + U * k;
        const rx = s * Math.cos(0.7) - e.data.centreX, ry = s * Math.sin(0.7) - e.data.centreY;
        const cos = (rx * Math.cos(0.7) + ry * Math.sin(0.7)) / Math.hypot(rx, ry);
        assertClose(e.data.outwardCosine, cos, 1e-12, "outward cosine");
        assertClose(e.data.distance, Math.hypot(rx, ry), 1e-12, "distance from the centre");
      } else {
        assertEquals(c.events.length, 0, `frame ${k}: no events`);
      }
    }
  }
});

Deno.test("createDipoleClassifier finds no evaporator in a jiggling cluster", () => {
  // Methods §7.4: "a cluster without evaporators → none".
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const vortices = cloud(rng, 400);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  for (let k = 0; k < 12; k++) {
    for (const v of vortices) {
      v.x += 0.05 * rng.normal();
      v.y += 0.05 * rng.normal();
    }
    const c = classifier.classify(frame2d(k, 0.1 * k, vortices));
    assertEquals(c.events.length, 0, `frame ${k}`);
    for (let i = 0; i < vortices.length; i++) assertEquals(c.labels[i], Label.Main);
  }
});

Deno.test("createDipoleClassifier never labels a same-sign pair evaporated (it becomes stray)", () => {
  // Methods §4.1 criterion 1: opposite signs. A co-rotating pair is no dipole; lone and far → stray.
  const rng = RandomStream.fromState([9, 10, 11, 12]);
  const base = cloud(rng);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const d = 0.1;
  for (let k = 0; k < 8; k++) {
    const pair = dipole(k, { id: 1000, dist: 40, theta: 2.0, d, speed: dipoleSpeed(d) });
    pair[1].g = 1;
    const f = frame2d(k, k, [...base, ...pair]);
    const c = classifier.classify(f);
    const label = labelOf(c, f.id, 1000);
    assert(label !== Label.Evaporated, `frame ${k}`);
    // Outside k·R_rms and in no dipole from frame 0 on: stray once K = 3 frames (0, 1, 2) have passed.
    assertEquals(label, k >= 2 ? Label.Stray : Label.Main, `frame ${k}`);
    if (k === 2) assertEquals(c.events.map((e) => e.kind), ["stray", "stray"]);
  }
});

Deno.test("createDipoleClassifier does not label a dipole moving inward", () => {
  // Methods §4.1 criterion 4 (outward motion).
  const rng = RandomStream.fromState([13, 14, 15, 16]);
  const base = cloud(rng);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const d = 0.1;
  const U = dipoleSpeed(d);
  for (let k = 0; k < 8; k++) {
    const f = frame2d(k, k, [
      ...base,
      ...dipole(k, { id: 1000, dist: 60, theta: -1, d, speed: -U, facing: -1 }),
    ]);
    const c = classifier.classify(f);
    assertEquals(labelOf(c, f.id, 1000), Label.Main, `frame ${k}`);
    assertEquals(labelOf(c, f.id, 1001), Label.Main, `frame ${k}`);
    assertEquals(c.events.length, 0);
  }
});

Deno.test("createDipoleClassifier does not label a dipole moving outward against its self-propulsion", () => {
  // Methods §4.1 criterion 3: direction ±ẑ×(z_j − z_i) as set by the signs. This pair moves outward at the
  // right speed, but its self-propulsion points inward (it is being carried, not self-propelled).
  const rng = RandomStream.fromState([29, 30, 31, 32]);
  const base = cloud(rng);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const d = 0.1;
  for (let k = 0; k < 6; k++) {
    const f = frame2d(k, k, [
      ...base,
      ...dipole(k, { id: 1000, dist: 40, theta: 2.5, d, speed: dipoleSpeed(d), facing: -1 }),
    ]);
    const c = classifier.classify(f);
    assertEquals(labelOf(c, f.id, 1000), Label.Main, `frame ${k}`);
    assertEquals(c.events.length, 0);
  }
});

Deno.test("createDipoleClassifier applies the speed tolerance to κ/(2πd)", () => {
  // Methods §4.1 criterion 3: |V| within 25 % of κ/(2πd). 1.2 U passes, 1.3 U and 0.7 U fail.
  for (const [factor, evaporates] of [[1.2, true], [0.8, true], [1.3, false], [0.7, false]] as const) {
    const rng = RandomStream.fromState([17, 18, 19, 20]);
    const base = cloud(rng);
    const classifier = createDipoleClassifier(context(CAPS_2D));
    const d = 0.1;
    let label = -1;
    for (let k = 0; k < 5; k++) {
      const f = frame2d(k, k, [
        ...base,
        ...dipole(k, { id: 1000, dist: 40, theta: 0, d, speed: factor * dipoleSpeed(d) }),
      ]);
      label = labelOf(classifier.classify(f), f.id, 1000);
    }
    assertEquals(label === Label.Evaporated, evaporates, `speed factor ${factor}`);
  }
});

Deno.test("createDipoleClassifier logs a recapture after K frames back inside k·R_rms", () => {
  // Methods §4: re-entries are logged as recaptured after K frames failing the criteria inside k·R_rms.
  const rng = RandomStream.fromState([21, 22, 23, 24]);
  const base = cloud(rng);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const d = 0.1;
  const U = dipoleSpeed(d);
  for (let k = 0; k <= 8; k++) {
    const pair = k <= 3
      ? dipole(k, { id: 1000, dist: 40, theta: 1, d, speed: U })
      : dipole(0, { id: 1000, dist: 3, theta: 1, d: 0.1, speed: 0 });
    const f = frame2d(k, k, [...base, ...pair]);
    const c = classifier.classify(f);
    const expected = k < 3 ? Label.Main : k < 6 ? Label.Evaporated : Label.Main;
    assertEquals(labelOf(c, f.id, 1000), expected, `frame ${k}`);
    assertEquals(labelOf(c, f.id, 1001), expected, `frame ${k}`);
    if (k === 6) {
      assertEquals(c.events.map((e) => e.kind), ["recapture", "recapture"]);
      assertEquals(c.events.map((e) => e.ids[0]).sort(), [1000, 1001]);
      assertEquals(c.events[0].data.fromLabel, Label.Evaporated);
    }
  }
});

Deno.test("createDipoleClassifier turns an evaporated vortex whose partner vanished stray", () => {
  // Methods §4.1: lone vortices far away after partner annihilation get the label "stray".
  const rng = RandomStream.fromState([25, 26, 27, 28]);
  const base = cloud(rng);
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const d = 0.1;
  const U = dipoleSpeed(d);
  for (let k = 0; k <= 7; k++) {
    const pair = dipole(k, { id: 1000, dist: 40, theta: 1, d, speed: U });
    const f = frame2d(k, k, k <= 3 ? [...base, ...pair] : [...base, pair[0]]);
    const c = classifier.classify(f);
    // Evaporated at frame 3; alone from frame 4, stray after 3 lone frames (4, 5, 6).
    assertEquals(
      labelOf(c, f.id, 1000),
      k < 3 ? Label.Main : k < 6 ? Label.Evaporated : Label.Stray,
      `frame ${k}`,
    );
    if (k === 6) {
      assertEquals(c.events.length, 1);
      assertEquals(c.events[0].kind, "stray");
      assertEquals(c.events[0].data.fromLabel, Label.Evaporated);
    }
  }
});

Deno.test("createDipoleClassifier centre and R_rms of symmetric configurations are exact", () => {
  // Centroid and RMS radius (docs/methods.md §4.3) of configurations with known values: elementary geometry
  // (common practice, no source).
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const a = 0.75, x0 = 3.5, y0 = -1.25;
  const square = [[1, 1], [1, -1], [-1, 1], [-1, -1]].map(([sx, sy], i) => ({
    id: i,
    x: x0 + sx * a,
    y: y0 + sy * a,
    g: 1,
  }));
  const c = classifier.classify(frame2d(0, 0, square));
  assertClose(c.centre[0], x0, 1e-15, "square centre x");
  assertClose(c.centre[1], y0, 1e-15, "square centre y");
  assertClose(c.rmsRadius, a * Math.SQRT2, 1e-15, "square R_rms = a√2");

  // Five points 0..4 on a line: mean 2, variance (N² − 1)/12 = 2 (discrete uniform law).
  const line = [0, 1, 2, 3, 4].map((x, i) => ({ id: i, x, y: 0, g: 1 }));
  const cl = createDipoleClassifier(context(CAPS_2D)).classify(frame2d(0, 0, line));
  assertClose(cl.centre[0], 2, 1e-15, "line centre");
  assertClose(cl.rmsRadius, Math.SQRT2, 1e-15, "line R_rms = √2");
});

Deno.test("createDipoleClassifier trims points beyond 3 R_rms from the centre", () => {
  // Methods §4.3: iterative trimming. 100 points on the unit circle plus one at x = 1000: the first pass
  // gives R_rms ≈ 99.5 and the outlier lies at ≈ 990 > 3·99.5, so it is dropped and the exact circle remains.
  const pts: Vortex[] = [];
  for (let k = 0; k < 100; k++) {
    pts.push({ id: k, x: Math.cos(2 * Math.PI * k / 100), y: Math.sin(2 * Math.PI * k / 100), g: 1 });
  }
  pts.push({ id: 100, x: 1000, y: 0, g: 1 });
  const c = createDipoleClassifier(context(CAPS_2D)).classify(frame2d(0, 0, pts));
  assertClose(c.centre[0], 0, 1e-14, "centre x");
  assertClose(c.centre[1], 0, 1e-14, "centre y");
  assertClose(c.rmsRadius, 1, 1e-14, "R_rms of the unit circle");
});

Deno.test("createDipoleClassifier leaves stray vortices out of the centre", () => {
  // Methods §4.3: the centre is of main-cluster vortices. A lone vortex at 2.5 (beyond 2 R_rms ≈ 2.05 but
  // inside 3 R_rms, so not trimmed) shifts the centroid to 2.5/101 until it turns stray after K = 3 frames.
  const pts: Vortex[] = [];
  for (let k = 0; k < 100; k++) {
    pts.push({ id: k, x: Math.cos(2 * Math.PI * k / 100), y: Math.sin(2 * Math.PI * k / 100), g: 1 });
  }
  pts.push({ id: 100, x: 2.5, y: 0, g: 1 });
  const classifier = createDipoleClassifier(context(CAPS_2D));
  for (let k = 0; k < 5; k++) {
    const c = classifier.classify(frame2d(k, k, pts));
    if (k <= 2) assertClose(c.centre[0], 2.5 / 101, 1e-13, `frame ${k} centre x with the lone vortex`);
    else {
      assertClose(c.centre[0], 0, 1e-14, `frame ${k} centre x without the stray vortex`);
      assertClose(c.rmsRadius, 1, 1e-14, `frame ${k} R_rms`);
    }
    assertEquals(c.labels[100], k >= 2 ? Label.Stray : Label.Main, `frame ${k}`);
  }
});

Deno.test("createDipoleClassifier handles empty frames, arbitrary ids and growth", () => {
  const classifier = createDipoleClassifier(context(CAPS_2D));
  const empty = classifier.classify(frame2d(0, 0, []));
  assert(Number.isNaN(empty.rmsRadius) && Number.isNaN(empty.centre[0]));
  const one = classifier.classify(frame2d(1, 1, [{ id: -7, x: 1, y: 2, g: 1 }]));
  assertEquals(one.centre, [1, 2]);
  assertEquals(one.rmsRadius, 0);
  const rng = RandomStream.fromState([3, 1, 4, 1]);
  const many = cloud(rng, 5000).map((v) => ({ ...v, id: v.id * 2654435 - 1e9 }));
  const c = classifier.classify(frame2d(2, 2, many));
  assertEquals(c.labels.length >= 5000, true);
  assert(c.rmsRadius > 6.5 && c.rmsRadius < 7.6, `R_rms ${c.rmsRadius} of a unit-density disk of radius 10`);
});

Deno.test("createDipoleClassifier refuses invalid thresholds with a readable message", () => {
  assertThrows(
    () => createDipoleClassifier(context(CAPS_2D, { ...CONFIG, stickyFrames: 0, separationFactor: -1 })),
    RangeError,
    "stickyFrames must be an integer ≥ 1, got 0",
  );
});
