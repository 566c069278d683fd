/**
 * Radially symmetric Vinen-type equation with diffusion, ∂L/∂t = D ∇²L − χ₂(κ/2π)L², in polar (d = 2) or
 * spherical (d = 3) symmetry: a solver, a fit of D to measured radial profiles, a fit of χ₂ to a homogeneous
 * decay series, and the sensitivity of D to χ₂.
 *
 * Method (spindrift methods notes §5.2):
 * - Finite volume on M cell-centred shells of width Δr (centres r_k = (k + ½)Δr, faces r_{k+½} = (k + 1)Δr).
 *   With V_k = (r_{k+½}^d − r_{k−½}^d)/d and face measure A_{k+½} = r_{k+½}^{d−1} (the common factor 2π or
 *   4π cancels), dL_k/dt = D/(V_k Δr)·[A_{k+½}(L_{k+1} − L_k) − A_{k−½}(L_k − L_{k−1})]. A_{−½} = 0 gives
 *   zero flux at r = 0 without a special case; L = 0 is imposed on the outer face r_max (half-cell distance).
 * - Diffusion by Crank–Nicolson (trapezoidal rule in time): (I − ½ΔtA)Lⁿ⁺¹ = (I + ½ΔtA)Lⁿ, a tridiagonal
 *   system solved by the Thomas algorithm. Its forward elimination depends only on DΔt and is computed once
 *   per step size; all arrays are preallocated (no allocation per step).
 * - Reaction by its exact solution over a half step, L ← L/(1 + χ₂(κ/2π)L·Δt/2) (positivity-preserving),
 *   combined with diffusion by Strang splitting: half reaction, full diffusion, half reaction (second order).
 * - Fit of D: initial condition = ensemble-mean profile at t₁ (interpolated between bin centres onto the
 *   solver grid, geometrically where positive, then scaled bin by bin so that its bin averages equal the
 *   data); the model's bin averages at t₂…t_J are compared with the ensemble means, SSE weighted by 1/σ² with
 *   σ² = s²/N from the realisation scatter (bins with zero scatter are left out and counted); D minimises the
 *   SSE by Brent's method in ln D; interval by bootstrap over realisations (each replicate recomputes means,
 *   scatter, initial condition, fit).
 * - χ₂ from a homogeneous decay series: 1/⟨L⟩(t) = 1/L₀ + χ₂κt/(2π) fitted by least squares on the late part,
 *   χ₂ = 2π·slope/κ, with a bootstrap interval over realisations.
 *
 * References: W.F. Vinen, Proc. R. Soc. A 242, 493 (1957), doi:10.1098/rspa.1957.0191; J. Crank, P. Nicolson,
 * Proc. Camb. Phil. Soc. 43, 50 (1947), doi:10.1017/S0305004100023197; G. Strang, SIAM J. Numer. Anal. 5, 506
 * (1968), doi:10.1137/0705041; L.H. Thomas, Elliptic problems in linear difference equations over a network
 * (Watson Sci. Comput. Lab., Columbia Univ., 1949); R.J. LeVeque, Finite Volume Methods for Hyperbolic
 * Problems (CUP 2002), doi:10.1017/CBO9780511791253; R.P. Brent, Algorithms for Minimization without
 * Derivatives (1973); B. Efron, R.J. Tibshirani, An Introduction to the Bootstrap (1993),
 * doi:10.1201/9780429246593.
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
import { brentMinimize } from "./brent.ts";
import { streamFromSeed } from "./seed.ts";

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

export interface VinenFitOptions {
  /** χ₂ (fixed, from a separate decay run). */
  readonly chi2: number;
  /** κ (default 1). */
  readonly kappa?: number;
  /** Solver cells per data bin (default 4, so Δr = h/4 ≤ R_rms/40 for bins of R_rms/10). */
  readonly refine?: number;
  /** r_max = ⌈domainFactor·K⌉ bins (default 4: L = 0 at ≥ 4× the largest fitted radius). */
  readonly domainFactor?: number;
  /**
   * Solver time step. Default min(0.05 R²_rms(t₁)/D₀, 2Δr²/D₀, (t_J − t₁)/50), with D₀ a rough estimate from
   * the growth of R²_rms(t); the mesh-ratio cap D₀Δt/Δr² ≤ 2 keeps Crank–Nicolson accurate in the profile
   * tails, where 1/σ² weights are largest.
   */
  readonly dt?: number;
  /** Search interval for D (default [D₀/100, 100·D₀]). */
  readonly bracket?: readonly [number, number];
  /** Relative tolerance on D (default 1e-6). */
  readonly tolerance?: number;
  /** Bootstrap replicates (default 200; 0 = none). */
  readonly replicates?: number;
  /** Bootstrap seed (required when replicates > 0). */
  readonly seed?: string;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** Compute a BCa interval (needs one refit per realisation; default false). */
  readonly bca?: boolean;
}

