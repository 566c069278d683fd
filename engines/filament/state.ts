/**
 * Filament state: closed loops of points stored struct-of-arrays, loop by loop.
 *
 * Between steps the state is *compact*: loop k occupies slots [loopStart[k], loopStart[k] + loopLen[k]) in
 * order along the line, and `next`/`prev` link each point to its neighbours (the last point of a loop links
 * back to the first). Topology changes (remeshing, reconnection, loop removal) edit the links in place, may
 * append new points after slot n, and then `compactInto` rebuilds a compact copy by traversal in a second
 * buffer (double buffering; buffers only grow, by doubling).
 *
 * Periodic boxes: positions are stored wrapped into [−L/2, L/2)³ and every neighbour difference uses the
 * minimum image; per-point integer image counters give unwrapped positions for frames and marker tracks.
 *
 * @example
 * ```ts
 * import { FilamentState, IdCounters } from "./state.ts";
 * const s = new FilamentState(64);
 * const ids = new IdCounters();
 * s.appendLoop([[1, 0, 0], [0, 1, 0], [-1, 0, 0], [0, -1, 0]], ids, 2);
 * ```
 */

/** Levels of integrator memory per point (past slow velocities, 3 components each). */
export const HIST_LEVELS = 4;
/** Doubles of integrator memory per point. */
export const HIST_STRIDE = 3 * HIST_LEVELS;

/** Monotone id sources for points and loops (persistent ids in frames and events). */
export class IdCounters {
  nextPoint = 0;
  nextLoop = 0;
  point(): number {
    if (this.nextPoint >= 2147483647) throw new RangeError("point id space exhausted (2³¹ ids)");
    return this.nextPoint++;
  }
  loop(): number {
    if (this.nextLoop >= 2147483647) throw new RangeError("loop id space exhausted (2³¹ ids)");
    return this.nextLoop++;
  }
}

/** Points and loops of a filament tangle (see module doc for the layout). */
export class FilamentState {
  /** Number of slots in use (points, compact state) or slots touched (during topology edits). */
  n = 0;
  capacity = 0;
  x: Float64Array = new Float64Array(0);
  y: Float64Array = new Float64Array(0);
  z: Float64Array = new Float64Array(0);
  next: Int32Array = new Int32Array(0);
  prev: Int32Array = new Int32Array(0);
  /** Persistent point id (markers keep theirs for life; other points get new ids when created). */
  id = new Int32Array(0);
  /** 1 for Lagrangian markers. */
  marker = new Uint8Array(0);
  /** Loop id of each point (valid in the compact state). */
  loopOf = new Int32Array(0);
  /** 1 for live slots (used during topology edits; all 1 in the compact state). */
  alive = new Uint8Array(0);
  /** Periodic image counters (unwrapped = wrapped + image·L). */
  imx = new Int32Array(0);
  imy = new Int32Array(0);
  imz = new Int32Array(0);
  /**
   * Integrator memory per point (multirate stepping, `simulation.ts`): HIST_STRIDE slots of past slow
   * velocities, and how many of the newest levels are valid for this point.
   */
  hist: Float64Array = new Float64Array(0);
  histCount: Uint8Array = new Uint8Array(0);

  nLoops = 0;
  loopCapacity = 0;
  loopStart = new Int32Array(0);
  loopLen = new Int32Array(0);
  loopId = new Int32Array(0);

  constructor(capacity = 16) {
    this.ensureCapacity(capacity);
    this.ensureLoopCapacity(4);
  }

  /** Grows the point arrays (by doubling) to hold at least `cap` points, keeping the first n. */
  ensureCapacity(cap: number): void {
    if (cap <= this.capacity) return;
    let c = Math.max(16, this.capacity);
    while (c < cap) c *= 2;
    // Positions, links and integrator memory on shared memory: the multirate step's worker threads read them.
    const f = (a: Float64Array) => {
      const b = new Float64Array(new SharedArrayBuffer(8 * c));
      b.set(a.subarray(0, this.n));
      return b;
    };
    const i = (a: Int32Array): Int32Array<ArrayBuffer> => {
      const b = new Int32Array(c);
      b.set(a.subarray(0, this.n));
      return b;
    };
    const si = (a: Int32Array): Int32Array => {
      const b = new Int32Array(new SharedArrayBuffer(4 * c));
      b.set(a.subarray(0, this.n));
      return b;
    };
    const u = (a: Uint8Array): Uint8Array<ArrayBuffer> => {
      const b = new Uint8Array(c);
      b.set(a.subarray(0, this.n));
      return b;
    };
    this.x = f(this.x);
    this.y = f(this.y);
    this.z = f(this.z);
    this.next = si(this.next);
    this.prev = si(this.prev);
    this.id = i(this.id);
    this.marker = u(this.marker);
    this.loopOf = i(this.loopOf);
    this.alive = u(this.alive);
    this.imx = i(this.imx);
    this.imy = i(this.imy);
    this.imz = i(this.imz);
    const h = new Float64Array(new SharedArrayBuffer(8 * c * HIST_STRIDE));
    h.set(this.hist.subarray(0, this.n * HIST_STRIDE));
    this.hist = h;
    const hc = new Uint8Array(new SharedArrayBuffer(c));
    hc.set(this.histCount.subarray(0, this.n));
    this.histCount = hc;
    this.capacity = c;
  }

