/**
 * Effective diffusion coefficient from an ensemble of survivor-average mean-square-displacement series alone,
 * with the ballistic → diffusive crossover, an automatic fitting window, a bootstrap over realisations, a
 * second estimator from the cluster's RMS radius, and a threshold-sensitivity table.
 *
 * This is the estimator for MSD series without tracks (e.g. an imported MSD curve). It cannot see censoring:
 * a survivor average can grow linearly while no object moves diffusively, which is why `spindrift analyse`
 * decides with `diffusion.ts` (three estimators from the tracks, all of which must agree).
 *
 * Method (docs/methods.md §5.1):
 * 1. Ensemble MSD(t_k): the mean over realisations of MSD_i(t_k). With per-realisation object counts n_ik the
 *    mean is weighted, MSD(t_k) = Σ_i n_ik MSD_ik / Σ_i n_ik, i.e. every object that contributes at t_k
 *    counts once (the number-at-risk weighting for censored data). Missing values (NaN, or n_ik = 0) are
 *    skipped.
 * 2. Local exponent α(t) = d ln MSD / d ln t on a log-spaced grid (`pointsPerDecade` per decade, from the
 *    first positive to the last time; ln MSD interpolated linearly in ln t), smoothed by a least-squares line
 *    through `smoothingPoints` consecutive grid points (centred; truncated to ≥ 3 points at the ends).
 * 3. Crossover τ_c = first grid time with α < 1.2. Window: t₁ = first sample time ≥ 3τ_c; t₂ = the earliest
 *    of the last sample, the caller's cut `tCut`, and (when main-cluster counts are given) the last time
 *    before the ensemble's N_main falls below 50% of N_main(t₁). The window is accepted only if α ∈ [0.85,
 *    1.15] at every grid point in [t₁, t₂], t₂/t₁ ≥ 5 and it holds ≥ 3 samples; otherwise the status is
 *    "no-diffusive-regime" with the reason.
 * 4. Unweighted least squares MSD = 2dD t + b over the samples in the window (b absorbs the ballistic
 *    offset). MSD values at different lags are correlated, so no error bar is taken from the fit itself.
 * 5. Bootstrap over realisations (the independent units): each replicate resamples realisations with
 *    replacement, recomputes the ensemble MSD, redoes the window selection with the same rules and refits;
 *    replicates without a diffusive regime are counted (`noRegimeFraction`) and left out of the intervals.
 *    Percentile and BCa intervals (jackknife over realisations for the acceleration).
 * 6. Second estimator D_R = (1/2d) dR²_rms/dt: least-squares slope of the ensemble mean of R_rms² over the
 *    same window, bootstrapped with the same resamples.
 *
 * Units: D comes out in the input's length²/time; in study units (κ = 1) that is D/κ.
 *
 * References: A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806; X. Michalet, Phys.
 * Rev. E 82, 041914 (2010), doi:10.1103/PhysRevE.82.041914 (unweighted fits, offsets);
 * H. Qian, M.P. Sheetz, E.L. Elson, Biophys. J. 60, 910 (1991), doi:10.1016/S0006-3495(91)82125-7
 * (correlated MSD points); B. Efron, R.J. Tibshirani, An Introduction to the Bootstrap (1993),
 * doi:10.1201/9780429246593; B. Efron, J. Am. Stat. Assoc. 82, 171 (1987),
 * doi:10.1080/01621459.1987.10478410;
 * E.L. Kaplan, P. Meier, J. Am. Stat. Assoc. 53, 457 (1958), doi:10.1080/01621459.1958.10501452.
 *
 * @example
 * ```ts
 * import { fitDiffusion } from "./msd_fit.ts";
 * import { logTimes, walkerEnsemble } from "./synthetic.ts";
 * const ens = walkerEnsemble(
 *   { kind: "brownian", dimension: 2, walkers: 20, D: 0.5, times: logTimes(0.01, 10, { count: 40 }) },
 *   { realisations: 30, seed: "demo" },
 * );
 * const fit = fitDiffusion(ens, { dimension: 2, seed: "demo-bootstrap", replicates: 1000 });
 * if (fit.status === "ok") console.log(fit.D, fit.ci?.percentile);
 * ```
 */
