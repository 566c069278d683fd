/**
 * Windowed near field of the nonlocal Biot–Savart sum: the contribution of segments whose midpoint lies within
 * a distance 2r_w of the target point, weighted by a smooth window φ(r/r_w) (1 up to r_w, then a smoothstep
 * down to 0 at 2r_w), own segments excluded. The multirate stepper (`simulation.ts`) integrates this part with
 * the local term at the fast rate; the remainder (nonlocal sum minus windowed near field) varies smoothly in
 * space and time and is extrapolated. The window is smooth in the positions, so remeshing and reconnections
 * change the split only through the changed segments themselves.
 *
 * Pairs are found once per step with a cell list of cell size 2r_w + skin (Verlet list); within the step no
 * point pair moves closer by more than the skin (the advective step limit), so no pair inside 2r_w is missed.
 *
 * References: L. Verlet, Phys. Rev. 159, 98 (1967), doi:10.1103/PhysRev.159.98 (neighbour lists); the
 * straight-segment formula as in `biot_savart.ts`; the window split is common practice (no source).
 *
 * @example
 * ```ts
 * import { NearField } from "./near.ts";
 * const near = new NearField();
 * // near.build(n, x, y, z, next, prev, 0, 1.5 * delta, 0.5 * delta);
 * // near.add(near.addTask(n, x, y, z, g.dx, g.dy, g.dz, kappa / (4 * Math.PI), vx, vy, vz));
 * ```
 */

import { CellHash, cellSlot, type CellTableView } from "./_cell_hash.ts";
import { SHARED } from "./_alloc.ts";
import type { ThreadPool } from "./thread_pool.ts";

/** Smooth window: 1 for q ≤ 1, 1 − s²(3 − 2s) with s = q − 1 for 1 < q < 2, 0 beyond. */
export function nearWindow(q: number): number {
  if (q <= 1) return 1;
  if (q >= 2) return 0;
  const s = q - 1;
  return 1 - s * s * (3 - 2 * s);
}

/** Target points per chunk of the threaded pair build and sum. */
const CHUNK = 256;

/** The pair-list search of one build for the pool (typed arrays on SharedArrayBuffers). */
export interface NearBuildTask extends CellTableView {
  readonly kind: "near-build";
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly prev: Int32Array;
  /** Segment midpoints. */
  readonly mx: Float64Array;
  readonly my: Float64Array;
  readonly mz: Float64Array;
  readonly R2: number;
  readonly start: Int32Array;
  readonly end: Int32Array;
  readonly seg: Int32Array;
  /** [pairs reserved so far]; above seg.length the list did not fit (the build is repeated, larger). */
  readonly fill: Int32Array;
}

/** One windowed sum for the pool (typed arrays on SharedArrayBuffers). */
export interface NearAddTask {
  readonly kind: "near-add";
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly dx: Float64Array;
  readonly dy: Float64Array;
  readonly dz: Float64Array;
  readonly start: Int32Array;
  readonly end: Int32Array;
  readonly seg: Int32Array;
  readonly boxSize: number;
  readonly radius: number;
  readonly cf: number;
  readonly vx: Float64Array;
  readonly vy: Float64Array;
  readonly vz: Float64Array;
}

/** A thread's private pair buffer for `runNearBuild`. */
export class NearScratch {
  buf = new Int32Array(4096);
  at = new Int32Array(CHUNK + 1);
}

/**
 * Searches the pairs of target chunks taken from `control[0]` (module doc of `thread_pool.ts`): each chunk's
 * pairs are collected in `scratch`, then copied to a range of `seg` reserved atomically; per point the pairs
 * keep the cell order of the serial search, wherever its range lies.
 */