  /** Grows the loop arrays to hold at least `cap` loops. */
  ensureLoopCapacity(cap: number): void {
    if (cap <= this.loopCapacity) return;
    let c = Math.max(4, this.loopCapacity);
    while (c < cap) c *= 2;
    const g = (a: Int32Array) => {
      const b = new Int32Array(c);
      b.set(a.subarray(0, this.nLoops));
      return b;
    };
    this.loopStart = g(this.loopStart);
    this.loopLen = g(this.loopLen);
    this.loopId = g(this.loopId);
    this.loopCapacity = c;
  }

  /**
   * Appends a closed loop (points in order; the last links back to the first) to a compact state, with a
   * marker every `markerEvery` points (the first point is always a marker). Returns the loop id.
   */
  appendLoop(
    points: ReadonlyArray<readonly [number, number, number]>,
    ids: IdCounters,
    markerEvery: number,
  ): number {
    const m = points.length;
    const s0 = this.n;
    this.ensureCapacity(s0 + m);
    this.ensureLoopCapacity(this.nLoops + 1);
    const lid = ids.loop();
    for (let k = 0; k < m; k++) {
      const s = s0 + k;
      this.x[s] = points[k][0];
      this.y[s] = points[k][1];
      this.z[s] = points[k][2];
      this.next[s] = k === m - 1 ? s0 : s + 1;
      this.prev[s] = k === 0 ? s0 + m - 1 : s - 1;
      this.id[s] = ids.point();
      this.marker[s] = k % markerEvery === 0 ? 1 : 0;
      this.loopOf[s] = lid;
      this.alive[s] = 1;
      this.imx[s] = 0;
      this.imy[s] = 0;
      this.imz[s] = 0;
      this.histCount[s] = 0;
    }
    this.loopStart[this.nLoops] = s0;
    this.loopLen[this.nLoops] = m;
    this.loopId[this.nLoops] = lid;
    this.nLoops++;
    this.n = s0 + m;
    return lid;
  }

  /** Appends a new live slot (for remeshing insertions) and returns its index; links are set by the caller. */
  appendSlot(): number {
    this.ensureCapacity(this.n + 1);
    const s = this.n++;
    this.alive[s] = 1;
    this.marker[s] = 0;
    this.imx[s] = 0;
    this.imy[s] = 0;
    this.imz[s] = 0;
    this.histCount[s] = 0;
    return s;
  }

  /** Copies slot `s` of `src` into slot `d` of this state (no links). */
  copySlotFrom(src: FilamentState, s: number, d: number): void {
    this.x[d] = src.x[s];
    this.y[d] = src.y[s];
    this.z[d] = src.z[s];
    this.id[d] = src.id[s];
    this.marker[d] = src.marker[s];
    this.imx[d] = src.imx[s];
    this.imy[d] = src.imy[s];
    this.imz[d] = src.imz[s];
    this.alive[d] = 1;
    const c = src.histCount[s];
    this.histCount[d] = c;
    if (c > 0) this.hist.set(src.hist.subarray(s * HIST_STRIDE, (s + 1) * HIST_STRIDE), d * HIST_STRIDE);
  }
}

/** Why a loop was removed (event data field `reason`). */
export const RemovalReason = { Tiny: 0, Escaped: 1, Heater: 2 } as const;

/** A loop dropped during compaction. */
export interface RemovedLoop {
  readonly loopId: number;
  readonly points: number;
  readonly length: number;
  /** Marker ids on the loop (their tracks end here). */
  readonly markerIds: number[];
  /** Length-weighted centroid. */
  readonly cx: number;
  readonly cy: number;
  readonly cz: number;
}

/** Options of `compactInto`. */
export interface CompactOptions {
  /** Periodic box side, 0 for unbounded (minimum image for segment lengths). */
  readonly boxSize: number;
  /** Loops with fewer points are dropped. */
  readonly minPoints: number;
  /** Loops shorter than this are dropped. */
  readonly minLength: number;
  readonly ids: IdCounters;
  /**
   * Per source slot: 1 if the point's old loop took part in a reconnection, so its new loop gets a new id.
   * Null: loop ids are kept (the loop id of the loop's first point).
   */
  readonly relabel: Uint8Array | null;
  /** Called for each dropped loop. */
  readonly onRemoved: (loop: RemovedLoop) => void;
}

