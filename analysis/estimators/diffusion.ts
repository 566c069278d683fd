/**
 * Loss-aware estimates of the diffusion coefficient of a spreading cluster, and the evidence that decides
 * whether there is a diffusive regime at all (docs/methods.md §5.1, §5.3).
 *
 * Three estimators, each a pairwise relative-displacement MSD (`tracks.ts`: centre drift cancels, divided by
 * the pair count so no (1 − 1/N_eff) bias; N_eff = vortices in 2D, loops in 3D):
 * - origin: the survivor average from t₀ (objects main at t₀ and at t), fitted as MSD = 2dDt + b over the window;
 * - cohort: the objects in the main cluster throughout the window, displacements from t₁, fitted over
 *   s = t − t₁ ∈ [3τ_c, t₂ − t₁] (the cohort's own ballistic start is left out);
 * - lag: increments ⟨|Δr|²⟩ over lag τ from every start time s ∈ [t₁, t₂ − τ] (objects main at both ends),
 *   fitted over τ ∈ [3τ_c, ½(t₂ − t₁)]; D(τ) = MSD(τ)/(2dτ) is flat in τ for diffusion.
 * D_R = (1/2d) dR²/dt of the cohort's spread over [t₁, t₂] (same objects and weighting as the cohort D). The
 * answer is the cohort D: a fixed membership over the window, so leaving the cluster cannot shape it.
 *
 * The rule (all of it must hold for "diffusive regime"):
 * 1. Window from the survivor average of the full sample: τ_c = first t with α < 1.2, t₁ = first sample
 *    ≥ 3τ_c, t₂ = the earliest of the end, the domain cut and the last sample with N_main ≥ 50 % of N_main(t₁);
 *    t₂/t₁ ≥ 5 and ≥ 3 samples.
 * 2. For each of the three estimators over its range: the window-mean exponent ᾱ (least-squares slope of
 *    ln MSD on ln x through the log-grid points in the range) lies in [0.85, 1.15], and at every grid point of
 *    the range the bootstrap percentile interval of the local exponent α overlaps [0.85, 1.15] (the band is
 *    judged against the noise of α, not point by point).
 * Otherwise the status is "no-diffusive-regime" with every failing check stated in plain words.
 *
 * Intervals: the window is chosen once on the full sample and every bootstrap replicate (realisations drawn
 * with replacement) refits with the window fixed; BCa from the leave-one-out jackknife where defined, else
 * percentile. The window's support is measured separately: the share of replicates in which step 1 finds a
 * window and the three window-mean exponents (recomputed with that replicate's window) lie in the band; below
 * 90 % the result carries a warning.
 *
 * When the main cluster loses half of its objects too early for a window (finite temperature: dipoles
 * annihilate, line is lost), the lag estimator still measures D(τ) from objects present at both ends of each
 * lag over [t₁, end]; that loss-limited estimate is returned with its own flatness evidence.
 *
 * References: docs/methods.md §5.1 and §5.3; A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806;
 * H. Qian, M.P. Sheetz, E.L. Elson, Biophys. J. 60, 910 (1991), doi:10.1016/S0006-3495(91)82125-7;
 * X. Michalet, Phys. Rev. E 82, 041914 (2010), doi:10.1103/PhysRevE.82.041914; B. Efron, R.J. Tibshirani, An
 * Introduction to the Bootstrap (1993), doi:10.1201/9780429246593; B. Efron, J. Am. Stat. Assoc. 82, 171
 * (1987), doi:10.1080/01621459.1987.10478410.
 *
 * @example
 * ```ts
 * import { diffusionEvidence } from "./diffusion.ts";
 * import { prepareTracks } from "./tracks.ts";
 * const prepared = prepareTracks(ensemble); // a TrackEnsemble of stored or synthetic tracks
 * const ev = diffusionEvidence(prepared, { seed: "study/point/diffusion", replicates: 2000 });
 * if (ev.status === "ok") console.log(ev.answer!.D, ev.answer!.lower, ev.answer!.upper);
 * else console.log(ev.reasons.join("; "));
 * // Any subset of realisations (a pilot, an audit's half-sample) reuses the prepared sums:
 * const half = diffusionEvidence(prepared, { seed: "s/half", realisations: [0, 2, 4, 6] });
 * ```
 */