import {
  type EstimatorCI,
  estimatorCi,
  fewRealisationsWarning,
  MIN_REALISATIONS,
  resampleIndices,
} from "./bootstrap.ts";

export type { EstimatorCI } from "./bootstrap.ts";
import { streamFromSeed } from "./seed.ts";
import {
  chooseWindow,
  DEFAULT_WINDOW_RULES,
  emptyWindowChoice,
  fmt,
  lineFit,
  LocalSlope,
  resolveRules,
  type WindowChoice,
  WindowOutcome as Outcome,
  type WindowRules,
} from "./window.ts";

export { DEFAULT_WINDOW_RULES, type WindowRules } from "./window.ts";

/** Per-realisation series on common times. All arrays of a realisation have the length of `t`. */
export interface MsdEnsembleInput {
  /** Lag times since the reference start t₀ (MSD(0) = 0), strictly increasing, ≥ 0. */
  readonly t: ArrayLike<number>;
  /** MSD_i(t_k) per realisation (length²); NaN marks a missing value. */
  readonly msd: readonly ArrayLike<number>[];
  /** Optional number of objects behind MSD_i(t_k) (weights of the ensemble mean, ≥ 0). */
  readonly counts?: readonly ArrayLike<number>[];
  /** Optional RMS radius R_rms,i(t_k) of the main cluster (length), for the second estimator D_R. */
  readonly rmsRadius?: readonly ArrayLike<number>[];
  /** Optional main-cluster object count N_main,i(t_k), for the t₂ rule N_main < 50% of N_main(t₁). */
  readonly mainCount?: readonly ArrayLike<number>[];
}

export interface DiffusionFitOptions {
  /** Space dimension d (MSD = 2dDt). */
  readonly dimension: 2 | 3;
  /** Seed string of the bootstrap stream (recorded in the result). */
  readonly seed: string;
  /** Bootstrap replicates B (default 2000; 0 skips the bootstrap). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** Latest allowed t₂ (e.g. when the cluster reaches 1/4 of the domain), in the input's time unit. */
  readonly tCut?: number;
  /** Overrides of the window rules. */
  readonly rules?: Partial<WindowRules>;
  /** Compute BCa intervals (default true). */
  readonly bca?: boolean;
}

export interface DiffusionFit {
  readonly status: "ok" | "no-diffusive-regime";
  /** Why no diffusive regime was found (null when ok). */
  readonly reason: string | null;
  readonly dimension: 2 | 3;
  /** Ensemble series: times, MSD, total weight (objects, or realisations without counts) per time. */
  readonly ensemble: { readonly t: Float64Array; readonly msd: Float64Array; readonly weight: Float64Array };
  /** Local exponent α on the log grid. */
  readonly slope: { readonly t: Float64Array; readonly alpha: Float64Array };
  /** τ_c, or null if α never fell below the crossover value. */
  readonly crossoverTime: number | null;
  /** The accepted window (null when none). */
  readonly window: { readonly t1: number; readonly t2: number; readonly samples: number } | null;
  /** D = slope/(2d) (null when no diffusive regime). */
  readonly D: number | null;
  /** Intercept b of the fit. */
  readonly intercept: number | null;
  readonly ci: EstimatorCI | null;
  /** Second estimator from R_rms² over the same window (null without rmsRadius or without a window). */
  readonly radius: { readonly D: number; readonly intercept: number; readonly ci: EstimatorCI | null } | null;
  /** Fraction 1 − W(t₂)/W(t₀) of the weight lost by t₂ (only with counts). */
  readonly censoredFraction: number | null;
  readonly bootstrap: {
    readonly replicates: number;
    readonly seed: string;
    readonly level: number;
    /** Fraction of replicates with no diffusive regime. */
    readonly noRegimeFraction: number;
    /** Replicate values of D (NaN where no regime). */
    readonly values: Float64Array;
  } | null;
  readonly realisations: number;
  readonly rules: WindowRules;
  /** Advice about the input (e.g. too few realisations for reliable intervals). */
  readonly warnings: readonly string[];
}

