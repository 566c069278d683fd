/**
 * Radially symmetric Vinen-type equation with diffusion, ∂L/∂t = D ∇²L − χ₂(κ/2π)L², in polar (d = 2) or
 * spherical (d = 3) symmetry: a solver and a fit of χ₂ to a homogeneous decay series (the fit of D and the loss
 * term to measured radial profiles is in `vinen_fit.ts`).
 *
 * Method (docs/methods.md §5.2):
 * - Finite volume on M cell-centred shells of width Δr (centres r_k = (k + ½)Δr, faces r_{k+½} = (k + 1)Δr).
 *   With V_k = (r_{k+½}^d − r_{k−½}^d)/d and face measure A_{k+½} = r_{k+½}^{d−1} (the common factor 2π or
 *   4π cancels), dL_k/dt = D/(V_k Δr)·[A_{k+½}(L_{k+1} − L_k) − A_{k−½}(L_k − L_{k−1})]. A_{−½} = 0 gives
 *   zero flux at r = 0 without a special case; L = 0 is imposed on the outer face r_max (half-cell distance).
 * - Diffusion by Crank–Nicolson (trapezoidal rule in time): (I − ½ΔtA)Lⁿ⁺¹ = (I + ½ΔtA)Lⁿ, a tridiagonal
 *   system solved by the Thomas algorithm. Its forward elimination depends only on DΔt and is computed once
 *   per step size; all arrays are preallocated (no allocation per step).
 * - Reaction by its exact solution over a half step, L ← L/(1 + χ₂(κ/2π)L·Δt/2) (positivity-preserving),
 *   combined with diffusion by Strang splitting: half reaction, full diffusion, half reaction (second order).
 * - χ₂ from a homogeneous decay series: 1/⟨L⟩(t) = 1/L₀ + χ₂κt/(2π) fitted by least squares on the late part,
 *   χ₂ = 2π·slope/κ, with a bootstrap interval over realisations.
 *
 * References: W.F. Vinen, Proc. R. Soc. A 242, 493 (1957), doi:10.1098/rspa.1957.0191; J. Crank, P. Nicolson,
 * Proc. Camb. Phil. Soc. 43, 50 (1947), doi:10.1017/S0305004100023197; G. Strang, SIAM J. Numer. Anal. 5, 506
 * (1968), doi:10.1137/0705041; L.H. Thomas, Elliptic problems in linear difference equations over a network
 * (Watson Sci. Comput. Lab., Columbia Univ., 1949); R.J. LeVeque, Finite Volume Methods for Hyperbolic
 * Problems (CUP 2002), doi:10.1017/CBO9780511791253; B. Efron, R.J. Tibshirani, An Introduction to the
 * Bootstrap (1993), doi:10.1201/9780429246593.
 *
 * @example
 * ```ts
 * import { VinenSolver } from "./vinen.ts";
 * const solver = new VinenSolver({ dimension: 3, rMax: 20, cells: 400 });
 * const L = solver.r.map((r) => Math.exp(-r * r / 2));
 * solver.advance(L, 1.0, { D: 0.5, chi2: 0.3 }, 0.01); // L now holds the profile at t = 1
 * ```
 */
import {
  bcaInterval,
  type Interval,
  jackknife,
  percentileInterval,
  resampleIndices,
  standardDeviation,
} from "./bootstrap.ts";
import { streamFromSeed } from "./seed.ts";
import { lineFit } from "./window.ts";

export interface VinenGrid {
  readonly dimension: 2 | 3;
  /** Outer radius where L = 0 (length). */
  readonly rMax: number;
  /** Number of cells M (Δr = rMax/M). */
  readonly cells: number;
}

export interface VinenParameters {
  /** Diffusion coefficient D ≥ 0 (length²/time). */
  readonly D: number;
  /** Decay coefficient χ₂ ≥ 0 (dimensionless). */
  readonly chi2: number;
  /** Quantum of circulation κ (default 1, study units). */
  readonly kappa?: number;
}

/** Finite-volume Crank–Nicolson / exact-reaction Strang solver on a fixed radial grid. */
export class VinenSolver {
  readonly dimension: 2 | 3;
  readonly cells: number;
  readonly dr: number;
  readonly rMax: number;
  /** Cell centres. */
  readonly r: Float64Array;
  /** Shell measures: area 2π·r dr-integral (d = 2) or volume (d = 3) of each cell. */
  readonly volume: Float64Array;
  readonly #gLo: Float64Array;
  readonly #gUp: Float64Array;
  readonly #a: Float64Array;
  readonly #cp: Float64Array;
  readonly #inv: Float64Array;
  readonly #rhs: Float64Array;
  #factoredH = Number.NaN;

