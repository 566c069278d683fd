/**
 * Brent's method for a local minimum of a function of one variable on an interval, without derivatives.
 *
 * Method: golden-section search safeguarded by successive parabolic interpolation through the three best
 * points (x, w, v). A parabolic step is taken only when it falls inside the current interval and moves less
 * than half the step before last; otherwise a golden-section step is taken. The search stops when the
 * interval [a, b] around the best point x satisfies |x − m| ≤ 2·tol − (b − a)/2, with m the midpoint and
 * tol = ε|x| + t/3 (the convention of Forsythe–Malcolm–Moler's `fmin`, so that x lies within about
 * 3ε|x| + t of a local minimiser). Otherwise follows Brent's ALGOL procedure `localmin` (1973, ch. 5, §8)
 * step for step.
 *
 * References: R.P. Brent, Algorithms for Minimization without Derivatives (Prentice-Hall, 1973; Dover reprint
 * 2002, ISBN 0-486-41998-3), ch. 5; G.E. Forsythe, M.A. Malcolm, C.B. Moler, Computer Methods for
 * Mathematical Computations (Prentice-Hall, 1977), §8.2 (`fmin`).
 *
 * @example
 * ```ts
 * import { brentMinimize } from "./brent.ts";
 * const r = brentMinimize(Math.cos, 3, 4, { tolerance: 1e-10 });
 * console.log(r.x); // ≈ π
 * ```
 */

export interface BrentOptions {
  /** Absolute tolerance t on the minimiser (default 1e-10). */
  readonly tolerance?: number;
  /** Relative tolerance ε (default √(machine epsilon) ≈ 1.49e-8, Brent's choice). */
  readonly relativeTolerance?: number;
  /** Maximum number of function evaluations (default 500). */
  readonly maxEvaluations?: number;
}

export interface BrentResult {
  /** Best point found. */
  readonly x: number;
  /** f(x). */
  readonly fx: number;
  readonly evaluations: number;
  /** False when `maxEvaluations` was reached before the tolerance test passed. */
  readonly converged: boolean;
}

const GOLDEN = (3 - Math.sqrt(5)) / 2;

/** Minimises f on [a, b] (a < b); returns a local minimiser (the global one if f is unimodal there). */
export function brentMinimize(
  f: (x: number) => number,
  a: number,
  b: number,
  options: BrentOptions = {},
): BrentResult {
  if (!(Number.isFinite(a) && Number.isFinite(b) && a < b)) {
    throw new RangeError(`brentMinimize needs a finite interval a < b, got [${a}, ${b}]`);
  }
  const t = options.tolerance ?? 1e-10;
  const eps = options.relativeTolerance ?? Math.sqrt(Number.EPSILON);
  const maxEval = options.maxEvaluations ?? 500;
  if (!(t > 0) || !(eps > 0)) throw new RangeError("tolerances must be positive");

  let v = a + GOLDEN * (b - a);
  let w = v;
  let x = v;
  let e = 0;
  let d = 0;
  let fx = evaluate(f, x);
  let fv = fx;
  let fw = fx;
  let evaluations = 1;
  let converged = false;

  while (evaluations < maxEval) {
    const m = 0.5 * (a + b);
    const tol = eps * Math.abs(x) + t / 3;
    const t2 = 2 * tol;
    if (Math.abs(x - m) <= t2 - 0.5 * (b - a)) {
      converged = true;
      break;
    }
    let golden = true;
    if (Math.abs(e) > tol) {
      // Fit a parabola through x, w, v.
      let r = (x - w) * (fx - fv);
      let q = (x - v) * (fx - fw);
      let p = (x - v) * q - (x - w) * r;
      q = 2 * (q - r);
      if (q > 0) p = -p;
      else q = -q;
      r = e;
      e = d;
      if (Math.abs(p) < Math.abs(0.5 * q * r) && p > q * (a - x) && p < q * (b - x)) {
        d = p / q;
        const u = x + d;
        // f must not be evaluated too close to a or b.
        if (u - a < t2 || b - u < t2) d = x < m ? tol : -tol;
        golden = false;
      }
    }
    if (golden) {
      e = (x < m ? b : a) - x;
      d = GOLDEN * e;
    }
    // f must not be evaluated too close to x.
    const u = x + (Math.abs(d) >= tol ? d : d > 0 ? tol : -tol);
    const fu = evaluate(f, u);
    evaluations++;
    if (fu <= fx) {
      if (u < x) b = x;
      else a = x;
      v = w;
      fv = fw;
      w = x;
      fw = fx;
      x = u;
      fx = fu;
    } else {
      if (u < x) a = u;
      else b = u;
      if (fu <= fw || w === x) {
        v = w;
        fv = fw;
        w = u;
        fw = fu;
      } else if (fu <= fv || v === x || v === w) {
        v = u;
        fv = fu;
      }
    }
  }
  return { x, fx, evaluations, converged };
}

function evaluate(f: (x: number) => number, x: number): number {
  const y = f(x);
  if (Number.isNaN(y)) throw new RangeError(`brentMinimize: objective returned NaN at x = ${x}`);
  return y;
}
