import assert from "node:assert/strict";
import { assertClose, assertWithin } from "./_check.ts";
import {
  longitudinalFromTransverse,
  transverseFromLongitudinal,
  VelocityCorrelationAccumulator,
  velocityCorrelations,
} from "./correlations.ts";
import { streamFromSeed } from "./seed.ts";
import { randomFourierField } from "./synthetic.ts";

/** Bessel J_n(x) = (1/π)∫₀^π cos(nθ − x sin θ) dθ (A&S 9.1.21); midpoint rule, spectrally accurate here. */
function besselJ(n: number, x: number): number {
  const N = 200;
  let s = 0;
  for (let i = 0; i < N; i++) {
    const th = (Math.PI * (i + 0.5)) / N;
    s += Math.cos(n * th - x * Math.sin(th));
  }
  return s / N;
}

/**
 * Exact f and g for isotropic solenoidal fields with E(k) ∝ δ(k − k₀), s = k₀r.
 * 3D: f = 3(sin s − s cos s)/s³ (Pope 2000, §6.5, from R_ii = 2∫E(k) sin(kr)/(kr) dk), and
 *     g = f + (s/2)f′ = 3 sin s/(2s) − f/2 (von Kármán & Howarth 1938).
 * 2D: f + g = 2J₀(s) (trace of R_ij is the circle average of cos(k·r)), with g = (rf)′ (general-d relation,
 *     Monin & Yaglom 1975) → f = 2J₁(s)/s, g = 2J₀(s) − f.
 */
function exactFG(d: 2 | 3, s: number): [number, number] {
  if (d === 3) {
    const f = (3 * (Math.sin(s) - s * Math.cos(s))) / (s * s * s);
    return [f, (1.5 * Math.sin(s)) / s - f / 2];
  }
  const f = (2 * besselJ(1, s)) / s;
  return [f, 2 * besselJ(0, s) - f];
}

Deno.test("transverseFromLongitudinal and longitudinalFromTransverse reproduce the exact shell-spectrum pair", () => {
  // Numerical check of the helpers on exact f, g (docs/check-values.md §7: g = f + (r/(d − 1)) f′).
  for (const d of [2, 3] as const) {
    const r = Array.from({ length: 2000 }, (_, i) => 0.005 * (i + 1));
    const f = r.map((x) => exactFG(d, x)[0]);
    const g = r.map((x) => exactFG(d, x)[1]);
    const gPred = transverseFromLongitudinal(r, f, d);
    const fPred = longitudinalFromTransverse(r, g, d);
    for (let i = 1; i < r.length - 1; i += 50) {
      assertClose(gPred[i], g[i], { abs: 1e-4 }, `g from f at r = ${r[i]} (d = ${d})`);
      assertClose(fPred[i], f[i], { abs: 1e-4 }, `f from g at r = ${r[i]} (d = ${d})`);
    }
  }
});

Deno.test("velocityCorrelations on a random divergence-free isotropic field obey g = f + (r/(d−1)) f′", () => {
  // docs/check-values.md §7; von Kármán & Howarth (1938); Pope (2000) §6.2. Field: random Fourier modes on |k| = 1.
  // Tolerance: 4 standard errors from the snapshot scatter, plus 0.005 for bin averaging.
  for (const d of [2, 3] as const) {
    const acc = new VelocityCorrelationAccumulator({ dimension: d, rMax: 8, bins: 32, coreRadius: 0 });
    const rng = streamFromSeed(`corr-${d}`);
    const P = 600;
    const side = d === 2 ? 25 : 12;
    for (let s = 0; s < 40; s++) {
      const field = randomFourierField(rng, { dimension: d, modes: 100, k0: 1 });
      const pos = () => new Float64Array(P).map(() => side * rng.uniform());
      acc.add({
        x: pos(),
        y: pos(),
        z: d === 3 ? pos() : null,
        vortices: { x: [], y: [] },
        velocity: field.evaluate,
      });
    }
    const res = acc.result();
    const fFromG = longitudinalFromTransverse(res.rMean, res.g, d);
    let worst = 0;
    for (let b = 0; b < 32; b++) {
      const [f, g] = exactFG(d, res.rMean[b]);
      const tf = 4 * res.fStdErr![b] + 0.005;
      const tg = 4 * res.gStdErr![b] + 0.005;
      assertClose(res.f[b], f, { abs: tf }, `f(${res.rMean[b].toFixed(3)}), d = ${d}`);
      assertClose(res.g[b], g, { abs: tg }, `g(${res.rMean[b].toFixed(3)}), d = ${d}`);
      assertClose(
        fFromG[b],
        res.f[b],
        { abs: tf },
        `measured f vs integral of measured g, bin ${b}, d = ${d}`,
      );
      worst = Math.max(
        worst,
        Math.abs(res.g[b] - g) / res.gStdErr![b],
        Math.abs(res.f[b] - f) / res.fStdErr![b],
      );
    }
    console.log(`d = ${d}: largest |measured − exact| = ${worst.toFixed(2)} standard errors`);
    // f(0) = g(0) = 1: the first bin (r̄ ≈ 0.17) is within its error of the exact values there (≈ 0.99).
    assertClose(res.f[0], 1, { abs: 4 * res.fStdErr![0] + 0.02 }, "f near r = 0");
    assertClose(res.g[0], 1, { abs: 4 * res.gStdErr![0] + 0.02 }, "g near r = 0");
    for (const a of res.axisRatios) assertWithin(a, 0.85, 1.15, "isotropy ⟨u_a²⟩/u′²");
    assert.equal(res.snapshots, 40);
    assert.equal(res.probesKept, 40 * P);
  }
});

