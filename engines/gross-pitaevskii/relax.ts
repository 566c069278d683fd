/**
 * Imaginary-time relaxation of the 2D GP equation (GP units): the ground state at a fixed norm, and the
 * relaxation of imprinted vortex cores with the phase pattern pinned.
 *
 * Method: the normalized gradient flow ∂ψ/∂τ = −(H − μ_n)ψ, H = −½∇² + V + |ψ|², discretised by the
 * stabilised backward-Euler Fourier scheme
 *
 *   (ψ* − ψⁿ)/Δτ = (½∇² − α)ψ* + (α − V − |ψⁿ|² + μ_n)ψⁿ,
 *
 * solved in Fourier space (one FFT pair), followed by the constraint: fixed norm N (ψⁿ⁺¹ = √N ψ* / ‖ψ*‖, with
 * μ_n = ⟨ψⁿ|H|ψⁿ⟩/N the current energy per particle), or fixed chemical potential (ψⁿ⁺¹ = ψ*, μ_n = μ). A fixed
 * point satisfies (H − μ)ψ = 0 exactly on the grid, whatever Δτ (unlike imaginary-time Strang splitting, whose
 * fixed point carries an O(Δτ²) error). The stabiliser α = 0.55·max(V + 3|ψ|² − μ) keeps every mode of the
 * linearised iteration contracting. With a pinned phase Φ, each iterate is projected back to |ψ|e^{iΦ}, so the
 * amplitude relaxes (cores heal) while the imprinted flow stays.
 *
 * Ground state at fixed norm with μ = 1: the target norm starts from the Thomas–Fermi profile and is corrected
 * by secant steps on μ(N) until |μ − 1| < 1e-10 (each solve warm-started).
 *
 * Convergence measure: the residual ‖(H − μ)ψ‖/‖ψ‖ (μ = ⟨H⟩), computed every `CHECK_EVERY` iterations.
 *
 * References: W. Bao, Q. Du, SIAM J. Sci. Comput. 25, 1674 (2004), doi:10.1137/S1064827503422956 (normalized
 * gradient flow); W. Bao, I-L. Chern, F.Y. Lim, J. Comput. Phys. 219, 836 (2006), doi:10.1016/j.jcp.2006.04.019
 * (backward-Euler sine/Fourier pseudospectral discretisation with stabilisation α).
 */
import { EngineFailure } from "../contract.ts";
import type { Fft2d } from "./fft2d.ts";
import type { Grid } from "./grid.ts";

const CHECK_EVERY = 10;

/** Result of a relaxation. */
export interface RelaxResult {
  /** μ = ⟨H⟩/N at the end (μ units). */
  readonly mu: number;
  /** Norm ∫|ψ|² dA (n₀ξ²). */
  readonly norm: number;
  /** ‖(H − μ)ψ‖/‖ψ‖ at the end (μ units); NaN when not computed. */
  readonly residual: number;
  readonly iterations: number;
}

export interface RelaxOptions {
  /** Fixed norm N, or fixed chemical potential μ. */
  readonly constraint: { readonly kind: "norm"; readonly value: number } | {
    readonly kind: "chemical-potential";
    readonly value: number;
  };
  /** Imaginary time step Δτ (ξ/c). */
  readonly dtau: number;
  /** Stop when the residual falls below this (checked every 10 iterations); 0 = run `maxIterations`. */
  readonly tolerance: number;
  readonly maxIterations: number;
  /** Pinned phase e^{iΦ} as (cos Φ, sin Φ) per point, or null. */
  readonly pinned?: { readonly cos: Float64Array; readonly sin: Float64Array } | null;
  /** Fail (EngineFailure) when the tolerance is not reached; otherwise return the last state. */
  readonly mustConverge?: boolean;
}

/** Work buffers and the operators shared by relaxations on one grid and potential. */
export class Relaxer {
  readonly grid: Grid;
  readonly potential: Float64Array;
  readonly #fft: Fft2d;
  readonly #work: Float64Array;
  /** Called every few iterations (e.g. the engine's stop check, which may throw to end the relaxation). */
  onCheck: (() => void) | null = null;

