/**
 * Typed access to the few jstat distribution functions the analysis needs (jstat ships no TypeScript types).
 * Inputs are validated here so a bad probability never reaches jstat's iterative inverses silently.
 *
 * References: M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (1964), ch. 26 (normal,
 * chi-square and Student-t distributions).
 */
import jStatModule from "jstat";

interface JStatDistributions {
  normal: {
    inv(p: number, mean: number, sd: number): number;
    cdf(x: number, mean: number, sd: number): number;
  };
  chisquare: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
  studentt: { inv(p: number, dof: number): number };
}

const jStat = jStatModule as unknown as JStatDistributions;

function checkProbability(p: number, what: string): void {
  if (!(p > 0 && p < 1)) throw new RangeError(`${what}: probability must be in (0, 1), got ${p}`);
}

function checkDof(dof: number, what: string): void {
  if (!(dof > 0 && Number.isFinite(dof))) {
    throw new RangeError(`${what}: degrees of freedom must be a positive finite number, got ${dof}`);
  }
}

/** Standard normal quantile Φ⁻¹(p), p ∈ (0, 1). */
export function normalQuantile(p: number): number {
  checkProbability(p, "normalQuantile");
  return jStat.normal.inv(p, 0, 1);
}

/** Standard normal distribution function Φ(x). */
export function normalCdf(x: number): number {
  return jStat.normal.cdf(x, 0, 1);
}

/** Chi-square quantile χ²_{ν,p}: the value below which a χ²_ν variable falls with probability p. */
export function chiSquareQuantile(p: number, dof: number): number {
  checkProbability(p, "chiSquareQuantile");
  checkDof(dof, "chiSquareQuantile");
  return jStat.chisquare.inv(p, dof);
}

/** Chi-square distribution function P(χ²_ν ≤ x). */
export function chiSquareCdf(x: number, dof: number): number {
  checkDof(dof, "chiSquareCdf");
  return jStat.chisquare.cdf(x, dof);
}

/** Student-t quantile t_{p,ν}; ν = ∞ gives the normal quantile. */
export function studentTQuantile(p: number, dof: number): number {
  checkProbability(p, "studentTQuantile");
  if (dof === Infinity) return jStat.normal.inv(p, 0, 1);
  checkDof(dof, "studentTQuantile");
  return jStat.studentt.inv(p, dof);
}