export interface VinenFit {
  readonly D: number;
  /** Weighted SSE at the optimum and the number of (bin, time) terms in it. */
  readonly sse: number;
  readonly terms: number;
  /** (bin, time) pairs left out because their realisation scatter is zero. */
  readonly excluded: number;
  /** True when the optimum lies within 1e-3 (relative, in ln D) of the search bracket's edge. */
  readonly atBound: boolean;
  readonly evaluations: number;
  /** Standardised residuals (model − mean)/σ at index (j − 1)·K + k for j ≥ 1; NaN where excluded. */
  readonly residuals: Float64Array;
  readonly grid: { readonly cells: number; readonly dr: number; readonly rMax: number; readonly dt: number };
  readonly chi2: number;
  readonly ci: {
    readonly percentile: Interval | null;
    readonly bca: Interval | null;
    readonly bcaNote: string | null;
    readonly standardError: number | null;
  } | null;
  readonly bootstrap: { readonly replicates: number; readonly seed: string; readonly failed: number } | null;
}

/** Fits D of the Vinen-type equation to ensemble radial profiles (see the module comment). */
export function fitVinenDiffusion(data: ProfileEnsemble, options: VinenFitOptions): VinenFit {
  const prob = new VinenFitProblem(data, options);
  const all = new Int32Array(data.profiles.length);
  for (let i = 0; i < all.length; i++) all[i] = i;
  prob.moments(all);
  const bracket = options.bracket ?? [prob.D0 / 100, prob.D0 * 100];
  if (!(bracket[0] > 0 && bracket[1] > bracket[0])) {
    throw new RangeError(`bracket must satisfy 0 < lo < hi, got [${bracket}]`);
  }
  const best = prob.minimise(bracket[0], bracket[1]);
  const residuals = prob.residuals(best.D);
  const R = data.profiles.length;
  const B = options.replicates ?? 200;
  const level = options.level ?? 0.95;
  let ci: VinenFit["ci"] = null;
  let boot: VinenFit["bootstrap"] = null;
  if (B > 0) {
    if (!Number.isInteger(B) || B < 2) {
      throw new RangeError(`replicates must be 0 or an integer ≥ 2, got ${B}`);
    }
    if (!options.seed) throw new RangeError("a bootstrap seed is required when replicates > 0");
    if (R < 2) throw new RangeError("the bootstrap needs at least 2 realisations");
    const rng = streamFromSeed(options.seed);
    const idx = new Int32Array(R);
    const reps = new Float64Array(B);
    let failed = 0;
    const refit = (ix: Int32Array): number => {
      prob.moments(ix);
      const r = prob.minimise(best.D / 4, best.D * 4);
      const s = r.atBound ? prob.minimise(bracket[0], bracket[1]) : r;
      return s.atBound ? Number.NaN : s.D;
    };
    for (let b = 0; b < B; b++) {
      reps[b] = refit(resampleIndices(rng, idx));
      if (Number.isNaN(reps[b])) failed++;
    }
    let bca: Interval | null = null;
    let bcaNote: string | null = "not requested";
    if (options.bca) {
      const r = bcaInterval(reps, best.D, jackknife(R, refit), level);
      bca = r.interval;
      bcaNote = r.note;
    }
    ci = {
      percentile: percentileInterval(reps, level),
      bca,
      bcaNote,
      standardError: standardDeviation(reps),
    };
    boot = { replicates: B, seed: options.seed, failed };
    prob.moments(all);
  }
  return {
    D: best.D,
    sse: best.sse,
    terms: prob.terms,
    excluded: prob.excluded,
    atBound: best.atBound,
    evaluations: best.evaluations,
    residuals,
    grid: { cells: prob.solver.cells, dr: prob.solver.dr, rMax: prob.solver.rMax, dt: prob.dt },
    chi2: options.chi2,
    ci,
    bootstrap: boot,
  };
}

