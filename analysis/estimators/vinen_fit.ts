/**
 * A Vinen-equation fit that has to fit: D and the loss coefficient χ₂ of ∂L/∂t = D∇²L − χ₂(κ/2π)L² fitted
 * together to ensemble radial profiles, with model-based weights, a goodness-of-fit test that can reject the
 * model, a check of the model's total loss against the observed one, and BCa bootstrap intervals.
 *
 * Method:
 * - Data: ensemble-mean profiles ȳ_kj over R realisations on bins of measure A_k (annulus area in 2D, shell
 *   volume in 3D; `ProfileEnsemble`), at times t₁ = t_0 < … < t_J. The initial condition is the mean profile at
 *   t₁ (as in `vinen.ts`: interpolated onto the solver grid, rescaled bin by bin to the data); the model m_kj
 *   is the solver's bin average at the later times.
 * - Noise model: counts are Poisson-like. The total count of bin k at t_j over the ensemble is n = R·A_k·ȳ with
 *   variance φ·R·A_k·m (quasi-Poisson), the dispersion φ measured once from the realisation scatter pooled over
 *   all terms, φ̂ = Σ A_k² s²_kj / Σ A_k ȳ_kj (φ = 1 for Poisson counts; it absorbs sub-Poisson vortex counts and
 *   the length per "count" of 3D line density). Weights therefore come from the model, not from noisy
 *   per-bin scatter.
 * - Terms: (k, j ≥ 1) with an expected ensemble count R·A_k·ȳ/φ̂ ≥ 5 (the usual validity of χ² tests; common
 *   practice: W.G. Cochran, Ann. Math. Statist. 23, 315 (1952)).
 * - Fit: minimise the quasi-Poisson deviance Σ (R A_k/φ̂)·2[ȳ ln(ȳ/m) − (ȳ − m)] over ln D and χ₂ ≥ 0
 *   (loss `free`), plus ((χ₂ − χ₂⁰)/σ⁰)² for a decay study's χ₂⁰ ± σ⁰ (loss `prior`), or over ln D alone
 *   (loss `fixed`), by Levenberg–Marquardt on deviance residuals with a forward-difference Jacobian.
 * - Goodness: Pearson X² = Σ (R A_k/φ̂)(ȳ − m)²/m over the terms, reduced χ² = X²/(terms − fitted parameters)
 *   and its p-value; reduced χ² > 2 (`rejectAbove`) rejects the fit: it gives no D as an answer.
 * - Loss check: the fraction of the content within the fitted bins gone between t₁ and t_J, observed (with its
 *   bootstrap interval) against the model's; outside the interval → a stated mismatch.
 * - Intervals: bootstrap over realisations (each replicate recomputes means, φ̂, terms, initial condition and
 *   refits from the full-sample optimum), BCa with the leave-one-out jackknife where defined, else percentile.
 * - Resolution: Δr = h/2 (h the bin width), Δt = min(0.05 R²(t₁)/D₀, 2Δr²/D₀, span/50); the fit is repeated
 *   with Δr and Δt halved and the relative change of D is stored (docs/methods.md §5.2 asks < 0.5 %).
 *
 * References: W.F. Vinen, Proc. R. Soc. A 242, 493 (1957), doi:10.1098/rspa.1957.0191; P. McCullagh,
 * J.A. Nelder, Generalized Linear Models, 2nd ed. (Chapman & Hall 1989), doi:10.1007/978-1-4899-3242-6, §2.3
 * and §6.2 (deviance, quasi-likelihood, dispersion); P.R. Bevington, D.K. Robinson, Data Reduction and Error
 * Analysis for the Physical Sciences, 3rd ed. (2003), §11.1 (reduced χ²); D.W. Marquardt, J. SIAM 11, 431
 * (1963), doi:10.1137/0111030; B. Efron, J. Am. Stat. Assoc. 82, 171 (1987), doi:10.1080/01621459.1987.10478410.
 *
 * @example
 * ```ts
 * import { fitVinen } from "./vinen_fit.ts";
 * const fit = fitVinen(profiles, { loss: { mode: "prior", chi2: 0.1, sigma: 0.01 }, seed: "s/vinen" });
 * if (fit.status === "ok") console.log(fit.D, fit.ci.D, fit.reducedChi2);
 * else console.log(fit.reasons);
 * ```
 */
