/**
 * The pieces of the diffusive-window rule shared by every MSD-type estimator: the smoothed local exponent
 * α = d ln y / d ln x on a log grid, the window-mean exponent, and the choice of the window [t₁, t₂] from the
 * crossover τ_c (docs/methods.md §5.1).
 *
 * Method:
 * - Log grid from the first positive abscissa x_a to the last x_b, `pointsPerDecade` per decade (at least
 *   `smoothingPoints` points, both ends included); ln y interpolated linearly in ln x between samples.
 * - α at a grid point = least-squares slope of ln y on ln x through `smoothingPoints` consecutive grid points
 *   (centred, truncated at the ends, at least 3).
 * - Window-mean exponent ᾱ over [x₁, x₂] = least-squares slope of ln y on ln x through the grid points inside
 *   (a single number, much less noisy than α at one point).
 * - Window: τ_c = first grid time with α < `crossoverAlpha`; t₁ = first sample ≥ `startFactor`·τ_c; t₂ = the
 *   earliest of the last sample, the caller's cut, and the last sample before the main-cluster count falls
 *   below `mainCountFraction` of its value at t₁; at least 3 samples and t₂/t₁ ≥ `minRatio`.
 *
 * References: docs/methods.md §5.1; X. Michalet, Phys. Rev. E 82, 041914 (2010), doi:10.1103/PhysRevE.82.041914.
 *
 * @example
 * ```ts
 * import { DEFAULT_WINDOW_RULES, LocalSlope } from "./window.ts";
 * const x = [0, 0.1, 0.2, 0.5, 1, 2, 5, 10];
 * const s = new LocalSlope(x, DEFAULT_WINDOW_RULES);
 * s.compute(x.map((v) => v * v)); // s.alpha ≈ 2 everywhere
 * ```
 */

/** Window-selection rules; defaults are the methods notes' values. */
export interface WindowRules {
  /** Log-grid density for α(t) (default 10 points per decade). */
  readonly pointsPerDecade: number;
  /** Points in the α smoothing line (odd, ≥ 3; default 5). */
  readonly smoothingPoints: number;
  /** τ_c = first t with α below this (default 1.2). */
  readonly crossoverAlpha: number;
  /** t₁ ≥ startFactor·τ_c (default 3). */
  readonly startFactor: number;
  /** α must stay in [lo, hi] over the window (default [0.85, 1.15]). */
  readonly alphaBand: readonly [number, number];
  /** Required t₂/t₁ (default 5). */
  readonly minRatio: number;
  /** t₂ ends before N_main drops below this fraction of N_main(t₁) (default 0.5). */
  readonly mainCountFraction: number;
}

export const DEFAULT_WINDOW_RULES: WindowRules = Object.freeze({
  pointsPerDecade: 10,
  smoothingPoints: 5,
  crossoverAlpha: 1.2,
  startFactor: 3,
  alphaBand: Object.freeze([0.85, 1.15]) as readonly [number, number],
  minRatio: 5,
  mainCountFraction: 0.5,
});

/** Fills in defaults and refuses inconsistent rules (RangeError naming the rule). */
export function resolveRules<R extends WindowRules>(defaults: R, over: Partial<R> | undefined): R {
  const r: R = { ...defaults, ...over };
  const bad = (msg: string): never => {
    throw new RangeError(`window rules: ${msg}`);
  };
  if (!(r.pointsPerDecade >= 2 && Number.isFinite(r.pointsPerDecade))) {
    bad(`pointsPerDecade must be ≥ 2, got ${r.pointsPerDecade}`);
  }
  if (!Number.isInteger(r.smoothingPoints) || r.smoothingPoints < 3 || r.smoothingPoints % 2 === 0) {
    bad(`smoothingPoints must be an odd integer ≥ 3, got ${r.smoothingPoints}`);
  }
  if (!(r.crossoverAlpha > 0)) bad(`crossoverAlpha must be > 0, got ${r.crossoverAlpha}`);
  if (!(r.startFactor >= 1)) bad(`startFactor must be ≥ 1, got ${r.startFactor}`);
  if (!(r.alphaBand.length === 2 && r.alphaBand[0] < r.alphaBand[1])) {
    bad(`alphaBand must be [lo, hi] with lo < hi, got [${r.alphaBand}]`);
  }
  if (!(r.minRatio >= 1)) bad(`minRatio must be ≥ 1, got ${r.minRatio}`);
  if (!(r.mainCountFraction > 0 && r.mainCountFraction <= 1)) {
    bad(`mainCountFraction must be in (0, 1], got ${r.mainCountFraction}`);
  }
  return r;
}

