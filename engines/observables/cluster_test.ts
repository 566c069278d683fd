import { RandomStream } from "../random.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import { createLoopClassifier } from "./classify_3d.ts";
import { clusterObservable, createClusterObservable } from "./cluster.ts";
import type { ObservableResult } from "./contract.ts";
import type { Frame } from "../contract.ts";
import { addSegmentToShells } from "./_profile.ts";
import {
  assert,
  assertClose,
  assertEquals,
  assertThrows,
  CAPS_2D,
  CAPS_3D,
  CONFIG,
  context,
  frame2d,
  frame3d,
  type Loop,
  ring,
} from "./_testing.ts";

const A0 = 1e-3;

/** Runs classifier + cluster accumulator over the frames. */
function run2d(frames: Frame[], observable = clusterObservable): ObservableResult {
  const ctx = context(CAPS_2D);
  const classifier = createDipoleClassifier(ctx);
  const acc = observable.create(ctx);
  for (const f of frames) acc.push(f, classifier.classify(f));
  return acc.finish();
}

function run3d(frames: Frame[], observable = clusterObservable): ObservableResult {
  const ctx = context(CAPS_3D, CONFIG, A0);
  const classifier = createLoopClassifier(ctx);
  const acc = observable.create(ctx);
  for (const f of frames) acc.push(f, classifier.classify(f));
  return acc.finish();
}

// Bin measures written out independently: annulus π((k+1)² − k²)w², shell (4π/3)((k+1)³ − k³)w³
// (elementary geometry, common practice, no source).
const annulus = (k: number, w: number) => Math.PI * (((k + 1) * w) ** 2 - (k * w) ** 2);
const shell = (k: number, w: number) => 4 / 3 * Math.PI * (((k + 1) * w) ** 3 - (k * w) ** 3);

/** Perimeter of a regular M-gon of circumradius r: 2Mr·sin(π/M) (elementary geometry). */
const perimeter = (r: number, m: number) => 2 * m * r * Math.sin(Math.PI / m);

Deno.test("clusterObservable reports centre, R_rms and counts of a square of vortices per frame", () => {
  // Centroid and RMS radius of (x0 ± a, y0 ± a): (x0, y0) and a√2 (docs/methods.md §4.3; elementary geometry).
  const a = 0.5, x0 = 2, y0 = -3;
  const frames = [0, 1, 2].map((k) =>
    frame2d(
      k,
      0.5 * k,
      [[1, 1], [1, -1], [-1, 1], [-1, -1]].map(([sx, sy], i) => ({
        id: i,
        x: x0 + k + sx * a,
        y: y0 + sy * a,
        g: sx * sy,
      })),
    )
  );
  const r = run2d(frames);
  assertEquals(r.series.cluster_rms_radius.t, [0, 0.5, 1]);
  for (let k = 0; k < 3; k++) {
    assertClose(r.series.cluster_rms_radius.v[k], a * Math.SQRT2, 1e-15, `R_rms frame ${k}`);
    assertClose(r.series.cluster_centre_x.v[k], x0 + k, 1e-15, `centre x frame ${k}`);
    assertClose(r.series.cluster_centre_y.v[k], y0, 1e-15, `centre y frame ${k}`);
  }
  assertEquals(r.series.main_count.v, [4, 4, 4]);
  assertEquals(r.series.object_count.v, [4, 4, 4]);
  assertClose(r.scalars.rms_radius_initial, a * Math.SQRT2, 1e-15, "rms_radius_initial");
  assertEquals("cluster_centre_z" in r.series, false);
});

Deno.test("clusterObservable 2D profile counts vortices per annulus area and sums to the main count", () => {
  // Σ_k n_k · area_k + outside = N_main exactly (docs/methods.md §5.2: 2D vortex number per annulus area).
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  const vortices = Array.from({ length: 500 }, (_, i) => {
    const r = 10 * Math.sqrt(rng.uniform()), th = 2 * Math.PI * rng.uniform();
    return { id: i, x: r * Math.cos(th), y: r * Math.sin(th), g: i % 2 === 0 ? 1 : -1 };
  });
  // Two far vortices turn stray after 3 frames and leave the profile (excluded objects, docs/methods.md §5.2).
  vortices.push({ id: 900, x: 60, y: 0, g: 1 }, { id: 901, x: 0, y: -70, g: 1 });
  const r = run2d([0, 1, 2, 3].map((k) => frame2d(k, k, vortices)));
  const w = r.scalars.profile_bin_width;
  assertClose(w, 0.1 * r.scalars.rms_radius_initial, 1e-15, "bin width = R_rms(0)/10");
  assertEquals(r.scalars.profile_bins, 30);
  for (let k = 0; k < 4; k++) {
    let total = r.series.profile_outside.v[k];
    for (let b = 0; b < 30; b++) total += r.series[`profile.${b}`].v[k] * annulus(b, w);
    assertClose(total, r.series.main_count.v[k], 1e-12, `frame ${k}: Σ n·area + outside = main count`);
  }
  assertEquals(r.series.main_count.v, [502, 502, 500, 500]);
  // Unit-density disk (500 in π·10²): the inner annuli hold ≈ 500/(100π) = 1.59 per area.
  let inner = 0, area = 0;
  for (let b = 0; b < 8; b++) {
    inner += r.series[`profile.${b}`].v[3] * annulus(b, w);
    area += annulus(b, w);
  }
  assert(Math.abs(inner / area - 5 / Math.PI) < 0.25 * 5 / Math.PI, `inner density ${inner / area}`);
});