import {
  type EstimatorCI,
  estimatorCi,
  type Interval,
  percentileInterval,
  resampleIndices,
} from "./bootstrap.ts";
import { chiSquareCdf } from "./_jstat.ts";
import { streamFromSeed } from "./seed.ts";
import { type ProfileEnsemble, VinenSolver } from "./vinen.ts";

/** How the loss term enters the fit. */
export type VinenLoss =
  | { readonly mode: "free" }
  | { readonly mode: "prior"; readonly chi2: number; readonly sigma: number }
  | { readonly mode: "fixed"; readonly chi2: number };

export interface VinenFitOptions {
  readonly loss: VinenLoss;
  /** κ (default 1). */
  readonly kappa?: number;
  /** Solver cells per data bin (default 2). */
  readonly refine?: number;
  /** r_max = ⌈domainFactor·K⌉ bins (default 4). */
  readonly domainFactor?: number;
  /** Solver time step (default: see the module comment). */
  readonly dt?: number;
  /** Minimum expected ensemble count of a term (default 5). */
  readonly minCount?: number;
  /** Reduced χ² above which the fit is rejected (default 2). */
  readonly rejectAbove?: number;
  /** Bootstrap replicates (default 200; 0 = none). */
  readonly replicates?: number;
  readonly seed?: string;
  readonly level?: number;
  /** BCa intervals (default true: one refit per realisation). */
  readonly bca?: boolean;
  /** Refit with Δr and Δt halved and store the change of D (default true). */
  readonly convergenceCheck?: boolean;
}

export interface VinenFit {
  /** ok; rejected (reduced χ² too large); failed (no usable terms, or the optimum ran away). */
  readonly status: "ok" | "rejected" | "failed";
  /** Why the fit is rejected or failed, and what else does not fit (loss mismatch, resolution), plainly. */
  readonly reasons: readonly string[];
  readonly warnings: readonly string[];
  readonly loss: VinenLoss;
  readonly D: number;
  readonly chi2: number;
  readonly deviance: number;
  readonly pearson: number;
  readonly terms: number;
  readonly parameters: number;
  readonly reducedChi2: number;
  readonly pValue: number;
  readonly dispersion: number;
  /** Pull of the fitted χ₂ against the prior, (χ₂ − χ₂⁰)/σ⁰ (prior mode only). */
  readonly priorPull: number | null;
  /** Pearson residuals at index (j − 1)·K + k; NaN where not a term. */
  readonly residuals: Float64Array;
  /** Model bin averages at index j·K + k (j = 0: the initial condition). */
  readonly model: Float64Array;
  /** Ensemble-mean data at index j·K + k. */
  readonly mean: Float64Array;
  /** Content within the fitted bins, observed and model, per time. */
  readonly totals: {
    readonly t: readonly number[];
    readonly observed: readonly number[];
    readonly model: readonly number[];
  };
  readonly lossCheck: {
    readonly observed: number;
    readonly observedInterval: Interval | null;
    readonly model: number;
    readonly consistent: boolean | null;
  };
  readonly grid: { readonly cells: number; readonly dr: number; readonly rMax: number; readonly dt: number };
  readonly ci: { readonly D: EstimatorCI | null; readonly chi2: EstimatorCI | null };
  /** Bootstrap correlation of D and χ₂ (free and prior modes). */
  readonly correlation: number | null;
  readonly bootstrap: { readonly replicates: number; readonly seed: string; readonly failed: number } | null;
  /** D refitted with Δr and Δt halved, and the relative change. */
  readonly convergence: { readonly D: number; readonly relativeChange: number } | null;
  readonly evaluations: number;
}

interface Solution {
  u: number[];
  cost: number;
  evaluations: number;
  converged: boolean;
}

