import assert from "node:assert/strict";
import { assertClose } from "./_check.ts";
import { streamFromSeed } from "./seed.ts";
import {
  ballisticTracks,
  brownianTracks,
  logTimes,
  ornsteinUhlenbeckTracks,
  ouStep,
  randomFourierField,
  trackSeries,
  walkerEnsemble,
} from "./synthetic.ts";

Deno.test("brownianTracks MSD equals 2dDt within sampling error", () => {
  // Einstein, Ann. Phys. 17, 549 (1905). Each component is N(0, 2Dt), so the mean of |Δr|² over W walkers has
  // relative sd √(2/(dW)); we allow 4 sd.
  for (const d of [2, 3] as const) {
    const W = 20000;
    const D = 0.3;
    const tracks = brownianTracks(streamFromSeed(`bm-${d}`), {
      dimension: d,
      walkers: W,
      D,
      times: [0, 0.5, 2, 7],
    });
    const { t, msd } = trackSeries(tracks);
    for (let k = 1; k < t.length; k++) {
      const expected = 2 * d * D * t[k];
      assertClose(msd[k], expected, { rel: 4 * Math.sqrt(2 / (d * W)) }, `MSD(t = ${t[k]}), d = ${d}`);
    }
  }
});

Deno.test("ornsteinUhlenbeckTracks MSD follows 2dD[t − τ(1 − e^{−t/τ})] within sampling error", () => {
  // Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930); docs/check-values.md §6.1. Displacements are Gaussian, so the
  // relative sd of the mean |Δr|² is √(2/(dW)); 4 sd allowed. Log-spaced times test the exact update for any
  // h.
  for (const d of [2, 3] as const) {
    const W = 20000;
    const D = 0.5;
    const tau = 2;
    const times = logTimes(0.02, 40, { count: 8 });
    const tr = ornsteinUhlenbeckTracks(streamFromSeed(`ou-${d}`), {
      dimension: d,
      walkers: W,
      D,
      tau,
      times,
    });
    const { t, msd } = trackSeries(tr);
    for (let k = 1; k < t.length; k++) {
      const expected = 2 * d * D * (t[k] - tau * (1 - Math.exp(-t[k] / tau)));
      assertClose(msd[k], expected, { rel: 4 * Math.sqrt(2 / (d * W)) }, `MSD(t = ${t[k]}), d = ${d}`);
    }
  }
});

Deno.test("ouStep uses the exact small-step expansion continuously across its switch", () => {
  // σ_x² bracket h/τ − 2(1 − μ) + (1 − μ²)/2 = x³/3 − x⁴/4 + O(x⁵) (Taylor expansion; Gillespie 1996 eq.
  // 2.47).
  const a = ouStep(1, 1, 0.999999e-3, new Float64Array(4));
  const b = ouStep(1, 1, 1.000001e-3, new Float64Array(4));
  for (let i = 0; i < 4; i++) assertClose(a[i], b[i], { rel: 1e-5 }, `coefficient ${i}`);
  // Long steps: position variance → 2Dh (diffusive limit), velocity decorrelates (μ → 0).
  const c = ouStep(1, 1, 1000, new Float64Array(4));
  assertClose(c[0], 0, { abs: 1e-300 }, "μ");
  assertClose(c[2] * c[2] + c[3] * c[3], 2 * (1000 - 2 + 0.5), { rel: 1e-12 }, "σ_x² at h = 1000τ");
});

Deno.test("ballisticTracks MSD is exactly quadratic in t", () => {
  // x = x₀ + vt: MSD(t) = ⟨|v|²⟩t² per realisation (docs/check-values.md §6.1, ballistic regime).
  const tr = ballisticTracks(streamFromSeed("ballistic"), {
    dimension: 3,
    walkers: 5000,
    speedSpread: 0.8,
    times: [0, 1, 3, 10],
  });
  const { t, msd } = trackSeries(tr);
  const c = msd[1] / (t[1] * t[1]);
  for (let k = 2; k < t.length; k++) assertClose(msd[k] / (t[k] * t[k]), c, { rel: 1e-12 }, "MSD/t²");
  assertClose(c, 3 * 0.64, { rel: 4 * Math.sqrt(2 / (3 * 5000)) }, "⟨|v|²⟩ = dσ_v²");
});

Deno.test("trackSeries with drift removal lowers the expected MSD by (1 − 1/W)", () => {
  // E Σ(x_i − x̄)² = (W − 1)σ² for W independent values (standard sample-variance identity, common practice).
  const W = 4;
  const D = 1;
  const ens = walkerEnsemble(
    { kind: "brownian", dimension: 2, walkers: W, D, times: [0, 1] },
    { realisations: 6000, seed: "drift", removeDrift: true },
  );
  let mean = 0;
  for (const m of ens.msd) mean += m[1];
  mean /= ens.msd.length;
  const expected = 4 * D * (1 - 1 / W);
  // Per realisation the statistic is (σ²/W)χ²_{d(W−1)}: relative sd √(2/(d(W−1)·R)).
  assertClose(mean, expected, { rel: 4 * Math.sqrt(2 / (2 * (W - 1) * 6000)) }, "drift-free MSD");
});

