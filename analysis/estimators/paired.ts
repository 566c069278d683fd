/**
 * Paired comparisons of reruns with the same seeds (the numerical audit): the same initial conditions run with
 * the study's numerics (a) and refined or varied ones (b), compared realisation by realisation.
 *
 * Method. For per-realisation values the difference d_i = b_i − a_i of each complete pair gives the mean
 * difference d̄ with Student's paired t interval d̄ ± t_{1−a/2, n−1}·s_d/√n (pairs with a non-finite value on
 * either side are left out and counted). Pairing removes the spread between initial conditions from the
 * comparison, as far as the two runs stay correlated; in chaotic dynamics they decorrelate after a while and
 * the interval widens to that of two independent samples, which is still correct.
 *
 * For estimators that are not means of per-realisation values (the diffusion coefficient), both sides are
 * bootstrapped with the same resampled realisation indices (same seed, same pairs in the same order), and the
 * interval of the difference is the percentile interval of the replicate differences (B. Efron,
 * R.J. Tibshirani, An Introduction to the Bootstrap (1993), §10, doi:10.1201/9780429246593).
 *
 * References: W.S. Gosset ("Student"), Biometrika 6, 1 (1908), doi:10.1093/biomet/6.1.1 (the t distribution).
 *
 * @example
 * ```ts
 * const d = pairedDifference([1.0, 2.1, 2.9], [1.1, 2.0, 3.2]);
 * d.mean; // 0.1
 * ```
 */
import { studentTQuantile } from "./_jstat.ts";
import { percentileInterval, standardDeviation } from "./bootstrap.ts";

/** A paired mean difference b − a with its interval. */
export interface PairedDifference {
  /** Complete pairs used. */
  readonly n: number;
  /** Pairs left out because a value is missing or not finite on either side. */
  readonly incomplete: number;
  readonly meanA: number;
  readonly meanB: number;
  /** d̄ = mean of b − a. */
  readonly mean: number;
  /** Standard deviation of the differences (NaN below two pairs). */
  readonly sd: number;
  readonly lower: number | null;
  readonly upper: number | null;
  readonly level: number;
}

/** Student's paired t interval of mean(b − a) (see the module comment). */
export function pairedDifference(
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  opts: { readonly level?: number } = {},
): PairedDifference {
  if (a.length !== b.length) {
    throw new RangeError(`paired samples differ in length: ${a.length} ≠ ${b.length}`);
  }
  const level = opts.level ?? 0.95;
  let n = 0, sa = 0, sb = 0, mean = 0, m2 = 0;
  for (let i = 0; i < a.length; i++) {
    if (!Number.isFinite(a[i]) || !Number.isFinite(b[i])) continue;
    n++;
    sa += a[i];
    sb += b[i];
    const d = b[i] - a[i];
    const delta = d - mean;
    mean += delta / n;
    m2 += delta * (d - mean);
  }
  const sd = n > 1 ? Math.sqrt(m2 / (n - 1)) : Number.NaN;
  let lower: number | null = null, upper: number | null = null;
  if (n > 1) {
    const hw = (studentTQuantile(1 - (1 - level) / 2, n - 1) * sd) / Math.sqrt(n);
    lower = mean - hw;
    upper = mean + hw;
  }
  return {
    n,
    incomplete: a.length - n,
    meanA: n > 0 ? sa / n : Number.NaN,
    meanB: n > 0 ? sb / n : Number.NaN,
    mean: n > 0 ? mean : Number.NaN,
    sd,
    lower,
    upper,
    level,
  };
}

/**
 * The difference b − a of two estimates bootstrapped with the same resampled indices, with the percentile
 * interval of the replicate differences (replicates where either side is not finite are left out).
 */
export function pairedReplicateDifference(
  a: { readonly value: number; readonly replicates: ArrayLike<number> },
  b: { readonly value: number; readonly replicates: ArrayLike<number> },
  opts: { readonly level?: number } = {},
): {
  readonly mean: number;
  readonly lower: number | null;
  readonly upper: number | null;
  /** Standard deviation of the replicate differences (null below 2). */
  readonly standardError: number | null;
  readonly used: number;
} {
  if (a.replicates.length !== b.replicates.length) {
    throw new RangeError("both sides must be bootstrapped with the same number of replicates");
  }
  const diffs: number[] = [];
  for (let i = 0; i < a.replicates.length; i++) {
    const d = b.replicates[i] - a.replicates[i];
    if (Number.isFinite(d)) diffs.push(d);
  }
  const ci = diffs.length >= 2 ? percentileInterval(diffs, opts.level ?? 0.95) : null;
  return {
    mean: b.value - a.value,
    lower: ci?.lower ?? null,
    upper: ci?.upper ?? null,
    standardError: standardDeviation(diffs),
    used: diffs.length,
  };
}
