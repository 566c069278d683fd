import { expIntEi } from "./expint.ts";
import { assertRelClose } from "./_assert.ts";
import assert from "node:assert/strict";

// Reference values of Ei(x): Abramowitz & Stegun Table 5.1 (Ei(1) = 1.895117816, Ei(2) = 4.954234356,
// Ei(5) = 40.18527536, Ei(10) = 2492.228976, digits from memory) confirmed to 30 digits with mpmath 1.3.0
// `mpmath.ei` (a reference library outside the project): python3 -c "import mpmath; print(mpmath.ei(1))".
const TABLE: ReadonlyArray<readonly [number, number]> = [
  [0.5, 0.454219904863173579920523812663],
  [1, 1.89511781635593675546652093433],
  [2, 4.95423435600189016337950513023],
  [5, 40.1852753558031774550914217938],
  [10, 2492.228976241877759138440144],
  [20, 25615652.6640565888204811208041],
  [50, 105856368971316909630.615414332],
];

Deno.test("expIntEi matches A&S Table 5.1 / mpmath values to 1e-13", () => {
  for (const [x, ei] of TABLE) assertRelClose(expIntEi(x), ei, 1e-13, `Ei(${x})`);
});

Deno.test("expIntEi agrees with the asymptotic expansion e^x/x Σ k!/x^k at large x (A&S 5.1.51 form)", () => {
  // Asymptotic series of Ei for x → ∞, truncated at its smallest term (A&S §5.1, eq. 5.1.51 for E1 with
  // x → −x); its truncation error is ~e^{−x}√(2πx) relative, far below the tolerance at x ≥ 40.
  for (const x of [40, 60, 100]) {
    let s = 0;
    let term = 1;
    for (let k = 0; k < x; k++) {
      s += term;
      const nextTerm = term * (k + 1) / x;
      if (nextTerm > term) break;
      term = nextTerm;
    }
    assertRelClose(expIntEi(x), Math.exp(x) / x * s, 1e-12, `Ei(${x}) vs asymptotic`);
  }
});

Deno.test("expIntEi has derivative e^x/x (definition of Ei)", () => {
  // Ei'(x) = e^x/x: A&S 5.1.2. Central difference with h = 1e-5 (error O(h²)).
  for (const x of [0.3, 3, 30]) {
    const h = 1e-5 * x;
    const d = (expIntEi(x + h) - expIntEi(x - h)) / (2 * h);
    assertRelClose(d, Math.exp(x) / x, 1e-7, `Ei'(${x})`);
  }
});

Deno.test("expIntEi refuses non-positive and too-large arguments", () => {
  assert.throws(() => expIntEi(0), RangeError);
  assert.throws(() => expIntEi(-1), RangeError);
  assert.throws(() => expIntEi(Number.NaN), RangeError);
  assert.throws(() => expIntEi(800), RangeError);
});