/** The fit objective with all work arrays preallocated; `moments` selects the realisations. */
class VinenFitProblem {
  readonly solver: VinenSolver;
  readonly K: number;
  readonly J: number;
  readonly refine: number;
  readonly t: Float64Array;
  readonly mean: Float64Array;
  readonly weight: Float64Array;
  readonly initial: Float64Array;
  readonly work: Float64Array;
  readonly chi2: number;
  readonly kappa: number;
  readonly relTol: number;
  dt = 0;
  D0 = 0;
  terms = 0;
  excluded = 0;
  #dtFixed: number | undefined;

  constructor(readonly data: ProfileEnsemble, options: VinenFitOptions) {
    const { dimension: d, binWidth: h, bins: K, t, profiles } = data;
    if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
    if (!(h > 0 && Number.isFinite(h))) throw new RangeError(`binWidth must be positive, got ${h}`);
    if (!Number.isInteger(K) || K < 2) throw new RangeError(`bins must be an integer ≥ 2, got ${K}`);
    const J = t.length;
    if (J < 2) throw new RangeError(`need the initial time and at least one later time, got ${J} times`);
    for (let j = 1; j < J; j++) {
      if (!(t[j] > t[j - 1])) throw new RangeError(`times must be strictly increasing (index ${j}: ${t[j]})`);
    }
    if (profiles.length < 1) throw new RangeError("need at least one realisation");
    for (let i = 0; i < profiles.length; i++) {
      const p = profiles[i];
      if (p.length !== J * K) {
        throw new RangeError(`profiles[${i}] has ${p.length} values, expected times × bins = ${J * K}`);
      }
      for (let q = 0; q < p.length; q++) {
        if (!(p[q] >= 0 && Number.isFinite(p[q]))) {
          throw new RangeError(`profiles[${i}][${q}] must be finite and ≥ 0, got ${p[q]}`);
        }
      }
    }
    if (!(options.chi2 >= 0 && Number.isFinite(options.chi2))) {
      throw new RangeError(`chi2 must be finite and ≥ 0, got ${options.chi2}`);
    }
    const refine = options.refine ?? 4;
    if (!Number.isInteger(refine) || refine < 1) {
      throw new RangeError(`refine must be an integer ≥ 1, got ${refine}`);
    }
    const factor = options.domainFactor ?? 4;
    if (!(factor >= 1)) throw new RangeError(`domainFactor must be ≥ 1, got ${factor}`);
    if (options.dt !== undefined && !(options.dt > 0)) {
      throw new RangeError(`dt must be > 0, got ${options.dt}`);
    }
    const tol = options.tolerance ?? 1e-6;
    if (!(tol > 0 && tol < 0.1)) throw new RangeError(`tolerance must be in (0, 0.1), got ${tol}`);
    this.relTol = tol;
    const binsTotal = Math.ceil(factor * K);
    this.solver = new VinenSolver({ dimension: d, rMax: binsTotal * h, cells: binsTotal * refine });
    this.K = K;
    this.J = J;
    this.refine = refine;
    this.t = Float64Array.from(t);
    this.mean = new Float64Array(J * K);
    this.weight = new Float64Array(J * K);
    this.initial = new Float64Array(this.solver.cells);
    this.work = new Float64Array(this.solver.cells);
    this.chi2 = options.chi2;
    this.kappa = options.kappa ?? 1;
    this.#dtFixed = options.dt;
  }