  constructor(grid: VinenGrid) {
    const { dimension: d, rMax, cells: M } = grid;
    if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
    if (!(rMax > 0 && Number.isFinite(rMax))) throw new RangeError(`rMax must be positive, got ${rMax}`);
    if (!Number.isInteger(M) || M < 3) throw new RangeError(`cells must be an integer ≥ 3, got ${M}`);
    this.dimension = d;
    this.cells = M;
    this.rMax = rMax;
    const dr = rMax / M;
    this.dr = dr;
    this.r = new Float64Array(M);
    this.volume = new Float64Array(M);
    this.#gLo = new Float64Array(M);
    this.#gUp = new Float64Array(M);
    this.#a = new Float64Array(M);
    this.#cp = new Float64Array(M);
    this.#inv = new Float64Array(M);
    this.#rhs = new Float64Array(M);
    const solid = d === 2 ? 2 * Math.PI : 4 * Math.PI;
    for (let k = 0; k < M; k++) {
      const rl = k * dr;
      const ru = (k + 1) * dr;
      this.r[k] = (k + 0.5) * dr;
      const V = (Math.pow(ru, d) - Math.pow(rl, d)) / d;
      this.volume[k] = solid * V;
      this.#gLo[k] = Math.pow(rl, d - 1) / (V * dr);
      // Outer face: L = 0 on r_max, at half a cell from the last centre.
      this.#gUp[k] = (k === M - 1 ? 2 : 1) * Math.pow(ru, d - 1) / (V * dr);
    }
  }

  /**
   * Advances L (length `cells`, modified in place) by `duration` with n = ⌈duration/dtMax⌉ equal Strang
   * steps.
   */
  advance(L: Float64Array, duration: number, params: VinenParameters, dtMax: number): void {
    if (!(duration >= 0)) throw new RangeError(`duration must be ≥ 0, got ${duration}`);
    if (!(dtMax > 0)) throw new RangeError(`dtMax must be > 0, got ${dtMax}`);
    checkParams(params);
    if (L.length !== this.cells) {
      throw new RangeError(`profile has ${L.length} values, grid has ${this.cells}`);
    }
    if (duration === 0) return;
    const n = Math.ceil(duration / dtMax * (1 - 1e-12));
    const dt = duration / n;
    const c = params.chi2 * (params.kappa ?? 1) / (2 * Math.PI);
    const h = 0.5 * params.D * dt;
    if (h !== this.#factoredH) this.#factor(h);
    const half = c * 0.5 * dt;
    // Strang: R(Δt/2) D(Δt) R(Δt/2) per step; consecutive half reactions are merged into one exact full
    // reaction (the exact flow composes: L/(1 + cLτ₁) then /(1 + cL'τ₂) equals L/(1 + cL(τ₁ + τ₂))).
    if (half > 0) this.#react(L, half);
    for (let s = 0; s < n; s++) {
      this.#diffuse(L, h);
      if (half > 0) this.#react(L, s < n - 1 ? 2 * half : half);
    }
  }

  /**
   * Profiles at output times (relative to the initial profile's time, non-decreasing, ≥ 0), written into
   * `out[j]` (allocated when not given).
   */
  solve(
    initial: ArrayLike<number>,
    times: ArrayLike<number>,
    params: VinenParameters,
    options: { dtMax: number; out?: Float64Array[] },
  ): Float64Array[] {
    const M = this.cells;
    if (initial.length !== M) {
      throw new RangeError(`initial profile has ${initial.length} values, grid has ${M}`);
    }
    const J = times.length;
    const out = options.out ?? Array.from({ length: J }, () => new Float64Array(M));
    if (out.length !== J || out.some((o) => o.length !== M)) {
      throw new RangeError(`out must hold ${J} arrays of ${M} values`);
    }
    let tPrev = 0;
    for (let j = 0; j < J; j++) {
      const tj = times[j];
      if (!(tj >= tPrev)) {
        throw new RangeError(`output times must be non-decreasing and ≥ 0 (index ${j}: ${tj})`);
      }
      if (j === 0) { for (let k = 0; k < M; k++) out[0][k] = initial[k]; }
      else out[j].set(out[j - 1]);
      this.advance(out[j], tj - tPrev, params, options.dtMax);
      tPrev = tj;
    }
    return out;
  }

  /** Total content Σ L_k V_k (number of vortices in 2D, line length in 3D), compensated sum. */
  total(L: ArrayLike<number>): number {
    let s = 0;
    let c = 0;
    for (let k = 0; k < this.cells; k++) {
      const v = L[k] * this.volume[k];
      const t = s + v;
      c += Math.abs(s) >= Math.abs(v) ? (s - t) + v : (v - t) + s;
      s = t;
    }
    return s + c;
  }

  /** Exact solution of dL/dt = −cL² over τ: L ← L/(1 + cLτ), with cτ = `ct`. */
  #react(L: Float64Array, ct: number): void {
    for (let k = 0; k < this.cells; k++) L[k] = L[k] / (1 + ct * L[k]);
  }