import {
  type EstimatorCI,
  estimatorCi,
  fewRealisationsWarning,
  type Interval,
  MIN_REALISATIONS,
  percentileInterval,
  pickInterval,
  resampleIndices,
} from "./bootstrap.ts";
import { streamFromSeed } from "./seed.ts";
import type { CohortSums, PreparedTracks } from "./tracks.ts";
import {
  chooseWindow,
  DEFAULT_WINDOW_RULES,
  emptyWindowChoice,
  fmt,
  lineFit,
  LocalSlope,
  resolveRules,
  type WindowChoice,
  type WindowEnd,
  WindowOutcome,
  type WindowRules,
} from "./window.ts";

export interface RegimeRules extends WindowRules {
  /** The lag estimator's longest lag is this fraction of t₂ − t₁ (default 0.5). */
  readonly lagFraction: number;
  /** Warn when more than this share of bootstrap replicates find no diffusive window (default 0.1). */
  readonly supportWarning: number;
}

export const DEFAULT_REGIME_RULES: RegimeRules = Object.freeze({
  ...DEFAULT_WINDOW_RULES,
  lagFraction: 0.5,
  supportWarning: 0.1,
});

export interface DiffusionOptions {
  /** Seed string of the bootstrap stream (recorded with the intervals). */
  readonly seed: string;
  /** Bootstrap replicates B (default 2000; 0: no intervals and the band is judged without noise). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** Latest allowed t₂ (the cluster reaches 1/4 of the domain), in the tracks' time unit. */
  readonly tCut?: number;
  readonly rules?: Partial<RegimeRules>;
  /** Realisations to use (indices into the prepared ensemble; default all). */
  readonly realisations?: ArrayLike<number>;
  /** BCa intervals (default true; needs one leave-one-out refit per realisation). */
  readonly bca?: boolean;
}

export type EstimatorName = "origin" | "cohort" | "lag";
type SpecName = EstimatorName | "spread";

/** The exponent evidence of one estimator over its range. */
export interface ExponentEvidence {
  /** Window-mean exponent ᾱ and its bootstrap percentile interval. */
  readonly value: number;
  readonly interval: Interval | null;
  /** Judged range of the abscissa (t, s = t − t₁ or the lag τ). */
  readonly from: number;
  readonly to: number;
  /** Local exponent at the log-grid points of the range, with bootstrap percentile intervals. */
  readonly local: {
    readonly x: readonly number[];
    readonly alpha: readonly number[];
    readonly lower: readonly (number | null)[];
    readonly upper: readonly (number | null)[];
  };
  readonly pass: boolean;
  /** Why it fails, in plain words (null when it passes). */
  readonly reason: string | null;
}

/** One estimator's curve, fit, interval and exponent evidence. */
export interface EstimatorResult {
  readonly name: EstimatorName;
  /** What the abscissa is ("t", "s = t − t₁", "lag τ"). */
  readonly abscissa: string;
  readonly D: number;
  readonly intercept: number;
  readonly ci: EstimatorCI | null;
  readonly fit: { readonly from: number; readonly to: number; readonly samples: number };
  readonly exponent: ExponentEvidence;
  /** The estimator's MSD curve and total weight (Σ W) at its samples. */
  readonly curve: { readonly x: Float64Array; readonly msd: Float64Array; readonly weight: Float64Array };
  /** Local exponent on the whole log grid of the curve. */
  readonly slope: { readonly x: Float64Array; readonly alpha: Float64Array };
}