/** Preallocated state for repeated analyses of resampled ensembles (no allocation per replicate). */
class MsdWorkspace {
  readonly K: number;
  readonly t: Float64Array;
  readonly msdEns: Float64Array;
  readonly weight: Float64Array;
  readonly rms2: Float64Array;
  readonly main: Float64Array;
  readonly slope: LocalSlope;
  readonly choice: WindowChoice = emptyWindowChoice();
  // Outputs of the last run.
  outcome = Outcome.Ok;
  detailT = 0;
  detailV = 0;
  tauC = Number.NaN;
  i1 = -1;
  i2 = -1;
  D = Number.NaN;
  b = Number.NaN;
  DR = Number.NaN;
  bR = Number.NaN;

  constructor(
    readonly input: MsdEnsembleInput,
    readonly d: 2 | 3,
    readonly rules: WindowRules,
    readonly tCut: number,
  ) {
    const K = input.t.length;
    this.K = K;
    this.t = Float64Array.from(input.t);
    this.msdEns = new Float64Array(K);
    this.weight = new Float64Array(K);
    this.rms2 = new Float64Array(K);
    this.main = new Float64Array(K);
    this.slope = new LocalSlope(this.t, rules);
  }

  /** Analyses the ensemble made of realisations `idx` (repeats allowed). */
  run(idx: Int32Array, wantRadius: boolean): void {
    const { K, input, msdEns, weight, rms2, main } = this;
    const m = idx.length;
    const counts = input.counts;
    for (let k = 0; k < K; k++) {
      let num = 0;
      let den = 0;
      for (let q = 0; q < m; q++) {
        const i = idx[q];
        const v = input.msd[i][k];
        const w = counts ? counts[i][k] : 1;
        if (w > 0 && v === v) {
          num += w * v;
          den += w;
        }
      }
      msdEns[k] = den > 0 ? num / den : Number.NaN;
      weight[k] = den;
    }
    if (input.mainCount) {
      for (let k = 0; k < K; k++) {
        let s = 0;
        for (let q = 0; q < m; q++) s += input.mainCount[idx[q]][k];
        main[k] = s;
      }
    }
    if (wantRadius && input.rmsRadius) {
      for (let k = 0; k < K; k++) {
        let s = 0;
        let c = 0;
        for (let q = 0; q < m; q++) {
          const r = input.rmsRadius[idx[q]][k];
          if (r === r) {
            s += r * r;
            c++;
          }
        }
        rms2[k] = c > 0 ? s / c : Number.NaN;
      }
    }
    this.D =
      this.b =
      this.DR =
      this.bR =
      this.tauC =
        Number.NaN;
    this.i1 = this.i2 = -1;
    this.outcome = this.select();
    if (this.outcome !== Outcome.Ok) return;
    const f = lineFit(this.t, msdEns, this.i1, this.i2);
    this.D = f.slope / (2 * this.d);
    this.b = f.intercept;
    if (wantRadius && input.rmsRadius) {
      const g = lineFit(this.t, rms2, this.i1, this.i2);
      this.DR = g.slope / (2 * this.d);
      this.bR = g.intercept;
    }
  }

  private select(): Outcome {
    const { t, slope, rules } = this;
    if (!slope.compute(this.msdEns)) {
      this.detailT = slope.badX;
      this.detailV = slope.badY;
      return Outcome.MsdNotPositive;
    }
    const c = chooseWindow(slope, this.input.mainCount ? this.main : null, this.tCut, rules, this.choice);
    this.tauC = c.tauC;
    if (c.outcome === Outcome.StartBeyondData) this.detailT = rules.startFactor * c.tauC;
    if (c.outcome !== Outcome.Ok) {
      if (c.i1 >= 0) {
        this.i1 = c.i1;
        this.i2 = c.i2;
      }
      return c.outcome;
    }
    this.i1 = c.i1;
    this.i2 = c.i2;
    const t1 = t[c.i1] * (1 - 1e-12);
    const t2 = t[c.i2] * (1 + 1e-12);
    const [lo, hi] = rules.alphaBand;
    for (let j = 0; j < slope.G; j++) {
      if (slope.gridX[j] < t1 || slope.gridX[j] > t2) continue;
      if (!(slope.alpha[j] >= lo && slope.alpha[j] <= hi)) {
        this.detailT = slope.gridX[j];
        this.detailV = slope.alpha[j];
        return Outcome.AlphaOutOfBand;
      }
    }
    return Outcome.Ok;
  }

