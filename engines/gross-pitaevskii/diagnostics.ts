/**
 * Field diagnostics of a GP state (GP units): norm, energy, and the kinetic energy split into incompressible,
 * compressible and quantum-pressure parts.
 *
 * Method.
 *  - Norm N = ∫|ψ|² dA (n₀ξ²); energy E = ∫[½|∇ψ|² + V|ψ|² + ½|ψ|⁴] dA (μ n₀ ξ²), the kinetic term from the
 *    spectrum, ½Σ_k k²|ψ̂_k|² h²/n² (Parseval). E and N are conserved by the undamped equation.
 *  - Decomposition: with ψ = √ρ e^{iφ}, ½|∇ψ|² = ½|w|² + ½|∇√ρ|² pointwise, where w = √ρ ∇φ = Im(ψ*∇ψ)/|ψ| is
 *    the density-weighted velocity (ħ/m = 1) and ∇√ρ = Re(ψ*∇ψ)/|ψ|; w = ∇√ρ = 0 where |ψ|² < 1e-14. w is split
 *    by Helmholtz projection in Fourier space, ŵ_c = k(k·ŵ)/k², ŵ_i = ŵ − ŵ_c (the k = 0 mean counts as
 *    incompressible), and E_kin^i = ½∫|w_i|², E_kin^c = ½∫|w_c|², E_q = ½∫|∇√ρ|². Derivatives are spectral
 *    with the Nyquist mode dropped, so E_kin^i + E_kin^c + E_q equals ½Σ k′²|ψ̂|² (k′ without Nyquist) to
 *    round-off.
 * Cost: four FFTs per evaluation (ψ̂; ∂ₓψ and ∂ᵧψ; w packed as w_x + i w_y and separated by symmetry).
 *
 * References: C. Nore, M. Abid, M.E. Brachet, Phys. Rev. Lett. 78, 3896 (1997), doi:10.1103/PhysRevLett.78.3896
 * (incompressible/compressible decomposition of the density-weighted velocity); A.S. Bradley, B.P. Anderson,
 * Phys. Rev. X 2, 041001 (2012), doi:10.1103/PhysRevX.2.041001 (the same in 2D, quantum pressure).
 */
import type { Fft2d } from "./fft2d.ts";
import type { Grid } from "./grid.ts";

export interface GpDiagnostics {
  norm: number;
  energy: number;
  kineticIncompressible: number;
  kineticCompressible: number;
  quantumPressure: number;
  /** ½∫|∇ψ|² with the Nyquist mode dropped (equals the sum of the three parts). */
  kineticResolved: number;
}

export class DiagnosticsWorkspace {
  readonly #grid: Grid;
  readonly #fft: Fft2d;
  readonly #potential: Float64Array;
  readonly #hat: Float64Array;
  readonly #d: Float64Array;
  readonly #w: Float64Array;
  readonly #qp: Float64Array;

  constructor(grid: Grid, fft: Fft2d, potential: Float64Array) {
    this.#grid = grid;
    this.#fft = fft;
    this.#potential = potential;
    const m = grid.n * grid.n;
    this.#hat = new Float64Array(2 * m);
    this.#d = new Float64Array(2 * m);
    this.#w = new Float64Array(2 * m);
    this.#qp = new Float64Array(m);
  }

  /** Evaluates every diagnostic of ψ (interleaved complex) into `out`. */
  evaluate(psi: Float64Array, out: GpDiagnostics): void {
    const g = this.#grid, n = g.n, m = n * n, cell = g.cell, fft = this.#fft;
    const hat = this.#hat, d = this.#d, w = this.#w, qp = this.#qp, v = this.#potential;
    hat.set(psi);
    fft.forward(hat);
    let norm = 0, pot = 0, inter = 0, kin = 0, kinRes = 0;
    for (let p = 0; p < m; p++) {
      const re = psi[2 * p], im = psi[2 * p + 1], rho = re * re + im * im;
      norm += rho;
      pot += v[p] * rho;
      inter += rho * rho;
      const a2 = hat[2 * p] * hat[2 * p] + hat[2 * p + 1] * hat[2 * p + 1];
      kin += g.k2[p] * a2;
      const i = p % n, j = (p - i) / n;
      const kx = g.derivativeFactor(i), ky = g.derivativeFactor(j);
      kinRes += (kx * kx + ky * ky) * a2;
    }
    // Derivatives along x then y: ∂ψ = IFFT(i k ψ̂).
    qp.fill(0);
    for (let axis = 0; axis < 2; axis++) {
      for (let j = 0; j < n; j++) {
        for (let i = 0; i < n; i++) {
          const p = j * n + i;
          const k = axis === 0 ? g.derivativeFactor(i) : g.derivativeFactor(j);
          d[2 * p] = -k * hat[2 * p + 1];
          d[2 * p + 1] = k * hat[2 * p];
        }
      }
      fft.inverse(d);
      for (let p = 0; p < m; p++) {
        const re = psi[2 * p], im = psi[2 * p + 1];
        const rho = re * re + im * im;
        let wv = 0, qv = 0;
        if (rho >= 1e-14) {
          const a = 1 / Math.sqrt(rho);
          const dr = d[2 * p], di = d[2 * p + 1];
          // ψ*∂ψ = (re − i im)(dr + i di) = (re dr + im di) + i(re di − im dr)
          wv = (re * di - im * dr) * a;
          qv = (re * dr + im * di) * a;
        }
        w[2 * p + axis] = wv;
        qp[p] += qv * qv;
      }
    }
    let quantum = 0;
    for (let p = 0; p < m; p++) quantum += qp[p];
    // w = w_x + i w_y → Ŵ; W_x(k) = (Ŵ(k) + conj Ŵ(−k))/2, W_y(k) = (Ŵ(k) − conj Ŵ(−k))/(2i).
    fft.forward(w);
    let comp = 0, total = 0;
    for (let j = 0; j < n; j++) {
      const jm = j === 0 ? 0 : n - j;
      for (let i = 0; i < n; i++) {
        const im_ = i === 0 ? 0 : n - i;
        const p = j * n + i, q = jm * n + im_;
        const ar = w[2 * p], ai = w[2 * p + 1], br = w[2 * q], bi = -w[2 * q + 1]; // b = conj Ŵ(−k)
        const xr = 0.5 * (ar + br), xi = 0.5 * (ai + bi);
        const yr = 0.5 * (ai - bi), yi = -0.5 * (ar - br);
        total += xr * xr + xi * xi + yr * yr + yi * yi;
        const kx = g.k[i], ky = g.k[j], kk = kx * kx + ky * ky;
        if (kk > 0) {
          const dr = kx * xr + ky * yr, di = kx * xi + ky * yi;
          comp += (dr * dr + di * di) / kk;
        }
      }
    }
    out.norm = norm * cell;
    out.energy = (0.5 * kin / m + pot + 0.5 * inter) * cell;
    out.kineticResolved = 0.5 * kinRes / m * cell;
    out.kineticCompressible = 0.5 * comp / m * cell;
    out.kineticIncompressible = 0.5 * (total - comp) / m * cell;
    out.quantumPressure = 0.5 * quantum * cell;
  }
}

/** A zeroed diagnostics record. */
export function emptyDiagnostics(): GpDiagnostics {
  return {
    norm: 0,
    energy: 0,
    kineticIncompressible: 0,
    kineticCompressible: 0,
    quantumPressure: 0,
    kineticResolved: 0,
  };
}