export interface DiffusionEvidence {
  readonly status: "ok" | "no-diffusive-regime";
  /** Every failing check in plain words (empty when ok). */
  readonly reasons: readonly string[];
  readonly dimension: 2 | 3;
  readonly realisations: number;
  readonly tauC: number | null;
  readonly window: {
    readonly t1: number;
    readonly t2: number;
    readonly samples: number;
    readonly end: WindowEnd;
  } | null;
  /** The survivor average from t₀ over the whole run (shown even without a window). */
  readonly originCurve: {
    readonly x: Float64Array;
    readonly msd: Float64Array;
    readonly weight: Float64Array;
    readonly slope: { readonly x: Float64Array; readonly alpha: Float64Array } | null;
  };
  /** The three estimators over the window (null without a window; lag null when it cannot be formed). */
  readonly estimators: {
    readonly origin: EstimatorResult | null;
    readonly cohort: EstimatorResult | null;
    readonly lag: EstimatorResult | null;
  };
  /** D_R from the cohort's spread over the window. */
  readonly radius: { readonly D: number; readonly intercept: number; readonly ci: EstimatorCI | null } | null;
  /** The answer (cohort D) when the regime is declared. */
  readonly answer: {
    readonly D: number;
    readonly lower: number | null;
    readonly upper: number | null;
    readonly method: "bca" | "percentile" | null;
  } | null;
  /** Share of bootstrap replicates whose own window passes steps 1 and 2 (means only). */
  readonly support: { readonly fraction: number; readonly replicates: number } | null;
  /** Losses: share of the objects main at t₁ gone from the cluster by t₂, cohort share, loss since t₀. */
  readonly loss: {
    readonly inWindow: number;
    readonly cohortShare: number;
    readonly sinceStart: number;
    readonly cohortObjects: number;
  } | null;
  /** The lag estimator over [t₁, end] when main-cluster loss alone prevented a window. */
  readonly lossLimited: {
    readonly t1: number;
    readonly tEnd: number;
    /** Where N_main fell below the fraction of N_main(t₁). */
    readonly lossAt: number;
    readonly estimator: EstimatorResult;
  } | null;
  /** Bootstrap replicates of the cohort D (window fixed), for differences between points. */
  readonly replicates: Float64Array | null;
  /** Leave-one-out values of the cohort D (window fixed; null without BCa). */
  readonly jackknife: Float64Array | null;
  readonly bootstrap: { readonly replicates: number; readonly seed: string; readonly level: number } | null;
  readonly rules: RegimeRules;
  readonly warnings: readonly string[];
}

/** Ratio curve Σ_i num_i[m] / Σ_i den_i[m] over a multiset of realisations. */
class RatioCurve {
  constructor(
    readonly num: readonly Float64Array[],
    readonly den: readonly Float64Array[],
    readonly n: number,
  ) {}

  eval(idx: Int32Array, y: Float64Array, w: Float64Array | null): void {
    for (let m = 0; m < this.n; m++) {
      let a = 0, b = 0;
      for (let q = 0; q < idx.length; q++) {
        const i = idx[q];
        a += this.num[i][m];
        b += this.den[i][m];
      }
      y[m] = b > 0 ? a / b : Number.NaN;
      if (w) w[m] = b;
    }
  }
}

/** A curve with its abscissa, local-slope grid, judged grid range and fit range. */
class Spec {
  readonly y: Float64Array;
  readonly w: Float64Array;
  readonly slope: LocalSlope;
  readonly g1: number;
  readonly g2: number;
  readonly f1: number;
  readonly f2: number;
  // Last evaluation.
  D = Number.NaN;
  b = Number.NaN;
  mean = Number.NaN;
  ok = false;

  constructor(
    readonly name: SpecName,
    readonly abscissa: string,
    readonly x: Float64Array,
    readonly curve: RatioCurve,
    readonly from: number,
    readonly to: number,
    readonly d: number,
    rules: WindowRules,
  ) {
    this.y = new Float64Array(x.length);
    this.w = new Float64Array(x.length);
    this.slope = new LocalSlope(x, rules);
    [this.g1, this.g2] = this.slope.gridRange(from, to);
    let f1 = 0;
    while (f1 < x.length && x[f1] < from * (1 - 1e-12)) f1++;
    let f2 = x.length - 1;
    while (f2 >= 0 && x[f2] > to * (1 + 1e-12)) f2--;
    this.f1 = f1;
    this.f2 = f2;
  }

  /** Enough samples to fit and grid points to judge. */
  usable(): boolean {
    return this.f2 - this.f1 + 1 >= 3 && this.g2 - this.g1 >= 1;
  }

  /** Evaluates curve, fit and exponents for realisations `idx`. */
  run(idx: Int32Array): void {
    this.curve.eval(idx, this.y, this.w);
    const f = lineFit(this.x, this.y, this.f1, this.f2);
    this.D = f.slope / (2 * this.d);
    this.b = f.intercept;
    this.ok = this.slope.compute(this.y);
    this.mean = this.ok ? this.slope.meanExponent(this.g1, this.g2) : Number.NaN;
  }
}

/** The survivor average from t₀ over the whole run, judged over [from, to]. */
function originSpec(p: PreparedTracks, from: number, to: number, rules: WindowRules): Spec {
  const curve = new RatioCurve(p.origin.map((c) => c.A), p.origin.map((c) => c.W), p.K);
  return new Spec("origin", "t", p.t, curve, from, to, p.dimension, rules);
}