  reason(): string | null {
    const r = this.rules;
    const t = this.t;
    switch (this.outcome) {
      case Outcome.Ok:
        return null;
      case Outcome.MsdNotPositive:
        return `ensemble MSD is not positive (${this.detailV}) at t = ${fmt(this.detailT)}`;
      case Outcome.NoCrossover:
        return `α(t) never falls below ${r.crossoverAlpha} (motion stays ballistic or superdiffusive ` +
          `up to t = ${fmt(t[this.K - 1])})`;
      case Outcome.StartBeyondData:
        return `t₁ = ${r.startFactor}τ_c = ${fmt(this.detailT)} lies beyond the last sample t = ${
          fmt(t[this.K - 1])
        }`;
      case Outcome.WindowEmpty:
        return `the window is empty: t₂ (end, cut or main-cluster loss) is not after t₁ = ${fmt(t[this.i1])}`;
      case Outcome.TooFewSamples:
        return `fewer than 3 samples in [t₁, t₂] = [${fmt(t[this.i1])}, ${fmt(t[this.i2])}]`;
      case Outcome.RatioTooSmall:
        return `t₂/t₁ = ${fmt(t[this.i2] / t[this.i1])} < ${r.minRatio} (t₁ = ${fmt(t[this.i1])}, t₂ = ${
          fmt(t[this.i2])
        })`;
      case Outcome.AlphaOutOfBand:
        return `α = ${fmt(this.detailV)} at t = ${fmt(this.detailT)} is outside [${r.alphaBand[0]}, ${
          r.alphaBand[1]
        }] within [t₁, t₂] = [${fmt(t[this.i1])}, ${fmt(t[this.i2])}]`;
    }
  }
}

/**
 * Fits D to an ensemble of MSD series (see the module comment for the method and the rules).
 *
 * @example
 * ```ts
 * const t = [0, 0.1, 0.2, 0.5, 1, 2, 5, 10, 20, 50];
 * const msd = [t.map((x) => 6 * 0.5 * x), t.map((x) => 6 * 0.52 * x)]; // two realisations, 3D
 * const fit = fitDiffusion({ t, msd }, { dimension: 3, seed: "study-7/msd", replicates: 2000 });
 * ```
 */
