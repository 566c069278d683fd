/**
 * Hashed cell list heads for neighbour searches (reconnection candidates, near-field pairs): cells of a uniform
 * grid keyed by their integer coordinates (wrapped modulo nc in a periodic box), open addressing with linear
 * probing. The key packs 17 bits per axis (exact below 2^51); distinct cells sharing a key merely share a
 * list, and the callers' distance tests keep results exact. Common practice, no source.
 */
import { type ArrayAllocator, PLAIN } from "./_alloc.ts";

/**
 * A cell table as the worker threads see it (typed arrays on SharedArrayBuffers): `CellHash` heads, keys, size − 1
 * and cells per side, the cell side cs, the cell reach span (cells searched on each side), the per-point list
 * links, and the periodic box side (0: unbounded).
 */
export interface CellTableView {
  readonly head: Int32Array;
  readonly keys: Float64Array;
  readonly mask: number;
  readonly nc: number;
  readonly cs: number;
  readonly span: number;
  readonly cellNext: Int32Array;
  readonly boxSize: number;
}

/**
 * Slot of cell (ix, iy, iz) in a table (head, keys, mask = size − 1, nc): the slot holding it, or, if absent,
 * the empty slot where it would go, as −2 − slot (a plain function, so worker threads can search a shared
 * table).
 */
export function cellSlot(
  head: Int32Array,
  keys: Float64Array,
  mask: number,
  nc: number,
  ix: number,
  iy: number,
  iz: number,
): number {
  if (nc > 0) {
    ix = ((ix % nc) + nc) % nc;
    iy = ((iy % nc) + nc) % nc;
    iz = ((iz % nc) + nc) % nc;
  }
  const a = ix & 0x1ffff, b = iy & 0x1ffff, c = iz & 0x1ffff;
  const key = (a * 131072 + b) * 131072 + c;
  let h = (Math.imul(a, 73856093) ^ Math.imul(b, 19349663) ^ Math.imul(c, 83492791)) & mask;
  for (;;) {
    if (head[h] === -1) return -2 - h;
    if (keys[h] === key) return h;
    h = (h + 1) & mask;
  }
}

export class CellHash {
  /** First point of each slot's list (−1: empty). */
  head: Int32Array = new Int32Array(0);
  /** Key of each occupied slot. */
  keys: Float64Array = new Float64Array(0);
  private cap = 0;
  /** Cells per side of a periodic box (0: unbounded). */
  nc = 0;
  /** Key of the cell of the last `slot` call (store it when inserting into an empty slot). */
  lastKey = 0;
  /** How the table is allocated (SHARED when worker threads read it). */
  alloc: ArrayAllocator = PLAIN;

  /** Table size − 1 (a power of two minus one). */
  get mask(): number {
    return this.cap - 1;
  }

  /** Empties the table, sized for about n entries; nc > 0 wraps cell coordinates modulo nc. */
  reset(n: number, nc: number): void {
    let h = 64;
    while (h < 2 * n) h *= 2;
    if (h > this.cap) {
      this.head = this.alloc.i32(h);
      this.keys = this.alloc.f64(h);
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
    this.lastKey = (a * 131072 + b) * 131072 + c;
    const h = cellSlot(this.head, this.keys, this.cap - 1, 0, a, b, c);
    return h >= 0 ? h : insert ? -2 - h : -1;
  }
}