/** The objective, its residuals and the data moments, with all work arrays preallocated. */
class Problem {
  readonly solver: VinenSolver;
  readonly K: number;
  readonly J: number;
  readonly refine: number;
  readonly t: Float64Array;
  readonly mean: Float64Array;
  readonly scatter: Float64Array;
  readonly weight: Float64Array;
  readonly term: Uint8Array;
  readonly area: Float64Array;
  readonly model: Float64Array;
  readonly initial: Float64Array;
  readonly work: Float64Array;
  readonly kappa: number;
  readonly minCount: number;
  readonly nParams: number;
  readonly residual: Float64Array;
  dt = 0;
  D0 = 0;
  chi20 = 0;
  phi = 1;
  terms = 0;
  R = 0;
  evaluations = 0;
  readonly #dtFixed: number | undefined;

  constructor(readonly data: ProfileEnsemble, readonly loss: VinenLoss, o: VinenFitOptions, refine: number) {
    const { dimension: d, binWidth: h, bins: K, t } = data;
    const J = t.length;
    const factor = o.domainFactor ?? 4;
    const binsTotal = Math.ceil(factor * K);
    this.solver = new VinenSolver({ dimension: d, rMax: binsTotal * h, cells: binsTotal * refine });
    this.K = K;
    this.J = J;
    this.refine = refine;
    this.t = Float64Array.from(t);
    this.mean = new Float64Array(J * K);
    this.scatter = new Float64Array(J * K);
    this.weight = new Float64Array(J * K);
    this.term = new Uint8Array(J * K);
    this.model = new Float64Array(J * K);
    this.area = new Float64Array(K);
    const solid = d === 2 ? Math.PI : (4 * Math.PI) / 3;
    for (let k = 0; k < K; k++) this.area[k] = solid * (((k + 1) * h) ** d - (k * h) ** d);
    this.initial = new Float64Array(this.solver.cells);
    this.work = new Float64Array(this.solver.cells);
    this.kappa = o.kappa ?? 1;
    this.minCount = o.minCount ?? 5;
    this.nParams = loss.mode === "fixed" ? 1 : 2;
    this.residual = new Float64Array(J * K + 1);
    this.#dtFixed = o.dt;
  }

  /** Means, scatter, dispersion, terms, initial condition and default step for realisations `idx`. */
  moments(idx: Int32Array): void {
    const { K, J, mean, scatter, area } = this;
    const P = this.data.profiles;
    const n = idx.length;
    this.R = n;
    for (let q = 0; q < J * K; q++) {
      let m = 0;
      for (let s = 0; s < n; s++) m += P[idx[s]][q];
      m /= n;
      let ss = 0;
      for (let s = 0; s < n; s++) ss += (P[idx[s]][q] - m) ** 2;
      mean[q] = m;
      scatter[q] = n > 1 ? ss / (n - 1) : 0;
    }
    let num = 0, den = 0;
    for (let j = 1; j < J; j++) {
      for (let k = 0; k < K; k++) {
        num += area[k] * area[k] * scatter[j * K + k];
        den += area[k] * mean[j * K + k];
      }
    }
    this.phi = num > 0 && den > 0 ? num / den : 1;
    let terms = 0;
    for (let j = 0; j < J; j++) {
      for (let k = 0; k < K; k++) {
        const q = j * K + k;
        const expected = (n * area[k] * mean[q]) / this.phi;
        const use = j >= 1 && expected >= this.minCount;
        this.term[q] = use ? 1 : 0;
        this.weight[q] = (n * area[k]) / this.phi;
        if (use) terms++;
      }
    }
    this.terms = terms;
    initialCondition(this.solver, this.refine, K, mean, this.data.binWidth, this.initial);
    // Starting values: D₀ from the growth of R² of the mean profiles; χ₂⁰ from the content lost.
    const r2First = meanSquareRadius(this.data, mean, 0);
    const r2Last = meanSquareRadius(this.data, mean, J - 1);
    const span = this.t[J - 1] - this.t[0];
    const dim = this.data.dimension;
    const h = this.data.binWidth;
    const growth = (r2Last - r2First) / (2 * dim * span);
    this.D0 = growth > 0 ? growth : (h * h) / span;
    let lost = 0, sq = 0;
    for (let k = 0; k < K; k++) lost += area[k] * (mean[k] - mean[(J - 1) * K + k]);
    for (let j = 1; j < J; j++) {
      let s2 = 0;
      for (let k = 0; k < K; k++) s2 += area[k] * mean[j * K + k] ** 2;
      sq += s2 * (this.t[j] - this.t[j - 1]);
    }
    this.chi20 = lost > 0 && sq > 0 ? (2 * Math.PI * lost) / (sq * this.kappa) : 0;
    if (this.dt === 0) {
      const dr = this.solver.dr;
      this.dt = this.#dtFixed ??
        Math.min((0.05 * Math.max(r2First, h * h)) / this.D0, (2 * dr * dr) / this.D0, span / 50);
    }
  }

