/**
 * Typed-array allocation, plain or on SharedArrayBuffers (arrays that worker threads read or write).
 */

/** Allocates typed arrays (plain, or on a SharedArrayBuffer for threads). */
export interface ArrayAllocator {
  f64(n: number): Float64Array;
  i32(n: number): Int32Array;
}

/** Plain allocation. */
export const PLAIN: ArrayAllocator = { f64: (n) => new Float64Array(n), i32: (n) => new Int32Array(n) };

/** Allocation on SharedArrayBuffers (arrays that worker threads read or write). */
export const SHARED: ArrayAllocator = {
  f64: (n) => new Float64Array(new SharedArrayBuffer(8 * n)),
  i32: (n) => new Int32Array(new SharedArrayBuffer(4 * n)),
};
