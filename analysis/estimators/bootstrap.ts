/**
 * Nonparametric bootstrap over independent units (realisations): resampling with replacement, standard error,
 * percentile and BCa intervals.
 *
 * Method: for b = 1..B, draw n unit indices uniformly with replacement from a seeded stream and evaluate the
 * statistic on them. A statistic may return NaN when it is undefined for a resample (e.g. no diffusive regime
 * found); such replicates are counted and left out of the standard error and the intervals. The percentile
 * interval takes the α/2 and 1 − α/2 empirical quantiles of the replicates (linear interpolation between
 * order statistics, Hyndman & Fan definition 7). The BCa interval (bias-corrected and accelerated) shifts
 * those quantile levels by the bias correction z₀ = Φ⁻¹(#{θ*_b < θ̂}/B) (ties count half) and the
 * acceleration a = Σ(θ̄₍.₎ − θ₍ᵢ₎)³ / (6 [Σ(θ̄₍.₎ − θ₍ᵢ₎)²]^{3/2}) from the leave-one-out jackknife:
 * α_lo = Φ(z₀ + (z₀ + z_{α/2}) / (1 − a(z₀ + z_{α/2}))), and likewise for the upper level.
 *
 * References: B. Efron, R.J. Tibshirani, An Introduction to the Bootstrap (Chapman & Hall, 1993),
 * doi:10.1201/9780429246593, ch. 6 (standard error), ch. 13 (percentile), ch. 14 (BCa, eqs. 14.9–14.15);
 * B. Efron, "Better bootstrap confidence intervals", J. Am. Stat. Assoc. 82, 171 (1987),
 * doi:10.1080/01621459.1987.10478410; R.J. Hyndman, Y. Fan, "Sample quantiles in statistical packages",
 * Am. Stat. 50, 361 (1996), doi:10.1080/00031305.1996.10473566.
 *
 * @example
 * ```ts
 * import { bootstrap } from "./bootstrap.ts";
 * const x = [2.1, 1.9, 2.4, 2.2, 1.7, 2.0];
 * const mean = (idx: Int32Array) => idx.reduce((s, i) => s + x[i], 0) / idx.length;
 * const res = bootstrap(x.length, mean, { seed: "example", replicates: 1000 });
 * console.log(res.estimate, res.percentile, res.standardError);
 * ```
 */
import type { RandomStream } from "../../engines/random.ts";
import { normalCdf, normalQuantile } from "./_jstat.ts";
import { streamFromSeed } from "./seed.ts";

/**
 * Realisations per point below which bootstrap intervals over realisations are not trustworthy (they tend to
 * under-cover; 50+ preferred). The estimators warn below it, and the command line and the report say so.
 * Common practice (Efron & Tibshirani 1993, ch. 13–14, on small-sample percentile intervals), no sharper source.
 */
export const MIN_REALISATIONS = 20;

/** The warning of the estimators for `R` realisations below `MIN_REALISATIONS`. */
export function fewRealisationsWarning(R: number): string {
  return `only ${R} realisations: bootstrap intervals are unreliable below ${MIN_REALISATIONS} (50+ preferred); ` +
    "percentile intervals tend to under-cover";
}

/** A two-sided confidence interval. */
export interface Interval {
  readonly lower: number;
  readonly upper: number;
  /** Nominal coverage, e.g. 0.95. */
  readonly level: number;
}

/**
 * A statistic of a sample given by unit indices. The array is reused between calls: read it, do not keep it.
 * Its length is n for bootstrap resamples and n − 1 for jackknife samples. Return NaN when undefined.
 */
export type IndexStatistic = (indices: Int32Array) => number;

export interface BootstrapOptions {
  /** Seed string recorded with the result; the resampling stream is `streamFromSeed(seed)`. */
  readonly seed: string;
  /** Number of bootstrap replicates B (default 2000). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** Compute the BCa interval (needs n jackknife evaluations; default true). */
  readonly bca?: boolean;
}

export interface BootstrapResult {
  /** The statistic on the original sample (indices 0..n−1). */
  readonly estimate: number;
  /** All B replicates in draw order; NaN where the statistic was undefined. */
  readonly replicates: Float64Array;
  readonly seed: string;
  /** Number of replicates B. */
  readonly count: number;
  /** Replicates whose statistic was undefined (NaN). */
  readonly undefinedCount: number;
  /** Sample standard deviation of the defined replicates (divisor B' − 1), null if fewer than 2. */
  readonly standardError: number | null;
  readonly percentile: Interval | null;
  readonly bca: Interval | null;
  /** Why the BCa interval is missing, when it is. */
  readonly bcaNote: string | null;
}

