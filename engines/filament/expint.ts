/**
 * The exponential integral Ei(x) for x > 0, used by the exact lifetime of a vortex ring shrinking under
 * mutual friction.
 *
 * Method: the convergent series Ei(x) = γ + ln x + Σ_{n≥1} xⁿ/(n·n!) (Abramowitz & Stegun 5.1.10). For x > 0
 * every term is positive, so there is no cancellation at any x; terms are summed until they no longer change
 * the (Neumaier-compensated) sum. The number of terms grows like x, so arguments are limited to x ≤ 700
 * (beyond that Ei overflows a double anyway).
 *
 * References: M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (NBS, 1964), §5.1,
 * eq. 5.1.10 and Table 5.1. Neumaier, ZAMM 54, 39 (1974), doi:10.1002/zamm.19740540106.
 *
 * @example
 * ```ts
 * import { expIntEi } from "./expint.ts";
 * expIntEi(1); // 1.8951178163559368
 * ```
 */

/** The Euler–Mascheroni constant γ_E. */
export const EULER_GAMMA = 0.5772156649015329;

/** Ei(x) for 0 < x ≤ 700; throws RangeError outside. */
export function expIntEi(x: number): number {
  if (!(x > 0 && x <= 700)) throw new RangeError(`expIntEi: argument must be in (0, 700], got ${x}`);
  let sum = 0;
  let comp = 0;
  let term = 1; // xⁿ/n!
  for (let n = 1; n < 5000; n++) {
    term *= x / n;
    const add = term / n;
    const t = sum + add;
    comp += Math.abs(sum) >= Math.abs(add) ? (sum - t) + add : (add - t) + sum;
    sum = t;
    if (add <= 1e-17 * sum && n > x) break;
  }
  return EULER_GAMMA + Math.log(x) + (sum + comp);
}