  chi2Of(u: readonly number[]): number {
    return this.loss.mode === "fixed" ? this.loss.chi2 : Math.max(0, u[1]);
  }

  /** Model bin averages for parameters u into `model`; one PDE solve. */
  solve(u: readonly number[]): void {
    const { K, J, refine, solver, work, model } = this;
    this.evaluations++;
    work.set(this.initial);
    const params = { D: Math.exp(u[0]), chi2: this.chi2Of(u), kappa: this.kappa };
    binAverages(solver, refine, K, work, model, 0);
    for (let j = 1; j < J; j++) {
      solver.advance(work, this.t[j] - this.t[j - 1], params, this.dt);
      binAverages(solver, refine, K, work, model, j * K);
    }
  }

  /** Deviance residuals (+ the prior's) into `residual`; returns the cost Σ r². */
  residuals(u: readonly number[]): number {
    this.solve(u);
    const { K, J, mean, model, weight, term, residual } = this;
    let cost = 0;
    let r = 0;
    for (let q = K; q < J * K; q++) {
      if (term[q] === 0) continue;
      const y = mean[q];
      const m = Math.max(model[q], 1e-300);
      const dev = 2 * weight[q] * ((y > 0 ? y * Math.log(y / m) : 0) - (y - m));
      const v = Math.sign(y - m) * Math.sqrt(Math.max(0, dev));
      residual[r++] = v;
      cost += v * v;
    }
    if (this.loss.mode === "prior") {
      const v = (this.chi2Of(u) - this.loss.chi2) / this.loss.sigma;
      residual[r++] = v;
      cost += v * v;
    }
    return cost;
  }

  get count(): number {
    return this.terms + (this.loss.mode === "prior" ? 1 : 0);
  }

  /** Pearson X² of the current model over the terms. */
  pearson(): number {
    const { K, J, mean, model, weight, term } = this;
    let x2 = 0;
    for (let q = K; q < J * K; q++) {
      if (term[q] === 0) continue;
      const m = model[q];
      x2 += m > 0 ? (weight[q] * (mean[q] - m) ** 2) / m : Number.POSITIVE_INFINITY;
    }
    return x2;
  }