/** Sums of the lag estimator over start frames s ∈ [i1, i2 − L] for the lags up to `qMax` (exclusive). */
function lagCurve(p: PreparedTracks, i1: number, i2: number, qMax: number): RatioCurve {
  const L = p.lags.length;
  const num: Float64Array[] = [], den: Float64Array[] = [];
  for (let i = 0; i < p.realisations; i++) {
    const a = new Float64Array(qMax), b = new Float64Array(qMax);
    const { A, W } = p.lag[i];
    for (let q = 0; q < qMax; q++) {
      for (let s = i1; s + p.lags[q] <= i2; s++) {
        a[q] += A[s * L + q];
        b[q] += W[s * L + q];
      }
    }
    num.push(a);
    den.push(b);
  }
  return new RatioCurve(num, den, qMax);
}

function cohortCurves(sums: readonly CohortSums[]): { disp: RatioCurve; spread: RatioCurve } {
  const n = sums[0].A.length;
  const den = sums.map((c) => new Float64Array(n).fill(c.W));
  return {
    disp: new RatioCurve(sums.map((c) => c.A), den, n),
    spread: new RatioCurve(sums.map((c) => c.RA), den, n),
  };
}

/** The three estimators of a window (index range into the frames), built from the prepared sums. */
function windowSpecs(
  p: PreparedTracks,
  i1: number,
  i2: number,
  tauC: number,
  rules: RegimeRules,
): { origin: Spec; cohort: Spec; lag: Spec | null; spread: Spec; lagProblem: string | null } {
  const t = p.t, d = p.dimension;
  const origin = originSpec(p, t[i1], t[i2], rules);
  const sums = p.cohort(i1, i2);
  const cc = cohortCurves(sums);
  const s = Float64Array.from({ length: i2 - i1 + 1 }, (_, m) => t[i1 + m] - t[i1]);
  const start = rules.startFactor * tauC;
  const cohort = new Spec("cohort", "s = t − t₁", s, cc.disp, start, s[s.length - 1], d, rules);
  const spread = new Spec("spread", "t", t.slice(i1, i2 + 1), cc.spread, t[i1], t[i2], d, rules);
  let lag: Spec | null = null;
  let lagProblem = p.lagProblem;
  if (lagProblem === null) {
    const maxLag = rules.lagFraction * (t[i2] - t[i1]);
    let qMax = 0;
    while (qMax < p.lags.length && p.lagTimes[qMax] <= maxLag * (1 + 1e-12)) qMax++;
    if (qMax < 3) {
      lagProblem = `only ${qMax} lag(s) up to ${fmt(maxLag)} = ${rules.lagFraction}·(t₂ − t₁)`;
    } else {
      lag = new Spec(
        "lag",
        "lag τ",
        p.lagTimes.slice(0, qMax),
        lagCurve(p, i1, i2, qMax),
        start,
        maxLag,
        d,
        rules,
      );
    }
  }
  return { origin, cohort, lag, spread, lagProblem };
}

/** The lag estimator alone over [i1, iEnd] (the loss-limited case). */
function lossLimitedSpec(
  p: PreparedTracks,
  i1: number,
  iEnd: number,
  tauC: number,
  rules: RegimeRules,
): Spec | null {
  if (p.lagProblem !== null) return null;
  const t = p.t;
  const maxLag = rules.lagFraction * (t[iEnd] - t[i1]);
  let qMax = 0;
  while (qMax < p.lags.length && p.lagTimes[qMax] <= maxLag * (1 + 1e-12)) qMax++;
  if (qMax < 3) return null;
  const spec = new Spec(
    "lag",
    "lag τ",
    p.lagTimes.slice(0, qMax),
    lagCurve(p, i1, iEnd, qMax),
    rules.startFactor * tauC,
    maxLag,
    p.dimension,
    rules,
  );
  return spec.usable() ? spec : null;
}

const NAMES: Readonly<Record<SpecName, string>> = {
  spread: "the spread R² of the cohort",
  origin: "the MSD from the time origin (objects still in the main cluster)",
  cohort: "the fixed cohort (objects in the main cluster throughout the window), displacements from t₁,",
  lag: "the lag increments (objects in the main cluster at both ends)",
};