/**
 * Rebuilds `src` (live slots linked by next/prev, possibly with holes and appended slots) into `dst` as a
 * compact state, loop by loop. Loops are visited in slot order of their first live slot, each starting at that
 * slot (so an unchanged loop keeps its start point and order). Drops loops below `minPoints` or `minLength`.
 *
 * Method: one traversal per loop (O(n)); loop length summed with Neumaier compensation.
 */
export function compactInto(src: FilamentState, dst: FilamentState, opts: CompactOptions): void {
  dst.ensureCapacity(src.n);
  dst.n = 0;
  dst.nLoops = 0;
  const L = opts.boxSize;
  const seen = scratchFlags(src.n);
  for (let s = 0; s < src.n; s++) seen[s] = 0;
  for (let s0 = 0; s0 < src.n; s0++) {
    if (!src.alive[s0] || seen[s0]) continue;
    const d0 = dst.n;
    let needNewId = false;
    let len = 0, lenC = 0, cxs = 0, cys = 0, czs = 0;
    let s = s0;
    let count = 0;
    do {
      seen[s] = 1;
      const d = d0 + count;
      dst.copySlotFrom(src, s, d);
      if (opts.relabel !== null && opts.relabel[s]) needNewId = true;
      const t = src.next[s];
      let dx = src.x[t] - src.x[s], dy = src.y[t] - src.y[s], dz = src.z[t] - src.z[s];
      if (L > 0) {
        dx -= L * Math.round(dx / L);
        dy -= L * Math.round(dy / L);
        dz -= L * Math.round(dz / L);
      }
      const l = Math.sqrt(dx * dx + dy * dy + dz * dz);
      const tt = len + l;
      lenC += Math.abs(len) >= l ? (len - tt) + l : (l - tt) + len;
      len = tt;
      const mx = src.x[s] + 0.5 * dx + L * src.imx[s];
      const my = src.y[s] + 0.5 * dy + L * src.imy[s];
      const mz = src.z[s] + 0.5 * dz + L * src.imz[s];
      cxs += l * mx;
      cys += l * my;
      czs += l * mz;
      count++;
      s = t;
      if (count > src.n) throw new Error("compactInto: broken loop links (cycle not closed)");
    } while (s !== s0);
    const length = len + lenC;
    if (count < opts.minPoints || length < opts.minLength) {
      const markerIds: number[] = [];
      for (let k = 0; k < count; k++) if (dst.marker[d0 + k]) markerIds.push(dst.id[d0 + k]);
      const w = length > 0 ? 1 / length : 0;
      opts.onRemoved({
        loopId: src.loopOf[s0],
        points: count,
        length,
        markerIds,
        cx: cxs * w,
        cy: cys * w,
        cz: czs * w,
      });
      continue; // rollback: dst.n unchanged
    }
    const lid = needNewId ? opts.ids.loop() : src.loopOf[s0];
    for (let k = 0; k < count; k++) {
      const d = d0 + k;
      dst.next[d] = k === count - 1 ? d0 : d + 1;
      dst.prev[d] = k === 0 ? d0 + count - 1 : d - 1;
      dst.loopOf[d] = lid;
    }
    dst.ensureLoopCapacity(dst.nLoops + 1);
    dst.loopStart[dst.nLoops] = d0;
    dst.loopLen[dst.nLoops] = count;
    dst.loopId[dst.nLoops] = lid;
    dst.nLoops++;
    dst.n = d0 + count;
  }
}

// Visited flags of compactInto (grown by doubling, reused across calls; one per worker/module instance).
let flagBuf = new Uint8Array(0);
function scratchFlags(n: number): Uint8Array {
  if (flagBuf.length < n) flagBuf = new Uint8Array(Math.max(n, 2 * flagBuf.length));
  return flagBuf;
}

/**
 * Relabels loop ids of a linked (possibly non-compact) state by traversal: writes into `loopOf` a temporary
 * index of the cycle each live slot belongs to. Returns the number of cycles. Used by reconnection to tell
 * whether a pair lies on one loop (split) or two (merge).
 */
export function cycleIndex(state: FilamentState, out: Int32Array): number {
  for (let s = 0; s < state.n; s++) out[s] = -1;
  let c = 0;
  for (let s0 = 0; s0 < state.n; s0++) {
    if (!state.alive[s0] || out[s0] >= 0) continue;
    let s = s0;
    do {
      out[s] = c;
      s = state.next[s];
    } while (s !== s0);
    c++;
  }
  return c;
}
