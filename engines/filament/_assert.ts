/**
 * Test helpers of the filament engine: relative float checks that print got, expected and difference.
 * Private to `engines/filament/` (engines import nothing outside `engines/`).
 */
import assert from "node:assert/strict";

/** Asserts |got − expected| ≤ rtol·|expected| (or ≤ rtol when expected is 0), printing the figures. */
export function assertRelClose(got: number, expected: number, rtol: number, what = "value"): void {
  const diff = got - expected;
  const scale = expected === 0 ? 1 : Math.abs(expected);
  const rel = Math.abs(diff) / scale;
  const line = `${what}: got ${got}, expected ${expected}, diff ${diff} (rel ${
    rel.toExponential(3)
  }, rtol ${rtol})`;
  assert.ok(Number.isFinite(got) && rel <= rtol, line);
}

/** Asserts |got − expected| ≤ atol, printing the figures. */
export function assertAbsClose(got: number, expected: number, atol: number, what = "value"): void {
  const diff = got - expected;
  const line = `${what}: got ${got}, expected ${expected}, diff ${diff} (atol ${atol})`;
  assert.ok(Number.isFinite(got) && Math.abs(diff) <= atol, line);
}

/** Asserts got < bound, printing the figures. */
export function assertBelow(got: number, bound: number, what = "value"): void {
  assert.ok(got < bound, `${what}: got ${got}, bound ${bound}`);
}