export function fitDiffusion(input: MsdEnsembleInput, options: DiffusionFitOptions): DiffusionFit {
  const rules = resolveRules(DEFAULT_WINDOW_RULES, options.rules);
  validate(input, options);
  const d = options.dimension;
  const level = options.level ?? 0.95;
  if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
  const B = options.replicates ?? 2000;
  if (!Number.isInteger(B) || B < 0 || B === 1) {
    throw new RangeError(`replicates must be 0 or an integer ≥ 2, got ${B}`);
  }
  const tCut = options.tCut ?? Number.POSITIVE_INFINITY;
  if (!(tCut > 0)) throw new RangeError(`tCut must be > 0, got ${tCut}`);
  const R = input.msd.length;
  const ws = new MsdWorkspace(input, d, rules, tCut);
  const wantRadius = input.rmsRadius !== undefined;
  const all = new Int32Array(R);
  for (let i = 0; i < R; i++) all[i] = i;
  ws.run(all, wantRadius);

  const ok = ws.outcome === Outcome.Ok;
  const warnings: string[] = [];
  if (R < MIN_REALISATIONS) warnings.push(fewRealisationsWarning(R));
  const result = {
    status: ok ? "ok" as const : "no-diffusive-regime" as const,
    reason: ws.reason(),
    dimension: d,
    ensemble: { t: ws.t.slice(), msd: ws.msdEns.slice(), weight: ws.weight.slice() },
    slope: { t: ws.slope.gridX.slice(), alpha: ws.slope.alpha.slice() },
    crossoverTime: Number.isNaN(ws.tauC) ? null : ws.tauC,
    window: ok ? { t1: ws.t[ws.i1], t2: ws.t[ws.i2], samples: ws.i2 - ws.i1 + 1 } : null,
    D: ok ? ws.D : null,
    intercept: ok ? ws.b : null,
    censoredFraction: input.counts && ok && ws.weight[0] > 0 ? 1 - ws.weight[ws.i2] / ws.weight[0] : null,
    realisations: R,
    rules,
    warnings,
  };
  const pointD = ws.D;
  const pointR = ws.DR;
  const pointBR = ws.bR;

  if (B === 0 || R < 2) {
    if (B > 0) warnings.push("a single realisation cannot be bootstrapped: no interval");
    return {
      ...result,
      ci: null,
      radius: ok && wantRadius ? { D: pointR, intercept: pointBR, ci: null } : null,
      bootstrap: null,
    };
  }

  const rng = streamFromSeed(options.seed);
  const idx = new Int32Array(R);
  const repD = new Float64Array(B);
  const repR = new Float64Array(B);
  let noRegime = 0;
  for (let b = 0; b < B; b++) {
    ws.run(resampleIndices(rng, idx), wantRadius);
    if (ws.outcome !== Outcome.Ok) noRegime++;
    repD[b] = ws.D;
    repR[b] = ws.DR;
  }
  let ci: EstimatorCI | null = null;
  let radiusCi: EstimatorCI | null = null;
  if (ok) {
    let jackD: Float64Array | null = null;
    let jackR: Float64Array | null = null;
    if (options.bca !== false) {
      jackD = new Float64Array(R);
      jackR = new Float64Array(R);
      const jidx = new Int32Array(R - 1);
      for (let i = 0; i < R; i++) {
        let m = 0;
        for (let j = 0; j < R; j++) if (j !== i) jidx[m++] = j;
        ws.run(jidx, wantRadius);
        jackD[i] = ws.D;
        jackR[i] = ws.DR;
      }
    }
    ci = estimatorCi(repD, pointD, jackD, level);
    if (wantRadius) radiusCi = estimatorCi(repR, pointR, jackR, level);
    if (noRegime >= 0.5 * B) {
      warnings.push(
        `${Math.round((100 * noRegime) / B)} % of the bootstrap replicates find no diffusive regime: the ` +
          `regime is marginal for this ensemble and the interval describes only the resamples where the window ` +
          `rule holds (more realisations help)`,
      );
    }
  }
  return {
    ...result,
    ci,
    radius: ok && wantRadius ? { D: pointR, intercept: pointBR, ci: radiusCi } : null,
    bootstrap: { replicates: B, seed: options.seed, level, noRegimeFraction: noRegime / B, values: repD },
  };
}

/** One row of the classification-threshold sensitivity table. */
export interface SensitivityRow {
  /** Threshold name (a key of the base configuration). */
  readonly threshold: string;
  /** Multiplier applied to the base value (e.g. 0.5 or 2). */
  readonly factor: number;
  /** The value passed to the recompute function. */
  readonly value: number;
  readonly status: "ok" | "no-diffusive-regime";
  readonly reason: string | null;
  readonly D: number | null;
  /** D − D_base (null when either is missing). */
  readonly deltaD: number | null;
  /** (D − D_base)/D_base. */
  readonly relativeDelta: number | null;
  readonly ci: EstimatorCI | null;
}

export interface SensitivityTable {
  readonly base: {
    readonly status: "ok" | "no-diffusive-regime";
    readonly D: number | null;
    readonly ci: EstimatorCI | null;
  };
  readonly rows: readonly SensitivityRow[];
}

export interface SensitivityOptions<T> extends DiffusionFitOptions {
  /** Thresholds to vary (default: every key of the base configuration). */
  readonly names?: readonly (keyof T & string)[];
  /** Multipliers (default [0.5, 2]). */
  readonly factors?: readonly number[];
  /** Thresholds that are integers (e.g. sticky frame counts): scaled values are rounded, minimum 1. */
  readonly integers?: readonly (keyof T & string)[];
}

/**
 * Sensitivity of D to classification thresholds: each named threshold is multiplied by each factor (others
 * kept at base), the caller's `recompute` rebuilds the ensemble for that configuration, and D is refitted
 * with the same options. Bootstrap replicates default to 0 here (point estimates); pass `replicates` for
 * intervals on every row.
 *
 * @example
 * ```ts
 * const t = [0, 0.1, 0.2, 0.5, 1, 2, 5, 10, 20, 50];
 * // The caller rebuilds the ensemble from stored frames with the modified thresholds; here a stand-in.
 * const rebuild = (cfg: { separationFactor: number; radiusFactor: number; stickyFrames: number }) => ({
 *   t,
 *   msd: [t.map((x) => 4 * (0.5 + 0.1 * cfg.separationFactor) * x)],
 * });
 * const table = await thresholdSensitivity(
 *   { separationFactor: 0.3, radiusFactor: 2, stickyFrames: 3 },
 *   rebuild,
 *   { dimension: 2, seed: "sens", integers: ["stickyFrames"] },
 * );
 * console.log(table.rows.map((r) => [r.threshold, r.factor, r.D]));
 * ```
 */