/** Exponent evidence of a spec from its point values and bootstrap replicates of ᾱ and local α. */
function judge(
  spec: Spec,
  meanReps: Float64Array | null,
  localReps: Float64Array | null,
  B: number,
  level: number,
  band: readonly [number, number],
): ExponentEvidence {
  const [lo, hi] = band;
  const nG = spec.g2 - spec.g1 + 1;
  const x: number[] = [], alpha: number[] = [], lower: (number | null)[] = [], upper: (number | null)[] = [];
  let localFail: string | null = null;
  const col = new Float64Array(B);
  for (let g = 0; g < nG; g++) {
    const j = spec.g1 + g;
    x.push(spec.slope.gridX[j]);
    alpha.push(spec.ok ? spec.slope.alpha[j] : Number.NaN);
    let ci: Interval | null = null;
    if (localReps && B > 1) {
      for (let b = 0; b < B; b++) col[b] = localReps[b * nG + g];
      ci = percentileInterval(col, level);
    }
    lower.push(ci?.lower ?? null);
    upper.push(ci?.upper ?? null);
    const a = alpha[g];
    const inside = ci ? ci.upper >= lo && ci.lower <= hi : a >= lo && a <= hi;
    if (!inside && localFail === null) {
      localFail = ci
        ? `its local exponent is ${fmt(a)} [${fmt(ci.lower)}, ${fmt(ci.upper)}] at ${
          spec.abscissa.split(" ")[0]
        } = ${fmt(x[g])}, outside [${lo}, ${hi}] even allowing for its bootstrap noise`
        : `its local exponent is ${fmt(a)} at ${spec.abscissa.split(" ")[0]} = ${
          fmt(x[g])
        }, outside [${lo}, ${hi}]`;
    }
  }
  const value = spec.mean;
  const interval = meanReps ? percentileInterval(meanReps, level) : null;
  const range = `${spec.abscissa.split(" ")[0]} = ${fmt(spec.from)}–${fmt(spec.to)}`;
  let reason: string | null = null;
  if (!(value >= lo && value <= hi)) {
    const ci = interval ? ` [${fmt(interval.lower)}, ${fmt(interval.upper)}]` : "";
    if (!Number.isFinite(value)) reason = `${NAMES[spec.name]} is not positive over ${range}`;
    else if (spec.name === "lag") {
      reason = value > hi
        ? `displacements grow faster than the lag: exponent ${fmt(value)}${ci} over lags ${fmt(spec.from)}–${
          fmt(spec.to)
        } (diffusion: 1)`
        : `displacements grow slower than the lag: exponent ${fmt(value)}${ci} over lags ${fmt(spec.from)}–${
          fmt(spec.to)
        } (diffusion: 1)`;
    } else {
      reason = `${NAMES[spec.name]} grows as ${spec.abscissa.split(" ")[0]}^${
        fmt(value)
      }${ci} over ${range} (${
        value > hi ? "faster" : "slower"
      } than diffusion; accepted exponents [${lo}, ${hi}])`;
    }
  } else if (localFail !== null) reason = `for ${NAMES[spec.name]} ${localFail}`;
  return {
    value,
    interval,
    from: spec.from,
    to: spec.to,
    local: { x, alpha, lower, upper },
    pass: reason === null,
    reason,
  };
}

function result(spec: Spec, ci: EstimatorCI | null, exponent: ExponentEvidence): EstimatorResult {
  return {
    name: spec.name === "spread" ? "cohort" : spec.name,
    abscissa: spec.abscissa,
    D: spec.D,
    intercept: spec.b,
    ci,
    fit: { from: spec.x[spec.f1], to: spec.x[spec.f2], samples: spec.f2 - spec.f1 + 1 },
    exponent,
    curve: { x: spec.x.slice(), msd: spec.y.slice(), weight: spec.w.slice() },
    slope: { x: spec.slope.gridX.slice(), alpha: spec.slope.alpha.slice() },
  };
}

/** Plain-words reason for a window that could not be chosen. */
function windowReason(c: WindowChoice, slope: LocalSlope, t: Float64Array, rules: WindowRules): string {
  const K = t.length;
  switch (c.outcome) {
    case WindowOutcome.NoCrossover:
      return `α(t) never falls below ${rules.crossoverAlpha} (motion stays ballistic or superdiffusive up to t = ${
        fmt(t[K - 1])
      })`;
    case WindowOutcome.StartBeyondData:
      return `t₁ = ${rules.startFactor}τ_c = ${
        fmt(rules.startFactor * c.tauC)
      } lies beyond the last sample t = ${fmt(t[K - 1])}`;
    case WindowOutcome.WindowEmpty:
      return `the window is empty: t₂ (${c.end}) is not after t₁ = ${fmt(t[c.i1])}`;
    case WindowOutcome.TooFewSamples:
      return `fewer than 3 samples in [t₁, t₂] = [${fmt(t[c.i1])}, ${fmt(t[c.i2])}] (t₂: ${c.end})`;
    case WindowOutcome.RatioTooSmall:
      return `t₂/t₁ = ${fmt(t[c.i2] / t[c.i1])} < ${rules.minRatio} (t₁ = ${fmt(t[c.i1])}, t₂ = ${
        fmt(t[c.i2])
      }: ${
        c.end === "main-cluster loss"
          ? `the main cluster falls below ${Math.round(rules.mainCountFraction * 100)} % of its size at t₁`
          : c.end
      })`;
    case WindowOutcome.MsdNotPositive:
      return `the MSD from the time origin is not positive (${fmt(slope.badY)}) at t = ${fmt(slope.badX)}`;
    default:
      return "no window";
  }
}

