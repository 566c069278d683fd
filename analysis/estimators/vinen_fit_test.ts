import assert from "node:assert/strict";
import type { RandomStream } from "../../engines/random.ts";
import { assertClose, assertWithin } from "./_check.ts";
import { streamFromSeed } from "./seed.ts";
import {
  type AnnihilatingWalkerOptions,
  annihilatingWalkerProfiles,
  annihilationCoefficient,
} from "./synthetic.ts";
import { type ProfileEnsemble, VinenSolver } from "./vinen.ts";
import { fitVinen } from "./vinen_fit.ts";

const LONG = Deno.env.get("SPINDRIFT_LONG") === "1";

/** Poisson deviate, exact for any mean (sum of Knuth-multiplication deviates with mean ≤ 20). */
function poisson(rng: RandomStream, mean: number): number {
  // Knuth, TAOCP vol. 2 §3.4.1; sums of independent Poisson variables are Poisson.
  let k = 0;
  let left = mean;
  while (left > 0) {
    const mu = Math.min(20, left);
    left -= mu;
    const limit = Math.exp(-mu);
    let p = rng.uniform();
    while (p > limit) {
      k++;
      p *= rng.uniform();
    }
  }
  return k;
}

/**
 * Profiles made by the solver at fine resolution (Δr = h/16, Δt = 0.0025), averaged over bins of width h,
 * then realised as Poisson counts per shell (objects = L·V·scale), as a vortex or segment count would be.
 */
function solverProfiles(d: 2 | 3, seed: string, D: number, chi2: number, R: number): ProfileEnsemble {
  const h = 0.375;
  const K = 24;
  const refine = 16;
  const t = [0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4];
  const gen = new VinenSolver({ dimension: d, rMax: 4 * K * h, cells: 4 * K * refine });
  const sol = gen.solve(gen.r.map((r) => 10 * Math.exp(-r * r / 2)), t, { D, chi2 }, { dtMax: 0.0025 });
  const truth = new Float64Array(t.length * K);
  const vol = new Float64Array(K);
  for (let j = 0; j < t.length; j++) {
    for (let k = 0; k < K; k++) {
      let num = 0;
      let den = 0;
      for (let c = k * refine; c < (k + 1) * refine; c++) {
        num += sol[j][c] * gen.volume[c];
        den += gen.volume[c];
      }
      truth[j * K + k] = num / den;
      vol[k] = den;
    }
  }
  const rng = streamFromSeed(seed);
  const scale = 20;
  const profiles = Array.from(
    { length: R },
    () => truth.map((v, q) => poisson(rng, v * vol[q % K] * scale) / (vol[q % K] * scale)),
  );
  return { dimension: d, binWidth: h, bins: K, t, profiles };
}

Deno.test("fitVinen recovers D and χ₂ together from solver profiles with Poisson noise; reduced χ² ≈ 1", () => {
  // Methods §7.4: synthetic density fields from the solver with known (D, χ₂) plus noise → the fit recovers
  // them. Counts scaled by 20 per unit of L·V, so the dispersion is φ = 1/20 (Poisson variance of the counts).
  for (const d of [2, 3] as const) {
    const data = solverProfiles(d, `vinen-recover-${d}`, 0.5, 0.3, 20);
    const fit = fitVinen(data, { loss: { mode: "free" }, replicates: 60, seed: `vinen-boot-${d}` });
    console.log(
      `d = ${d}: D = ${fit.D}`,
      fit.ci.D?.bca,
      `χ₂ = ${fit.chi2}`,
      fit.ci.chi2?.bca,
      `red χ² ${fit.reducedChi2}`,
    );
    assert.equal(fit.status, "ok", fit.reasons.join("; "));
    assertClose(fit.D, 0.5, { rel: 0.02 }, `D (d = ${d})`);
    assertClose(fit.chi2, 0.3, { rel: 0.1 }, `χ₂ (d = ${d})`);
    assertClose(fit.dispersion, 1 / 20, { rel: 0.15 }, "dispersion of Poisson counts scaled by 20");
    // A correct model gives a reduced χ² near 1 (Bevington & Robinson (2003) §11.1).
    assertWithin(fit.reducedChi2, 0.7, 1.4, "reduced χ²");
    assert.equal(fit.lossCheck.consistent, true);
    assert.ok(
      Math.abs(fit.convergence!.relativeChange) < 0.005,
      `Δr, Δt halved: ${fit.convergence!.relativeChange}`,
    );
  }
});

Deno.test("fitVinen: the fitted D changes by < 0.5 % when the solver's Δr and Δt are halved (docs/methods.md §5.2)", () => {
  for (const d of [2, 3] as const) {
    const data = solverProfiles(d, `vinen-conv-${d}`, 0.5, 0.3, 10);
    const a = fitVinen(data, { loss: { mode: "fixed", chi2: 0.3 }, replicates: 0, convergenceCheck: false });
    const b = fitVinen(data, {
      loss: { mode: "fixed", chi2: 0.3 },
      replicates: 0,
      refine: 4,
      dt: a.grid.dt / 2,
      convergenceCheck: false,
    });
    console.log(`d = ${d}: D = ${a.D} (Δr = ${a.grid.dr}, Δt = ${a.grid.dt}) vs ${b.D}`);
    assertClose(b.D, a.D, { rel: 0.005 }, `D under refinement (d = ${d})`);
  }
});

