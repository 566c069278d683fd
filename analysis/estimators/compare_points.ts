/**
 * The study's question answered with numbers: how D differs between parameter points, and how it trends with
 * a numeric swept parameter, each with a bootstrap interval.
 *
 * Method. The points' realisations are independent, so the bootstrap of a difference draws each point's
 * realisations separately: with D*_p[b] the b-th replicate of point p (window fixed, as for its own
 * interval), ΔD*[b] = D*_p[b] − D*_q[b] and (D_p/D_q)*[b] = D*_p[b]/D*_q[b]. Intervals: percentile, or BCa
 * when leave-one-out values are given (the jackknife of a difference of independent samples leaves out one
 * realisation of either point). Trend: weighted least squares D_p = a + c·x_p with weights 1/se_p² (se = the
 * bootstrap standard error of D_p), slope c with the percentile interval of the slopes of the replicate
 * vectors (D*_1[b], …, D*_P[b]) under the same weights; goodness of the line: χ²/(P − 2) with the se_p.
 * A difference or slope whose interval contains 0 is "no detectable dependence" at that level.
 *
 * References: B. Efron, R.J. Tibshirani, An Introduction to the Bootstrap (1993), doi:10.1201/9780429246593,
 * ch. 13–14 (two-sample problems, percentile and BCa intervals); B. Efron, J. Am. Stat. Assoc. 82, 171 (1987),
 * doi:10.1080/01621459.1987.10478410; P.R. Bevington, D.K. Robinson, Data Reduction and Error Analysis for
 * the Physical Sciences, 3rd ed. (McGraw-Hill 2003), ch. 6 (weighted straight-line fit).
 *
 * @example
 * ```ts
 * import { pointDifference } from "./compare_points.ts";
 * const diff = pointDifference(
 *   { D: 0.46, replicates: repsOf140 },
 *   { D: 0.42, replicates: repsOf100 },
 *   { level: 0.95 },
 * );
 * console.log(diff.value, diff.interval, diff.detectable);
 * ```
 */
import {
  bcaInterval,
  type Interval,
  percentileInterval,
  pickInterval,
  standardDeviation,
} from "./bootstrap.ts";

/** One point's answer with its bootstrap replicates (same count B for every point) and jackknife values. */
export interface PointAnswer {
  readonly D: number;
  readonly replicates: ArrayLike<number>;
  /** Leave-one-out values of D (optional; enable BCa). */
  readonly jackknife?: ArrayLike<number> | null;
}

export interface Comparison {
  readonly value: number;
  readonly interval: Interval | null;
  readonly method: "bca" | "percentile" | null;
  /** True when the interval excludes the null value (0 for differences, 1 for ratios). */
  readonly detectable: boolean;
}

function compare(
  value: number,
  reps: Float64Array,
  jack: Float64Array | null,
  level: number,
  nullValue: number,
): Comparison {
  const percentile = percentileInterval(reps, level);
  const bca = jack ? bcaInterval(reps, value, jack, level).interval : null;
  const pick = pickInterval({ percentile, bca, bcaNote: null, standardError: null });
  const interval = pick.lower !== null && pick.upper !== null
    ? { lower: pick.lower, upper: pick.upper, level }
    : null;
  return {
    value,
    interval,
    method: pick.method,
    detectable: interval !== null && (interval.lower > nullValue || interval.upper < nullValue),
  };
}

function checkPair(a: PointAnswer, b: PointAnswer): number {
  const B = a.replicates.length;
  if (B !== b.replicates.length) {
    throw new RangeError(
      `both points need the same number of replicates, got ${B} and ${b.replicates.length}`,
    );
  }
  return B;
}

/** D_a − D_b and D_a/D_b with bootstrap intervals (see the module comment). */
export function pointDifference(
  a: PointAnswer,
  b: PointAnswer,
  options: { readonly level?: number } = {},
): { readonly difference: Comparison; readonly ratio: Comparison } {
  const level = options.level ?? 0.95;
  const B = checkPair(a, b);
  const diff = new Float64Array(B), ratio = new Float64Array(B);
  for (let q = 0; q < B; q++) {
    diff[q] = a.replicates[q] - b.replicates[q];
    ratio[q] = b.replicates[q] !== 0 ? a.replicates[q] / b.replicates[q] : Number.NaN;
  }
  let jd: Float64Array | null = null, jr: Float64Array | null = null;
  if (a.jackknife && b.jackknife) {
    const na = a.jackknife.length, nb = b.jackknife.length;
    jd = new Float64Array(na + nb);
    jr = new Float64Array(na + nb);
    for (let i = 0; i < na; i++) {
      jd[i] = a.jackknife[i] - b.D;
      jr[i] = a.jackknife[i] / b.D;
    }
    for (let j = 0; j < nb; j++) {
      jd[na + j] = a.D - b.jackknife[j];
      jr[na + j] = a.D / b.jackknife[j];
    }
  }
  return {
    difference: compare(a.D - b.D, diff, jd, level, 0),
    ratio: compare(a.D / b.D, ratio, jr, level, 1),
  };
}

export interface TrendFit {
  readonly slope: Comparison;
  readonly intercept: number;
  /** χ² of the weighted line per degree of freedom (null for two points). */
  readonly reducedChi2: number | null;
  /** Weights 1/se² used. */
  readonly weights: readonly number[];
}

/** Weighted least-squares line through (x_p, y_p) with weights w_p; slope and intercept. */
function weightedLine(x: ArrayLike<number>, y: ArrayLike<number>, w: ArrayLike<number>): [number, number] {
  let sw = 0, sx = 0, sy = 0;
  for (let p = 0; p < x.length; p++) {
    sw += w[p];
    sx += w[p] * x[p];
    sy += w[p] * y[p];
  }
  const mx = sx / sw, my = sy / sw;
  let sxx = 0, sxy = 0;
  for (let p = 0; p < x.length; p++) {
    sxx += w[p] * (x[p] - mx) ** 2;
    sxy += w[p] * (x[p] - mx) * (y[p] - my);
  }
  const slope = sxy / sxx;
  return [slope, my - slope * mx];
}

/**
 * Trend of D with a numeric parameter x over ≥ 2 points (distinct x): weighted slope and its bootstrap
 * interval (see the module comment).
 */
export function trendFit(
  x: readonly number[],
  answers: readonly PointAnswer[],
  options: { readonly level?: number } = {},
): TrendFit {
  const level = options.level ?? 0.95;
  const P = x.length;
  if (P < 2 || answers.length !== P) throw new RangeError(`need ≥ 2 points with one answer each, got ${P}`);
  if (new Set(x).size < 2) throw new RangeError("the parameter must take at least two distinct values");
  const B = answers[0].replicates.length;
  for (const a of answers) checkPair(answers[0], a);
  const weights = answers.map((a) => {
    const se = standardDeviation(a.replicates);
    return se !== null && se > 0 ? 1 / (se * se) : 1;
  });
  const y = answers.map((a) => a.D);
  const [slope, intercept] = weightedLine(x, y, weights);
  const reps = new Float64Array(B);
  const row = new Float64Array(P);
  for (let b = 0; b < B; b++) {
    for (let p = 0; p < P; p++) row[p] = answers[p].replicates[b];
    reps[b] = weightedLine(x, row, weights)[0];
  }
  let chi2 = 0;
  for (let p = 0; p < P; p++) chi2 += weights[p] * (y[p] - intercept - slope * x[p]) ** 2;
  return {
    slope: compare(slope, reps, null, level, 0),
    intercept,
    reducedChi2: P > 2 ? chi2 / (P - 2) : null,
    weights,
  };
}
