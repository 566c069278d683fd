import assert from "node:assert/strict";
import { computeGeometry, Geometry } from "./geometry.ts";
import { ringPoints } from "./initial.ts";
import { Reconnector } from "./reconnect.ts";
import type { ReconnectionRecord } from "./reconnect.ts";
import { compactInto, FilamentState, IdCounters } from "./state.ts";

/** Two coplanar unit rings with a gap g between them on the x axis; normals ±z. */
function pair(gap: number, normalB: 1 | -1, L = 0, shift = 0) {
  const s = new FilamentState();
  const ids = new IdCounters();
  const wrap = (l: [number, number, number][]) =>
    L > 0 ? l.map((p) => p.map((v) => v - L * Math.floor(v / L + 0.5)) as [number, number, number]) : l;
  s.appendLoop(wrap(ringPoints(1, [-1 - gap / 2 + shift, 0, 0], [0, 0, 1], 0.1, 0)), ids, 6);
  s.appendLoop(wrap(ringPoints(1, [1 + gap / 2 + shift, 0, 0], [0, 0, normalB], 0.1, Math.PI)), ids, 6);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, g);
  return { s, ids, g };
}

function reconnect(s: FilamentState, ids: IdCounters, g: Geometry, dr: number, L = 0) {
  const relabel = new Uint8Array(s.n);
  const recs: ReconnectionRecord[] = [];
  const count = new Reconnector().run(s, g, { distance: dr, boxSize: L }, relabel, (r) => recs.push(r));
  const out = new FilamentState();
  compactInto(s, out, { boxSize: L, minPoints: 5, minLength: 0, ids, relabel, onRemoved: () => {} });
  return { count, recs, out };
}

function totalLength(s: FilamentState, L = 0): number {
  let t = 0;
  for (let i = 0; i < s.n; i++) {
    const j = s.next[i];
    const d = [s.x[j] - s.x[i], s.y[j] - s.y[i], s.z[j] - s.z[i]].map((
      v,
    ) => (L > 0 ? v - L * Math.round(v / L) : v));
    t += Math.hypot(d[0], d[1], d[2]);
  }
  return t;
}

Deno.test("Reconnector merges two touching antiparallel rings into one loop and shortens the line", () => {
  // Type II rule (Kondaurova et al., Phys. Rev. B 89, 014502 (2014)): antiparallel, distance < δ_r, ΔL < 0;
  // two loops merge into one (docs/methods.md §2.6).
  const { s, ids, g } = pair(0.02, 1);
  const before = totalLength(s);
  const { count, recs, out } = reconnect(s, ids, g, 0.05);
  assert.equal(count, 1);
  assert.equal(out.nLoops, 1);
  assert.ok(recs[0].lengthChange < 0, `ΔL = ${recs[0].lengthChange}`);
  const after = totalLength(out);
  assert.ok(Math.abs(after - before - recs[0].lengthChange) < 1e-12, "ΔL equals the change of total length");
  assert.ok(out.loopId[0] >= 2, "the merged loop gets a new id");
});

Deno.test("Reconnector leaves parallel lines and distant lines alone", () => {
  // Antiparallel test s′_i·s′_j < 0 (docs/methods.md §2.6): co-flowing lines never reconnect.
  const p = pair(0.02, -1);
  assert.equal(reconnect(p.s, p.ids, p.g, 0.05).count, 0, "parallel tangents");
  const q = pair(0.2, 1);
  assert.equal(reconnect(q.s, q.ids, q.g, 0.05).count, 0, "gap larger than δ_r");
});

Deno.test("Reconnector never reconnects a smooth loop with itself (4-point exclusion)", () => {
  // Pairs within 4 points along one loop are excluded (docs/methods.md §2.6).
  const s = new FilamentState();
  const ids = new IdCounters();
  s.appendLoop(ringPoints(1, [0, 0, 0], [0, 0, 1], 0.1, 0), ids, 6);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, 0, g);
  assert.equal(reconnect(s, ids, g, 0.2).count, 0);
});

Deno.test("Reconnector splits a pinched loop into two", () => {
  // A loop whose two far-apart strands run antiparallel within δ_r splits into two loops (docs/methods.md §2.6).
  const pts: [number, number, number][] = [];
  const N = 80;
  for (let k = 0; k < N; k++) {
    const phi = 2 * Math.PI * k / N;
    // Dumbbell: x = 2cos φ, y = sin φ·(0.02 + |cos φ|) pinched at φ = ±π/2.
    pts.push([2 * Math.cos(phi), Math.sin(phi) * (0.02 + Math.abs(Math.cos(phi))), 0]);
  }
  const s = new FilamentState();
  const ids = new IdCounters();
  s.appendLoop(pts, ids, 6);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, 0, g);
  const { count, out } = reconnect(s, ids, g, 0.06);
  assert.equal(count, 1);
  assert.equal(out.nLoops, 2);
});

Deno.test("Reconnector finds pairs across a periodic boundary (minimum image)", () => {
  // Cell list wrapped in the periodic cube (docs/methods.md §2.8).
  const L = 6;
  const { s, ids, g } = pair(0.02, 1, L, 3); // touching point at x = 3 ≡ −3
  const { count, out } = reconnect(s, ids, g, 0.05, L);
  assert.equal(count, 1);
  assert.equal(out.nLoops, 1);
});