Deno.test("clusterObservable puts a ring entirely inside one shell with its whole length", () => {
  // A regular M-gon ring of circumradius R about its own centre lies between R cos(π/M) and R. With the bin width
  // w = R_rms/10.5 = R cos(π/M)/10.5 the whole ring is in shell 10, so L₁₀·V₁₀ = perimeter exactly.
  const R = 2, M = 64;
  const r = run3d(
    [frame3d(0, 0, [ring(0, 0, [1, 2, 3], [0.6, 0, 0.8], R, M)])],
    createClusterObservable({ binFraction: 1 / 10.5 }),
  );
  const w = r.scalars.profile_bin_width;
  assertClose(w, R * Math.cos(Math.PI / M) / 10.5, 1e-14, "bin width");
  assertClose(r.series["profile.10"].v[0] * shell(10, w), perimeter(R, M), 1e-12, "length in shell 10");
  for (let b = 0; b < 30; b++) if (b !== 10) assertEquals(r.series[`profile.${b}`].v[0], 0, `shell ${b}`);
  assertEquals(r.series.profile_outside.v[0], 0);
  assertClose(r.series.line_length.v[0], perimeter(R, M), 1e-14, "line length");
  assertEquals(r.series.loop_count.v[0], 1);
});

Deno.test("clusterObservable splits radial segments exactly at shell faces", () => {
  // Two 2-point loops along ±x from r = 0.15 to 5.85: centre 0, R_rms = 3 (all midpoints at ±3), w = 0.3.
  // Each loop is two coincident segments, so shell 0 holds 4·0.15, shells 1–18 hold 4·0.3, shell 19 holds 4·0.15.
  const seg = (loop: number, s: number): Loop => ({
    loop,
    ids: [10 * loop, 10 * loop + 1],
    x: [0.15 * s, 5.85 * s],
    y: [0, 0],
    z: [0, 0],
    markerEvery: 1,
  });
  const r = run3d([frame3d(0, 0, [seg(0, 1), seg(1, -1)])]);
  const w = r.scalars.profile_bin_width;
  assertClose(w, 0.3, 1e-15, "bin width");
  for (let b = 0; b < 30; b++) {
    const expected = b === 0 || b === 19 ? 0.6 : b < 19 ? 1.2 : 0;
    assertClose(r.series[`profile.${b}`].v[0] * shell(b, w), expected, 1e-12, `length in shell ${b}`);
  }
});

Deno.test("clusterObservable 3D profile integrates to the main line length for a planted set of rings", () => {
  // ∫ L(r) dV = Σ_k L_k V_k + outside = total main length (docs/methods.md §5.2), and line_length = Σ 2MR sin(π/M).
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const loops: Loop[] = [];
  let expectedLength = 0;
  for (let q = 0; q < 25; q++) {
    const R = 0.5 + rng.uniform(), M = 16 + Math.floor(32 * rng.uniform());
    const c: [number, number, number] = [6 * rng.uniform() - 3, 6 * rng.uniform() - 3, 6 * rng.uniform() - 3];
    const nrm: [number, number, number] = [rng.normal(), rng.normal(), rng.normal()];
    const s = Math.hypot(...nrm);
    loops.push(ring(q, 1000 * q, c, [nrm[0] / s, nrm[1] / s, nrm[2] / s], R, M));
    expectedLength += perimeter(R, M);
  }
  for (const bins of [30, 8]) {
    const r = run3d([frame3d(0, 0, loops)], createClusterObservable({ bins }));
    const w = r.scalars.profile_bin_width;
    let total = r.series.profile_outside.v[0];
    for (let b = 0; b < bins; b++) total += r.series[`profile.${b}`].v[0] * shell(b, w);
    assertClose(r.series.line_length.v[0], expectedLength, 1e-13, "line length");
    assertClose(r.series.main_line_length.v[0], expectedLength, 1e-13, "main line length");
    assertClose(total, expectedLength, 1e-12, `${bins} bins: Σ L·V + outside = main length`);
    if (bins === 8) assert(r.series.profile_outside.v[0] > 0, "some length beyond 0.8 R_rms");
    assertEquals(r.series.loop_count.v[0], 25);
  }
});