/**
 * Smoothed local exponent of y(x) on a fixed log grid. The grid is built once from the abscissae; `compute`
 * fills `alpha` for a new ordinate without allocating.
 */
export class LocalSlope {
  /** Sample abscissae (copied). */
  readonly x: Float64Array;
  readonly G: number;
  readonly gridX: Float64Array;
  readonly gridLnX: Float64Array;
  readonly lnY: Float64Array;
  readonly alpha: Float64Array;
  readonly #lo: Int32Array;
  readonly #frac: Float64Array;
  readonly #half: number;
  /** After a failed `compute`: the sample abscissa and value where y was not positive. */
  badX = Number.NaN;
  badY = Number.NaN;

  /** `x` increasing with at least 2 positive values after its last non-positive one. */
  constructor(x: ArrayLike<number>, rules: Pick<WindowRules, "pointsPerDecade" | "smoothingPoints">) {
    this.x = Float64Array.from(x);
    const K = this.x.length;
    let a = 0;
    while (this.x[a] <= 0) a++;
    const xA = this.x[a];
    const xB = this.x[K - 1];
    const G = Math.max(rules.smoothingPoints, Math.ceil(rules.pointsPerDecade * Math.log10(xB / xA)) + 1);
    this.G = G;
    this.#half = (rules.smoothingPoints - 1) >> 1;
    this.gridX = new Float64Array(G);
    this.gridLnX = new Float64Array(G);
    this.#lo = new Int32Array(G);
    this.#frac = new Float64Array(G);
    this.lnY = new Float64Array(G);
    this.alpha = new Float64Array(G);
    const lnA = Math.log(xA);
    const lnB = Math.log(xB);
    let seg = a;
    for (let j = 0; j < G; j++) {
      const ln = j === G - 1 ? lnB : lnA + ((lnB - lnA) * j) / (G - 1);
      this.gridLnX[j] = ln;
      this.gridX[j] = j === G - 1 ? xB : Math.exp(ln);
      while (seg < K - 2 && Math.log(this.x[seg + 1]) < ln) seg++;
      const l0 = Math.log(this.x[seg]);
      const l1 = Math.log(this.x[seg + 1]);
      this.#lo[j] = seg;
      this.#frac[j] = Math.min(1, Math.max(0, (ln - l0) / (l1 - l0)));
    }
  }

  /** Fills `lnY` and `alpha` from y at the samples; false (with `badX`, `badY`) where y ≤ 0 or NaN is needed. */
  compute(y: ArrayLike<number>): boolean {
    const { G, gridLnX, lnY, alpha, x } = this;
    const lo = this.#lo, frac = this.#frac;
    for (let j = 0; j < G; j++) {
      const k = lo[j];
      const m0 = y[k];
      const m1 = y[k + 1];
      if (!(m0 > 0 && m1 > 0)) {
        this.badX = m0 > 0 ? x[k + 1] : x[k];
        this.badY = m0 > 0 ? m1 : m0;
        return false;
      }
      const l0 = Math.log(m0);
      lnY[j] = l0 + frac[j] * (Math.log(m1) - l0);
    }
    const h = this.#half;
    for (let j = 0; j < G; j++) {
      let a = j - h;
      let e = j + h;
      if (a < 0) a = 0;
      if (e > G - 1) e = G - 1;
      if (e - a < 2) {
        // Fewer than 3 points: extend to 3 on the available side.
        if (a === 0) e = Math.min(G - 1, 2);
        else a = Math.max(0, G - 3);
      }
      alpha[j] = lineSlope(gridLnX, lnY, a, e);
    }
    return true;
  }

  /** Index range [first, last] of the grid points in [x1, x2] (first > last when none). */
  gridRange(x1: number, x2: number): [number, number] {
    const lo = x1 * (1 - 1e-12), hi = x2 * (1 + 1e-12);
    let first = 0;
    while (first < this.G && this.gridX[first] < lo) first++;
    let last = this.G - 1;
    while (last >= 0 && this.gridX[last] > hi) last--;
    return [first, last];
  }

  /** Window-mean exponent: slope of ln y on ln x through grid points first..last (after `compute`). */
  meanExponent(first: number, last: number): number {
    return last - first >= 1 ? lineSlope(this.gridLnX, this.lnY, first, last) : Number.NaN;
  }
}