  /**
   * Levenberg–Marquardt from `start` (1 or 2 parameters); stops when a step changes the cost by less than
   * `tol` (relative) or the parameters by less than `tol`·max(1, |u|).
   */
  minimise(start: readonly number[], tol = 1e-10): Solution {
    const p = this.nParams;
    const n = this.count;
    let u = start.slice(0, p);
    let cost = this.residuals(u);
    const r0 = new Float64Array(n);
    const jac = Array.from({ length: p }, () => new Float64Array(n));
    let lambda = 1e-3;
    let converged = false;
    const before = this.evaluations;
    for (let it = 0; it < 60; it++) {
      r0.set(this.residual.subarray(0, n));
      for (let a = 0; a < p; a++) {
        const step = a === 0 ? 1e-4 : 1e-4 * Math.max(1e-3, Math.abs(u[1]));
        const v = u.slice();
        v[a] += step;
        this.residuals(v);
        for (let i = 0; i < n; i++) jac[a][i] = (this.residual[i] - r0[i]) / step;
      }
      // Normal equations JᵀJ δ = −Jᵀr (p ≤ 2).
      const g = new Float64Array(p);
      const H = Array.from({ length: p }, () => new Float64Array(p));
      for (let a = 0; a < p; a++) {
        for (let i = 0; i < n; i++) g[a] += jac[a][i] * r0[i];
        for (let b = 0; b < p; b++) for (let i = 0; i < n; i++) H[a][b] += jac[a][i] * jac[b][i];
      }
      let improved = false;
      for (let tries = 0; tries < 12; tries++) {
        const A = H.map((row, a) => row.map((x, b) => (a === b ? x * (1 + lambda) + 1e-300 : x)));
        const delta = solveSmall(A, Array.from(g, (x) => -x));
        const v = u.map((x, a) => x + delta[a]);
        if (p === 2) v[1] = Math.max(0, v[1]);
        const c = this.residuals(v);
        if (c < cost) {
          const small = delta.every((dlt, a) =>
            Math.abs(dlt) < Math.max(1e-8, tol) * Math.max(1, Math.abs(u[a]))
          );
          const rel = (cost - c) / Math.max(cost, 1e-300);
          u = v;
          cost = c;
          lambda = Math.max(1e-9, lambda / 5);
          improved = true;
          if (small || rel < tol) converged = true;
          break;
        }
        lambda *= 10;
      }
      if (!improved) {
        converged = true; // no downhill step: at the minimum within rounding
        break;
      }
      if (converged) break;
    }
    this.residuals(u); // leave the model at the optimum
    return { u, cost, evaluations: this.evaluations - before, converged };
  }

  /** Content within the bins per time for data and model. */
  totals(): { observed: number[]; model: number[] } {
    const { K, J, mean, model, area } = this;
    const observed: number[] = [], mod: number[] = [];
    for (let j = 0; j < J; j++) {
      let a = 0, b = 0;
      for (let k = 0; k < K; k++) {
        a += area[k] * mean[j * K + k];
        b += area[k] * model[j * K + k];
      }
      observed.push(a);
      mod.push(b);
    }
    return { observed, model: mod };
  }
}

function solveSmall(A: Float64Array[], b: number[]): number[] {
  if (A.length === 1) return [b[0] / A[0][0]];
  const det = A[0][0] * A[1][1] - A[0][1] * A[1][0];
  return [(b[0] * A[1][1] - A[0][1] * b[1]) / det, (A[0][0] * b[1] - A[1][0] * b[0]) / det];
}

function binAverages(
  solver: VinenSolver,
  refine: number,
  K: number,
  L: Float64Array,
  out: Float64Array,
  offset: number,
): void {
  for (let k = 0; k < K; k++) {
    let num = 0;
    let den = 0;
    for (let c = k * refine; c < (k + 1) * refine; c++) {
      num += L[c] * solver.volume[c];
      den += solver.volume[c];
    }
    out[offset + k] = num / den;
  }
}

