/**
 * Hashed cell list heads for neighbour searches (reconnection candidates, near-field pairs): cells of a uniform
 * grid keyed by their integer coordinates (wrapped modulo nc in a periodic box), open addressing with linear
 * probing. The key packs 17 bits per axis (exact below 2^51); distinct cells sharing a key merely share a
 * list, and the callers' distance tests keep results exact. Common practice, no source.
 */
export class CellHash {
  /** First point of each slot's list (−1: empty). */
  head = new Int32Array(0);
  private keys = new Float64Array(0);
  private cap = 0;
  /** Cells per side of a periodic box (0: unbounded). */
  nc = 0;
  /** Key of the cell of the last `slot` call (store it when inserting into an empty slot). */
  lastKey = 0;

  /** Empties the table, sized for about n entries; nc > 0 wraps cell coordinates modulo nc. */
  reset(n: number, nc: number): void {
    let h = 64;
    while (h < 2 * n) h *= 2;
    if (h > this.cap) {
      this.head = new Int32Array(h);
      this.keys = new Float64Array(h);
      this.cap = h;
    }
    this.head.fill(-1);
    this.nc = nc;
  }

  /** Marks slot h (just returned by `slot(…, true)`) as holding the last key. */
  claim(h: number): void {
    if (this.head[h] === -1) this.keys[h] = this.lastKey;
  }

  /**
   * Slot of cell (ix, iy, iz): the slot holding it, or, if absent, the empty slot to insert it (insert = true)
   * or −1.
   */
  slot(ix: number, iy: number, iz: number, insert: boolean): number {
    const nc = this.nc;
    if (nc > 0) {
      ix = ((ix % nc) + nc) % nc;
      iy = ((iy % nc) + nc) % nc;
      iz = ((iz % nc) + nc) % nc;
    }
    const a = ix & 0x1ffff, b = iy & 0x1ffff, c = iz & 0x1ffff;
    const key = (a * 131072 + b) * 131072 + c;
    this.lastKey = key;
    const mask = this.cap - 1;
    let h = (Math.imul(a, 73856093) ^ Math.imul(b, 19349663) ^ Math.imul(c, 83492791)) & mask;
    for (;;) {
      if (this.head[h] === -1) return insert ? h : -1;
      if (this.keys[h] === key) return h;
      h = (h + 1) & mask;
    }
  }
}