  /** Ensemble means, weights 1/σ² = N/s² and the initial condition for realisations `idx`. */
  moments(idx: Int32Array): void {
    const { K, J, mean, weight } = this;
    const n = idx.length;
    const P = this.data.profiles;
    let excluded = 0;
    for (let q = 0; q < J * K; q++) {
      let m = 0;
      for (let s = 0; s < n; s++) m += P[idx[s]][q];
      m /= n;
      let ss = 0;
      for (let s = 0; s < n; s++) {
        const e = P[idx[s]][q] - m;
        ss += e * e;
      }
      const varMean = n > 1 ? ss / (n - 1) / n : 0;
      mean[q] = m;
      weight[q] = varMean > 0 ? 1 / varMean : 0;
      if (q >= K && !(varMean > 0)) excluded++;
    }
    this.excluded = excluded;
    this.terms = (J - 1) * K - excluded;
    this.#initialCondition();
    // Rough D₀ from the growth of R²_rms of the mean profiles (bin-centre quadrature), for defaults only.
    const r2First = this.#meanSquareRadius(0);
    const r2Last = this.#meanSquareRadius(J - 1);
    const span = this.t[J - 1] - this.t[0];
    const d = this.data.dimension;
    const growth = (r2Last - r2First) / (2 * d * span);
    const h = this.data.binWidth;
    this.D0 = growth > 0 ? growth : (h * h) / span;
    if (this.dt === 0) {
      const dr = this.solver.dr;
      this.dt = this.#dtFixed ??
        Math.min((0.05 * Math.max(r2First, h * h)) / this.D0, (2 * dr * dr) / this.D0, span / 50);
    }
  }

