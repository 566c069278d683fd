import assert from "node:assert/strict";
import {
  collidingRingsPoints,
  kelvinWavePoints,
  normalCdf,
  orthonormalBasis,
  ringCloud,
  ringPoints,
  truncatedNormalMean,
} from "./initial.ts";
import { RandomStream } from "../random.ts";
import { assertAbsClose, assertBelow, assertRelClose } from "./_assert.ts";
import { makeSim, simConfig } from "./_testing.ts";

Deno.test("orthonormalBasis gives a right-handed frame e₁×e₂ = n̂", () => {
  // Duff et al., J. Comput. Graph. Tech. 6(1), 1 (2017), Listing 3.
  for (const n of [[0, 0, 1], [0, 0, -1], [0.6, 0, 0.8], [-0.36, 0.48, -0.8]] as [number, number, number][]) {
    const [a, b] = orthonormalBasis(n);
    const c = [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
    for (let k = 0; k < 3; k++) assertAbsClose(c[k], n[k], 1e-15, `(e₁×e₂)_${k}`);
    assertAbsClose(a[0] * b[0] + a[1] * b[1] + a[2] * b[2], 0, 1e-15, "e₁·e₂");
  }
});

Deno.test("ringPoints: a ring moves along its normal", () => {
  // With counter-clockwise order about n̂ the self-induced velocity is along +n̂ (docs/methods.md §3.1, "checked here").
  const n: [number, number, number] = [0.3, -0.5, 0.81];
  const nn = Math.hypot(...n);
  const { sim } = makeSim(simConfig(0.1), [ringPoints(1, [1, 2, 3], n, 0.075, 0.4)]);
  const m = sim.state.n;
  const vx = new Float64Array(m), vy = new Float64Array(m), vz = new Float64Array(m);
  sim.velocityOf(vx, vy, vz);
  const v = Math.hypot(vx[0], vy[0], vz[0]);
  assertRelClose((vx[0] * n[0] + vy[0] * n[1] + vz[0] * n[2]) / nn / v, 1, 1e-12, "cos(v, n̂)");
});

Deno.test("normalCdf and truncatedNormalMean match tabulated values", () => {
  // Φ(1) = 0.841344746, Φ(−2) = 0.022750132 (A&S Table 26.1); A&S 7.1.26 has |ε| ≤ 1.5e-7 in erf.
  assertAbsClose(normalCdf(1), 0.8413447461, 1e-7, "Φ(1)");
  assertAbsClose(normalCdf(-2), 0.0227501319, 1e-7, "Φ(−2)");
  // Mean of N(0,1) truncated at 0: √(2/π) (Johnson, Kotz & Balakrishnan (1994) §10.1).
  assertAbsClose(truncatedNormalMean(0, 1, 0), Math.sqrt(2 / Math.PI), 1e-7, "half-normal mean");
});

Deno.test("ringCloud: rejected fraction and sample moments follow the truncated normal law", () => {
  // Truncation at μ − σ (forced by 3δ here): rejected fraction Φ(−1) = 0.158655 (A&S Table 26.1); sample mean
  // of accepted radii → μ + σφ(−1)/(1 − Φ(−1)) (Johnson, Kotz & Balakrishnan §10.1). Tolerances: 4 standard
  // errors for 4000 rings.
  const rng = RandomStream.fromState([7, 7, 7, 7]);
  const mu = 1, sd = 0.2, res = (mu - sd) / 3; // 3δ = μ − σ
  const c = ringCloud(
    { count: 4000, radius: { mean: mu, sd }, cloudRadius: 5, centre: [0, 0, 0] },
    0.1,
    res,
    rng,
  );
  const p = 0.158655;
  assertAbsClose(c.rejectedFraction, p, 4 * Math.sqrt(p * (1 - p) / 4750), "rejected fraction");
  let sum = 0;
  for (const l of c.loops) {
    const cx = l.reduce((a, q) => a + q[0], 0) / l.length, cy = l.reduce((a, q) => a + q[1], 0) / l.length;
    const cz = l.reduce((a, q) => a + q[2], 0) / l.length;
    sum += Math.hypot(l[0][0] - cx, l[0][1] - cy, l[0][2] - cz);
  }
  const expected = truncatedNormalMean(mu, sd, mu - sd);
  assertAbsClose(sum / 4000, expected, 4 * 0.15 * sd / Math.sqrt(4000), "mean radius");
});

Deno.test("ringCloud: centres uniform in the ball and normals isotropic", () => {
  // Uniform ball: E[r²] = (3/5)R_c²; isotropic normals: E[n_z] = 0, E[n_z²] = 1/3 (Muller, Comm. ACM 2(4),
  // 19 (1959)). 4 standard errors for 3000 rings.
  const rng = RandomStream.fromState([1, 9, 8, 4]);
  const Rc = 4, N = 3000;
  const c = ringCloud({ count: N, radius: 0.5, cloudRadius: Rc, centre: [0, 0, 0] }, 0.1, 0.1, rng);
  let r2 = 0, nz = 0, nz2 = 0;
  for (const l of c.loops) {
    const m = l.length;
    const ctr = [0, 1, 2].map((k) => l.reduce((a, q) => a + q[k], 0) / m);
    r2 += (ctr[0] ** 2 + ctr[1] ** 2 + ctr[2] ** 2) / N;
    const a = l[0].map((v, k) => v - ctr[k]), b = l[1].map((v, k) => v - ctr[k]);
    const n = [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
    const z = n[2] / Math.hypot(n[0], n[1], n[2]);
    nz += z / N;
    nz2 += z * z / N;
  }
  assertRelClose(r2, 0.6 * Rc * Rc, 4 * Math.sqrt(12 / 175) / Math.sqrt(N) / 0.6, "E[r²]/R_c²");
  assertAbsClose(nz, 0, 4 * Math.sqrt(1 / 3 / N), "E[n_z]");
  assertAbsClose(nz2, 1 / 3, 4 * Math.sqrt(4 / 45 / N), "E[n_z²]");
  assert.equal(c.rejectedFraction, 0);
  assertRelClose(c.nominalLineDensity, N * Math.PI / (4 / 3 * Math.PI * Rc ** 3), 1e-12, "nominal density");
});

Deno.test("ringCloud is deterministic for a given generator state", () => {
  const a = ringCloud(
    { count: 5, radius: { mean: 1, sd: 0.1 }, cloudRadius: 2, centre: [0, 0, 0] },
    0.1,
    0.1,
    RandomStream.fromState([3, 1, 4, 1]),
  );
  const b = ringCloud(
    { count: 5, radius: { mean: 1, sd: 0.1 }, cloudRadius: 2, centre: [0, 0, 0] },
    0.1,
    0.1,
    RandomStream.fromState([3, 1, 4, 1]),
  );
  assert.deepEqual(a, b);
});

Deno.test("kelvinWavePoints and collidingRingsPoints build the documented shapes", () => {
  const kw = kelvinWavePoints(2, 3, 0.01, 0.05);
  assert.equal(kw.length, 40);
  for (const p of kw) assertRelClose(Math.hypot(p[0], p[1]), 0.01, 1e-12, "helix radius");
  const [a, b] = collidingRingsPoints(1, 3, 0.2, 0.5, 0.1);
  const ca = [0, 1, 2].map((k) => a.reduce((s, q) => s + q[k], 0) / a.length);
  const cb = [0, 1, 2].map((k) => b.reduce((s, q) => s + q[k], 0) / b.length);
  assertAbsClose(ca[0], -1.5, 1e-12, "centre A x");
  assertAbsClose(cb[1], 0.1, 1e-12, "centre B y");
  assertBelow(Math.abs(ca[2]), 1e-12, "centre A z");
});