/** Indices 0..n−1, or the caller's subset as an Int32Array (validated). */
function subsetOf(p: PreparedTracks, sub: ArrayLike<number> | undefined): Int32Array {
  if (sub === undefined) return Int32Array.from({ length: p.realisations }, (_, i) => i);
  const out = Int32Array.from(sub);
  for (const i of out) {
    if (!(i >= 0 && i < p.realisations)) {
      throw new RangeError(`realisation index ${i} is outside [0, ${p.realisations})`);
    }
  }
  if (out.length < 1) throw new RangeError("need at least one realisation");
  return out;
}

/**
 * Decides whether the prepared ensemble (or a subset of its realisations) has a diffusive regime and
 * estimates D with intervals (see the module comment for the estimators and the rule).
 */
export function diffusionEvidence(p: PreparedTracks, options: DiffusionOptions): DiffusionEvidence {
  const rules = resolveRules(DEFAULT_REGIME_RULES, options.rules);
  if (!(rules.lagFraction > 0 && rules.lagFraction <= 1)) {
    throw new RangeError(`lagFraction must be in (0, 1], got ${rules.lagFraction}`);
  }
  if (typeof options.seed !== "string" || options.seed.length === 0) {
    throw new RangeError("seed must be a non-empty string (it is recorded with the intervals)");
  }
  const level = options.level ?? 0.95;
  if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
  const B0 = options.replicates ?? 2000;
  if (!Number.isInteger(B0) || B0 < 0 || B0 === 1) {
    throw new RangeError(`replicates must be 0 or an integer ≥ 2, got ${B0}`);
  }
  const tCut = options.tCut ?? Number.POSITIVE_INFINITY;
  if (!(tCut > 0)) throw new RangeError(`tCut must be > 0, got ${tCut}`);
  const all = subsetOf(p, options.realisations);
  const R = all.length;
  const B = R >= 2 ? B0 : 0;
  const d = p.dimension;
  const t = p.t, K = p.K;
  const warnings: string[] = [];
  if (R < MIN_REALISATIONS) warnings.push(fewRealisationsWarning(R));
  if (B0 > 0 && R < 2) warnings.push("a single realisation cannot be bootstrapped: no interval");

  // Step 1 on the full sample: the survivor average from t₀ chooses the window.
  const origin0 = originSpec(p, t[0], t[p.K - 1], rules);
  const main = new Float64Array(K);
  const mainOf = (idx: Int32Array) => {
    main.fill(0);
    for (const i of idx) for (let k = 0; k < K; k++) main[k] += p.mainCount[i][k];
    return main;
  };
  origin0.curve.eval(all, origin0.y, origin0.w);
  const slopeOk = origin0.slope.compute(origin0.y);
  const choice = emptyWindowChoice();
  if (slopeOk) chooseWindow(origin0.slope, mainOf(all), tCut, rules, choice);
  else choice.outcome = WindowOutcome.MsdNotPositive;
  const originCurve = {
    x: t.slice(),
    msd: origin0.y.slice(),
    weight: origin0.w.slice(),
    slope: slopeOk ? { x: origin0.slope.gridX.slice(), alpha: origin0.slope.alpha.slice() } : null,
  };
  const rng = B > 0 ? streamFromSeed(options.seed) : null;
  const draws: Int32Array[] = [];
  if (rng) {
    for (let b = 0; b < B; b++) {
      draws.push(Int32Array.from(resampleIndices(rng, new Int32Array(R)), (q) => all[q]));
    }
  }
  const base = {
    dimension: d,
    realisations: R,
    originCurve,
    bootstrap: B > 0 ? { replicates: B, seed: options.seed, level } : null,
    rules,
  };
  if (choice.outcome !== WindowOutcome.Ok) {
    const support = B > 0 ? measureSupport(p, draws, tCut, rules, mainOf, null) : null;
    const reasons = [`no fitting window: ${windowReason(choice, origin0.slope, t, rules)}`];
    let lossLimited: DiffusionEvidence["lossLimited"] = null;
    const lossStopped = choice.end === "main-cluster loss" && choice.i1 >= 0 &&
      (choice.outcome === WindowOutcome.RatioTooSmall || choice.outcome === WindowOutcome.WindowEmpty ||
        choice.outcome === WindowOutcome.TooFewSamples);
    if (lossStopped) {
      let iEnd = K - 1;
      while (iEnd > choice.i1 && t[iEnd] > tCut) iEnd--;
      const spec = lossLimitedSpec(p, choice.i1, iEnd, choice.tauC, rules);
      if (spec) {
        const est =
          bootstrapSpecs([spec], all, draws, options.bca !== false, level, rules.alphaBand).results[0];
        lossLimited = { t1: t[choice.i1], tEnd: t[iEnd], lossAt: t[choice.i2], estimator: est };
        if (!est.exponent.pass) reasons.push(`loss-limited lag estimate: ${est.exponent.reason}`);
      }
    }
    return {
      ...base,
      support,
      status: "no-diffusive-regime",
      reasons,
      tauC: Number.isFinite(choice.tauC) ? choice.tauC : null,
      window: null,
      estimators: { origin: null, cohort: null, lag: null },
      radius: null,
      answer: null,
      loss: null,
      lossLimited,
      replicates: null,
      jackknife: null,
      warnings,
    };
  }

  // Step 2: the three estimators over the window, bootstrapped with the window fixed.
  const { i1, i2, tauC } = choice;
  const specs = windowSpecs(p, i1, i2, tauC, rules);
  const list: Spec[] = [specs.origin, specs.cohort, specs.spread];
  if (specs.lag) list.push(specs.lag);
  const boot = bootstrapSpecs(list, all, draws, options.bca !== false, level, rules.alphaBand);
  const results = boot.results;
  const [origin, cohort, spread] = results;
  const lag = specs.lag ? results[3] : null;
  // The window's support: replicates whose own window is the full sample's reuse the exponents just computed.
  const known = specs.lag
    ? {
      key: `${i1}/${i2}/${tauC}`,
      means: [boot.replicateMean[0], boot.replicateMean[1], boot.replicateMean[3]],
    }
    : null;
  const support = B > 0 ? measureSupport(p, draws, tCut, rules, mainOf, known) : null;
  const reasons: string[] = [];
  for (const [spec, r] of [[specs.origin, origin], [specs.cohort, cohort]] as const) {
    if (!spec.usable()) reasons.push(`too few samples to judge ${NAMES[spec.name]}`);
    else if (!r.exponent.pass) reasons.push(r.exponent.reason!);
  }
  if (lag === null) reasons.push(`lag increments cannot be formed: ${specs.lagProblem}`);
  else if (!specs.lag!.usable()) reasons.push(`too few lags to judge ${NAMES.lag}`);
  else if (!lag.exponent.pass) reasons.push(lag.exponent.reason!);
  const sums = p.cohort(i1, i2);
  let nStart = 0, nBoth = 0, nCohort = 0;
  for (const i of all) {
    nStart += sums[i].nStart;
    nBoth += sums[i].nBoth;
    nCohort += sums[i].n;
  }
  const mainAll = mainOf(all);
  const main0 = mainAll[0];
  const loss = {
    inWindow: nStart > 0 ? 1 - nBoth / nStart : Number.NaN,
    cohortShare: nStart > 0 ? nCohort / nStart : Number.NaN,
    sinceStart: main0 > 0 ? 1 - mainAll[i2] / main0 : Number.NaN,
    cohortObjects: nCohort,
  };
  const ok = reasons.length === 0;
  const pick = pickInterval(cohort.ci);
  return {
    ...base,
    support,
    status: ok ? "ok" : "no-diffusive-regime",
    reasons,
    tauC,
    window: { t1: t[i1], t2: t[i2], samples: i2 - i1 + 1, end: choice.end },
    estimators: { origin, cohort, lag },
    radius: { D: spread.D, intercept: spread.intercept, ci: spread.ci },
    answer: ok ? { D: cohort.D, lower: pick.lower, upper: pick.upper, method: pick.method } : null,
    loss,
    lossLimited: null,
    replicates: B > 0 ? boot.replicateD[1] : null,
    jackknife: boot.jackknifeD ? boot.jackknifeD[1] : null,
    warnings: ok ? supportWarning(support, rules, warnings) : warnings,
  };
}