  /** Forward elimination of (I − h·G) for h = DΔt/2 (G the geometric diffusion operator). */
  #factor(h: number): void {
    const M = this.cells;
    const gLo = this.#gLo;
    const gUp = this.#gUp;
    const a = this.#a;
    const cp = this.#cp;
    const inv = this.#inv;
    for (let k = 0; k < M; k++) {
      a[k] = -h * gLo[k];
      const b = 1 + h * (gLo[k] + gUp[k]);
      const c = k < M - 1 ? -h * gUp[k] : 0;
      const denom = k === 0 ? b : b - a[k] * cp[k - 1];
      inv[k] = 1 / denom;
      cp[k] = c * inv[k];
    }
    this.#factoredH = h;
  }

  /** One Crank–Nicolson step: rhs = (I + hG)L, then L = (I − hG)⁻¹ rhs (Thomas algorithm). */
  #diffuse(L: Float64Array, h: number): void {
    const M = this.cells;
    const gLo = this.#gLo;
    const gUp = this.#gUp;
    const a = this.#a;
    const cp = this.#cp;
    const inv = this.#inv;
    const rhs = this.#rhs;
    for (let k = 0; k < M; k++) {
      const lo = k > 0 ? L[k - 1] : 0;
      const up = k < M - 1 ? L[k + 1] : 0;
      rhs[k] = L[k] + h * (gLo[k] * (lo - L[k]) + gUp[k] * (up - L[k]));
    }
    rhs[0] = rhs[0] * inv[0];
    for (let k = 1; k < M; k++) rhs[k] = (rhs[k] - a[k] * rhs[k - 1]) * inv[k];
    L[M - 1] = rhs[M - 1];
    for (let k = M - 2; k >= 0; k--) L[k] = rhs[k] - cp[k] * L[k + 1];
  }
}

/**
 * Radial profiles per realisation on uniform bins [k·h, (k+1)·h), k = 0..K−1, at times t₁ = t_0 < … < t_J.
 */
export interface ProfileEnsemble {
  readonly dimension: 2 | 3;
  /** Bin width h (length). */
  readonly binWidth: number;
  /** Number of bins K. */
  readonly bins: number;
  /** Sample times; the first is the initial time t₁ of the fit. */
  readonly t: ArrayLike<number>;
  /** Per realisation, L(r_k, t_j) at index j·K + k (line density, or vortex number per area in 2D). */
  readonly profiles: readonly ArrayLike<number>[];
}

/** Homogeneous decay series: ⟨L⟩(t) per realisation on common times. */
export interface DecaySeries {
  readonly t: ArrayLike<number>;
  /** L_i(t_k) per realisation (> 0). */
  readonly L: readonly ArrayLike<number>[];
}

export interface DecayFit {
  readonly chi2: number;
  /** L₀ from the intercept 1/L₀ of the late-time line. */
  readonly L0: number;
  readonly window: { readonly t1: number; readonly t2: number; readonly samples: number };
  readonly ci: {
    readonly percentile: Interval | null;
    readonly bca: Interval | null;
    readonly bcaNote: string | null;
    readonly standardError: number | null;
  } | null;
  readonly bootstrap: { readonly replicates: number; readonly seed: string } | null;
}

