import assert from "node:assert/strict";
import { coreAmplitude } from "./core.ts";
import { Fft2d } from "./fft2d.ts";
import { Grid } from "./grid.ts";
import { diskPhase } from "./phase.ts";
import { groundState, Relaxer } from "./relax.ts";
import { trapPotential } from "./trap.ts";
import { assertAbsClose, assertRelClose } from "./_testing.ts";

/**
 * Straight vortex of the stationary GP equation in this engine's units, −½∇²ψ + (|ψ|² − 1)ψ = 0 with ψ = R(r)e^{iθ}:
 * R″ + R′/r − R/r² + 2(1 − R²)R = 0, R(0) = 0, R(∞) = 1. Solved by shooting on the slope a = R′(0) (RK4, step
 * 1e-3, bisection: slopes that are too large make R overshoot 1, too small make it turn back down).
 */
function radialVortex(rMax: number): { slope: number; at: (r: number) => number } {
  const h = 1e-3;
  const shoot = (a: number, keep: number[] | null): number => {
    // Start from the series R = a r − (a/4) r³ at r₀ = h (R = ar + cr³, c = −a/4 from the equation at small r).
    let r = h, R = a * h - 0.25 * a * h ** 3, P = a - 0.75 * a * h * h;
    const f = (rr: number, y: number, p: number) => -p / rr + y / (rr * rr) - 2 * (1 - y * y) * y;
    keep?.push(0, R);
    while (r < rMax) {
      const k1y = P, k1p = f(r, R, P);
      const k2y = P + 0.5 * h * k1p, k2p = f(r + 0.5 * h, R + 0.5 * h * k1y, P + 0.5 * h * k1p);
      const k3y = P + 0.5 * h * k2p, k3p = f(r + 0.5 * h, R + 0.5 * h * k2y, P + 0.5 * h * k2p);
      const k4y = P + h * k3p, k4p = f(r + h, R + h * k3y, P + h * k3p);
      R += (h / 6) * (k1y + 2 * k2y + 2 * k3y + k4y);
      P += (h / 6) * (k1p + 2 * k2p + 2 * k3p + k4p);
      r += h;
      keep?.push(R);
      if (R > 1.05) return 1;
      if (P < 0) return -1;
    }
    return 0;
  };
  let lo = 0.5, hi = 1.2;
  for (let it = 0; it < 60; it++) {
    const mid = 0.5 * (lo + hi);
    if (shoot(mid, null) > 0) hi = mid;
    else lo = mid;
  }
  const values: number[] = [];
  shoot(lo, values);
  const at = (r: number) => {
    const k = Math.round(r / h);
    return values[Math.min(k, values.length - 1)];
  };
  return { slope: lo, at };
}

Deno.test("coreAmplitude: Berloff's Padé coefficients obey the exact small-r expansion", () => {
  // Near the axis the radial equation in Berloff's units (∇²ψ + (1 − |ψ|²)ψ = 0) gives R = aρ − (a/8)ρ³ + …, so
  // R² = a₁ρ² − (a₁/4)ρ⁴ + … (derived here); the Padé form R² = ρ²(a₁ + a₂ρ²)/(1 + b₁ρ² + a₂ρ⁴) reproduces it iff
  // a₂ = a₁(b₁ − 1/4). In this engine's units ρ = √2 r. Berloff, J. Phys. A 37, 1617 (2004) (coefficients from
  // memory: a₁ = 11/32, a₂ = 11/384, b₁ = 1/3).
  const r = 1e-3, rho2 = 2 * r * r, a1 = 11 / 32;
  const series = a1 * rho2 - 0.25 * a1 * rho2 * rho2;
  assertRelClose(coreAmplitude(r) ** 2, series, 1e-9, "R(r)² against a₁ρ² − (a₁/4)ρ⁴");
  assertAbsClose(coreAmplitude(0), 0, 0, "R(0)");
  assert.ok(Math.abs(coreAmplitude(30) - 1) < 2e-3, `R(30) = ${coreAmplitude(30)}`);
});

Deno.test("a relaxed vortex core matches the radial equation (1e-3) and Berloff's Padé profile (1.5e-2)", () => {
  // References: the radial ODE solved by shooting here (core slope a = 0.8248 in these units, i.e. 0.5832 in
  // Berloff's units, the value commonly quoted — from memory); the Padé approximant of Berloff, J. Phys. A 37,
  // 1617 (2004), a [2/2] approximant in ρ² whose deviation from the ODE peaks at 0.97 % near r = 3 ξ (computed
  // here). A singly quantized vortex at the centre of a disk trap (R = 20, tanh wall) is relaxed with its phase θ
  // pinned at μ = 1 until the residual is below 1e-5 (the grid's own stationary vortex differs from the pinned
  // atan2 phase by lattice corrections: residual floor 3e-6); |ψ|/√n_GS along the x axis is compared for r ≤ 6 ξ.
  // Tolerances: 1e-3 against the ODE (grid h = 0.5; measured 6e-5), 1.5e-2 against the Padé form (its own
  // accuracy, measured 0.97 %).
  const ode = radialVortex(12);
  assertAbsClose(ode.slope, 0.8248, 1e-3, "core slope R′(0) from the radial equation");
  const n = 128, h = 0.5, grid = new Grid(n, h);
  const potential = trapPotential(grid, {
    kind: "disk",
    radius: 20,
    wall: { profile: "tanh", height: 10, width: 1 },
  });
  const relaxer = new Relaxer(grid, new Fft2d(n), potential);
  const gs = groundState(relaxer, { tolerance: 1e-10, maxIterations: 20_000 });
  const m = n * n, cos = new Float64Array(m), sin = new Float64Array(m);
  const at = 0; // the trap centre (a grid node): there the discrete vortex is stationary and ψ = 0 by symmetry
  diskPhase(
    grid,
    { n: 1, x: Float64Array.of(at), y: Float64Array.of(at), s: Float64Array.of(1) },
    20,
    cos,
    sin,
  );
  const psi = new Float64Array(2 * m);
  for (let p = 0; p < m; p++) {
    psi[2 * p] = gs.psi[2 * p] * cos[p];
    psi[2 * p + 1] = gs.psi[2 * p] * sin[p];
  }
  const r = relaxer.relax(psi, {
    constraint: { kind: "chemical-potential", value: 1 },
    dtau: 1,
    tolerance: 1e-5,
    maxIterations: 5_000,
    pinned: { cos, sin },
    mustConverge: true,
  });
  console.log(`pinned relaxation: ${r.iterations} iterations, residual ${r.residual}`);
  let errOde = 0, errPade = 0;
  for (let i = n / 2; i < n; i++) {
    const p = (n / 2) * n + i; // row y = 0 ... the vortex sits at (h/2, h/2): use the distance to it
    const x = grid.coordinate(i), y = grid.coordinate(n / 2);
    const d = Math.hypot(x - at, y - at);
    if (d > 6) break;
    const amp = Math.hypot(psi[2 * p], psi[2 * p + 1]) / Math.sqrt(gs.psi[2 * p] ** 2);
    errOde = Math.max(errOde, Math.abs(amp - ode.at(d)));
    errPade = Math.max(errPade, Math.abs(amp - coreAmplitude(d)));
  }
  console.log(`core profile: max deviation from the radial ODE ${errOde}, from the Padé form ${errPade}`);
  assertAbsClose(errOde, 0, 1e-3, "max |relaxed core − radial ODE| for r ≤ 6 ξ");
  assertAbsClose(errPade, 0, 1.5e-2, "max |relaxed core − Padé| for r ≤ 6 ξ");
});
