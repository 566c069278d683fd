import assert from "node:assert/strict";
import { computeGeometry, Geometry } from "./geometry.ts";
import { remesh } from "./remesh.ts";
import { compactInto, FilamentState, IdCounters } from "./state.ts";
import { ringPoints } from "./initial.ts";
import { assertBelow } from "./_assert.ts";

function build(loops: [number, number, number][][], markerEvery = 1000) {
  const s = new FilamentState();
  const ids = new IdCounters();
  for (const l of loops) s.appendLoop(l, ids, markerEvery);
  return { s, ids };
}

function remeshOnce(s: FilamentState, ids: IdCounters, dmin: number, dmax: number, L = 0) {
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, g);
  const transfers: number[] = [];
  const r = remesh(
    s,
    g,
    { minSpacing: dmin, maxSpacing: dmax, boxSize: L },
    ids,
    (t) => transfers.push(t.markerId),
  );
  const out = new FilamentState();
  compactInto(s, out, { boxSize: L, minPoints: 3, minLength: 0, ids, relabel: null, onRemoved: () => {} });
  return { out, r, transfers };
}

function spacingRange(s: FilamentState): [number, number] {
  let lo = Infinity, hi = 0;
  for (let i = 0; i < s.n; i++) {
    const j = s.next[i];
    const l = Math.hypot(s.x[j] - s.x[i], s.y[j] - s.y[i], s.z[j] - s.z[i]);
    lo = Math.min(lo, l);
    hi = Math.max(hi, l);
  }
  return [lo, hi];
}

Deno.test("remesh inserts points on the osculating circle of a coarse ring", () => {
  // Curvature-preserving insertion s_new = ½(s_i + s_{i+1}) + (√(R² − ℓ²/4) − R) n̂ (docs/methods.md §2.5): a coarse
  // polygon inscribed in the unit circle gains points that lie on the same circle (|r| = 1 to the curvature
  // estimate's accuracy).
  const { s, ids } = build([ringPoints(1, [0, 0, 0], [0, 0, 1], 0.4, 0)]);
  const n0 = s.n;
  const { out, r } = remeshOnce(s, ids, 0.1, 0.25);
  assert.equal(r.inserted, n0 * 1, "one point per segment");
  for (let i = 0; i < out.n; i++) {
    assertBelow(Math.abs(Math.hypot(out.x[i], out.y[i], out.z[i]) - 1), 2e-3, `|r| − 1 at ${i}`);
  }
  const [, hi] = spacingRange(out);
  assert.ok(hi <= 0.25, `max spacing ${hi}`);
});

Deno.test("remesh removes points of short segments but never markers", () => {
  // Removal rule of docs/methods.md §2.5 (delete the end with smaller curvature; markers protected, §2.10).
  const pts: [number, number, number][] = [];
  for (let k = 0; k < 200; k++) pts.push([0, 0, 0]);
  for (let k = 0; k < 200; k++) {
    const phi = 2 * Math.PI * k / 200;
    pts[k] = [Math.cos(phi), Math.sin(phi), 0]; // spacing 0.0314
  }
  const { s, ids } = build([pts], 5);
  const markersBefore: number[] = [];
  for (let i = 0; i < s.n; i++) if (s.marker[i]) markersBefore.push(s.id[i]);
  let st = s;
  for (let pass = 0; pass < 6; pass++) st = remeshOnce(st, ids, 0.05, 0.1).out;
  const markersAfter: number[] = [];
  for (let i = 0; i < st.n; i++) if (st.marker[i]) markersAfter.push(st.id[i]);
  assert.deepEqual(markersAfter, markersBefore, "all markers survive, in order");
  const [lo, hi] = spacingRange(st);
  assert.ok(hi <= 0.1 + 1e-12, `max spacing ${hi}`);
  assert.ok(lo >= 0.05 - 1e-12, `min spacing ${lo} (the floor δ_min holds everywhere)`);
  assert.ok(st.n < 200, `points removed (${st.n})`);
});

Deno.test("remesh transfers a marker when two adjacent markers come closer than δ_min", () => {
  // Marker transfer to the nearest surviving non-marker (docs/methods.md §2.10), logged.
  const pts: [number, number, number][] = [];
  for (let k = 0; k < 40; k++) {
    const phi = 2 * Math.PI * k / 40;
    pts.push([Math.cos(phi), Math.sin(phi), 0]);
  }
  // Points 0 and 1 are markers (markerEvery = 1 would mark all; mark manually).
  pts[1] = [Math.cos(0.001), Math.sin(0.001), 0];
  const { s, ids } = build([pts], 1000);
  s.marker[1] = 1;
  const { out, transfers } = remeshOnce(s, ids, 0.1, 0.2);
  assert.equal(transfers.length, 1, "one transfer");
  let markers = 0;
  for (let i = 0; i < out.n; i++) markers += out.marker[i];
  assert.equal(markers, 2, "both marker ids still present");
});

Deno.test("remesh keeps image counters consistent across a periodic boundary", () => {
  // Inserted points take the image of their neighbour so unwrapped positions stay continuous (docs/methods.md §2.1).
  const L = 1;
  const pts: [number, number, number][] = [];
  for (let q = 0; q < 8; q++) pts.push([0, 0, -0.5 + q / 8]);
  const { s, ids } = build([pts]);
  const { out } = remeshOnce(s, ids, 0.03, 0.07, L);
  assert.equal(out.n, 16);
  for (let i = 0; i < out.n; i++) {
    assert.ok(out.z[i] >= -0.5 && out.z[i] < 0.5, `wrapped z ${out.z[i]}`);
  }
});

Deno.test("remesh brings every segment of an irregular, sharply bent line into [δ_min, δ_max] in one pass", () => {
  // The spacing floor the time step rests on (dt ∝ h_min², docs/methods.md §2.4): short segments lose a point even in
  // sharp bends, and a merged segment longer than δ_max is split again (pieces ≥ δ_max/2 = δ_min).
  // Common practice, no source.
  let state = 7;
  const rnd = () => (state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296;
  const pts: [number, number, number][] = [];
  let phi = 0;
  while (phi < 2 * Math.PI - 0.05) {
    const r = 1 + 0.15 * Math.sin(9 * phi); // bends of curvature radius ≈ 0.1 < 2δ_max
    pts.push([r * Math.cos(phi), r * Math.sin(phi), 0.05 * Math.sin(5 * phi)]);
    phi += 0.004 + 0.08 * rnd(); // spacing 0.004–0.09
  }
  const { s, ids } = build([pts]);
  const { out } = remeshOnce(s, ids, 0.05, 0.1);
  const [lo, hi] = spacingRange(out);
  assert.ok(lo >= 0.05 - 1e-12, `min spacing ${lo} ≥ δ_min`);
  assert.ok(hi <= 0.1 + 1e-12, `max spacing ${hi} ≤ δ_max`);
});
