/**
 * Hashed cell list for fixed-radius neighbour queries in the plane or a periodic square box (private).
 *
 * Method: cells of side ≥ `cellSize` keyed by integer coordinates, hashed into a power-of-two table with
 * chained indices (Int32Array head/next), so far-flung vortices cost nothing extra and nothing is allocated
 * after construction. A query returns every inserted index in the 3 × 3 block of cells around a point, which
 * contains all points within `cellSize` of it. In a periodic box of side L the cell side is L/⌊L/cellSize⌋ and
 * cell coordinates wrap; with fewer than 3 cells per side every inserted index is returned.
 *
 * References: M.P. Allen, D.J. Tildesley, Computer Simulation of Liquids, 2nd ed. (OUP 2017) §5.3 (cell
 * lists), doi:10.1093/oso/9780198803195.001.0001.
 */

export class CellList {
  readonly #cell: number;
  readonly #side: number; // 0 = unbounded
  readonly #m: number; // cells per side (periodic); 0 = unbounded; < 3 = all-pairs mode
  readonly #head: Int32Array;
  readonly #next: Int32Array;
  readonly #cx: Float64Array;
  readonly #cy: Float64Array;
  readonly #members: Int32Array;
  readonly #mask: number;
  #count = 0;

  /** Cell list for up to `capacity` points; `side` > 0 makes it periodic with that box side. */
  constructor(capacity: number, cellSize: number, side = 0) {
    const c = Math.max(1, capacity);
    this.#side = side;
    if (side > 0) {
      this.#m = Math.floor(side / cellSize);
      this.#cell = this.#m >= 3 ? side / this.#m : side;
    } else {
      this.#m = 0;
      this.#cell = cellSize;
    }
    let size = 16;
    while (size < 2 * c) size *= 2;
    this.#head = new Int32Array(size).fill(-1);
    this.#next = new Int32Array(c);
    this.#cx = new Float64Array(c);
    this.#cy = new Float64Array(c);
    this.#members = new Int32Array(c);
    this.#mask = size - 1;
  }

  /** True when every query returns all points (periodic box with fewer than 3 cells per side). */
  get allPairs(): boolean {
    return this.#m > 0 && this.#m < 3;
  }

  clear(): void {
    this.#head.fill(-1);
    this.#count = 0;
  }

  /** Inserts point index i at (x, y). */
  insert(i: number, x: number, y: number): void {
    const cx = this.#coord(x), cy = this.#coord(y);
    this.#cx[i] = cx;
    this.#cy[i] = cy;
    const h = this.#hash(cx, cy);
    this.#next[i] = this.#head[h];
    this.#head[h] = i;
    this.#members[this.#count++] = i;
  }

  /** Writes into `out` the indices inserted in the 3 × 3 cells around (x, y); returns how many. */
  query(x: number, y: number, out: Int32Array): number {
    if (this.allPairs) {
      out.set(this.#members.subarray(0, this.#count));
      return this.#count;
    }
    const cx = this.#coord(x), cy = this.#coord(y);
    const m = this.#m;
    let k = 0;
    for (let dx = -1; dx <= 1; dx++) {
      let qx = cx + dx;
      if (m > 0) qx = qx < 0 ? qx + m : qx >= m ? qx - m : qx;
      for (let dy = -1; dy <= 1; dy++) {
        let qy = cy + dy;
        if (m > 0) qy = qy < 0 ? qy + m : qy >= m ? qy - m : qy;
        for (let j = this.#head[this.#hash(qx, qy)]; j >= 0; j = this.#next[j]) {
          if (this.#cx[j] === qx && this.#cy[j] === qy) out[k++] = j;
        }
      }
    }
    return k;
  }

  #coord(x: number): number {
    if (this.#m === 0) return Math.floor(x / this.#cell);
    if (this.#m < 3) return 0;
    const m = this.#m;
    const c = Math.floor((x + 0.5 * this.#side) / this.#cell) % m;
    return c < 0 ? c + m : c;
  }

  #hash(cx: number, cy: number): number {
    return (Math.imul(cx | 0, 0x9e3779b1) ^ Math.imul(cy | 0, 0x85ebca77)) & this.#mask;
  }
}