/** Least-squares slope of y on x through indices a..e (two-pass, centred). */
export function lineSlope(x: ArrayLike<number>, y: ArrayLike<number>, a: number, e: number): number {
  let sx = 0;
  let sy = 0;
  const n = e - a + 1;
  for (let q = a; q <= e; q++) {
    sx += x[q];
    sy += y[q];
  }
  const mx = sx / n;
  const my = sy / n;
  let sxy = 0;
  let sxx = 0;
  for (let q = a; q <= e; q++) {
    const dx = x[q] - mx;
    sxy += dx * (y[q] - my);
    sxx += dx * dx;
  }
  return sxy / sxx;
}

/** Unweighted least-squares line through (t_k, y_k), k = i1..i2 (two-pass, centred). */
export function lineFit(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  i1: number,
  i2: number,
): { slope: number; intercept: number } {
  const slope = lineSlope(t, y, i1, i2);
  let st = 0;
  let sy = 0;
  for (let k = i1; k <= i2; k++) {
    st += t[k];
    sy += y[k];
  }
  const n = i2 - i1 + 1;
  return { slope, intercept: sy / n - slope * (st / n) };
}

/** Why no window was chosen (`Ok` when one was). */
export enum WindowOutcome {
  Ok,
  MsdNotPositive,
  NoCrossover,
  StartBeyondData,
  WindowEmpty,
  TooFewSamples,
  RatioTooSmall,
  AlphaOutOfBand,
}

/** What ended the window at t₂. */
export type WindowEnd = "end of run" | "domain cut" | "main-cluster loss";

/** The chosen window (sample indices into t) or the outcome that prevented it. */
export interface WindowChoice {
  outcome: WindowOutcome;
  tauC: number;
  i1: number;
  i2: number;
  end: WindowEnd;
  /** Sample index where the main-cluster rule would have ended the window without the caller's cut; −1. */
  lossIndex: number;
}

/**
 * Chooses [t₁, t₂] from a computed local slope (see the module comment); writes into `out` (no allocation).
 * `main` holds N_main at the samples (or null for no main-cluster rule).
 */
export function chooseWindow(
  slope: LocalSlope,
  main: ArrayLike<number> | null,
  tCut: number,
  rules: WindowRules,
  out: WindowChoice,
): WindowChoice {
  const t = slope.x;
  const K = t.length;
  out.i1 = out.i2 = out.lossIndex = -1;
  out.tauC = Number.NaN;
  out.end = "end of run";
  let jc = -1;
  for (let j = 0; j < slope.G; j++) {
    if (slope.alpha[j] < rules.crossoverAlpha) {
      jc = j;
      break;
    }
  }
  if (jc < 0) {
    out.outcome = WindowOutcome.NoCrossover;
    return out;
  }
  out.tauC = slope.gridX[jc];
  const tStart = rules.startFactor * out.tauC * (1 - 1e-12);
  let i1 = 0;
  while (i1 < K && !(t[i1] >= tStart && t[i1] > 0)) i1++;
  if (i1 >= K) {
    out.outcome = WindowOutcome.StartBeyondData;
    return out;
  }
  let i2 = K - 1;
  if (tCut < t[i2]) {
    while (i2 >= 0 && t[i2] > tCut) i2--;
    out.end = "domain cut";
  }
  if (main) {
    const limit = rules.mainCountFraction * main[i1];
    for (let k = i1 + 1; k < K; k++) {
      if (main[k] < limit) {
        out.lossIndex = k - 1;
        if (k - 1 < i2) {
          i2 = k - 1;
          out.end = "main-cluster loss";
        }
        break;
      }
    }
  }
  out.i1 = i1;
  out.i2 = i2;
  if (i2 <= i1) out.outcome = WindowOutcome.WindowEmpty;
  else if (i2 - i1 + 1 < 3) out.outcome = WindowOutcome.TooFewSamples;
  else if (t[i2] / t[i1] < rules.minRatio * (1 - 1e-12)) out.outcome = WindowOutcome.RatioTooSmall;
  else out.outcome = WindowOutcome.Ok;
  return out;
}

/** A fresh, empty window choice (to be filled by `chooseWindow`). */
export function emptyWindowChoice(): WindowChoice {
  return {
    outcome: WindowOutcome.Ok,
    tauC: Number.NaN,
    i1: -1,
    i2: -1,
    end: "end of run",
    lossIndex: -1,
  };
}

/** Four significant digits, as the reasons print numbers. */
export function fmt(x: number): string {
  return Number.isFinite(x) ? Number(x.toPrecision(4)).toString() : String(x);
}