export function runNearBuild(t: NearBuildTask, control: Int32Array, scratch: NearScratch): void {
  const { n, x, y, z, prev, mx, my, mz, head, keys, mask, nc, cs, span, cellNext: nxt, R2, start, end, seg } =
    t;
  const L = t.boxSize;
  const at = scratch.at;
  for (;;) {
    const i0 = CHUNK * Atomics.add(control, 0, 1);
    if (i0 >= n) break;
    const i1 = Math.min(n, i0 + CHUNK);
    let count = 0;
    for (let i = i0; i < i1; i++) {
      at[i - i0] = count;
      const ix = Math.floor(x[i] / cs), iy = Math.floor(y[i] / cs), iz = Math.floor(z[i] / cs);
      const p = prev[i];
      for (let a = -span; a <= span; a++) {
        for (let b = -span; b <= span; b++) {
          for (let c = -span; c <= span; c++) {
            const slot = cellSlot(head, keys, mask, nc, ix + a, iy + b, iz + c);
            if (slot < 0) continue;
            for (let j = head[slot]; j >= 0; j = nxt[j]) {
              if (j === i || j === p) continue;
              let ex = mx[j] - x[i], ey = my[j] - y[i], ez = mz[j] - z[i];
              if (L > 0) {
                ex -= L * Math.round(ex / L);
                ey -= L * Math.round(ey / L);
                ez -= L * Math.round(ez / L);
              }
              if (ex * ex + ey * ey + ez * ez >= R2) continue;
              if (count >= scratch.buf.length) {
                const g = new Int32Array(2 * scratch.buf.length);
                g.set(scratch.buf);
                scratch.buf = g;
              }
              scratch.buf[count++] = j;
            }
          }
        }
      }
    }
    at[i1 - i0] = count;
    const base = Atomics.add(t.fill, 0, count);
    if (base + count > seg.length) continue; // does not fit: the caller grows seg and repeats the build
    seg.set(scratch.buf.subarray(0, count), base);
    for (let i = i0; i < i1; i++) {
      start[i] = base + at[i - i0];
      end[i] = base + at[i - i0 + 1];
    }
  }
}

/** Adds the windowed sums of the target chunks taken from `control[0]` (see `NearField.add`). */
export function runNearAdd(t: NearAddTask, control: Int32Array): void {
  for (;;) {
    const i0 = CHUNK * Atomics.add(control, 0, 1);
    if (i0 >= t.n) break;
    nearAddRange(i0, Math.min(t.n, i0 + CHUNK), t);
  }
}

/** The windowed sum of `NearField.add` for target points i0 … i1 − 1. */
export function nearAddRange(i0: number, i1: number, t: NearAddTask): void {
  const { x, y, z, dx, dy, dz, start: st, end: en, seg, cf, vx, vy, vz } = t;
  const L = t.boxSize, iw = 1 / t.radius, outer2 = 4 * t.radius * t.radius;
  for (let i = i0; i < i1; i++) {
    const px = x[i], py = y[i], pz = z[i];
    let ux = 0, uy = 0, uz = 0;
    for (let q = st[i]; q < en[i]; q++) {
      const j = seg[q];
      let r1x = px - x[j], r1y = py - y[j], r1z = pz - z[j];
      const ex = dx[j], ey = dy[j], ez = dz[j];
      if (L > 0) {
        // minimum image of the midpoint
        const ox = L * Math.round((r1x - 0.5 * ex) / L), oy = L * Math.round((r1y - 0.5 * ey) / L);
        const oz = L * Math.round((r1z - 0.5 * ez) / L);
        r1x -= ox;
        r1y -= oy;
        r1z -= oz;
      }
      const mx = r1x - 0.5 * ex, my = r1y - 0.5 * ey, mz = r1z - 0.5 * ez;
      const m2 = mx * mx + my * my + mz * mz;
      if (m2 >= outer2) continue; // beyond 2r_w (most of the list: its skin): weight 0
      const w = nearWindow(Math.sqrt(m2) * iw);
      if (w === 0) continue;
      const r2x = r1x - ex, r2y = r1y - ey, r2z = r1z - ez;
      const n1 = Math.sqrt(r1x * r1x + r1y * r1y + r1z * r1z);
      const n2 = Math.sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
      const nn = n1 * n2;
      const cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
      const dot = r1x * r2x + r1y * r2y + r1z * r2z;
      const qq = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
      const den = nn * qq;
      if (!(den > 0)) continue;
      const f = w * (n1 + n2) / den;
      ux += f * cx;
      uy += f * cy;
      uz += f * cz;
    }
    vx[i] += cf * ux;
    vy[i] += cf * uy;
    vz[i] += cf * uz;
  }
}

function isShared(...a: ArrayLike<number>[]): boolean {
  for (const v of a) if (!((v as Float64Array).buffer instanceof SharedArrayBuffer)) return false;
  return true;
}

/**
 * Verlet list of (point, segment) pairs and the windowed near-field sum. With a thread pool (`usePool`), the
 * pair search and the sum are shared out by chunks of target points; every point's pairs and sum come out in
 * the same order for any thread count (bit-identical results).
 */
export class NearField {
  /** Pairs of point i are seg[start[i] … end[i]). */
  start = SHARED.i32(0);
  end = SHARED.i32(0);
  seg = SHARED.i32(0);
  radius = 0;
  boxSize = 0;
  /** Listed pairs. */
  pairs = 0;
  private pool: ThreadPool | null = null;
  private readonly cells = new CellHash();
  private readonly scratch = new NearScratch();
  private readonly fill = SHARED.i32(1);
  /** Chunk counter when the calling thread works alone. */
  private readonly solo = new Int32Array(1);
  private chunkBest = SHARED.f64(0);
  private cap = 0;
  private px = SHARED.f64(0);
  private py = SHARED.f64(0);
  private pz = SHARED.f64(0);
  private pprev = SHARED.i32(0);
  private mx = SHARED.f64(0);
  private my = SHARED.f64(0);
  private mz = SHARED.f64(0);
  private cellNext = SHARED.i32(0);