/** Annihilating Brownian walkers (2D): ∂n/∂t = D∇²n − kn² in the mean-field limit (λε²/D = 0.002 ≪ 1). */
const WALKERS: AnnihilatingWalkerOptions = {
  dimension: 2,
  walkers: 2000,
  spread: 1,
  D: 0.5,
  radius: 0.05,
  rate: 0.4,
  dt: 0.01,
  times: [0, 0.5, 1, 1.5, 2, 2.5, 3],
  binWidth: 0.2,
  bins: 30,
};

function walkerData(o: AnnihilatingWalkerOptions, R: number, seed: string): ProfileEnsemble {
  const profiles = Array.from(
    { length: R },
    (_, i) => annihilatingWalkerProfiles(streamFromSeed(`${seed}/${i}`), o),
  );
  return { dimension: o.dimension, binWidth: o.binWidth, bins: o.bins, t: o.times, profiles };
}

Deno.test("fitVinen on annihilating Brownian walkers: D within 5 %, reduced χ² in [0.5, 2]; a wrong fixed loss is rejected", () => {
  // Truth: Brownian walkers with D = 0.5 (Einstein 1905) that annihilate in pairs closer than ε at rate λ:
  // ∂n/∂t = D∇²n − kn², k = πε²λ (reaction-limited rate equation, Calef & Deutch 1983; derived in
  // synthetic.ts), i.e. Vinen's equation with χ₂ = 2πk/κ (κ = 1).
  const data = walkerData(WALKERS, 16, "annihilating-2d");
  const chi2 = 2 * Math.PI * annihilationCoefficient(WALKERS);
  const fit = fitVinen(data, { loss: { mode: "free" }, replicates: 100, seed: "annihilating-boot" });
  console.log(
    `D = ${fit.D}`,
    fit.ci.D?.bca,
    `χ₂ = ${fit.chi2} (true ${chi2})`,
    fit.ci.chi2?.bca,
    `red χ² ${fit.reducedChi2}`,
    `φ ${fit.dispersion}`,
  );
  assert.equal(fit.status, "ok", fit.reasons.join("; "));
  assertClose(fit.D, WALKERS.D, { rel: 0.05 }, "D");
  assertWithin(fit.reducedChi2, 0.5, 2, "reduced χ²");
  assertClose(fit.chi2, chi2, { rel: 0.15 }, "χ₂ (mean-field loss)");
  assert.equal(fit.lossCheck.consistent, true, "model loss within the observed loss interval");
  // The same data with the loss fixed at 3× (or zero): the model cannot follow the profiles.
  for (const wrong of [3 * chi2, 0]) {
    const bad = fitVinen(data, {
      loss: { mode: "fixed", chi2: wrong },
      replicates: 0,
      convergenceCheck: false,
    });
    console.log(`χ₂ fixed at ${wrong}: ${bad.status}, reduced χ² ${bad.reducedChi2}`);
    assert.equal(bad.status, "rejected", `χ₂ = ${wrong}`);
    assert.ok(bad.reducedChi2 > 2);
    assert.match(bad.reasons[0], /does not fit the profiles/);
  }
  // With the true χ₂ as a tight prior the fit agrees and the prior is not in tension.
  const prior = fitVinen(data, {
    loss: { mode: "prior", chi2, sigma: 0.1 * chi2 },
    replicates: 0,
    convergenceCheck: false,
  });
  assert.equal(prior.status, "ok");
  assert.ok(Math.abs(prior.priorPull!) < 2, `prior pull ${prior.priorPull}`);
});

Deno.test({
  name:
    "fitVinen on annihilating Brownian walkers in 3D (SPINDRIFT_LONG): D within 5 %, reduced χ² in [0.5, 2]",
  ignore: !LONG,
  fn() {
    const o: AnnihilatingWalkerOptions = {
      ...WALKERS,
      dimension: 3,
      walkers: 3000,
      radius: 0.1,
      rate: 0.5,
      binWidth: 0.25,
      bins: 24,
    };
    const fit = fitVinen(walkerData(o, 24, "annihilating-3d"), {
      loss: { mode: "free" },
      replicates: 100,
      seed: "b3",
    });
    console.log(
      `3D: D = ${fit.D}`,
      fit.ci.D?.bca,
      `χ₂ = ${fit.chi2} (true ${2 * Math.PI * annihilationCoefficient(o)})`,
      `red χ² ${fit.reducedChi2}`,
    );
    assert.equal(fit.status, "ok");
    assertClose(fit.D, o.D, { rel: 0.05 }, "D");
    assertWithin(fit.reducedChi2, 0.5, 2, "reduced χ²");
  },
});

Deno.test("fitVinen refuses bad input with clear messages and fails plainly without usable terms", () => {
  const bad: ProfileEnsemble = { dimension: 2, binWidth: 1, bins: 3, t: [0, 1], profiles: [[1, 2, 3]] };
  assert.throws(() => fitVinen(bad, { loss: { mode: "free" }, replicates: 0 }), /times × bins = 6/);
  const ok: ProfileEnsemble = {
    dimension: 2,
    binWidth: 1,
    bins: 3,
    t: [0, 1],
    profiles: [[1, 1, 1, 1, 1, 1]],
  };
  assert.throws(() => fitVinen(ok, { loss: { mode: "prior", chi2: 0.1, sigma: 0 }, replicates: 0 }), /sigma/);
  assert.throws(() => fitVinen(ok, { loss: { mode: "free" }, replicates: 10 }), /seed is required/);
  // Three bins with an expected count of ~3 each: no term reaches 5.
  const sparse = fitVinen(ok, { loss: { mode: "free" }, replicates: 0 });
  assert.equal(sparse.status, "failed");
  assert.match(sparse.reasons[0], /expected count ≥ 5/);
});
