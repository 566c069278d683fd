/**
 * In-place 2D complex FFT of an n × n grid (n a power of two), interleaved [re, im] in a Float64Array,
 * row-major (point (i, j) — column i, row j — at index 2(j·n + i)). No allocation after construction.
 *
 * Method: row–column decomposition over the radix-4 1D transform of the npm package `fft.js` (chosen over
 * `ndarray-fft` and `ml-fft` for accuracy and speed, see DEVELOPERS.md "Gross–Pitaevskii engine"). Columns are
 * gathered in blocks of 8 so each row of the grid is read in whole cache lines. Forward: X_k = Σ_j x_j e^{−2πijk/n}
 * (unnormalised); inverse: x_j = (1/n²) Σ_k X_k e^{+2πijk/n}, so inverse(forward(x)) = x.
 *
 * References: J.W. Cooley, J.W. Tukey, Math. Comp. 19, 297 (1965), doi:10.1090/S0025-5718-1965-0178586-1;
 * W.H. Press et al., Numerical Recipes, 3rd ed. (CUP 2007) §12.4 (multidimensional FFT by rows and columns).
 *
 * @example
 * ```ts
 * const fft = new Fft2d(64);
 * const psi = new Float64Array(2 * 64 * 64);
 * fft.forward(psi);
 * fft.inverse(psi);
 * ```
 */
import FFT from "fft.js";

const BLOCK = 8;

export class Fft2d {
  readonly n: number;
  readonly #fft: FFT;
  readonly #rowIn: Float64Array;
  readonly #rowOut: Float64Array;
  readonly #block: Float64Array;
  readonly #views: Float64Array[];

  constructor(n: number) {
    if (!(Number.isInteger(n) && n >= 4 && (n & (n - 1)) === 0)) {
      throw new RangeError(`FFT size must be a power of two ≥ 4, got ${n}`);
    }
    this.n = n;
    this.#fft = new FFT(n);
    this.#rowIn = new Float64Array(2 * n);
    this.#rowOut = new Float64Array(2 * n);
    const b = Math.min(BLOCK, n);
    this.#block = new Float64Array(2 * n * b);
    this.#views = Array.from({ length: b }, (_, k) => this.#block.subarray(2 * n * k, 2 * n * (k + 1)));
  }

  /** Forward transform in place (e^{−2πi jk/n}, no normalisation). */
  forward(data: Float64Array): void {
    this.#transform(data, false);
  }

  /** Inverse transform in place (e^{+2πi jk/n}, divided by n²). */
  inverse(data: Float64Array): void {
    this.#transform(data, true);
  }

  #transform(data: Float64Array, inverse: boolean): void {
    const n = this.n, n2 = 2 * n;
    const f = this.#fft, rowIn = this.#rowIn, rowOut = this.#rowOut;
    for (let r = 0; r < n; r++) {
      const o = n2 * r;
      for (let k = 0; k < n2; k++) rowIn[k] = data[o + k];
      if (inverse) f.inverseTransform(rowOut, rowIn);
      else f.transform(rowOut, rowIn);
      data.set(rowOut, o);
    }
    const blk = this.#block, views = this.#views, b = views.length;
    for (let c0 = 0; c0 < n; c0 += b) {
      for (let r = 0; r < n; r++) {
        let o = 2 * (n * r + c0);
        for (let q = 0; q < b; q++, o += 2) {
          const p = n2 * q + 2 * r;
          blk[p] = data[o];
          blk[p + 1] = data[o + 1];
        }
      }
      for (let q = 0; q < b; q++) {
        if (inverse) f.inverseTransform(rowOut, views[q]);
        else f.transform(rowOut, views[q]);
        views[q].set(rowOut);
      }
      for (let r = 0; r < n; r++) {
        let o = 2 * (n * r + c0);
        for (let q = 0; q < b; q++, o += 2) {
          const p = n2 * q + 2 * r;
          data[o] = blk[p];
          data[o + 1] = blk[p + 1];
        }
      }
    }
  }
}
