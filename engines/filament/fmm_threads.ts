/**
 * Threads inside one realisation for the FMM (`fmm.ts`): the serial pass (multipoles, radii) runs on the
 * calling thread, then the work units (`SegmentFmm.units`) are shared out dynamically between the threads of a
 * `ThreadPool` (`thread_pool.ts`). Every point's velocity is computed by exactly one unit, in the same order
 * whoever runs it, so results are bit-identical for any number of threads.
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
import { NEXT_CHUNK, ThreadPool } from "./thread_pool.ts";

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

/** One evaluation's task for the pool (typed arrays on SharedArrayBuffers). */
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
  /** Per thread slot: M2L count, segment pairs. */
  readonly stats: Float64Array;
  readonly cf: number;
  readonly theta: number;
}

/** The multipoles and target radii of the leaves (`SegmentFmm.leaves`) for the pool. */
export interface FmmLeavesTask {
  readonly kind: "fmm-leaves";
  readonly order: number;
  readonly nearKernel: NearKernel;
  readonly tree: FmmTask["tree"];
  readonly nCell: number;
  readonly mult: Float64Array;
  readonly multR: Float64Array;
  readonly rT: Float64Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
}

/** Cells per chunk of an `FmmLeavesTask`. */
const LEAF_CHUNK = 16;

/**
 * Runs the leaf chunks taken from the pool's counter with `fmm` (the calling thread's own FMM, slot 0, or a
 * worker's copy pointed at the shared expansions).
 */
export function runFmmLeaves(fmm: SegmentFmm, task: FmmLeavesTask, control: Int32Array, slot: number): void {
  if (slot > 0) {
    fmm.mult = task.mult;
    fmm.multR = task.multR;
    fmm.rT = task.rT;
  }
  const t = task.tree as unknown as SegmentTree;
  for (;;) {
    const c0 = LEAF_CHUNK * Atomics.add(control, NEXT_CHUNK, 1);
    if (c0 >= task.nCell) break;
    fmm.leaves(t, c0, Math.min(task.nCell, c0 + LEAF_CHUNK), task.x, task.y, task.z);
  }
}

/**
 * Runs FMM work units taken from the pool's counter with `fmm` (the calling thread's own FMM, or a worker's
 * copy pointed at the shared expansions) and records its counts in `stats` at `slot`.
 */
export function runFmmUnits(fmm: SegmentFmm, task: FmmTask, control: Int32Array, slot: number): void {
  if (slot > 0) {
    fmm.multR = task.multR;
    fmm.loc = task.loc;
    fmm.rT = task.rT;
    fmm.m2lCount = 0;
    fmm.p2pPairs = 0;
  }
  const t = task.tree as unknown as SegmentTree;
  for (;;) {
    const u = Atomics.add(control, NEXT_CHUNK, 1);
    if (u >= task.nUnits) break;
    fmm.runUnit(
      t,
      task.units[u],
      task.x,
      task.y,
      task.z,
      task.prev,
      task.cf,
      task.theta,
      task.vx,
      task.vy,
      task.vz,
    );
  }
  if (slot > 0) {
    task.stats[2 * slot] = fmm.m2lCount;
    task.stats[2 * slot + 1] = fmm.p2pPairs;
  }
}

/** The calling thread's share of an FMM evaluation on a thread pool (see module doc). */
export class FmmThreads {
  readonly pool: ThreadPool;
  readonly fmm: SegmentFmm;
  readonly nearKernel: NearKernel;
  private cap = 0;
  private sx = SHARED.f64(0);
  private sy = SHARED.f64(0);
  private sz = SHARED.f64(0);
  private sprev = SHARED.i32(0);
  private ox = SHARED.f64(0);
  private oy = SHARED.f64(0);
  private oz = SHARED.f64(0);
  private unitBuf = SHARED.i32(0);
  private readonly stats: Float64Array;

  /** FMM of the given order on `pool` (a pool of that many threads is created when a number is given). */
  constructor(pool: ThreadPool | number, order: number, nearKernel: NearKernel = "f64") {
    this.pool = typeof pool === "number" ? new ThreadPool(pool) : pool;
    this.nearKernel = nearKernel;
    this.fmm = new SegmentFmm(order, nearKernel);
    this.fmm.alloc = SHARED;
    this.stats = SHARED.f64(2 * this.pool.threads);
  }

  /** Threads of the pool. */
  get threads(): number {
    return this.pool.threads;
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
    const { sx, sy, sz, sprev, ox, oy, oz, fmm, stats } = this;
    sx.set(x.subarray(0, n));
    sy.set(y.subarray(0, n));
    sz.set(z.subarray(0, n));
    sprev.set(prev.subarray(0, n));
    ox.fill(0, 0, n);
    oy.fill(0, 0, n);
    oz.fill(0, 0, n);
    const tree = {} as FmmTask["tree"];
    const pool = this.pool;
    for (const f of TREE_FIELDS) tree[f] = t[f];
    fmm.prepare(t, sx, sy, sz, () => {
      // (called after `prepare` has sized the expansion arrays)
      const leaves: FmmLeavesTask = {
        kind: "fmm-leaves",
        order: fmm.p,
        nearKernel: this.nearKernel,
        tree,
        nCell: t.nCell,
        mult: fmm.mult,
        multR: fmm.multR,
        rT: fmm.rT,
        x: sx,
        y: sy,
        z: sz,
      };
      pool.run(leaves, () => runFmmLeaves(fmm, leaves, pool.control, 0));
    });
    const units = fmm.units(t);
    this.unitBuf.set(units);
    stats.fill(0);
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
      nUnits: units.length,
      stats,
      cf,
      theta,
    };
    this.pool.run(task, () => runFmmUnits(fmm, task, this.pool.control, 0));
    for (let i = 0; i < n; i++) {
      vx[i] += ox[i];
      vy[i] += oy[i];
      vz[i] += oz[i];
    }
    let inter = fmm.m2lCount + fmm.p2pPairs;
    for (let k = 1; k < this.pool.threads; k++) inter += stats[2 * k] + stats[2 * k + 1];
    return inter;
  }

  /** Stops the pool's workers. */
  close(): void {
    this.pool.close();
  }
}
