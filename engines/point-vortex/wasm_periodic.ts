/**
 * Host side of the WebAssembly f64x2 periodic-box kernel (`asm/periodic.ts`, AssemblyScript compiled by the
 * install step into `asm/build/periodic.wasm`): the Weierstrass ζ form of `periodic.ts`, two pairs per SIMD
 * instruction, in double precision (results equal `velocityPeriodic` to rounding, ~1e-16 relative).
 *
 * References: as `periodic.ts`; WebAssembly SIMD (fixed-width 128-bit) specification.
 *
 * @example
 * ```ts
 * import { PeriodicKernel } from "./wasm_periodic.ts";
 * const k = PeriodicKernel.load(); // throws EngineFailure with the fix when the module was not compiled
 * // k.velocity(n, x, y, g, side, u, v);
 * ```
 */
import { instantiateKernel } from "../_wasm.ts";
import { LATTICE_COEFFS } from "./periodic.ts";

/** Where the install step writes the compiled module. */
export const PERIODIC_WASM = new URL("./asm/build/periodic.wasm", import.meta.url);

interface PeriodicExports {
  readonly memory: WebAssembly.Memory;
  layout(cap: number): void;
  ptr(k: number): number;
  velocity(n: number, side: number): number;
}

/** One instance of the kernel and its views. */
export class PeriodicKernel {
  private readonly ex: PeriodicExports;
  private cap = 0;
  private x: Float64Array = new Float64Array(0);
  private y: Float64Array = new Float64Array(0);
  private g: Float64Array = new Float64Array(0);
  private u: Float64Array = new Float64Array(0);
  private v: Float64Array = new Float64Array(0);

  private constructor(ex: PeriodicExports) {
    this.ex = ex;
  }

  /** Instantiates the compiled kernel; EngineFailure("invalid-state") with the fix when it is missing. */
  static load(): PeriodicKernel {
    const inst = instantiateKernel(PERIODIC_WASM, "");
    return new PeriodicKernel(inst.exports as unknown as PeriodicExports);
  }

  private ensure(n: number): void {
    if (n <= this.cap) return;
    const c = Math.max(64, 2 * n);
    this.ex.layout(c);
    const buf = this.ex.memory.buffer;
    const view = (k: number, len: number) => new Float64Array(buf, this.ex.ptr(k), len);
    this.x = view(0, c + 2);
    this.y = view(1, c + 2);
    this.g = view(2, c + 2);
    this.u = view(3, c + 2);
    this.v = view(4, c + 2);
    view(5, LATTICE_COEFFS.length).set(LATTICE_COEFFS);
    this.cap = c;
  }

  /** Same contract as `velocityPeriodic` (periodic.ts). */
  velocity(
    n: number,
    x: Float64Array,
    y: Float64Array,
    g: Float64Array,
    side: number,
    u: Float64Array,
    v: Float64Array,
  ): number {
    this.ensure(n);
    this.x.set(x.subarray(0, n));
    this.y.set(y.subarray(0, n));
    this.g.set(g.subarray(0, n));
    const minR2 = this.ex.velocity(n, side);
    const pref = 1 / (2 * Math.PI * side);
    for (let i = 0; i < n; i++) {
      u[i] = pref * this.u[i];
      v[i] = pref * this.v[i];
    }
    return n < 2 ? Infinity : minR2;
  }
}