Deno.test("walkerEnsemble seeds realisation i with seed/i and is reproducible", () => {
  const model = { kind: "brownian" as const, dimension: 2 as const, walkers: 3, D: 1, times: [0, 1, 2] };
  const a = walkerEnsemble(model, { realisations: 3, seed: "ens" });
  const b = walkerEnsemble(model, { realisations: 3, seed: "ens" });
  assert.deepEqual(a, b);
  const single = trackSeries(brownianTracks(streamFromSeed("ens/2"), model));
  assert.deepEqual(a.msd[2], single.msd);
});

Deno.test("logTimes spaces times geometrically with exact endpoints", () => {
  const t = logTimes(0.01, 100, { count: 5 });
  assert.equal(t.length, 6);
  assert.equal(t[0], 0);
  assert.equal(t[1], 0.01);
  assert.equal(t[5], 100);
  for (let k = 2; k < 6; k++) assertClose(t[k] / t[k - 1], 10, { rel: 1e-12 }, "ratio");
  assert.throws(() => logTimes(1, 1, { count: 5 }), /0 < tMin < tMax/);
});

Deno.test("randomFourierField is divergence-free and has ⟨|u|²⟩ = d·u′²", () => {
  // Each mode a cos(k·x + φ) with a ⊥ k has zero divergence (Kraichnan 1970). Central differences, step 1e-5:
  // truncation ~1e-10 relative to |∇u| ~ k₀|u|.
  for (const d of [2, 3] as const) {
    const rng = streamFromSeed(`fourier-${d}`);
    const field = randomFourierField(rng, { dimension: d, modes: 64, k0: 1.3, uPrime2: 2 });
    const h = 1e-5;
    const one = (x: number, y: number, z: number) => {
      const u = new Float64Array(1);
      const v = new Float64Array(1);
      const w = d === 3 ? new Float64Array(1) : null;
      field.evaluate(1, Float64Array.of(x), Float64Array.of(y), d === 3 ? Float64Array.of(z) : null, u, v, w);
      return [u[0], v[0], w ? w[0] : 0];
    };
    for (let p = 0; p < 20; p++) {
      const x = 10 * rng.uniform();
      const y = 10 * rng.uniform();
      const z = 10 * rng.uniform();
      let div = (one(x + h, y, z)[0] - one(x - h, y, z)[0]) / (2 * h) +
        (one(x, y + h, z)[1] - one(x, y - h, z)[1]) / (2 * h);
      if (d === 3) div += (one(x, y, z + h)[2] - one(x, y, z - h)[2]) / (2 * h);
      assertClose(div, 0, { abs: 1e-6 }, `∇·u at a random point (d = ${d})`);
    }
    // Energy over an ensemble of fields at one point: ⟨|u|²⟩ = d u′² = 2d (each mode carries A²/2).
    let e = 0;
    const F = 4000;
    const u = new Float64Array(1);
    const v = new Float64Array(1);
    const w = d === 3 ? new Float64Array(1) : null;
    const o = Float64Array.of(0.3);
    for (let f = 0; f < F; f++) {
      randomFourierField(rng, { dimension: d, modes: 64, k0: 1.3, uPrime2: 2 }).evaluate(
        1,
        o,
        o,
        d === 3 ? o : null,
        u,
        v,
        w,
      );
      e += u[0] ** 2 + v[0] ** 2 + (w ? w[0] ** 2 : 0);
    }
    // |u|² is close to a χ²_d-distributed energy (many modes, CLT): relative sd √(2/(dF)); 4 sd.
    assertClose(e / F, 2 * d, { rel: 4 * Math.sqrt(2 / (d * F)) }, `⟨|u|²⟩ (d = ${d})`);
  }
});

Deno.test("walker generators reject bad parameters", () => {
  const rng = streamFromSeed("bad");
  assert.throws(() => brownianTracks(rng, { dimension: 2, walkers: 0, D: 1, times: [0, 1] }), /walkers/);
  assert.throws(() => brownianTracks(rng, { dimension: 2, walkers: 1, D: -1, times: [0, 1] }), /D must be/);
  assert.throws(
    () => brownianTracks(rng, { dimension: 2, walkers: 1, D: 1, times: [0, 0] }),
    /strictly increasing/,
  );
  assert.throws(
    () => ornsteinUhlenbeckTracks(rng, { dimension: 3, walkers: 1, D: 1, tau: 0, times: [0, 1] }),
    /tau must be/,
  );
  assert.throws(() => randomFourierField(rng, { dimension: 2, modes: 0, k0: 1 }), /modes/);
});
