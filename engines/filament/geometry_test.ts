import assert from "node:assert/strict";
import { computeGeometry, fornbergWeights, Geometry } from "./geometry.ts";
import { FilamentState, IdCounters } from "./state.ts";
import { assertAbsClose, assertRelClose } from "./_assert.ts";

Deno.test("fornbergWeights reproduces the 5-point central formulas on a uniform grid", () => {
  // Fornberg, Math. Comp. 51, 699 (1988), Table 1: f′ ≈ (1/12, −2/3, 0, 2/3, −1/12)/h,
  // f″ ≈ (−1/12, 4/3, −5/2, 4/3, −1/12)/h².
  const h = 0.1;
  const xs = new Float64Array([-2 * h, -h, 0, h, 2 * h]);
  const w = new Float64Array(15);
  fornbergWeights(5, xs, 0, w);
  const d1 = [1 / 12, -2 / 3, 0, 2 / 3, -1 / 12], d2 = [-1 / 12, 4 / 3, -5 / 2, 4 / 3, -1 / 12];
  for (let j = 0; j < 5; j++) {
    assertAbsClose(w[j * 3], j === 2 ? 1 : 0, 1e-14, `interpolation weight ${j}`);
    assertAbsClose(w[j * 3 + 1] * h, d1[j], 1e-13, `first-derivative weight ${j}`);
    assertAbsClose(w[j * 3 + 2] * h * h, d2[j], 1e-12, `second-derivative weight ${j}`);
  }
});

Deno.test("fornbergWeights is exact for quartics on an irregular grid", () => {
  // Five-point weights differentiate polynomials of degree ≤ 4 exactly (Fornberg 1988, §2).
  const xs = new Float64Array([-0.31, -0.12, 0, 0.07, 0.26]);
  const w = new Float64Array(15);
  fornbergWeights(5, xs, 0, w);
  const f = (x: number) => 0.3 - 1.7 * x + 2.2 * x * x - 4 * x ** 3 + 5 * x ** 4;
  let d1 = 0, d2 = 0;
  for (let j = 0; j < 5; j++) {
    d1 += w[j * 3 + 1] * f(xs[j]);
    d2 += w[j * 3 + 2] * f(xs[j]);
  }
  assertRelClose(d1, -1.7, 1e-12, "f′(0)");
  assertRelClose(d2, 4.4, 1e-12, "f″(0)");
});

/** Max tangent and curvature errors on a unit circle with N irregularly spaced points. */
function circleErrors(N: number): { tangent: number; curvature: number } {
  const pts: [number, number, number][] = [];
  for (let k = 0; k < N; k++) {
    const phi = 2 * Math.PI * (k + 0.3 * Math.sin(2.7 * k)) / N; // spacing varies by up to ±~60 %
    pts.push([Math.cos(phi), Math.sin(phi), 0]);
  }
  const s = new FilamentState();
  s.appendLoop(pts, new IdCounters(), 4);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, 0, g);
  let et = 0, ec = 0;
  for (let i = 0; i < N; i++) {
    const r = Math.hypot(s.x[i], s.y[i]);
    const tx = -s.y[i] / r, ty = s.x[i] / r;
    et = Math.max(et, Math.hypot(g.tx[i] - tx, g.ty[i] - ty, g.tz[i]));
    ec = Math.max(ec, Math.hypot(g.cx[i] + s.x[i], g.cy[i] + s.y[i], g.cz[i]));
  }
  return { tangent: et, curvature: ec };
}

Deno.test("computeGeometry: tangent O(h³) and curvature O(h²) or better on irregular spacing", () => {
  // Orders stated in docs/methods.md §2.3 for chord-length 5-point stencils (tangent ∝ h³, curvature ∝ h²); the
  // geometric curvature formula for a non-arclength parameter keeps at least these orders.
  const a = circleErrors(32), b = circleErrors(64), c = circleErrors(128);
  const ot = Math.log2(b.tangent / c.tangent), oc = Math.log2(b.curvature / c.curvature);
  assert.ok(ot > 2.7, `tangent order ${ot} (errors ${a.tangent}, ${b.tangent}, ${c.tangent})`);
  assert.ok(oc > 1.8, `curvature order ${oc} (errors ${a.curvature}, ${b.curvature}, ${c.curvature})`);
  assert.ok(c.curvature < 1e-3, `curvature error at 128 points ${c.curvature}`);
});

