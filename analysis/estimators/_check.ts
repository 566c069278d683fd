/**
 * Test helpers for the analysis folder: float comparisons that state their tolerance and print got, expected
 * and difference, and a seeded stream for tests.
 */
import { AssertionError } from "node:assert";

/** Asserts |got − expected| ≤ rel·|expected| (or ≤ abs when given and larger), printing the figures. */
export function assertClose(
  got: number,
  expected: number,
  tol: { rel?: number; abs?: number },
  label = "",
): void {
  const diff = got - expected;
  const allowed = Math.max((tol.rel ?? 0) * Math.abs(expected), tol.abs ?? 0);
  if (!(Math.abs(diff) <= allowed)) {
    throw new AssertionError({
      message: `${label ? label + ": " : ""}got ${got}, expected ${expected}, diff ${diff} ` +
        `(allowed ${allowed}; rel ${tol.rel ?? "-"}, abs ${tol.abs ?? "-"})`,
    });
  }
}

/** Asserts lo ≤ value ≤ hi, printing the figures. */
export function assertWithin(value: number, lo: number, hi: number, label = ""): void {
  if (!(value >= lo && value <= hi)) {
    throw new AssertionError({
      message: `${label ? label + ": " : ""}got ${value}, expected in [${lo}, ${hi}]`,
    });
  }
}