function supportWarning(
  support: DiffusionEvidence["support"],
  rules: RegimeRules,
  warnings: string[],
): string[] {
  if (support && 1 - support.fraction > rules.supportWarning) {
    warnings.push(
      `${Math.round((1 - support.fraction) * 100)} % of the bootstrap replicates find no diffusive window ` +
        `(more than ${Math.round(rules.supportWarning * 100)} %): the regime is marginal for this ensemble`,
    );
  }
  return warnings;
}

/** Point fits, bootstrap (window fixed) and jackknife of several specs; results in the same order. */
function bootstrapSpecs(
  specs: readonly Spec[],
  all: Int32Array,
  draws: readonly Int32Array[],
  bca: boolean,
  level: number,
  band: readonly [number, number],
): {
  results: EstimatorResult[];
  replicateD: Float64Array[];
  replicateMean: Float64Array[];
  jackknifeD: Float64Array[] | null;
} {
  const B = draws.length;
  const R = all.length;
  const nG = specs.map((s) => Math.max(0, s.g2 - s.g1 + 1));
  const repD = specs.map(() => new Float64Array(B));
  const repMean = specs.map(() => new Float64Array(B));
  const repLocal = specs.map((_, q) => new Float64Array(B * nG[q]));
  for (let b = 0; b < B; b++) {
    specs.forEach((s, q) => {
      s.run(draws[b]);
      repD[q][b] = s.D;
      repMean[q][b] = s.mean;
      for (let g = 0; g < nG[q]; g++) {
        repLocal[q][b * nG[q] + g] = s.ok ? s.slope.alpha[s.g1 + g] : Number.NaN;
      }
    });
  }
  let jack: Float64Array[] | null = null;
  if (bca && B > 0 && R >= 3) {
    jack = specs.map(() => new Float64Array(R));
    const idx = new Int32Array(R - 1);
    for (let i = 0; i < R; i++) {
      let m = 0;
      for (let j = 0; j < R; j++) if (j !== i) idx[m++] = all[j];
      specs.forEach((s, q) => {
        s.run(idx);
        jack![q][i] = s.D;
      });
    }
  }
  const out = specs.map((s, q) => {
    s.run(all);
    const ci = B > 0 ? estimatorCi(repD[q], s.D, jack ? jack[q] : null, level) : null;
    const ev = judge(s, B > 0 ? repMean[q] : null, B > 0 ? repLocal[q] : null, B, level, band);
    return result(s, ci, ev);
  });
  return { results: out, replicateD: repD, replicateMean: repMean, jackknifeD: jack };
}