  constructor(grid: Grid, fft: Fft2d, potential: Float64Array) {
    this.grid = grid;
    this.#fft = fft;
    this.potential = potential;
    this.#work = new Float64Array(2 * grid.n * grid.n);
  }

  /** ∫|ψ|² dA. */
  norm(psi: Float64Array): number {
    let s = 0;
    for (let p = 0; p < psi.length; p++) s += psi[p] * psi[p];
    return s * this.grid.cell;
  }

  /** ⟨ψ|H|ψ⟩ (energy functional with the interaction counted twice: N·μ at a stationary state). */
  expectationH(psi: Float64Array): number {
    const w = this.#work;
    w.set(psi);
    this.#fft.forward(w);
    const k2 = this.grid.k2, m = k2.length;
    let kin = 0;
    for (let p = 0; p < m; p++) kin += k2[p] * (w[2 * p] * w[2 * p] + w[2 * p + 1] * w[2 * p + 1]);
    kin *= 0.5 / m;
    return (kin + this.#potentialTerms(psi)) * this.grid.cell;
  }

  /** Σ (V|ψ|² + |ψ|⁴) over points (without the cell area). */
  #potentialTerms(psi: Float64Array): number {
    const v = this.potential, m = v.length;
    let s = 0;
    for (let p = 0; p < m; p++) {
      const rho = psi[2 * p] * psi[2 * p] + psi[2 * p + 1] * psi[2 * p + 1];
      s += (v[p] + rho) * rho;
    }
    return s;
  }

  /** ‖(H − μ)ψ‖/‖ψ‖ with μ = ⟨H⟩/N. */
  residual(psi: Float64Array): number {
    const w = this.#work, fft = this.#fft, k2 = this.grid.k2, v = this.potential, m = k2.length;
    const n = this.norm(psi);
    const mu = this.expectationH(psi) / n; // leaves ψ̂ in w
    for (let p = 0; p < m; p++) {
      const f = 0.5 * k2[p];
      w[2 * p] *= f;
      w[2 * p + 1] *= f;
    }
    fft.inverse(w);
    let r = 0;
    for (let p = 0; p < m; p++) {
      const re = psi[2 * p], im = psi[2 * p + 1];
      const c = v[p] + re * re + im * im - mu;
      const hr = w[2 * p] + c * re, hi = w[2 * p + 1] + c * im;
      r += hr * hr + hi * hi;
    }
    return Math.sqrt(r * this.grid.cell / n);
  }