function meanSquareRadius(data: ProfileEnsemble, mean: Float64Array, j: number): number {
  const K = data.bins, h = data.binWidth, d = data.dimension;
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
 * Initial condition from the t₁ bin means: interpolation between bin centres, geometric where both neighbours
 * are positive (exact for exponential tails), linear otherwise; flat inside the first half bin; beyond the last
 * centre a geometric continuation of the last two bins when they decrease, else a linear ramp to 0 over one
 * bin; then scaled bin by bin so that its bin averages equal the data.
 */
function initialCondition(
  solver: VinenSolver,
  refine: number,
  K: number,
  mean: Float64Array,
  h: number,
  initial: Float64Array,
): void {
  const M = solver.cells;
  const last = mean[K - 1];
  const prev = mean[K - 2];
  const decay = last > 0 && prev > last ? last / prev : 0;
  for (let c = 0; c < M; c++) {
    const x = solver.r[c] / h - 0.5;
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
  const avg = new Float64Array(K);
  binAverages(solver, refine, K, initial, avg, 0);
  for (let k = 0; k < K; k++) {
    const s = avg[k] > 0 ? mean[k] / avg[k] : 0;
    for (let c = k * refine; c < (k + 1) * refine; c++) initial[c] *= s;
  }
}

function validate(data: ProfileEnsemble, o: VinenFitOptions): void {
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
  profiles.forEach((p, i) => {
    if (p.length !== J * K) {
      throw new RangeError(`profiles[${i}] has ${p.length} values, expected times × bins = ${J * K}`);
    }
    for (let q = 0; q < p.length; q++) {
      if (!(p[q] >= 0 && Number.isFinite(p[q]))) {
        throw new RangeError(`profiles[${i}][${q}] must be finite and ≥ 0, got ${p[q]}`);
      }
    }
  });
  const loss = o.loss;
  if (loss.mode !== "free") {
    if (!(loss.chi2 >= 0 && Number.isFinite(loss.chi2))) {
      throw new RangeError(`chi2 must be finite and ≥ 0, got ${loss.chi2}`);
    }
  }
  if (loss.mode === "prior" && !(loss.sigma > 0 && Number.isFinite(loss.sigma))) {
    throw new RangeError(`the prior's sigma must be positive, got ${loss.sigma}`);
  }
  const refine = o.refine ?? 2;
  if (!Number.isInteger(refine) || refine < 1) {
    throw new RangeError(`refine must be an integer ≥ 1, got ${refine}`);
  }
  if (!((o.domainFactor ?? 4) >= 1)) throw new RangeError(`domainFactor must be ≥ 1, got ${o.domainFactor}`);
  if (o.dt !== undefined && !(o.dt > 0)) throw new RangeError(`dt must be > 0, got ${o.dt}`);
  const B = o.replicates ?? 200;
  if (!Number.isInteger(B) || B < 0 || B === 1) {
    throw new RangeError(`replicates must be 0 or an integer ≥ 2, got ${B}`);
  }
  if (B > 0 && !o.seed) throw new RangeError("a bootstrap seed is required when replicates > 0");
}

const fmt = (x: number) => (Number.isFinite(x) ? Number(x.toPrecision(3)).toString() : String(x));

/** Fits D and the loss term to ensemble radial profiles (see the module comment). */
export function fitVinen(data: ProfileEnsemble, options: VinenFitOptions): VinenFit {
  validate(data, options);
  const loss = options.loss;
  const level = options.level ?? 0.95;
  const refine = options.refine ?? 2;
  const R = data.profiles.length;
  const all = Int32Array.from({ length: R }, (_, i) => i);
  const prob = new Problem(data, loss, options, refine);
  prob.moments(all);
  const reasons: string[] = [];
  const warnings: string[] = [];
  const startChi2 = loss.mode === "free" ? prob.chi20 : loss.chi2;
  const start = [Math.log(prob.D0), startChi2];
  const best = prob.terms >= prob.nParams + 1 ? prob.minimise(start) : null;
  const failed = (why: string): VinenFit => ({
    status: "failed",
    reasons: [why],
    warnings,
    loss,
    D: Number.NaN,
    chi2: Number.NaN,
    deviance: Number.NaN,
    pearson: Number.NaN,
    terms: prob.terms,
    parameters: prob.nParams,
    reducedChi2: Number.NaN,
    pValue: Number.NaN,
    dispersion: prob.phi,
    priorPull: null,
    residuals: new Float64Array((data.t.length - 1) * data.bins).fill(Number.NaN),
    model: new Float64Array(prob.model.length).fill(Number.NaN),
    mean: prob.mean.slice(),
    totals: { t: Array.from(prob.t), observed: prob.totals().observed, model: [] },
    lossCheck: { observed: Number.NaN, observedInterval: null, model: Number.NaN, consistent: null },
    grid: { cells: prob.solver.cells, dr: prob.solver.dr, rMax: prob.solver.rMax, dt: prob.dt },
    ci: { D: null, chi2: null },
    correlation: null,
    bootstrap: null,
    convergence: null,
    evaluations: prob.evaluations,
  });
  if (best === null) {
    return failed(
      `only ${prob.terms} (bin, time) terms have an expected count ≥ ${prob.minCount}: too few to fit`,
    );
  }
  const D = Math.exp(best.u[0]);
  const chi2 = prob.chi2Of(best.u);
  if (!(D > 0 && Number.isFinite(D)) || D > 1e4 * prob.D0 || D < 1e-4 * prob.D0) {
    return failed(`the fit ran away (D = ${fmt(D)} against a start of ${fmt(prob.D0)})`);
  }
  const pearson = prob.pearson();
  const dof = prob.terms - prob.nParams;
  const reducedChi2 = pearson / dof;
  const pValue = dof > 0 && Number.isFinite(pearson) ? 1 - chiSquareCdf(pearson, dof) : Number.NaN;
  const model = prob.model.slice();
  const K = data.bins, J = data.t.length;
  const residuals = new Float64Array((J - 1) * K).fill(Number.NaN);
  for (let q = K; q < J * K; q++) {
    if (prob.term[q] === 1 && model[q] > 0) {
      residuals[q - K] = (prob.mean[q] - model[q]) * Math.sqrt(prob.weight[q] / model[q]);
    }
  }
  const totals = prob.totals();
  const lostObserved = 1 - totals.observed[J - 1] / totals.observed[0];
  const lostModel = 1 - totals.model[J - 1] / totals.model[0];
  const mean = prob.mean.slice();
  const deviance = best.cost - (loss.mode === "prior" ? ((chi2 - loss.chi2) / loss.sigma) ** 2 : 0);

  // Bootstrap and jackknife, warm-started from the optimum.
  const B = R >= 2 ? (options.replicates ?? 200) : 0;
  let ci: VinenFit["ci"] = { D: null, chi2: null };
  let boot: VinenFit["bootstrap"] = null;
  let correlation: number | null = null;
  let lossInterval: Interval | null = null;
  if (B > 0) {
    const rng = streamFromSeed(options.seed!);
    const idx = new Int32Array(R);
    const repD = new Float64Array(B), repC = new Float64Array(B), repLoss = new Float64Array(B);
    let nFailed = 0;
    const refit = (ix: Int32Array): [number, number, number] => {
      prob.moments(ix);
      const tot = prob.totals();
      const lossObs = 1 - tot.observed[J - 1] / tot.observed[0];
      if (prob.terms < prob.nParams + 1) return [Number.NaN, Number.NaN, lossObs];
      // Replicates start at the optimum and stop at 1e-6 (relative), far below their spread.
      const s = prob.minimise(best.u, 1e-6);
      const d = Math.exp(s.u[0]);
      if (!(d > 1e-4 * prob.D0 && d < 1e4 * prob.D0)) return [Number.NaN, Number.NaN, lossObs];
      return [d, prob.chi2Of(s.u), lossObs];
    };
    for (let b = 0; b < B; b++) {
      [repD[b], repC[b], repLoss[b]] = refit(resampleIndices(rng, idx));
      if (Number.isNaN(repD[b])) nFailed++;
    }
    let jackD: Float64Array | null = null, jackC: Float64Array | null = null;
    if (options.bca !== false && R >= 3) {
      jackD = new Float64Array(R);
      jackC = new Float64Array(R);
      const jidx = new Int32Array(R - 1);
      for (let i = 0; i < R; i++) {
        let m = 0;
        for (let j = 0; j < R; j++) if (j !== i) jidx[m++] = j;
        [jackD[i], jackC[i]] = refit(jidx);
      }
    }
    ci = {
      D: estimatorCi(repD, D, jackD, level),
      chi2: loss.mode === "fixed" ? null : estimatorCi(repC, chi2, jackC, level),
    };
    correlation = loss.mode === "fixed" ? null : pearsonCorrelation(repD, repC);
    lossInterval = percentileInterval(repLoss, level);
    boot = { replicates: B, seed: options.seed!, failed: nFailed };
    prob.moments(all);
    if (nFailed > 0.1 * B) {
      warnings.push(`${Math.round((100 * nFailed) / B)} % of the bootstrap refits failed and are left out`);
    }
  }
  const rejectAbove = options.rejectAbove ?? 2;
  let status: VinenFit["status"] = "ok";
  if (!(reducedChi2 <= rejectAbove)) {
    status = "rejected";
    reasons.push(
      `the model does not fit the profiles: reduced χ² = ${fmt(reducedChi2)} over ${prob.terms} terms ` +
        `(p = ${pValue < 1e-4 ? pValue.toExponential(1) : fmt(pValue)}; rejected above ${rejectAbove})`,
    );
  }
  const consistent = lossInterval ? lostModel >= lossInterval.lower && lostModel <= lossInterval.upper : null;
  if (consistent === false) {
    reasons.push(
      `the model loses ${fmt(100 * lostModel)} % of the content of the fitted bins between t = ${
        fmt(data.t[0])
      } ` +
        `and ${fmt(data.t[J - 1])}; the profiles lose ${fmt(100 * lostObserved)} % [${
          fmt(100 * lossInterval!.lower)
        }, ${fmt(100 * lossInterval!.upper)}]`,
    );
  }
  const priorPull = loss.mode === "prior" ? (chi2 - loss.chi2) / loss.sigma : null;
  if (priorPull !== null && Math.abs(priorPull) > 2) {
    reasons.push(
      `the fitted χ₂ = ${fmt(chi2)} is ${
        fmt(Math.abs(priorPull))
      } standard deviations from the decay study's ` +
        `${
          fmt((loss as { chi2: number }).chi2)
        }: the losses of the spreading cluster differ from the homogeneous decay`,
    );
  }
  let convergence: VinenFit["convergence"] = null;
  if (options.convergenceCheck !== false) {
    const fine = new Problem(data, loss, { ...options, dt: prob.dt / 2 }, 2 * refine);
    fine.moments(all);
    const s = fine.minimise(best.u);
    const Df = Math.exp(s.u[0]);
    convergence = { D: Df, relativeChange: (Df - D) / D };
    if (Math.abs(convergence.relativeChange) > 0.005) {
      warnings.push(
        `halving Δr and Δt changes D by ${
          fmt(100 * convergence.relativeChange)
        } % (docs/methods.md §5.2 asks < 0.5 %)`,
      );
    }
    prob.evaluations += fine.evaluations;
  }
  return {
    status,
    reasons,
    warnings,
    loss,
    D,
    chi2,
    deviance,
    pearson,
    terms: prob.terms,
    parameters: prob.nParams,
    reducedChi2,
    pValue,
    dispersion: prob.phi,
    priorPull,
    residuals,
    model,
    mean,
    totals: { t: Array.from(data.t), observed: totals.observed, model: totals.model },
    lossCheck: { observed: lostObserved, observedInterval: lossInterval, model: lostModel, consistent },
    grid: { cells: prob.solver.cells, dr: prob.solver.dr, rMax: prob.solver.rMax, dt: prob.dt },
    ci,
    correlation,
    bootstrap: boot,
    convergence,
    evaluations: prob.evaluations,
  };
}

function pearsonCorrelation(a: Float64Array, b: Float64Array): number | null {
  let n = 0, ma = 0, mb = 0;
  for (let i = 0; i < a.length; i++) {
    if (Number.isFinite(a[i]) && Number.isFinite(b[i])) {
      n++;
      ma += a[i];
      mb += b[i];
    }
  }
  if (n < 3) return null;
  ma /= n;
  mb /= n;
  let sab = 0, saa = 0, sbb = 0;
  for (let i = 0; i < a.length; i++) {
    if (!(Number.isFinite(a[i]) && Number.isFinite(b[i]))) continue;
    sab += (a[i] - ma) * (b[i] - mb);
    saa += (a[i] - ma) ** 2;
    sbb += (b[i] - mb) ** 2;
  }
  return saa > 0 && sbb > 0 ? sab / Math.sqrt(saa * sbb) : null;
}
