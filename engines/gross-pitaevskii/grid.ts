/**
 * The computational grid of the Gross–Pitaevskii engine: n × n points (n a power of two) with spacing h, a
 * periodic square [−L/2, L/2)² with L = n·h (lengths in the healing length ξ). Point (i, j) sits at
 * x_i = (i − n/2)·h, y_j = (j − n/2)·h, so the origin is a grid point; fields are stored row-major, point (i, j)
 * at index j·n + i (complex fields interleaved: re at 2(j·n + i), im at 2(j·n + i) + 1).
 *
 * Wave numbers follow the FFT ordering: k_i = (2π/L)·i for i < n/2 and (2π/L)·(i − n) otherwise; the Nyquist
 * mode i = n/2 gets −π/h (its derivative is set to zero, see `derivativeFactor`).
 *
 * @example
 * ```ts
 * const g = new Grid(128, 0.5); // 64 ξ × 64 ξ
 * g.coordinate(64); // 0
 * ```
 */
export class Grid {
  /** Points per side. */
  readonly n: number;
  /** Spacing h (ξ). */
  readonly h: number;
  /** Side L = n·h (ξ). */
  readonly side: number;
  /** Area element h² (ξ²). */
  readonly cell: number;
  /** Wave numbers k_i (1/ξ), FFT order. */
  readonly k: Float64Array;
  /** |k|² per point (1/ξ²), row-major. */
  readonly k2: Float64Array;

  constructor(n: number, h: number) {
    if (!(Number.isInteger(n) && n >= 4 && (n & (n - 1)) === 0)) {
      throw new RangeError(`grid points per side must be a power of two ≥ 4, got ${n}`);
    }
    if (!(h > 0 && Number.isFinite(h))) throw new RangeError(`grid spacing must be positive, got ${h}`);
    this.n = n;
    this.h = h;
    this.side = n * h;
    this.cell = h * h;
    const dk = 2 * Math.PI / this.side;
    this.k = new Float64Array(n);
    for (let i = 0; i < n; i++) this.k[i] = dk * (i < n / 2 ? i : i - n);
    this.k2 = new Float64Array(n * n);
    for (let j = 0; j < n; j++) {
      for (let i = 0; i < n; i++) this.k2[j * n + i] = this.k[i] * this.k[i] + this.k[j] * this.k[j];
    }
  }

  /** Coordinate of index i along either axis (ξ). */
  coordinate(i: number): number {
    return (i - this.n / 2) * this.h;
  }

  /**
   * Spectral first-derivative factor for index i: k_i, except 0 at the Nyquist index n/2 (the derivative of
   * that mode is not representable on the grid; zeroing it keeps derivatives of real fields real).
   */
  derivativeFactor(i: number): number {
    return i === this.n / 2 ? 0 : this.k[i];
  }
}