  #meanSquareRadius(j: number): number {
    const { K, mean } = this;
    const h = this.data.binWidth;
    const d = this.data.dimension;
    let num = 0;
    let den = 0;
    for (let k = 0; k < K; k++) {
      const rc = (k + 0.5) * h;
      const w = mean[j * K + k] * Math.pow(rc, d - 1);
      num += w * rc * rc;
      den += w;
    }
    return den > 0 ? num / den : 0;
  }

  /**
   * Initial condition from the t₁ bin means: interpolation between bin centres, geometric where both
   * neighbours are positive (exact for exponential tails, so relative errors stay small where 1/σ² weights
   * are large), linear otherwise; flat inside the first half bin; beyond the last centre a geometric
   * continuation of the last two bins when they decrease, else a linear ramp to 0 over one bin; then scaled
   * bin by bin so that its bin averages equal the data.
   */
  #initialCondition(): void {
    const { K, mean, initial, refine, solver } = this;
    const h = this.data.binWidth;
    const M = solver.cells;
    const last = mean[K - 1];
    const prev = mean[K - 2];
    const decay = last > 0 && prev > last ? last / prev : 0;
    for (let c = 0; c < M; c++) {
      const x = solver.r[c] / h - 0.5; // position in units of bin centres
      let v: number;
      if (x <= 0) v = mean[0];
      else if (x >= K - 1) {
        const s = x - (K - 1);
        v = decay > 0 ? last * Math.pow(decay, s) : Math.max(0, last * (1 - s));
      } else {
        const k = Math.floor(x);
        const f = x - k;
        const v0 = mean[k];
        const v1 = mean[k + 1];
        v = v0 > 0 && v1 > 0 ? v0 * Math.pow(v1 / v0, f) : v0 + f * (v1 - v0);
      }
      initial[c] = v;
    }
    for (let k = 0; k < K; k++) {
      let num = 0;
      let den = 0;
      for (let c = k * refine; c < (k + 1) * refine; c++) {
        num += initial[c] * solver.volume[c];
        den += solver.volume[c];
      }
      const avg = num / den;
      const s = avg > 0 ? mean[k] / avg : 0;
      for (let c = k * refine; c < (k + 1) * refine; c++) initial[c] *= s;
    }
  }

  /** Weighted SSE of the model with diffusion coefficient D (one PDE solve, no allocation). */
  sse(D: number, residuals: Float64Array | null = null): number {
    const { K, J, refine, solver, work, mean, weight } = this;
    work.set(this.initial);
    const params = { D, chi2: this.chi2, kappa: this.kappa };
    let sse = 0;
    for (let j = 1; j < J; j++) {
      solver.advance(work, this.t[j] - this.t[j - 1], params, this.dt);
      for (let k = 0; k < K; k++) {
        let num = 0;
        let den = 0;
        for (let c = k * refine; c < (k + 1) * refine; c++) {
          num += work[c] * solver.volume[c];
          den += solver.volume[c];
        }
        const q = j * K + k;
        const e = num / den - mean[q];
        const w = weight[q];
        if (residuals) residuals[(j - 1) * K + k] = w > 0 ? e * Math.sqrt(w) : Number.NaN;
        if (w > 0) sse += w * e * e;
      }
    }
    return sse;
  }

  minimise(lo: number, hi: number): { D: number; sse: number; atBound: boolean; evaluations: number } {
    const a = Math.log(lo);
    const b = Math.log(hi);
    const r = brentMinimize((x) => this.sse(Math.exp(x)), a, b, { tolerance: this.relTol });
    const edge = 1e-3 * (b - a);
    return {
      D: Math.exp(r.x),
      sse: r.fx,
      atBound: r.x - a < edge || b - r.x < edge,
      evaluations: r.evaluations,
    };
  }

  residuals(D: number): Float64Array {
    const out = new Float64Array((this.J - 1) * this.K);
    this.sse(D, out);
    return out;
  }
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
    let st = 0;
    let sy = 0;
    const n = K - i1;
    for (let k = i1; k < K; k++) {
      st += t[k];
      sy += inv[k];
    }
    const mt = st / n;
    const my = sy / n;
    let stt = 0;
    let sty = 0;
    for (let k = i1; k < K; k++) {
      stt += (t[k] - mt) ** 2;
      sty += (t[k] - mt) * (inv[k] - my);
    }
    const slope = sty / stt;
    return { slope, intercept: my - slope * mt };
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

/**
 * Sensitivity of the fitted D to χ₂: refits at χ₂ = lower, central and upper (e.g. the decay fit's interval)
 * and reports the finite-difference slope ∂D/∂χ₂. Point fits only (no bootstrap).
 */
export function vinenChi2Sensitivity(
  data: ProfileEnsemble,
  options: Omit<VinenFitOptions, "chi2" | "replicates"> & {
    chi2: number;
    chi2Interval: readonly [number, number];
  },
): { chi2: readonly [number, number, number]; D: readonly [number, number, number]; dDdChi2: number } {
  const [lo, hi] = options.chi2Interval;
  if (!(lo >= 0 && hi > lo)) {
    throw new RangeError(`chi2Interval must satisfy 0 ≤ lo < hi, got [${lo}, ${hi}]`);
  }
  const at = (chi2: number) => fitVinenDiffusion(data, { ...options, chi2, replicates: 0 }).D;
  const D = [at(lo), at(options.chi2), at(hi)] as const;
  return { chi2: [lo, options.chi2, hi], D, dDdChi2: (D[2] - D[0]) / (hi - lo) };
}

function checkParams(p: VinenParameters): void {
  if (!(p.D >= 0 && Number.isFinite(p.D))) throw new RangeError(`D must be finite and ≥ 0, got ${p.D}`);
  if (!(p.chi2 >= 0 && Number.isFinite(p.chi2))) {
    throw new RangeError(`chi2 must be finite and ≥ 0, got ${p.chi2}`);
  }
  const k = p.kappa ?? 1;
  if (!(k > 0 && Number.isFinite(k))) throw new RangeError(`kappa must be finite and > 0, got ${k}`);
}