  /** Relaxes ψ in place (see the module comment). */
  relax(psi: Float64Array, opts: RelaxOptions): RelaxResult {
    const grid = this.grid, k2 = grid.k2, v = this.potential, m = k2.length, cell = grid.cell;
    const w = this.#work, fft = this.#fft, dt = opts.dtau;
    const fixedNorm = opts.constraint.kind === "norm";
    const target = opts.constraint.value;
    const pinned = opts.pinned ?? null;
    let mu = fixedNorm ? this.expectationH(psi) / this.norm(psi) : target;
    let maxW3 = 2;
    for (let p = 0; p < m; p++) {
      const rho = psi[2 * p] * psi[2 * p] + psi[2 * p + 1] * psi[2 * p + 1];
      maxW3 = Math.max(maxW3, v[p] + 3 * rho - mu);
    }
    const alpha = 0.55 * maxW3;
    let residual = Number.NaN;
    let it = 0;
    while (it < opts.maxIterations) {
      for (let p = 0; p < m; p++) {
        const re = psi[2 * p], im = psi[2 * p + 1];
        const f = 1 + dt * (alpha - v[p] - (re * re + im * im) + mu);
        w[2 * p] = f * re;
        w[2 * p + 1] = f * im;
      }
      fft.forward(w);
      let kin = 0;
      for (let p = 0; p < m; p++) {
        const d = 1 / (1 + dt * (0.5 * k2[p] + alpha));
        const re = w[2 * p] * d, im = w[2 * p + 1] * d;
        w[2 * p] = re;
        w[2 * p + 1] = im;
        kin += k2[p] * (re * re + im * im);
      }
      kin *= 0.5 / m;
      fft.inverse(w);
      if (pinned !== null) {
        const c = pinned.cos, s = pinned.sin;
        for (let p = 0; p < m; p++) {
          const a = Math.hypot(w[2 * p], w[2 * p + 1]);
          w[2 * p] = a * c[p];
          w[2 * p + 1] = a * s[p];
        }
      }
      let scale = 1;
      if (fixedNorm) {
        let nn = 0;
        for (let p = 0; p < 2 * m; p++) nn += w[p] * w[p];
        nn *= cell;
        if (!(nn > 0 && Number.isFinite(nn))) {
          throw new EngineFailure("nan", `relaxation lost the condensate (norm ${nn}) at iteration ${it}`, 0);
        }
        scale = Math.sqrt(target / nn);
      }
      for (let p = 0; p < 2 * m; p++) psi[p] = scale * w[p];
      it++;
      if (it % CHECK_EVERY === 0) this.onCheck?.();
      if (fixedNorm) mu = (scale * scale * kin + this.#potentialTerms(psi)) * cell / target;
      if (opts.tolerance > 0 && it % CHECK_EVERY === 0) {
        residual = this.residual(psi);
        if (!Number.isFinite(residual)) {
          throw new EngineFailure("nan", `relaxation produced a non-finite state at iteration ${it}`, 0);
        }
        if (residual < opts.tolerance) break;
      }
    }
    if (opts.tolerance > 0 && opts.mustConverge && !(residual < opts.tolerance)) {
      throw new EngineFailure(
        "invalid-state",
        `the ground-state relaxation did not reach residual ${opts.tolerance} in ${opts.maxIterations} ` +
          `iterations (residual ${residual.toExponential(2)}); raise relaxation.maxIterations or ` +
          "relaxation.tolerance, or lower the wall height (a high wall slows the relaxation)",
        0,
      );
    }
    const norm = this.norm(psi);
    return { mu: this.expectationH(psi) / norm, norm, residual, iterations: it };
  }
}

/** The ground state ψ_GS (real, interleaved complex) at μ = 1 with its norm, found at fixed norm. */
export interface GroundState {
  readonly psi: Float64Array;
  readonly mu: number;
  readonly norm: number;
  readonly residual: number;
  readonly iterations: number;
}

/** Imaginary time step of the ground-state solve (ξ/c); the fixed point does not depend on it. */
const GROUND_STATE_DTAU = 1;

/**
 * Ground state at fixed norm with μ = 1 (see the module comment). A periodic domain without a potential has the
 * exact uniform ground state ψ = 1.
 */
export function groundState(
  relaxer: Relaxer,
  opts: { readonly tolerance: number; readonly maxIterations: number },
): GroundState {
  const grid = relaxer.grid, v = relaxer.potential, m = v.length;
  const psi = new Float64Array(2 * m);
  let flat = 0;
  for (let p = 0; p < m; p++) {
    psi[2 * p] = Math.sqrt(Math.max(0, 1 - v[p]));
    if (v[p] < 1) flat++;
  }
  if (v.every((x) => x === 0)) {
    return { psi, mu: 1, norm: relaxer.norm(psi), residual: 0, iterations: 0 };
  }
  let norm = relaxer.norm(psi);
  const area = flat * grid.cell;
  let iterations = 0;
  let prev: { norm: number; mu: number } | null = null;
  let r: RelaxResult | null = null;
  for (let outer = 0; outer < 12; outer++) {
    r = relaxer.relax(psi, {
      constraint: { kind: "norm", value: norm },
      dtau: GROUND_STATE_DTAU,
      tolerance: opts.tolerance,
      maxIterations: Math.max(1, opts.maxIterations - iterations),
      mustConverge: true,
    });
    iterations += r.iterations;
    if (Math.abs(r.mu - 1) < 1e-10) break;
    const slope = prev !== null && r.mu !== prev.mu ? (norm - prev.norm) / (r.mu - prev.mu) : area;
    prev = { norm, mu: r.mu };
    const next = norm + (1 - r.mu) * slope;
    const s = Math.sqrt(next / norm);
    for (let p = 0; p < 2 * m; p++) psi[p] *= s;
    norm = next;
  }
  return { psi, mu: r!.mu, norm: r!.norm, residual: r!.residual, iterations };
}