  constructor() {
    this.cells.alloc = SHARED;
  }

  /** Shares the pair search and sums with the pool's threads (null: the calling thread only). */
  usePool(pool: ThreadPool | null): void {
    this.pool = pool;
  }

  /**
   * Lists, for every point i, the segments j (j ≠ i, prev[i]) whose midpoints lie within 2r_w + skin of it
   * (minimum image in a periodic box of side L > 0).
   */
  build(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    next: Int32Array,
    prev: Int32Array,
    boxSize: number,
    rw: number,
    skin: number,
  ): void {
    this.radius = rw;
    this.boxSize = boxSize;
    const L = boxSize;
    const R = 2 * rw + skin;
    if (n > this.cap) {
      const c = 2 * n;
      this.start = SHARED.i32(c);
      this.end = SHARED.i32(c);
      this.px = SHARED.f64(c);
      this.py = SHARED.f64(c);
      this.pz = SHARED.f64(c);
      this.pprev = SHARED.i32(c);
      this.mx = SHARED.f64(c);
      this.my = SHARED.f64(c);
      this.mz = SHARED.f64(c);
      this.cellNext = SHARED.i32(c);
      this.cap = c;
    }
    let nc = L > 0 ? Math.max(1, Math.floor(L / R)) : 0;
    if (nc === 2) nc = 1; // with fewer than 3 cells per side one cell holds everything
    const cs = L > 0 ? L / nc : R;
    const cells = this.cells, nxt = this.cellNext;
    cells.reset(n, nc);
    const head = cells.head;
    // Segment midpoints (minimum image of the segment vector in a periodic box).
    const { mx, my, mz } = this;
    // Inputs not on shared memory are copied there for the threads.
    const shared = isShared(x, y, z, prev);
    const px = shared ? x : this.px, py = shared ? y : this.py, pz = shared ? z : this.pz;
    const pprev = shared ? prev : this.pprev;
    if (!shared) {
      px.set(x.subarray(0, n));
      py.set(y.subarray(0, n));
      pz.set(z.subarray(0, n));
      pprev.set(prev.subarray(0, n));
    }
    for (let j = 0; j < n; j++) {
      const k = next[j];
      let ex = x[k] - x[j], ey = y[k] - y[j], ez = z[k] - z[j];
      if (L > 0) {
        ex -= L * Math.round(ex / L);
        ey -= L * Math.round(ey / L);
        ez -= L * Math.round(ez / L);
      }
      mx[j] = x[j] + 0.5 * ex;
      my[j] = y[j] + 0.5 * ey;
      mz[j] = z[j] + 0.5 * ez;
    }
    for (let j = n - 1; j >= 0; j--) {
      const slot = cells.slot(Math.floor(mx[j] / cs), Math.floor(my[j] / cs), Math.floor(mz[j] / cs), true);
      cells.claim(slot);
      nxt[j] = head[slot];
      head[slot] = j;
    }
    if (this.seg.length < 16 * n) this.seg = SHARED.i32(32 * n);
    for (;;) {
      const task: NearBuildTask = {
        kind: "near-build",
        n,
        x: px,
        y: py,
        z: pz,
        prev: pprev,
        mx,
        my,
        mz,
        head,
        keys: cells.keys,
        mask: cells.mask,
        nc,
        cs,
        span: nc === 1 ? 0 : 1,
        cellNext: nxt,
        boxSize: L,
        R2: R * R,
        start: this.start,
        end: this.end,
        seg: this.seg,
        fill: this.fill,
      };
      this.fill[0] = 0;
      this.runTask(task, (control) => runNearBuild(task, control, this.scratch));
      this.pairs = this.fill[0];
      if (this.pairs <= this.seg.length) break;
      this.seg = SHARED.i32(Math.ceil(1.5 * this.pairs));
    }
  }

  /** Runs a task on the pool, or on the calling thread alone without one. */
  private runTask(
    task: NearBuildTask | NearAddTask | NearApproachTask,
    own: (control: Int32Array) => void,
  ): void {
    const pool = this.pool;
    if (pool === null) {
      this.solo[0] = 0;
      own(this.solo);
    } else pool.run(task, () => own(pool.control));
  }