/** Share of replicates whose own window passes the window rule and the three mean exponents. */
function measureSupport(
  p: PreparedTracks,
  draws: readonly Int32Array[],
  tCut: number,
  rules: RegimeRules,
  mainOf: (idx: Int32Array) => Float64Array,
  known: { readonly key: string; readonly means: readonly Float64Array[] } | null,
): { fraction: number; replicates: number } {
  const t = p.t;
  const origin = originSpec(p, t[0], t[p.K - 1], rules);
  const cache = new Map<string, ReturnType<typeof windowSpecs>>();
  const choice = emptyWindowChoice();
  const [lo, hi] = rules.alphaBand;
  const inBand = (v: number) => v >= lo && v <= hi;
  let good = 0;
  for (let b = 0; b < draws.length; b++) {
    const idx = draws[b];
    origin.curve.eval(idx, origin.y, origin.w);
    if (!origin.slope.compute(origin.y)) continue;
    chooseWindow(origin.slope, mainOf(idx), tCut, rules, choice);
    if (choice.outcome !== WindowOutcome.Ok) continue;
    const key = `${choice.i1}/${choice.i2}/${choice.tauC}`;
    if (known !== null && key === known.key) {
      if (known.means.every((m) => inBand(m[b]))) good++;
      continue;
    }
    let specs = cache.get(key);
    if (!specs) {
      specs = windowSpecs(p, choice.i1, choice.i2, choice.tauC, rules);
      cache.set(key, specs);
    }
    const list = [specs.origin, specs.cohort, specs.lag];
    let pass = true;
    for (const s of list) {
      if (s === null || !s.usable()) {
        pass = false;
        break;
      }
      s.run(idx);
      if (!inBand(s.mean)) {
        pass = false;
        break;
      }
    }
    if (pass) good++;
  }
  return { fraction: draws.length > 0 ? good / draws.length : Number.NaN, replicates: draws.length };
}