/**
 * χ₂ from a homogeneous decay: least-squares line 1/⟨L⟩ = 1/L₀ + χ₂κt/(2π) over t ≥ `fromTime` (default: the
 * second half of the time range), with a bootstrap interval over realisations.
 *
 * @example
 * ```ts
 * const t = Array.from({ length: 21 }, (_, k) => 0.5 * k);
 * const decay = (L0: number) => t.map((x) => L0 / (1 + (0.3 * L0 * x) / (2 * Math.PI)));
 * const fit = fitVinenDecay({ t, L: [decay(3.9), decay(4.1), decay(4.0)] }, { seed: "decay", fromTime: 5 });
 * console.log(fit.chi2, fit.ci?.percentile); // χ₂ ≈ 0.3 (⟨L⟩ is averaged before inverting)
 * ```
 */
export function fitVinenDecay(
  series: DecaySeries,
  options: { seed?: string; kappa?: number; fromTime?: number; replicates?: number; level?: number },
): DecayFit {
  const t = series.t;
  const K = t.length;
  const R = series.L.length;
  if (R < 1) throw new RangeError("need at least one realisation");
  for (let k = 0; k < K; k++) {
    if (!Number.isFinite(t[k]) || (k > 0 && !(t[k] > t[k - 1]))) {
      throw new RangeError(`times must be finite and strictly increasing (index ${k}: ${t[k]})`);
    }
  }
  for (let i = 0; i < R; i++) {
    if (series.L[i].length !== K) {
      throw new RangeError(`L[${i}] has ${series.L[i].length} values, expected ${K}`);
    }
    for (let k = 0; k < K; k++) {
      const v = series.L[i][k];
      if (!(v > 0 && Number.isFinite(v))) {
        throw new RangeError(`L[${i}][${k}] must be finite and > 0, got ${v}`);
      }
    }
  }
  const kappa = options.kappa ?? 1;
  if (!(kappa > 0)) throw new RangeError(`kappa must be > 0, got ${kappa}`);
  const from = options.fromTime ?? 0.5 * (t[0] + t[K - 1]);
  let i1 = 0;
  while (i1 < K && t[i1] < from) i1++;
  if (K - i1 < 3) throw new RangeError(`fewer than 3 samples at t ≥ ${from}`);
  const inv = new Float64Array(K);
  const fit = (idx: Int32Array): { slope: number; intercept: number } => {
    for (let k = i1; k < K; k++) {
      let s = 0;
      for (let q = 0; q < idx.length; q++) s += series.L[idx[q]][k];
      inv[k] = idx.length / s;
    }
    return lineFit(t, inv, i1, K - 1);
  };
  const toChi2 = (slope: number): number => (2 * Math.PI * slope) / kappa;
  const all = new Int32Array(R);
  for (let i = 0; i < R; i++) all[i] = i;
  const point = fit(all);
  const B = options.replicates ?? 2000;
  let ci: DecayFit["ci"] = null;
  let boot: DecayFit["bootstrap"] = null;
  if (B > 0 && R >= 2) {
    if (!options.seed) throw new RangeError("a bootstrap seed is required when replicates > 0");
    const rng = streamFromSeed(options.seed);
    const idx = new Int32Array(R);
    const reps = new Float64Array(B);
    for (let b = 0; b < B; b++) reps[b] = toChi2(fit(resampleIndices(rng, idx)).slope);
    const level = options.level ?? 0.95;
    const est = toChi2(point.slope);
    const r = bcaInterval(reps, est, jackknife(R, (ix) => toChi2(fit(ix).slope)), level);
    ci = {
      percentile: percentileInterval(reps, level),
      bca: r.interval,
      bcaNote: r.note,
      standardError: standardDeviation(reps),
    };
    boot = { replicates: B, seed: options.seed };
  }
  return {
    chi2: toChi2(point.slope),
    L0: 1 / point.intercept,
    window: { t1: t[i1], t2: t[K - 1], samples: K - i1 },
    ci,
    bootstrap: boot,
  };
}

function checkParams(p: VinenParameters): void {
  if (!(p.D >= 0 && Number.isFinite(p.D))) throw new RangeError(`D must be finite and ≥ 0, got ${p.D}`);
  if (!(p.chi2 >= 0 && Number.isFinite(p.chi2))) {
    throw new RangeError(`chi2 must be finite and ≥ 0, got ${p.chi2}`);
  }
  const k = p.kappa ?? 1;
  if (!(k > 0 && Number.isFinite(k))) throw new RangeError(`kappa must be finite and > 0, got ${k}`);
}
