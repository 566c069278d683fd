/**
 * Ensemble means with Student-t confidence intervals, and Welford's running variance.
 *
 * Method: for n independent realisations x₁…xₙ the interval is x̄ ± t_{(1+c)/2, n−1} · s/√n with s the sample
 * standard deviation (divisor n − 1) and c the confidence level (0.95 by default). Mean and variance come from
 * Welford's one-pass update, which does not lose precision when the mean is large against the spread.
 * With n = 1 there is no interval (s is undefined); with n = 0 there is no mean either.
 *
 * References: B.P. Welford, "Note on a method for calculating corrected sums of squares and products",
 * Technometrics 4, 419 (1962), doi:10.1080/00401706.1962.10490022. M. Abramowitz, I.A. Stegun, Handbook of
 * Mathematical Functions (1964), Table 26.10 (t quantiles). NIST/SEMATECH e-Handbook of Statistical Methods,
 * §1.3.6.7.2 and §7.2.2.1 (confidence interval for the mean), doi:10.18434/M32189.
 *
 * @example
 * ```ts
 * const ci = meanInterval([2, 4, 4, 4, 5, 5, 7, 9]);
 * // ci.mean = 5, ci.sd ≈ 2.138, ci.lower ≈ 3.213, ci.upper ≈ 6.787 (95 %, t₀.₉₇₅,₇ = 2.3646)
 * ```
 */
import { studentTQuantile } from "../analysis/estimators/mod.ts";

/** Running mean and variance, one value at a time (Welford 1962). */
export class Welford {
  #n = 0;
  #mean = 0;
  #m2 = 0;

  /** Adds one value. */
  push(x: number): void {
    this.#n++;
    const delta = x - this.#mean;
    this.#mean += delta / this.#n;
    this.#m2 += delta * (x - this.#mean);
  }

  /** Number of values pushed. */
  get n(): number {
    return this.#n;
  }

  /** Mean (NaN when empty). */
  get mean(): number {
    return this.#n > 0 ? this.#mean : Number.NaN;
  }

  /** Sample variance with divisor n − 1 (NaN when n < 2). */
  get variance(): number {
    return this.#n > 1 ? this.#m2 / (this.#n - 1) : Number.NaN;
  }

  /** Sample standard deviation (NaN when n < 2). */
  get sd(): number {
    return Math.sqrt(this.variance);
  }

  /** Clears to the empty state so the object can be reused. */
  reset(): void {
    this.#n = 0;
    this.#mean = 0;
    this.#m2 = 0;
  }
}

/** A mean with its confidence interval. `lower`/`upper` are null when n < 2 (`note` says why). */
export interface MeanInterval {
  readonly n: number;
  /** NaN when n = 0. */
  readonly mean: number;
  /** Sample standard deviation; NaN when n < 2. */
  readonly sd: number;
  /** Standard error s/√n; NaN when n < 2. */
  readonly sem: number;
  readonly lower: number | null;
  readonly upper: number | null;
  /** Confidence level, e.g. 0.95. */
  readonly level: number;
  /** Why there is no interval, when there is none. */
  readonly note: string | null;
}

/** Text used when a single realisation gives a mean without an interval. */
export const NO_INTERVAL_N1 = "n = 1: no confidence interval (one realisation has no spread estimate)";
/** Text used when there are no values. */
export const NO_INTERVAL_N0 = "n = 0: no values";

/**
 * Mean and Student-t confidence interval of the finite values (NaN and ±Infinity are skipped, so n counts
 * finite values only).
 *
 * @example
 * ```ts
 * meanInterval([1, 2, 3]);            // mean 2, 95 % interval 2 ± 4.3027/√3
 * meanInterval([7]).note;             // "n = 1: no confidence interval …"
 * meanInterval([1, 2, 3], { level: 0.9 });
 * ```
 */
export function meanInterval(values: ArrayLike<number>, opts: { level?: number } = {}): MeanInterval {
  const w = new Welford();
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) w.push(values[i]);
  return intervalFromMoments(w.n, w.mean, w.sd, opts.level ?? 0.95);
}

/**
 * Interval from precomputed moments (n, mean, sample sd). Used by aggregators that run `Welford` themselves.
 */
export function intervalFromMoments(n: number, mean: number, sd: number, level = 0.95): MeanInterval {
  if (!(level > 0 && level < 1)) throw new RangeError(`confidence level must be in (0, 1), got ${level}`);
  if (n < 2) {
    return {
      n,
      mean: n === 1 ? mean : Number.NaN,
      sd: Number.NaN,
      sem: Number.NaN,
      lower: null,
      upper: null,
      level,
      note: n === 1 ? NO_INTERVAL_N1 : NO_INTERVAL_N0,
    };
  }
  const sem = sd / Math.sqrt(n);
  const half = tQuantileCached(level, n - 1) * sem;
  return { n, mean, sd, sem, lower: mean - half, upper: mean + half, level, note: null };
}

const quantileCache = new Map<string, number>();

/** t_{(1+level)/2, dof}, memoised: aggregates ask for the same few values thousands of times. */
function tQuantileCached(level: number, dof: number): number {
  const key = `${level}/${dof}`;
  let q = quantileCache.get(key);
  if (q === undefined) {
    q = studentTQuantile((1 + level) / 2, dof);
    quantileCache.set(key, q);
  }
  return q;
}
