/**
 * Host side of the WebAssembly SIMD near-field kernel (`asm/p2p.ts`, AssemblyScript compiled by the install
 * step into `asm/build/p2p.wasm`): exact straight-segment sums of one FMM cell pair in f32x4 lanes.
 *
 * Precision: coordinates enter the kernel relative to the source cell's centroid and divided by its radius
 * (computed in f64, then rounded once to f32), so every difference r = P − A is exact to f32 rounding of a
 * number of order one, whatever the unit system (metres or study units) and the cloud's size; sums of one cell
 * pair are formed in f32 and accumulated in f64. Relative error per pair term ≈ 1e-7, far below the FMM's
 * truncation error (≈ 1e-4 of v_rms), which the run-time check measures with these kernels in place.
 *
 * References: WebAssembly SIMD (fixed-width 128-bit) specification; J. Katz, A. Plotkin, Low-Speed
 * Aerodynamics (2001) §2.3.2 (segment formula).
 *
 * @example
 * ```ts
 * import { WasmP2P } from "./wasm_p2p.ts";
 * const k = WasmP2P.load(); // throws EngineFailure with the fix when the module was not compiled
 * ```
 */
import { instantiateKernel } from "../_wasm.ts";

/** Where the install step writes the compiled module. */
export const P2P_WASM = new URL("./asm/build/p2p.wasm", import.meta.url);

interface P2PExports {
  readonly memory: WebAssembly.Memory;
  layout(cap: number): void;
  ptr(k: number): number;
  p2p(nt: number, ns: number): void;
}

/** One instance of the kernel with its typed-array views (one per thread). */
export class WasmP2P {
  private readonly ex: P2PExports;
  private cap = 0;
  tx: Float32Array = new Float32Array(0);
  ty: Float32Array = new Float32Array(0);
  tz: Float32Array = new Float32Array(0);
  oa: Int32Array = new Int32Array(0);
  ob: Int32Array = new Int32Array(0);
  sx: Float32Array = new Float32Array(0);
  sy: Float32Array = new Float32Array(0);
  sz: Float32Array = new Float32Array(0);
  hx: Float32Array = new Float32Array(0);
  hy: Float32Array = new Float32Array(0);
  hz: Float32Array = new Float32Array(0);
  ux: Float64Array = new Float64Array(0);
  uy: Float64Array = new Float64Array(0);
  uz: Float64Array = new Float64Array(0);

  private constructor(ex: P2PExports) {
    this.ex = ex;
  }

  /** Instantiates the compiled kernel; EngineFailure("invalid-state") with the fix when it is missing. */
  static load(): WasmP2P {
    const inst = instantiateKernel(P2P_WASM, "set numerics.fmm.nearKernel: f64");
    return new WasmP2P(inst.exports as unknown as P2PExports);
  }

  /** Room for cap targets and cap sources. */
  ensure(cap: number): void {
    if (cap <= this.cap) return;
    const c = Math.max(64, 2 * cap);
    this.ex.layout(c);
    const buf = this.ex.memory.buffer;
    const f = (k: number) => new Float32Array(buf, this.ex.ptr(k), c + 4);
    const i = (k: number) => new Int32Array(buf, this.ex.ptr(k), c + 4);
    const d = (k: number) => new Float64Array(buf, this.ex.ptr(k), c + 4);
    this.tx = f(0);
    this.ty = f(1);
    this.tz = f(2);
    this.oa = i(3);
    this.ob = i(4);
    this.sx = f(5);
    this.sy = f(6);
    this.sz = f(7);
    this.hx = f(8);
    this.hy = f(9);
    this.hz = f(10);
    this.ux = d(11);
    this.uy = d(12);
    this.uz = d(13);
    this.cap = c;
  }

  /** Sums sources [0, ns) at targets [0, nt) into ux, uy, uz (overwritten). */
  run(nt: number, ns: number): void {
    this.ex.p2p(nt, ns);
  }
}
