import { coreAmplitude } from "./core.ts";
import { DiagnosticsWorkspace, emptyDiagnostics } from "./diagnostics.ts";
import { Fft2d } from "./fft2d.ts";
import { Grid } from "./grid.ts";
import { periodicPhase } from "./phase.ts";
import { assertAbsClose, assertRelClose } from "./_testing.ts";

const n = 64, h = 0.5, grid = new Grid(n, h), fft = new Fft2d(n), V = new Float64Array(n * n);
const work = new DiagnosticsWorkspace(grid, fft, V);

function field(f: (x: number, y: number) => [number, number]): Float64Array {
  const psi = new Float64Array(2 * n * n);
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      const [re, im] = f(grid.coordinate(i), grid.coordinate(j));
      psi[2 * (j * n + i)] = re;
      psi[2 * (j * n + i) + 1] = im;
    }
  }
  return psi;
}

Deno.test("DiagnosticsWorkspace: a uniform flow e^{ikx} is all incompressible kinetic energy ½k²·area", () => {
  // w = √ρ∇φ = (k, 0) is uniform: divergence- and curl-free, counted as incompressible (the k = 0 mean); E_kin =
  // ½k²ρA exactly, no quantum pressure (Nore, Abid & Brachet 1997 decomposition; derived here for this field).
  const k = 2 * Math.PI * 3 / grid.side, area = grid.side ** 2;
  const d = emptyDiagnostics();
  work.evaluate(field((x) => [Math.cos(k * x), Math.sin(k * x)]), d);
  assertRelClose(d.kineticIncompressible, 0.5 * k * k * area, 1e-12, "E_kin^i");
  assertAbsClose(d.kineticCompressible, 0, 1e-12 * area, "E_kin^c");
  assertAbsClose(d.quantumPressure, 0, 1e-12 * area, "E_q");
  assertRelClose(d.energy, 0.5 * k * k * area + 0.5 * area, 1e-12, "E = kinetic + ½∫|ψ|⁴");
  assertRelClose(d.norm, area, 1e-14, "norm");
});

Deno.test("DiagnosticsWorkspace: a sound wave is compressible, a vortex pair incompressible; parts sum to ½∫|∇ψ|²", () => {
  // A longitudinal wave ψ = e^{iε sin kx} has w = εk cos(kx) x̂: curl-free, so all compressible (Helmholtz
  // projection, Nore et al. 1997). For any state ½|∇ψ|² = ½|w|² + ½|∇√ρ|² pointwise (derived in the module
  // comment), so the three parts add up to the resolved kinetic energy to round-off. A vortex pair's flow is
  // mostly incompressible (Bradley & Anderson, Phys. Rev. X 2, 041001 (2012)).
  const k = 2 * Math.PI * 2 / grid.side, eps = 0.3;
  const d = emptyDiagnostics();
  work.evaluate(field((x) => [Math.cos(eps * Math.sin(k * x)), Math.sin(eps * Math.sin(k * x))]), d);
  assertAbsClose(
    d.kineticIncompressible / d.kineticCompressible,
    0,
    1e-12,
    "E_i/E_c for a longitudinal wave",
  );
  assertRelClose(d.kineticCompressible, 0.25 * eps * eps * k * k * grid.side ** 2, 1e-10, "E_c = ¼ε²k²A");

  const m = n * n, cos = new Float64Array(m), sin = new Float64Array(m);
  const vx = Float64Array.of(-5.1, 5.2), vy = Float64Array.of(0.3, 0.1);
  periodicPhase(grid, { n: 2, x: vx, y: vy, s: Float64Array.of(1, -1) }, grid.side, cos, sin);
  const psi = field((x, y) => {
    const p = Math.round(y / h + n / 2) * n + Math.round(x / h + n / 2);
    const a = coreAmplitude(Math.hypot(x - vx[0], y - vy[0])) *
      coreAmplitude(Math.hypot(x - vx[1], y - vy[1]));
    return [a * cos[p], a * sin[p]];
  });
  work.evaluate(psi, d);
  assertRelClose(
    d.kineticIncompressible + d.kineticCompressible + d.quantumPressure,
    d.kineticResolved,
    1e-10,
    "E_i + E_c + E_q against ½Σk′²|ψ̂|²",
  );
  assertAbsClose(d.kineticCompressible / d.kineticIncompressible, 0, 0.1, "E_c/E_i for an imprinted pair");
});
