import assert from "node:assert/strict";
import type { RandomStream } from "../../engines/random.ts";
import { assertClose, assertWithin } from "./_check.ts";
import { streamFromSeed } from "./seed.ts";
import {
  fitVinenDecay,
  fitVinenDiffusion,
  type ProfileEnsemble,
  vinenChi2Sensitivity,
  VinenSolver,
} from "./vinen.ts";

/** Normalised d-dimensional Gaussian, the exact solution of ∂L/∂t = D∇²L with σ² = σ₀² + 2Dt. */
function gaussian(d: number, r: number, s2: number): number {
  // Crank, The Mathematics of Diffusion, 2nd ed. (1975), §3.3 (instantaneous point source), any dimension.
  return Math.pow(2 * Math.PI * s2, -d / 2) * Math.exp((-r * r) / (2 * s2));
}

function maxRelError(d: 2 | 3, cells: number, dt: number): number {
  const s = new VinenSolver({ dimension: d, rMax: 12, cells });
  const L = s.r.map((r) => gaussian(d, r, 1));
  s.advance(L, 1, { D: 1, chi2: 0 }, dt);
  let err = 0;
  let peak = 0;
  for (let k = 0; k < cells; k++) {
    const exact = gaussian(d, s.r[k], 3);
    err = Math.max(err, Math.abs(L[k] - exact));
    peak = Math.max(peak, exact);
  }
  return err / peak;
}

Deno.test("VinenSolver reproduces Gaussian spreading σ² = σ₀² + 2Dt to 1e-4 in 2D and 3D", () => {
  // Pure diffusion from a Gaussian (methods §7.4; Crank 1975 §3.3). Δr = σ₀/50, Δt = 0.008σ₀²/D.
  for (const d of [2, 3] as const) {
    const e = maxRelError(d, 600, 0.008);
    console.log(`d = ${d}: max |L − L_exact| / max L_exact = ${e.toExponential(3)}`);
    assertWithin(e, 0, 1e-4, `Gaussian error (d = ${d})`);
  }
});

Deno.test("VinenSolver converges at second order when Δr and Δt are halved together", () => {
  // Crank & Nicolson (1947) and the centred finite-volume flux are both second order: error ratio → 4.
  for (const d of [2, 3] as const) {
    const e1 = maxRelError(d, 240, 0.02);
    const e2 = maxRelError(d, 480, 0.01);
    const e3 = maxRelError(d, 960, 0.005);
    console.log(`d = ${d}: error ratios ${(e1 / e2).toFixed(3)}, ${(e2 / e3).toFixed(3)}`);
    assertClose(e1 / e2, 4, { rel: 0.1 }, "ratio 1→2");
    assertClose(e2 / e3, 4, { rel: 0.1 }, "ratio 2→3");
  }
});

Deno.test("VinenSolver matches the free-decay solution L₀/(1 + χ₂κL₀t/2π) to 1e-6", () => {
  // check-values §5 [EXACT]: free decay; a uniform interior is unaffected by diffusion until the boundary
  // layer (width ~√(Dt)) arrives, and the exact reaction half-steps compose exactly.
  for (const d of [2, 3] as const) {
    for (const kappa of [1, 2 * Math.PI]) {
      const s = new VinenSolver({ dimension: d, rMax: 100, cells: 200 });
      const L0 = 2.5;
      const chi2 = 0.3;
      const L = new Float64Array(200).fill(L0);
      s.advance(L, 3, { D: 0.5, chi2, kappa }, 0.013);
      const exact = L0 / (1 + (chi2 * kappa * L0 * 3) / (2 * Math.PI));
      for (const k of [0, 40, 150]) {
        assertClose(L[k], exact, { rel: 1e-6 }, `L(r = ${s.r[k]}), κ = ${kappa}, d = ${d}`);
      }
    }
  }
  // Late times: L ≈ 2π/(χ₂κt), independent of L₀ (check-values §5).
  const s = new VinenSolver({ dimension: 3, rMax: 10, cells: 10 });
  for (const L0 of [1, 100]) {
    const L = new Float64Array(10).fill(L0);
    s.advance(L, 1e4, { D: 0, chi2: 0.3 }, 10);
    assertClose(
      L[0],
      (2 * Math.PI) / (0.3 * 1e4),
      { rel: (2 * Math.PI) / (0.3 * L0 * 1e4) + 1e-12 },
      `L₀ = ${L0}`,
    );
  }
});