  /**
   * Adds cf·Σ_j φ(|x_i − m_j|/r_w) u_j(x_i) over the listed segments j (segment vectors d from the geometry of
   * the same positions; midpoint m_j = x_j + d_j/2) to (vx, vy, vz), cf < 0 subtracting: the task of one such
   * sum, run by `add` or inside a task of the caller's own.
   */
  addTask(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    dx: Float64Array,
    dy: Float64Array,
    dz: Float64Array,
    cf: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): NearAddTask {
    return {
      kind: "near-add",
      n,
      x,
      y,
      z,
      dx,
      dy,
      dz,
      start: this.start,
      end: this.end,
      seg: this.seg,
      boxSize: this.boxSize,
      radius: this.radius,
      cf,
      vx,
      vy,
      vz,
    };
  }

  /**
   * Runs a sum of `addTask`; threads are used when all its arrays are on SharedArrayBuffers (the results do not
   * depend on it).
   */
  add(task: NearAddTask): void {
    const { x, y, z, dx, dy, dz, vx, vy, vz } = task;
    if (isShared(x, y, z, dx, dy, dz, vx, vy, vz)) this.runTask(task, (control) => runNearAdd(task, control));
    else {
      this.solo[0] = 0;
      runNearAdd(task, this.solo);
    }
  }

  /**
   * Longest step dt such that every listed pair of points that may reconnect (different loops, or at least
   * `minLinks` links apart on one loop) keeps |v_i − v_j|·dt ≤ δ_r + |x_i − x_j| (see `simulation.ts`);
   * Infinity if no pair moves. Positions and velocities of the step's start; `loop`, `index`, `length`: each
   * point's loop id, position in its loop and the loop's point count (compact state); minimum image in a
   * periodic box.
   */
  approachStep(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
    loop: Int32Array,
    index: Int32Array,
    length: Int32Array,
    minLinks: number,
    dr: number,
  ): number {
    const chunks = Math.ceil(n / CHUNK);
    if (this.chunkBest.length < chunks) this.chunkBest = SHARED.f64(2 * chunks);
    const task: NearApproachTask = {
      kind: "near-approach",
      n,
      x,
      y,
      z,
      vx,
      vy,
      vz,
      loop,
      index,
      length,
      minLinks,
      dr,
      start: this.start,
      end: this.end,
      seg: this.seg,
      boxSize: this.boxSize,
      best: this.chunkBest,
    };
    this.runTask(task, (control) => runNearApproach(task, control));
    let best = Infinity;
    for (let c = 0; c < chunks; c++) if (this.chunkBest[c] < best) best = this.chunkBest[c];
    return best;
  }
}

/** The bound of `NearField.approachStep` over fixed chunks of targets (for any thread count the same chunks). */
export interface NearApproachTask {
  readonly kind: "near-approach";
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly vx: Float64Array;
  readonly vy: Float64Array;
  readonly vz: Float64Array;
  readonly loop: Int32Array;
  readonly index: Int32Array;
  readonly length: Int32Array;
  readonly minLinks: number;
  readonly dr: number;
  readonly start: Int32Array;
  readonly end: Int32Array;
  readonly seg: Int32Array;
  readonly boxSize: number;
  /** Output: each chunk's smallest bound. */
  readonly best: Float64Array;
}

/** Computes the chunk bounds of a `NearApproachTask` for chunks taken from `control[0]`. */
export function runNearApproach(t: NearApproachTask, control: Int32Array): void {
  const { n, x, y, z, vx, vy, vz, loop, index, length, minLinks, dr, start: st, end: en, seg } = t;
  const L = t.boxSize;
  for (;;) {
    const c = Atomics.add(control, 0, 1);
    const i0 = CHUNK * c;
    if (i0 >= n) break;
    const i1 = Math.min(n, i0 + CHUNK);
    let best = Infinity;
    for (let i = i0; i < i1; i++) {
      for (let q = st[i]; q < en[i]; q++) {
        const j = seg[q];
        if (loop[j] === loop[i]) {
          const d = Math.abs(index[i] - index[j]);
          if (Math.min(d, length[i] - d) < minLinks) continue;
        }
        const ux = vx[i] - vx[j], uy = vy[i] - vy[j], uz = vz[i] - vz[j];
        const w2 = ux * ux + uy * uy + uz * uz;
        // (δ_r + d)/w ≥ δ_r/w: only pairs whose own bound could be the smallest are measured.
        if (!(w2 * best * best > dr * dr)) continue;
        let ex = x[j] - x[i], ey = y[j] - y[i], ez = z[j] - z[i];
        if (L > 0) {
          ex -= L * Math.round(ex / L);
          ey -= L * Math.round(ey / L);
          ez -= L * Math.round(ez / L);
        }
        const tt = (dr + Math.sqrt(ex * ex + ey * ey + ez * ez)) / Math.sqrt(w2);
        if (tt < best) best = tt;
      }
    }
    t.best[c] = best;
  }
}
