import assert from "node:assert/strict";
import { assertClose, assertWithin } from "./_check.ts";
import { streamFromSeed } from "./seed.ts";
import { fitVinenDecay, VinenSolver } from "./vinen.ts";

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
  // Pure diffusion from a Gaussian (docs/methods.md §7.4; Crank 1975 §3.3). Δr = σ₀/50, Δt = 0.008σ₀²/D.
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
  // docs/check-values.md §5 [EXACT]: free decay; a uniform interior is unaffected by diffusion until the boundary
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
  // Late times: L ≈ 2π/(χ₂κt), independent of L₀ (docs/check-values.md §5).
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

Deno.test("fitVinenDecay recovers χ₂ exactly from noise-free decay and within its CI from noisy decay", () => {
  // docs/check-values.md §5 [EXACT]: 1/L = 1/L₀ + χ₂κt/(2π) is linear in t.
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
  assert.throws(() => fitVinenDecay({ t: [0, 1, 2], L: [[1, 0, 1]] }, {}), /must be finite and > 0/);
});