Deno.test("VinenSolver conserves the total content Σ L V without reaction", () => {
  // Finite-volume fluxes cancel pairwise (LeVeque 2002, ch. 4); only the outer face can leak, and the profile
  // is negligible there (Gaussian tail e^{−r²/2σ²} at r_max = 12, σ² ≤ 3: < 1e-10).
  for (const d of [2, 3] as const) {
    const s = new VinenSolver({ dimension: d, rMax: 12, cells: 300 });
    const L = s.r.map((r) => gaussian(d, r, 1));
    const before = s.total(L);
    assertClose(before, 1, { rel: 1e-3 }, "midpoint quadrature of a normalised Gaussian");
    s.advance(L, 1, { D: 1, chi2: 0 }, 0.05);
    assertClose(s.total(L), before, { rel: 1e-9 }, `content after diffusion (d = ${d})`);
  }
});

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
function syntheticProfiles(d: 2 | 3, seed: string, D: number, chi2: number, R: number): ProfileEnsemble {
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

Deno.test("fitVinenDiffusion recovers a known D from solver profiles with Poisson noise", () => {
  // Methods §7.4: synthetic density fields from the solver with known (D, χ₂) plus noise → the fit recovers
  // D.
  for (const d of [2, 3] as const) {
    const data = syntheticProfiles(d, `vinen-recover-${d}`, 0.5, 0.3, 20);
    const fit = fitVinenDiffusion(data, { chi2: 0.3, replicates: 60, seed: `vinen-boot-${d}` });
    const se = fit.ci!.standardError!;
    console.log(
      `d = ${d}: D = ${fit.D}, CI`,
      fit.ci!.percentile,
      `SE ${se}, SSE/terms ${fit.sse / fit.terms}`,
    );
    assert.equal(fit.atBound, false);
    assertClose(fit.D, 0.5, { rel: 0.02 }, `D (d = ${d})`);
    assertClose(fit.D, 0.5, { abs: 3 * se }, `D within 3 bootstrap SE (d = ${d})`);
    // A correct model with σ from the scatter gives a reduced chi-square near 1 (Bevington & Robinson,
    // Data Reduction and Error Analysis, 3rd ed. (2003) §11.1); estimated σ (N = 20) and zero-count bins
    // widen the band.
    assertWithin(fit.sse / fit.terms, 0.7, 1.6, "SSE per term");
    assert.equal(fit.residuals.length, (data.t.length - 1) * data.bins);
  }
});

Deno.test("fitVinenDiffusion changes by < 0.5% when the solver's Δr and Δt are halved", () => {
  // Methods §5.2 convergence requirement.
  for (const d of [2, 3] as const) {
    const data = syntheticProfiles(d, `vinen-conv-${d}`, 0.5, 0.3, 10);
    const a = fitVinenDiffusion(data, { chi2: 0.3, replicates: 0 });
    const b = fitVinenDiffusion(data, { chi2: 0.3, replicates: 0, refine: 8, dt: a.grid.dt / 2 });
    console.log(`d = ${d}: D = ${a.D} (Δr = ${a.grid.dr}, Δt = ${a.grid.dt}) vs ${b.D}`);
    assertClose(b.D, a.D, { rel: 0.005 }, `D under refinement (d = ${d})`);
  }
});

Deno.test("vinenChi2Sensitivity shows D falling as χ₂ rises", () => {
  // Both D∇²L and −χ₂L² lower the central density, so a larger χ₂ needs less diffusion to match the data
  // (derived from the model equation; methods §5.2 notes their strong correlation).
  const data = syntheticProfiles(3, "vinen-sens", 0.5, 0.3, 10);
  const s = vinenChi2Sensitivity(data, { chi2: 0.3, chi2Interval: [0.2, 0.4] });
  console.log(`D at χ₂ = ${s.chi2.join(", ")}: ${s.D.join(", ")}; ∂D/∂χ₂ = ${s.dDdChi2}`);
  assert.ok(s.D[0] > s.D[1] && s.D[1] > s.D[2], `D decreasing in χ₂: ${s.D}`);
  assert.ok(s.dDdChi2 < 0);
});

Deno.test("fitVinenDecay recovers χ₂ exactly from noise-free decay and within its CI from noisy decay", () => {
  // check-values §5 [EXACT]: 1/L = 1/L₀ + χ₂κt/(2π) is linear in t.
  const t = Array.from({ length: 41 }, (_, k) => 0.25 * k);
  const exact = (L0: number, chi2: number, kappa: number) =>
    t.map((x) => L0 / (1 + (chi2 * kappa * L0 * x) / (2 * Math.PI)));
  const clean = fitVinenDecay({ t, L: [exact(4, 0.35, 1), exact(4, 0.35, 1)] }, { replicates: 0 });
  assertClose(clean.chi2, 0.35, { rel: 1e-12 }, "χ₂ (noise-free)");
  assertClose(clean.L0, 4, { rel: 1e-12 }, "L₀ from the intercept");
  const gpe = fitVinenDecay({ t, L: [exact(4, 0.35, 2 * Math.PI)] }, { replicates: 0, kappa: 2 * Math.PI });
  assertClose(gpe.chi2, 0.35, { rel: 1e-12 }, "χ₂ with κ = 2π");
  // Realisations: exact decay from a scattered L₀ (10%) with 3% measurement noise.
  const rng = streamFromSeed("decay-noise");
  const L = Array.from({ length: 30 }, () => {
    const L0 = 4 * (1 + 0.1 * rng.normal());
    return exact(L0, 0.35, 1).map((v) => v * (1 + 0.03 * rng.normal()));
  });
  const noisy = fitVinenDecay({ t, L }, { seed: "decay-boot", replicates: 2000 });
  console.log(`χ₂ = ${noisy.chi2}, CI`, noisy.ci!.percentile, "window", noisy.window);
  assertWithin(0.35, noisy.ci!.percentile!.lower, noisy.ci!.percentile!.upper, "true χ₂ in the CI");
  assert.equal(noisy.window.t1, 5); // default: the second half of the time range
});

Deno.test("Vinen functions reject bad input with clear messages", () => {
  assert.throws(() => new VinenSolver({ dimension: 1 as 2, rMax: 1, cells: 10 }), /dimension/);
  assert.throws(() => new VinenSolver({ dimension: 2, rMax: 1, cells: 2 }), /cells/);
  const s = new VinenSolver({ dimension: 2, rMax: 1, cells: 10 });
  assert.throws(() => s.advance(new Float64Array(10), 1, { D: -1, chi2: 0 }, 0.1), /D must be/);
  assert.throws(() => s.advance(new Float64Array(9), 1, { D: 1, chi2: 0 }, 0.1), /profile has 9 values/);
  const bad: ProfileEnsemble = { dimension: 2, binWidth: 1, bins: 3, t: [0, 1], profiles: [[1, 2, 3]] };
  assert.throws(() => fitVinenDiffusion(bad, { chi2: 0.3, replicates: 0 }), /times × bins = 6/);
  assert.throws(() => fitVinenDecay({ t: [0, 1, 2], L: [[1, 0, 1]] }, {}), /must be finite and > 0/);
});
