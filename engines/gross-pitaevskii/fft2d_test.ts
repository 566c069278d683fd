import assert from "node:assert/strict";
import { Fft2d } from "./fft2d.ts";
import { randomComplex } from "./_testing.ts";

/** Direct O(n⁴) 2D DFT, X_{kl} = Σ_{ij} x_{ij} e^{−2πi(ik + jl)/n}, twiddles from exact index products mod n. */
function naiveDft(x: Float64Array, n: number): Float64Array {
  const c = Float64Array.from({ length: n }, (_, m) => Math.cos(2 * Math.PI * m / n));
  const s = Float64Array.from({ length: n }, (_, m) => Math.sin(2 * Math.PI * m / n));
  const out = new Float64Array(2 * n * n);
  for (let l = 0; l < n; l++) {
    for (let k = 0; k < n; k++) {
      let re = 0, im = 0;
      for (let j = 0; j < n; j++) {
        for (let i = 0; i < n; i++) {
          const m = (i * k + j * l) % n;
          const p = 2 * (j * n + i);
          re += x[p] * c[m] + x[p + 1] * s[m];
          im += x[p + 1] * c[m] - x[p] * s[m];
        }
      }
      out[2 * (l * n + k)] = re;
      out[2 * (l * n + k) + 1] = im;
    }
  }
  return out;
}

function relativeL2(a: Float64Array, b: Float64Array): number {
  let num = 0, den = 0;
  for (let i = 0; i < a.length; i++) {
    num += (a[i] - b[i]) ** 2;
    den += b[i] ** 2;
  }
  return Math.sqrt(num / den);
}

Deno.test("Fft2d.forward matches the direct DFT at n = 16 and 32 to 1e-14", () => {
  // Definition of the discrete Fourier transform (Cooley & Tukey 1965 compute exactly this sum).
  for (const n of [16, 32]) {
    const x = randomComplex(n * n, n);
    const ref = naiveDft(x, n);
    const y = x.slice();
    new Fft2d(n).forward(y);
    const err = relativeL2(y, ref);
    assert.ok(err < 1e-14, `n = ${n}: relative L2 error ${err} ≥ 1e-14`);
  }
});

Deno.test("Fft2d.inverse undoes forward and Parseval holds", () => {
  // Parseval: Σ|x|² = (1/n²) Σ|X|² (exact identity of the DFT; common practice, no source).
  const n = 64;
  const x = randomComplex(n * n, 3);
  const y = x.slice();
  const fft = new Fft2d(n);
  fft.forward(y);
  let ex = 0, ey = 0;
  for (let i = 0; i < x.length; i++) {
    ex += x[i] * x[i];
    ey += y[i] * y[i];
  }
  assert.ok(Math.abs(ey / (n * n) - ex) < 1e-12 * ex, `Parseval: ${ey / (n * n)} vs ${ex}`);
  fft.inverse(y);
  const err = relativeL2(y, x);
  assert.ok(err < 1e-15 * 10, `round trip relative error ${err}`);
});

Deno.test("Fft2d refuses sizes that are not powers of two", () => {
  assert.throws(() => new Fft2d(48), RangeError);
  assert.throws(() => new Fft2d(2), RangeError);
});