/** Confidence intervals of one estimator from its bootstrap replicates. */
export interface EstimatorCI {
  readonly percentile: Interval | null;
  readonly bca: Interval | null;
  readonly bcaNote: string | null;
  /** Bootstrap standard error (sd of the defined replicates). */
  readonly standardError: number | null;
}

/** Percentile and (with jackknife values) BCa intervals and the standard error of replicates `reps`. */
export function estimatorCi(
  reps: ArrayLike<number>,
  estimate: number,
  jack: ArrayLike<number> | null,
  level: number,
): EstimatorCI {
  const bca = jack ? bcaInterval(reps, estimate, jack, level) : { interval: null, note: "not requested" };
  return {
    percentile: percentileInterval(reps, level),
    bca: bca.interval,
    bcaNote: bca.note,
    standardError: standardDeviation(reps),
  };
}

/** The interval to show: BCa where defined, else percentile (null bounds without either). */
export function pickInterval(ci: EstimatorCI | null): {
  lower: number | null;
  upper: number | null;
  method: "bca" | "percentile" | null;
} {
  if (ci?.bca) return { lower: ci.bca.lower, upper: ci.bca.upper, method: "bca" };
  if (ci?.percentile) return { lower: ci.percentile.lower, upper: ci.percentile.upper, method: "percentile" };
  return { lower: null, upper: null, method: null };
}

/** Fills `out` with n = out.length indices drawn uniformly with replacement from [0, n). */
export function resampleIndices(rng: RandomStream, out: Int32Array): Int32Array {
  const n = out.length;
  for (let i = 0; i < n; i++) out[i] = rng.integer(n);
  return out;
}

/**
 * Bootstraps a statistic over n independent units.
 *
 * @example
 * ```ts
 * const r = bootstrap(20, (idx) => idx.length, { seed: "s", replicates: 100 });
 * ```
 */
export function bootstrap(n: number, statistic: IndexStatistic, options: BootstrapOptions): BootstrapResult {
  if (!Number.isInteger(n) || n < 2) throw new RangeError(`bootstrap needs at least 2 units, got ${n}`);
  const B = options.replicates ?? 2000;
  if (!Number.isInteger(B) || B < 2) {
    throw new RangeError(`bootstrap replicates must be an integer ≥ 2, got ${B}`);
  }
  const level = options.level ?? 0.95;
  checkLevel(level);
  const rng = streamFromSeed(options.seed);

  const idx = new Int32Array(n);
  for (let i = 0; i < n; i++) idx[i] = i;
  const estimate = statistic(idx);

  const replicates = new Float64Array(B);
  let undefinedCount = 0;
  for (let b = 0; b < B; b++) {
    const v = statistic(resampleIndices(rng, idx));
    replicates[b] = Number.isFinite(v) ? v : Number.NaN;
    if (!Number.isFinite(v)) undefinedCount++;
  }

  let bca: Interval | null = null;
  let bcaNote: string | null = null;
  if (options.bca === false) {
    bcaNote = "not requested";
  } else if (!Number.isFinite(estimate)) {
    bcaNote = "statistic undefined on the original sample";
  } else {
    const jack = jackknife(n, statistic);
    const r = bcaInterval(replicates, estimate, jack, level);
    bca = r.interval;
    bcaNote = r.note;
  }

  return {
    estimate,
    replicates,
    seed: options.seed,
    count: B,
    undefinedCount,
    standardError: standardDeviation(replicates),
    percentile: percentileInterval(replicates, level),
    bca,
    bcaNote,
  };
}

/** Leave-one-out values θ₍ᵢ₎ of a statistic over n units (NaN where undefined). */
export function jackknife(n: number, statistic: IndexStatistic): Float64Array {
  const out = new Float64Array(n);
  const idx = new Int32Array(n - 1);
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let j = 0; j < n; j++) if (j !== i) idx[m++] = j;
    const v = statistic(idx);
    out[i] = Number.isFinite(v) ? v : Number.NaN;
  }
  return out;
}

/**
 * Empirical quantile (Hyndman & Fan definition 7: linear interpolation between order statistics) of the
 * finite values, or NaN if there are none. `sorted` must be ascending and hold finite values only.
 */
