/**
 * How many realisations a target precision needs, decided honestly: Stein's two-stage procedure, and the
 * half-width a pilot's spread projects at any number of realisations.
 *
 * Method (C. Stein, Ann. Math. Statist. 16, 243 (1945), doi:10.1214/aoms/1177731088). A first stage of n₀
 * independent realisations gives the sample standard deviation s₁ (n₀ − 1 degrees of freedom). For a target
 * half-width h of a two-sided interval at level 1 − a, the total is fixed once, from the first stage alone:
 *
 *     N = max(n₀, ⌈(t · s₁ / h)²⌉),   t = t_{1 − a/2, n₀ − 1}  (Student),
 *
 * optionally capped. After all N realisations the interval is x̄_N ± t·s₁/√N, with s₁ from the first stage,
 * not recomputed. For normally distributed values √N(x̄_N − μ)/s₁ follows Student's t with n₀ − 1 degrees of
 * freedom whatever N is (N depends only on s₁, which is independent of the sample means), so the coverage is
 * exactly 1 − a, and the half-width t·s₁/√N ≤ h whenever the cap does not bind. A cap keeps the coverage (N
 * still depends on s₁ only) but the interval may stay wider than h.
 *
 * Why not "add realisations until the interval looks narrow": stopping when the running interval first falls
 * below h stops preferentially when the sample variance happens to be low, so that interval under-covers.
 *
 * Caveats: (1) exact only for normal values; for skewed ones (counts near 0) the coverage is approximate, and
 * better the larger n₀ (n₀ ≥ 10 recommended). (2) A relative target h = r·|x̄₁| takes the first-stage mean
 * into N, which breaks the independence: the coverage is then approximately nominal when x̄₁ is precise
 * compared with r. (3) For estimators that are not means of per-realisation values (the diffusion
 * coefficient) s₁ is the bootstrap standard error × √n₀, a large-sample approximation.
 *
 * The projection of a pilot of n realisations with spread s to N realisations is t_{1 − a/2, N − 1}·s/√N
 * (the half-width a study of N would get if its spread were the pilot's).
 *
 * @example
 * ```ts
 * const plan = steinSampleSize({ n: 10, sd: 2.3 }, { halfWidth: 0.5 });
 * plan.total;                                // realisations in all (≥ 10)
 * steinInterval(plan, 12.1, plan.total);     // { lower, upper, halfWidth } after the second stage
 * projectedHalfWidth(2.3, 64);               // ≈ 0.57
 * ```
 */
import { studentTQuantile } from "./_jstat.ts";
export { meanAndSd } from "./bootstrap.ts";

/** What the first stage decided. */
export interface SteinPlan {
  /** First-stage size n₀ and standard deviation s₁. */
  readonly n0: number;
  readonly sd: number;
  /** Target half-width h (in the unit of the values). */
  readonly halfWidth: number;
  readonly level: number;
  /** t_{1 − a/2, n₀ − 1}. */
  readonly t: number;
  /** N without the cap. */
  readonly required: number;
  /** N after the cap (what is run). */
  readonly total: number;
  /** False when the cap stops short of `required`. */
  readonly reachable: boolean;
}

/**
 * Stein's total sample size from the first stage (see the module comment).
 * @throws RangeError for n₀ < 2, a negative or non-finite sd, a half-width ≤ 0, a level outside (0, 1) or a
 * cap below n₀.
 */
export function steinSampleSize(
  stage1: { readonly n: number; readonly sd: number },
  opts: { readonly halfWidth: number; readonly level?: number; readonly cap?: number },
): SteinPlan {
  const level = opts.level ?? 0.95;
  const { n, sd } = stage1;
  if (!Number.isInteger(n) || n < 2) throw new RangeError(`the first stage needs ≥ 2 realisations, got ${n}`);
  if (!(sd >= 0 && Number.isFinite(sd))) throw new RangeError(`sd must be finite and ≥ 0, got ${sd}`);
  if (!(opts.halfWidth > 0 && Number.isFinite(opts.halfWidth))) {
    throw new RangeError(`the target half-width must be > 0, got ${opts.halfWidth}`);
  }
  if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
  const cap = opts.cap ?? Number.POSITIVE_INFINITY;
  if (!(cap >= n)) throw new RangeError(`the cap (${cap}) must be at least the first stage (${n})`);
  const t = studentTQuantile(1 - (1 - level) / 2, n - 1);
  const ratio = (t * sd) / opts.halfWidth;
  const required = Math.max(n, Math.ceil(ratio * ratio * (1 - 1e-12)));
  const total = Math.min(required, cap);
  return { n0: n, sd, halfWidth: opts.halfWidth, level, t, required, total, reachable: total >= required };
}

/** The final interval x̄_N ± t·s₁/√N of Stein's procedure (`n` realisations actually used). */
export function steinInterval(
  plan: SteinPlan,
  mean: number,
  n: number,
): { readonly lower: number; readonly upper: number; readonly halfWidth: number } {
  const hw = (plan.t * plan.sd) / Math.sqrt(n);
  return { lower: mean - hw, upper: mean + hw, halfWidth: hw };
}

/** Half-width t_{1 − a/2, N − 1}·s/√N that a spread `sd` projects at N realisations (N ≥ 2). */
export function projectedHalfWidth(sd: number, N: number, level = 0.95): number {
  if (!(N >= 2)) return Number.NaN;
  return (studentTQuantile(1 - (1 - level) / 2, N - 1) * sd) / Math.sqrt(N);
}

/**
 * Smallest N ≥ 2 whose projected half-width is at most `halfWidth` (Infinity when sd is not finite or the
 * target is not positive); searched up to `max` (default 10⁷), beyond which Infinity is returned.
 */
export function realisationsFor(sd: number, halfWidth: number, level = 0.95, max = 1e7): number {
  if (!(Number.isFinite(sd) && halfWidth > 0)) return Number.POSITIVE_INFINITY;
  if (sd === 0) return 2;
  const z = studentTQuantile(1 - (1 - level) / 2, Infinity);
  let N = Math.max(2, Math.ceil(((z * sd) / halfWidth) ** 2));
  while (N <= max && projectedHalfWidth(sd, N, level) > halfWidth) N++;
  return N <= max ? N : Number.POSITIVE_INFINITY;
}