Deno.test("computeGeometry uses the minimum image across a periodic boundary", () => {
  // A straight line along z wrapped in a box: unit tangent (0, 0, 1), zero curvature everywhere (exact).
  const L = 2, N = 20;
  const pts: [number, number, number][] = [];
  for (let q = 0; q < N; q++) pts.push([0.1, -0.2, -L / 2 + L * (q + 0.5) / N]);
  const s = new FilamentState();
  s.appendLoop(pts, new IdCounters(), 4);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, g);
  for (let i = 0; i < N; i++) {
    assertAbsClose(g.tz[i], 1, 1e-14, `t_z at ${i}`);
    assertAbsClose(Math.hypot(g.cx[i], g.cy[i], g.cz[i]), 0, 1e-12, `|curvature| at ${i}`);
    assertRelClose(g.len[i], L / N, 1e-13, `segment length at ${i}`);
  }
});

Deno.test("computeGeometry falls back to three points on tiny loops", () => {
  // Three-point stencil on an equilateral triangle inscribed in the unit circle: the parabola through three
  // points of a circle has the circle's tangent at the middle point (symmetry; common practice, no source).
  const pts: [number, number, number][] = [[1, 0, 0], [-0.5, Math.sqrt(3) / 2, 0], [
    -0.5,
    -Math.sqrt(3) / 2,
    0,
  ]];
  const s = new FilamentState();
  s.appendLoop(pts, new IdCounters(), 4);
  const g = new Geometry();
  computeGeometry(3, s.x, s.y, s.z, s.next, s.prev, 0, g);
  assertAbsClose(g.tx[0], 0, 1e-14, "t_x");
  assertAbsClose(g.ty[0], 1, 1e-14, "t_y");
  assert.ok(g.cx[0] < 0, "curvature points to the centre");
});

Deno.test("computeGeometry caps the curvature of a fold at 2/max(ℓ₋, ℓ₊) and leaves resolved lines alone", () => {
  // A hairpin: a line out along x and back at distance w = 1e-3 h. The five-point formula divides by
  // |s_ξ|² ≈ (w/h)², giving |s″| ∝ h/w²; no circle through the tip and its neighbours has a radius below
  // h/2 (the chord of a circle is at most its diameter; elementary geometry), so |s″| ≤ 2/h.
  const h = 0.1, w = 1e-3 * h, m = 8;
  const pts: [number, number, number][] = [];
  for (let q = m; q >= 1; q--) pts.push([-q * h, -w / 2, 0]);
  pts.push([0, 0, 0]);
  for (let q = 1; q <= m; q++) pts.push([-q * h, w / 2, 0]);
  const s = new FilamentState();
  s.appendLoop(pts, new IdCounters(), 4);
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, 0, g);
  const tip = m;
  const k = Math.hypot(g.cx[tip], g.cy[tip], g.cz[tip]);
  const lm = Math.max(g.len[tip], g.len[s.prev[tip]]);
  assertRelClose(k, 2 / lm, 1e-12, "|s″| at the fold tip (capped)");
  assert.ok(g.cx[tip] < 0, "the capped curvature still points into the fold");
  // Resolved lines never reach the cap: a 12-point ring (curvature radius 1.9 h) keeps |s″| within the
  // five-point stencil's error of 1/R.
  const ring: [number, number, number][] = [];
  for (let q = 0; q < 12; q++) ring.push([Math.cos(q * Math.PI / 6), Math.sin(q * Math.PI / 6), 0]);
  const r = new FilamentState();
  r.appendLoop(ring, new IdCounters(), 4);
  computeGeometry(r.n, r.x, r.y, r.z, r.next, r.prev, 0, g);
  for (let i = 0; i < 12; i++) {
    assert.ok(Math.hypot(g.cx[i], g.cy[i], g.cz[i]) * g.len[i] < 2, `ring point ${i} below the cap`);
    assertRelClose(Math.hypot(g.cx[i], g.cy[i], g.cz[i]), 1, 0.02, `ring curvature at ${i}`);
  }
});
