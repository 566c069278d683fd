import assert from "node:assert/strict";
import { RandomStream } from "../random.ts";
import { assertAbs, assertRel } from "./_testing.ts";
import { velocityDisk, velocityUnbounded } from "./velocity.ts";

const TWO_PI = 2 * Math.PI;

/** Straight evaluation of v(r) = Σ_j (Γ_j/2π) ẑ × (r − r_j)/|r − r_j|² (docs/check-values.md §1.1). */
function directField(
  px: number,
  py: number,
  xs: number[],
  ys: number[],
  gs: number[],
  skip = -1,
): [number, number] {
  let u = 0, v = 0;
  for (let j = 0; j < xs.length; j++) {
    if (j === skip) continue;
    const dx = px - xs[j], dy = py - ys[j], r2 = dx * dx + dy * dy;
    u += -gs[j] * dy / (TWO_PI * r2);
    v += gs[j] * dx / (TWO_PI * r2);
  }
  return [u, v];
}

function randomConfig(n: number, seed: number, radius: number) {
  const rng = RandomStream.fromState([seed, 7, 11, 13]);
  const x = new Float64Array(n), y = new Float64Array(n), g = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const r = radius * Math.sqrt(rng.uniform()), th = TWO_PI * rng.uniform();
    x[i] = r * Math.cos(th);
    y[i] = r * Math.sin(th);
    g[i] = rng.uniform() < 0.5 ? 1 : -1;
  }
  return { x, y, g };
}

Deno.test("velocityUnbounded moves a dipole perpendicular to its axis at κ/(2πd)", () => {
  // Saffman, Vortex Dynamics (1992) §7.3; docs/check-values.md §1.3: U d/Γ = 1/(2π).
  const d = 0.37;
  const x = Float64Array.of(-d / 2, d / 2), y = Float64Array.of(0, 0), g = Float64Array.of(1, -1);
  const u = new Float64Array(2), v = new Float64Array(2);
  const m = velocityUnbounded(2, x, y, g, u, v);
  for (let i = 0; i < 2; i++) {
    assertAbs(u[i], 0, 1e-15, `u[${i}]`);
    assertRel(v[i], 1 / (TWO_PI * d), 1e-14, `v[${i}]`);
  }
  assertRel(m, d * d, 1e-15, "minimum squared separation");
});

Deno.test("velocityUnbounded agrees with the textbook sum for 50 random vortices and conserves ΣΓ ż", () => {
  // Velocity law: docs/check-values.md §1.1 (Saffman 1992 ch. 7). ΣΓ_i ż_i = 0: Aref, Annu. Rev. Fluid Mech. 15 (1983).
  const n = 50;
  const { x, y, g } = randomConfig(n, 1, 5);
  const u = new Float64Array(n), v = new Float64Array(n);
  velocityUnbounded(n, x, y, g, u, v);
  const xs = Array.from(x), ys = Array.from(y), gs = Array.from(g);
  let scale = 0, su = 0, sv = 0;
  for (let i = 0; i < n; i++) {
    const [eu, ev] = directField(x[i], y[i], xs, ys, gs, i);
    scale = Math.max(scale, Math.hypot(eu, ev));
    assertAbs(u[i], eu, 1e-13 * Math.hypot(eu, ev) + 1e-15, `u[${i}]`);
    assertAbs(v[i], ev, 1e-13 * Math.hypot(eu, ev) + 1e-15, `v[${i}]`);
    su += g[i] * u[i];
    sv += g[i] * v[i];
  }
  assertAbs(su, 0, 1e-13 * n * scale, "Σ Γ u");
  assertAbs(sv, 0, 1e-13 * n * scale, "Σ Γ v");
});

Deno.test("velocityUnbounded handles zero and one vortex", () => {
  const u = Float64Array.of(9), v = Float64Array.of(9);
  assert.equal(
    velocityUnbounded(0, new Float64Array(1), new Float64Array(1), new Float64Array(1), u, v),
    Infinity,
  );
  assert.equal(
    velocityUnbounded(1, Float64Array.of(3), Float64Array.of(4), Float64Array.of(1), u, v),
    Infinity,
  );
  assert.deepEqual([u[0], v[0]], [0, 0]);
});