Deno.test("addSegmentToShells conserves length for segments passing near the centre", () => {
  // Chords crossing the inner shells on both sides of their closest point: lengths must add to |b − a|.
  const rng = RandomStream.fromState([9, 10, 11, 12]);
  const acc = new Float64Array(11);
  for (let trial = 0; trial < 200; trial++) {
    acc.fill(0);
    const p = Array.from({ length: 6 }, () => 4 * rng.uniform() - 2);
    addSegmentToShells(p[0], p[1], p[2], p[3], p[4], p[5], 0.25, 10, acc);
    const length = Math.hypot(p[3] - p[0], p[4] - p[1], p[5] - p[2]);
    assertClose(acc.reduce((s, v) => s + v, 0), length, 1e-13, `trial ${trial}`);
  }
  // A chord at distance h = 0.3 from the centre, from (−3, h) to (3, h): its length inside r < ρ is 2√(ρ² − h²).
  acc.fill(0);
  addSegmentToShells(-3, 0.3, 0, 3, 0.3, 0, 1, 10, acc);
  assertClose(acc[0], 2 * Math.sqrt(1 - 0.09), 1e-14, "shell 0");
  assertClose(acc[1], 2 * (Math.sqrt(4 - 0.09) - Math.sqrt(1 - 0.09)), 1e-14, "shell 1");
  assertClose(acc[2], 2 * (Math.sqrt(9 - 0.09) - Math.sqrt(4 - 0.09)), 1e-14, "shell 2");
  assertClose(acc[3], 2 * (3 - Math.sqrt(9 - 0.09)), 1e-12, "shell 3 (the ends at x = ±3 lie at r = 3.015)");
});

Deno.test("clusterObservable starts the profile at the first frame with R_rms > 0", () => {
  const frames = [
    frame2d(0, 0, [{ id: 0, x: 1, y: 1, g: 1 }]),
    frame2d(1, 1, [{ id: 0, x: 1, y: 1, g: 1 }, { id: 1, x: 3, y: 1, g: -1 }]),
  ];
  const r = run2d(frames);
  assertEquals(r.series.cluster_rms_radius.v, [0, 1]);
  assertEquals(r.series["profile.0"].t, [1]);
  assertEquals(r.scalars.profile_bin_width, 0.1);
});

Deno.test("createClusterObservable refuses bad binning", () => {
  assertThrows(() => createClusterObservable({ bins: 0 }), RangeError, "profile bins must be an integer ≥ 1");
  assertThrows(() => createClusterObservable({ binFraction: -1 }), RangeError, "bin fraction");
});

Deno.test("clusterObservable takes the study's profile binning from the context", () => {
  // 200 vortices uniform in a disk of radius 10; 12 bins of R_rms(0)/2 reach 6 R_rms(0) (the whole disk).
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const vortices = Array.from({ length: 200 }, (_, i) => {
    const r = 10 * Math.sqrt(rng.uniform()), th = 2 * Math.PI * rng.uniform();
    return { id: i, x: r * Math.cos(th), y: r * Math.sin(th), g: i % 2 === 0 ? 1 : -1 };
  });
  const ctx = { ...context(CAPS_2D), profile: { bins: 12, binFraction: 0.5 } };
  const classifier = createDipoleClassifier(ctx);
  const acc = clusterObservable.create(ctx);
  acc.push(frame2d(0, 0, vortices), classifier.classify(frame2d(0, 0, vortices)));
  const r = acc.finish();
  assertEquals(r.scalars.profile_bins, 12);
  assertClose(r.scalars.profile_bin_width, 0.5 * r.scalars.rms_radius_initial, 1e-15, "w = R_rms(0)/2");
  assertEquals(Object.keys(r.series).filter((k) => k.startsWith("profile.")).length, 12);
  // Uniform disk: R_rms = R/√2, so 12 × R_rms/2 = 4.24 R_rms > R: nothing outside (elementary geometry).
  assertEquals(r.series.profile_outside.v, [0]);
  assertThrows(
    () => clusterObservable.create({ ...ctx, profile: { bins: 2.5, binFraction: 0.5 } }),
    RangeError,
    "profile bins must be an integer",
  );
});