export function sortedQuantile(sorted: ArrayLike<number>, p: number): number {
  const m = sorted.length;
  if (m === 0) return Number.NaN;
  const h = (m - 1) * Math.min(1, Math.max(0, p));
  const lo = Math.floor(h);
  const hi = Math.min(m - 1, lo + 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Percentile interval of the finite values of `values`; null when fewer than 2 are finite. */
export function percentileInterval(values: ArrayLike<number>, level = 0.95): Interval | null {
  checkLevel(level);
  const s = finiteSorted(values);
  if (s.length < 2) return null;
  const alpha = 1 - level;
  return { lower: sortedQuantile(s, alpha / 2), upper: sortedQuantile(s, 1 - alpha / 2), level };
}

/**
 * BCa interval from bootstrap replicates, the original estimate and jackknife values (Efron 1987).
 * Returns a null interval with a note when it cannot be formed (fewer than 2 finite replicates, all
 * replicates on one side of the estimate, fewer than 3 defined jackknife values). Undefined (NaN) jackknife
 * values are left out of the acceleration, and the note says so.
 */
export function bcaInterval(
  replicates: ArrayLike<number>,
  estimate: number,
  jackknifeValues: ArrayLike<number>,
  level = 0.95,
): { interval: Interval | null; note: string | null } {
  checkLevel(level);
  const s = finiteSorted(replicates);
  if (s.length < 2) return { interval: null, note: "fewer than 2 defined replicates" };
  let below = 0;
  for (let i = 0; i < s.length; i++) {
    if (s[i] < estimate) below += 1;
    else if (s[i] === estimate) below += 0.5;
  }
  const p0 = below / s.length;
  if (p0 <= 0 || p0 >= 1) {
    return {
      interval: null,
      note: "all replicates lie on one side of the estimate (bias correction infinite)",
    };
  }
  const z0 = normalQuantile(p0);

  // Acceleration from the defined leave-one-out values (a statistic can be undefined on a few of them, e.g.
  // no diffusive regime without one realisation); the note records how many were used.
  const n = jackknifeValues.length;
  let used = 0;
  let mean = 0;
  for (let i = 0; i < n; i++) {
    if (Number.isFinite(jackknifeValues[i])) {
      mean += jackknifeValues[i];
      used++;
    }
  }
  if (used < 3) {
    return { interval: null, note: `statistic defined on only ${used} of ${n} leave-one-out samples` };
  }
  mean /= used;
  let s2 = 0;
  let s3 = 0;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(jackknifeValues[i])) continue;
    const d = mean - jackknifeValues[i];
    s2 += d * d;
    s3 += d * d * d;
  }
  const a = s2 > 0 ? s3 / (6 * Math.pow(s2, 1.5)) : 0;

  const alpha = 1 - level;
  const adjust = (q: number): number => {
    const z = normalQuantile(q);
    const w = z0 + z;
    return normalCdf(z0 + w / (1 - a * w));
  };
  const pLo = adjust(alpha / 2);
  const pHi = adjust(1 - alpha / 2);
  if (!(pLo >= 0 && pHi <= 1 && pLo < pHi)) {
    return { interval: null, note: `adjusted levels out of range (${pLo}, ${pHi})` };
  }
  return {
    interval: { lower: sortedQuantile(s, pLo), upper: sortedQuantile(s, pHi), level },
    note: used < n ? `acceleration from ${used} of ${n} leave-one-out samples (others undefined)` : null,
  };
}

/** Mean and sample standard deviation (n − 1) of the finite values; sd NaN below two values. */
export function meanAndSd(values: ArrayLike<number>): { n: number; mean: number; sd: number } {
  let n = 0, mean = 0, m2 = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (!Number.isFinite(v)) continue;
    n++;
    const d = v - mean;
    mean += d / n;
    m2 += d * (v - mean);
  }
  return { n, mean: n > 0 ? mean : Number.NaN, sd: n > 1 ? Math.sqrt(m2 / (n - 1)) : Number.NaN };
}

/** Sample standard deviation (divisor m − 1) of the finite values; null if fewer than 2. Welford update. */
export function standardDeviation(values: ArrayLike<number>): number | null {
  const s = meanAndSd(values);
  return s.n > 1 ? s.sd : null;
}

function finiteSorted(values: ArrayLike<number>): Float64Array {
  let m = 0;
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) m++;
  const s = new Float64Array(m);
  m = 0;
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) s[m++] = values[i];
  return s.sort();
}

function checkLevel(level: number): void {
  if (!(level > 0 && level < 1)) throw new RangeError(`confidence level must be in (0, 1), got ${level}`);
}
