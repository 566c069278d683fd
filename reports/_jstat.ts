/**
 * Typed door to the parts of jstat the reports use (jstat ships no TypeScript types).
 *
 * Method: jstat inverts the regularised incomplete beta function (Student t) and the complementary error
 * function (normal) numerically.
 *
 * References: M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (1964), §26.2 and §26.7;
 * W.H. Press et al., Numerical Recipes, 3rd ed. (2007), §6.4 and §6.14.
 */
import jstatModule from "jstat";

interface JStatSubset {
  studentt: { inv(p: number, dof: number): number };
  normal: { inv(p: number, mean: number, sd: number): number };
}

const jStat = jstatModule as unknown as JStatSubset;

/**
 * Quantile of Student's t distribution: the x with P(T ≤ x) = p for `dof` degrees of freedom
 * (dof = Infinity gives the standard normal quantile).
 *
 * @example
 * ```ts
 * studentTQuantile(0.975, 4); // 2.7764…
 * ```
 */
export function studentTQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`probability must be in (0, 1), got ${p}`);
  if (!(dof > 0)) throw new RangeError(`degrees of freedom must be > 0, got ${dof}`);
  return dof === Infinity ? jStat.normal.inv(p, 0, 1) : jStat.studentt.inv(p, dof);
}