export async function thresholdSensitivity<T extends Record<string, number>>(
  base: T,
  recompute: (thresholds: T) => MsdEnsembleInput | Promise<MsdEnsembleInput>,
  options: SensitivityOptions<T>,
): Promise<SensitivityTable> {
  const names = options.names ?? (Object.keys(base) as (keyof T & string)[]);
  const factors = options.factors ?? [0.5, 2];
  const integers = new Set<string>(options.integers ?? []);
  const fitOptions: DiffusionFitOptions = { ...options, replicates: options.replicates ?? 0 };
  for (const name of names) {
    if (!(name in base)) throw new RangeError(`unknown threshold "${name}"`);
  }
  for (const f of factors) {
    if (!(f > 0 && Number.isFinite(f))) throw new RangeError(`factors must be positive, got ${f}`);
  }
  const baseFit = fitDiffusion(await recompute({ ...base }), fitOptions);
  const rows: SensitivityRow[] = [];
  for (const name of names) {
    for (const factor of factors) {
      let value = base[name] * factor;
      if (integers.has(name)) value = Math.max(1, Math.round(value));
      const cfg = { ...base, [name]: value } as T;
      const fit = fitDiffusion(await recompute(cfg), fitOptions);
      const both = fit.D !== null && baseFit.D !== null;
      rows.push({
        threshold: name,
        factor,
        value,
        status: fit.status,
        reason: fit.reason,
        D: fit.D,
        deltaD: both ? fit.D! - baseFit.D! : null,
        relativeDelta: both ? (fit.D! - baseFit.D!) / baseFit.D! : null,
        ci: fit.ci,
      });
    }
  }
  return { base: { status: baseFit.status, D: baseFit.D, ci: baseFit.ci }, rows };
}

function validate(input: MsdEnsembleInput, options: DiffusionFitOptions): void {
  const d = options.dimension;
  if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
  if (typeof options.seed !== "string" || options.seed.length === 0) {
    throw new RangeError("seed must be a non-empty string (it is recorded with the intervals)");
  }
  const t = input.t;
  const K = t.length;
  for (let k = 0; k < K; k++) {
    if (!(t[k] >= 0 && Number.isFinite(t[k])) || (k > 0 && !(t[k] > t[k - 1]))) {
      throw new RangeError(`times must be finite, ≥ 0 and strictly increasing (index ${k}: ${t[k]})`);
    }
  }
  let positive = 0;
  for (let k = 0; k < K; k++) if (t[k] > 0) positive++;
  if (positive < 3) throw new RangeError(`need at least 3 positive times, got ${positive}`);
  const R = input.msd.length;
  if (R < 1) throw new RangeError("need at least one realisation");
  const check = (name: string, arr: readonly ArrayLike<number>[] | undefined, allowNaN: boolean): void => {
    if (!arr) return;
    if (arr.length !== R) throw new RangeError(`${name} has ${arr.length} realisations, msd has ${R}`);
    for (let i = 0; i < R; i++) {
      if (arr[i].length !== K) {
        throw new RangeError(`${name}[${i}] has ${arr[i].length} values, expected ${K} (one per time)`);
      }
      for (let k = 0; k < K; k++) {
        const v = arr[i][k];
        if (Number.isNaN(v) && allowNaN) continue;
        if (!(v >= 0 && Number.isFinite(v))) {
          throw new RangeError(
            `${name}[${i}][${k}] must be finite and ≥ 0${allowNaN ? " (or NaN)" : ""}, got ${v}`,
          );
        }
      }
    }
  };
  check("msd", input.msd, true);
  check("counts", input.counts, false);
  check("rmsRadius", input.rmsRadius, true);
  check("mainCount", input.mainCount, false);
}
