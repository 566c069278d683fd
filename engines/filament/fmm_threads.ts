/**
 * Threads inside one realisation for the FMM (`fmm.ts`): the serial pass (multipoles, radii) runs on the
 * calling thread, then the work units (`SegmentFmm.units`) are shared out dynamically between the calling
 * thread and `threads − 1` module workers (`fmm_worker.ts`) through an atomic counter on shared memory. Every
 * point's velocity is computed by exactly one unit, in the same order whoever runs it, so results are
 * bit-identical for any number of threads.
 *
 * The calling thread blocks with `Atomics.wait` until the workers are done (allowed in workers and in Deno's
 * main thread). Workers are started on first use and stopped by `close()`.
 *
 * References: ECMAScript shared memory and atomics (ECMA-262 §25.4); Deno module workers.
 *
 * @example
 * ```ts
 * import { FmmThreads } from "./fmm_threads.ts";
 * const pool = new FmmThreads(2, 5);
 * // pool.velocity(tree, n, x, y, z, prev, cf, 0.45, vx, vy, vz); … pool.close();
 * ```
 */
import { type NearKernel, SegmentFmm } from "./fmm.ts";
import { type SegmentTree, SHARED } from "./tree.ts";

/** Tree fields the workers read. */
export const TREE_FIELDS = [
  "gx",
  "gy",
  "gz",
  "bmax",
  "nchild",
  "child0",
  "start",
  "count",
  "perm",
  "pos",
  "smx",
  "smy",
  "smz",
  "sdx",
  "sdy",
  "sdz",
] as const;

/** One evaluation's message to a worker (typed arrays on SharedArrayBuffers). */
export interface FmmTask {
  readonly kind: "fmm";
  readonly order: number;
  readonly nearKernel: NearKernel;
  readonly tree: Record<(typeof TREE_FIELDS)[number], Float64Array | Int32Array>;
  readonly multR: Float64Array;
  readonly loc: Float64Array;
  readonly rT: Float64Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly prev: Int32Array;
  readonly vx: Float64Array;
  readonly vy: Float64Array;
  readonly vz: Float64Array;
  readonly units: Int32Array;
  readonly nUnits: number;
  /** [next unit, workers done, failures, started flag of worker 1, 2, …]. */
  readonly control: Int32Array;
  /** Per worker: M2L count, segment pairs. */
  readonly stats: Float64Array;
  readonly slot: number;
  readonly cf: number;
  readonly theta: number;
}

/** The calling thread's share of an FMM evaluation plus its worker pool (see module doc). */
export class FmmThreads {
  readonly threads: number;
  readonly fmm: SegmentFmm;
  readonly nearKernel: NearKernel;
  private workers: Worker[] = [];
  private cap = 0;
  private sx = SHARED.f64(0);
  private sy = SHARED.f64(0);
  private sz = SHARED.f64(0);
  private sprev = SHARED.i32(0);
  private ox = SHARED.f64(0);
  private oy = SHARED.f64(0);
  private oz = SHARED.f64(0);
  private unitBuf = SHARED.i32(0);
  private readonly control: Int32Array;
  private readonly stats: Float64Array;

  constructor(threads: number, order: number, nearKernel: NearKernel = "f64") {
    this.threads = Math.max(1, Math.floor(threads));
    this.nearKernel = nearKernel;
    this.fmm = new SegmentFmm(order, nearKernel);
    this.fmm.alloc = SHARED;
    this.stats = SHARED.f64(2 * this.threads);
    this.control = SHARED.i32(3 + this.threads);
  }

  private ensure(n: number, nCell: number): void {
    if (n > this.cap) {
      const c = Math.max(1024, 2 * n);
      this.sx = SHARED.f64(c);
      this.sy = SHARED.f64(c);
      this.sz = SHARED.f64(c);
      this.sprev = SHARED.i32(c);
      this.ox = SHARED.f64(c);
      this.oy = SHARED.f64(c);
      this.oz = SHARED.f64(c);
      this.cap = c;
    }
    if (this.unitBuf.length < nCell) this.unitBuf = SHARED.i32(Math.max(256, 2 * nCell));
    while (this.workers.length < this.threads - 1) {
      this.workers.push(new Worker(new URL("./fmm_worker.ts", import.meta.url).href, { type: "module" }));
    }
  }

  /**
   * Adds cf·(nonlocal velocity) at the n points, as `SegmentFmm.velocity` (the tree must be allocated with
   * SHARED). Returns the interaction count.
   */
  velocity(
    t: SegmentTree,
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    cf: number,
    theta: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): number {
    if (n === 0) return 0;
    this.ensure(n, t.nCell);
    const { sx, sy, sz, sprev, ox, oy, oz, fmm, control, stats } = this;
    sx.set(x.subarray(0, n));
    sy.set(y.subarray(0, n));
    sz.set(z.subarray(0, n));
    sprev.set(prev.subarray(0, n));
    ox.fill(0, 0, n);
    oy.fill(0, 0, n);
    oz.fill(0, 0, n);
    fmm.prepare(t, sx, sy, sz);
    const units = fmm.units(t);
    this.unitBuf.set(units);
    const nUnits = units.length;
    for (let k = 0; k < control.length; k++) Atomics.store(control, k, 0);
    stats.fill(0);
    const tree = {} as FmmTask["tree"];
    for (const f of TREE_FIELDS) tree[f] = t[f];
    const w = this.workers.length;
    for (let k = 0; k < w; k++) {
      const task: FmmTask = {
        kind: "fmm",
        order: fmm.p,
        nearKernel: this.nearKernel,
        tree,
        multR: fmm.multR,
        loc: fmm.loc,
        rT: fmm.rT,
        x: sx,
        y: sy,
        z: sz,
        prev: sprev,
        vx: ox,
        vy: oy,
        vz: oz,
        units: this.unitBuf,
        nUnits,
        control,
        stats,
        slot: k + 1,
        cf,
        theta,
      };
      this.workers[k].postMessage(task);
    }
    for (;;) {
      const u = Atomics.add(control, 0, 1);
      if (u >= nUnits) break;
      fmm.runUnit(t, this.unitBuf[u], sx, sy, sz, sprev, cf, theta, ox, oy, oz);
    }
    const t0 = performance.now();
    for (;;) {
      const done = Atomics.load(control, 1);
      if (done >= w) break;
      Atomics.wait(control, 1, done, 1000);
      for (let k = 1; k <= w; k++) {
        if (Atomics.load(control, 2 + k) === 0 && performance.now() - t0 > 30000) {
          throw new Error(
            `FMM worker thread ${k} did not start within 30 s (engines/filament/fmm_worker.ts)`,
          );
        }
      }
    }
    if (Atomics.load(control, 2) > 0) throw new Error("an FMM worker thread failed (see its error output)");
    for (let i = 0; i < n; i++) {
      vx[i] += ox[i];
      vy[i] += oy[i];
      vz[i] += oz[i];
    }
    let inter = fmm.m2lCount + fmm.p2pPairs;
    for (let k = 1; k <= w; k++) inter += stats[2 * k] + stats[2 * k + 1];
    return inter;
  }

  /** Stops the workers. */
  close(): void {
    for (const w of this.workers) w.terminate();
    this.workers = [];
  }
}