Deno.test("velocityDisk precesses a single vortex at κ/(2π(R² − r²))", () => {
  // docs/check-values.md §1.3 (Saffman 1992 §7.3, Lamb §155): Ω = Γ/(2π(R² − r²)), in the sense of Γ.
  const R = 2, r = 1.3, th = 0.7;
  for (const gamma of [1, -1]) {
    const x = Float64Array.of(r * Math.cos(th)),
      y = Float64Array.of(r * Math.sin(th)),
      g = Float64Array.of(gamma);
    const u = new Float64Array(1), v = new Float64Array(1);
    const m = velocityDisk(1, x, y, g, R, u, v);
    const speed = gamma * r / (TWO_PI * (R * R - r * r));
    assertRel(u[0], -speed * Math.sin(th), 1e-14, `u, Γ = ${gamma}`);
    assertRel(v[0], speed * Math.cos(th), 1e-14, `v, Γ = ${gamma}`);
    // distance to the own image R²/r − r
    assertRel(Math.sqrt(m), R * R / r - r, 1e-14, "image distance");
  }
  // A vortex at the centre does not move (its image is at infinity).
  const u = new Float64Array(1), v = new Float64Array(1);
  velocityDisk(1, Float64Array.of(0), Float64Array.of(0), Float64Array.of(1), R, u, v);
  assert.deepEqual([u[0], v[0]], [0, 0]);
});

Deno.test("velocityDisk equals the free-space sum over vortices and their images R²/z̄ with −Γ", () => {
  // Method of images / circle theorem: Milne-Thomson, Theoretical Hydrodynamics §6.21; docs/methods.md §1.4.
  const n = 30, R = 3;
  const { x, y, g } = randomConfig(n, 2, 2.5);
  const u = new Float64Array(n), v = new Float64Array(n);
  velocityDisk(n, x, y, g, R, u, v);
  const xs = Array.from(x), ys = Array.from(y), gs = Array.from(g);
  const ix = xs.map((xi, i) => R * R * xi / (xi * xi + ys[i] * ys[i]));
  const iy = ys.map((yi, i) => R * R * yi / (xs[i] * xs[i] + yi * yi));
  const ig = gs.map((gi) => -gi);
  for (let i = 0; i < n; i++) {
    const [au, av] = directField(x[i], y[i], xs, ys, gs, i);
    const [bu, bv] = directField(x[i], y[i], ix, iy, ig);
    const mag = Math.hypot(au + bu, av + bv);
    assertAbs(u[i], au + bu, 1e-12 * mag + 1e-15, `u[${i}]`);
    assertAbs(v[i], av + bv, 1e-12 * mag + 1e-15, `v[${i}]`);
  }
});

Deno.test("velocityDisk gives no wall-normal velocity on the wall", () => {
  // Circle theorem (Milne-Thomson §6.21): the circle |z| = R is a streamline. Probes carry Γ = 0.
  const R = 1.5, n = 5, probes = 16;
  const { x: vx, y: vy, g: vg } = randomConfig(n, 3, 1.2);
  const x = new Float64Array(n + probes), y = new Float64Array(n + probes), g = new Float64Array(n + probes);
  x.set(vx);
  y.set(vy);
  g.set(vg);
  for (let k = 0; k < probes; k++) {
    const th = TWO_PI * (k + 0.3) / probes;
    x[n + k] = R * Math.cos(th);
    y[n + k] = R * Math.sin(th);
  }
  const u = new Float64Array(n + probes), v = new Float64Array(n + probes);
  // A probe exactly on the wall has R² − |z|² ≈ 0 in its own-image term, but Γ = 0 there; place the probes
  // a hair inside to keep that term finite.
  for (let k = 0; k < probes; k++) {
    x[n + k] *= 1 - 1e-15;
    y[n + k] *= 1 - 1e-15;
  }
  velocityDisk(n + probes, x, y, g, R, u, v);
  for (let k = n; k < n + probes; k++) {
    const radial = (u[k] * x[k] + v[k] * y[k]) / Math.hypot(x[k], y[k]);
    const tangential = (-u[k] * y[k] + v[k] * x[k]) / Math.hypot(x[k], y[k]);
    assertAbs(radial, 0, 1e-12 * Math.abs(tangential) + 1e-14, `radial velocity at probe ${k - n}`);
  }
});
