/** Float assertions that state their tolerance and print got, expected and difference. */

/** Fails unless |got − expected| ≤ rtol·|expected| (or ≤ atol when given and larger). */
export function assertClose(got: number, expected: number, rtol: number, what = "value", atol = 0): void {
  const diff = Math.abs(got - expected);
  const bound = Math.max(rtol * Math.abs(expected), atol);
  if (!(diff <= bound)) {
    throw new Error(
      `${what}: got ${got}, expected ${expected}, difference ${diff.toExponential(3)} ` +
        `(relative ${(diff / Math.abs(expected)).toExponential(3)}) exceeds tolerance rtol=${rtol}` +
        (atol ? `, atol=${atol}` : ""),
    );
  }
}

export { deepStrictEqual as assertEquals, ok as assert } from "node:assert/strict";

/** Fails unless `fn` throws an instance of `ErrorClass` whose message contains `includes`. */
export function assertThrows(
  fn: () => unknown,
  // deno-lint-ignore no-explicit-any
  ErrorClass: new (...a: any[]) => Error,
  includes = "",
): Error {
  try {
    fn();
  } catch (e) {
    if (!(e instanceof ErrorClass)) {
      throw new Error(`expected ${ErrorClass.name}, got ${(e as Error)?.name}: ${(e as Error)?.message}`);
    }
    if (!e.message.includes(includes)) {
      throw new Error(`expected the message to contain '${includes}', got '${e.message}'`);
    }
    return e;
  }
  throw new Error(`expected ${ErrorClass.name} to be thrown, nothing was thrown`);
}