Deno.test("velocityCorrelations excludes exactly the probes within the core radius of a vortex", () => {
  // Brute-force reference: a probe is excluded iff some vortex is closer than the core radius.
  for (const d of [2, 3] as const) {
    const rng = streamFromSeed(`core-${d}`);
    const V = 300;
    const P = 2000;
    const a = 0.37;
    const coord = (n: number) => new Float64Array(n).map(() => 20 * rng.uniform() - 10);
    const vx = coord(V);
    const vy = coord(V);
    const vz = d === 3 ? coord(V) : null;
    const px = coord(P);
    const py = coord(P);
    const pz = d === 3 ? coord(P) : null;
    let expectedKept = 0;
    for (let i = 0; i < P; i++) {
      let keep = true;
      for (let q = 0; q < V; q++) {
        const r2 = (px[i] - vx[q]) ** 2 + (py[i] - vy[q]) ** 2 + (pz && vz ? (pz[i] - vz[q]) ** 2 : 0);
        if (r2 < a * a) keep = false;
      }
      if (keep) expectedKept++;
    }
    const res = velocityCorrelations(
      {
        x: px,
        y: py,
        z: pz,
        vortices: { x: vx, y: vy, z: vz },
        velocity: (n, _x, _y, _z, u, v, w) => {
          for (let i = 0; i < n; i++) {
            u[i] = rng.normal();
            v[i] = rng.normal();
            if (w) w[i] = rng.normal();
          }
        },
      },
      { dimension: d, rMax: 2, bins: 4, coreRadius: a },
    );
    assert.equal(res.probesKept, expectedKept);
    assert.equal(res.probesExcluded, P - expectedKept);
    assert.ok(res.probesExcluded > 0);
  }
});

Deno.test("velocityCorrelations of a point-vortex field needs the core exclusion to stay finite", () => {
  // 2D point vortex velocity Γ/(2πr) (Saffman, Vortex Dynamics (1992) §2.1): infinite at the vortex itself.
  const vx = [0, 3];
  const vy = [0, 1];
  const gam = [1, -1];
  const velocity = (
    n: number,
    x: Float64Array,
    y: Float64Array,
    _z: Float64Array | null,
    u: Float64Array,
    v: Float64Array,
  ) => {
    for (let i = 0; i < n; i++) {
      u[i] = 0;
      v[i] = 0;
      for (let q = 0; q < 2; q++) {
        const dx = x[i] - vx[q];
        const dy = y[i] - vy[q];
        const r2 = dx * dx + dy * dy;
        u[i] += (-gam[q] * dy) / (2 * Math.PI * r2);
        v[i] += (gam[q] * dx) / (2 * Math.PI * r2);
      }
    }
  };
  const px = Float64Array.of(0, 1, 2, 3, 4);
  const py = Float64Array.of(0, 0, 0, 1, 0);
  const snap = { x: px, y: py, vortices: { x: vx, y: vy }, velocity };
  assert.throws(
    () => velocityCorrelations(snap, { dimension: 2, rMax: 5, bins: 5, coreRadius: 0 }),
    /not finite/,
  );
  const res = velocityCorrelations(snap, { dimension: 2, rMax: 5, bins: 5, coreRadius: 0.1 });
  assert.equal(res.probesKept, 3);
  assert.ok(res.f.some((x) => Number.isFinite(x)));
});

Deno.test("VelocityCorrelationAccumulator rejects bad options and mismatched arrays", () => {
  assert.throws(
    () => new VelocityCorrelationAccumulator({ dimension: 2, rMax: 0, bins: 3, coreRadius: 0 }),
    /rMax/,
  );
  assert.throws(
    () => new VelocityCorrelationAccumulator({ dimension: 2, rMax: 1, bins: 0, coreRadius: 0 }),
    /bins/,
  );
  assert.throws(
    () => new VelocityCorrelationAccumulator({ dimension: 2, rMax: 1, bins: 2, coreRadius: -1 }),
    /core/,
  );
  const acc = new VelocityCorrelationAccumulator({ dimension: 3, rMax: 1, bins: 2, coreRadius: 0 });
  assert.throws(
    () => acc.add({ x: [0, 1], y: [0, 1], vortices: { x: [], y: [] }, velocity: () => {} }),
    /\(x, y and z\)/,
  );
});
