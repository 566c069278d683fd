/**
 * Open-addressing hash table from int32 object ids to int32 values (slots, indices), with linear probing.
 * Allocates only when it grows (load factor ≤ 1/2); `clear()` reuses the buffers.
 *
 * Method: multiplicative (Fibonacci) hashing into a power-of-two table; Knuth, TAOCP Vol. 3 §6.4 (1998).
 */
export class IdTable {
  #keys: Int32Array;
  #values: Int32Array;
  #used: Uint8Array;
  #mask: number;
  #shift: number;
  #size = 0;

  constructor(capacity = 16) {
    let cap = 16;
    while (cap < 2 * capacity) cap *= 2;
    this.#keys = new Int32Array(cap);
    this.#values = new Int32Array(cap);
    this.#used = new Uint8Array(cap);
    this.#mask = cap - 1;
    this.#shift = 32 - Math.log2(cap);
  }

  get size(): number {
    return this.#size;
  }

  #slot(key: number): number {
    return (Math.imul(key, 0x9e3779b1) >>> this.#shift) & this.#mask;
  }

  /** The value stored for `key`, or -1. */
  get(key: number): number {
    const keys = this.#keys;
    const used = this.#used;
    let s = this.#slot(key);
    while (used[s] === 1) {
      if (keys[s] === key) return this.#values[s];
      s = (s + 1) & this.#mask;
    }
    return -1;
  }

  /** Stores `value` (≥ 0) for `key`, replacing an earlier value. */
  set(key: number, value: number): void {
    if (2 * (this.#size + 1) > this.#keys.length) this.#grow();
    const keys = this.#keys;
    const used = this.#used;
    let s = this.#slot(key);
    while (used[s] === 1) {
      if (keys[s] === key) {
        this.#values[s] = value;
        return;
      }
      s = (s + 1) & this.#mask;
    }
    used[s] = 1;
    keys[s] = key;
    this.#values[s] = value;
    this.#size++;
  }

  /** Removes every entry, keeping the buffers. */
  clear(): void {
    if (this.#size === 0) return;
    this.#used.fill(0);
    this.#size = 0;
  }

  #grow(): void {
    const oldKeys = this.#keys;
    const oldValues = this.#values;
    const oldUsed = this.#used;
    const cap = oldKeys.length * 2;
    this.#keys = new Int32Array(cap);
    this.#values = new Int32Array(cap);
    this.#used = new Uint8Array(cap);
    this.#mask = cap - 1;
    this.#shift = 32 - Math.log2(cap);
    this.#size = 0;
    for (let s = 0; s < oldKeys.length; s++) {
      if (oldUsed[s] === 1) this.set(oldKeys[s], oldValues[s]);
    }
  }
}
