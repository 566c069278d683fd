/**
 * Vortex reconnections by the distance + length-decrease rule ("Type II") with an antiparallel test.
 *
 * Method. Candidate pairs are points i, j closer than δ_r, found with a cell list of cell size ≥ δ_r (hashed for
 * unbounded domains, wrapped for a periodic cube), excluding pairs fewer than 4 points apart along one loop.
 * Pairs are processed in a deterministic order: by distance, ties by the smaller then the larger persistent
 * point id. A pair reconnects if neither point (nor their successors) lies within 4 links of a point that
 * already reconnected this step (one reconnection per crossing per step; otherwise lines that cross within
 * one step would reconnect at several neighbouring points at once, pinching off spurious tiny loops), the
 * tangents are
 * antiparallel (t_i·t_j < 0) and the total length decreases. For segments a→a+1 and b→b+1 the swap
 *   a → b+1, b → a+1 changes the length by ΔL = |s_a − s_{b+1}| + |s_b − s_{a+1}| − |s_a − s_{a+1}| − |s_b − s_{b+1}|;
 * the rule's (a, b) = (i, j) is extended to the best of (i, j), (i, j−1), (i−1, j) (largest decrease, ties in
 * that order), because for exactly facing points (e.g. mirror-symmetric collisions) only the overlapping
 * segments (i, j−1) or (i−1, j) shorten the line. A reconnection requires ΔL < 0; then one loop splits into
 * two, or two loops merge into one.
 * The state is left linked; `compactInto` relabels loops afterwards (slots flagged in `relabel` get new loop ids).
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398 (distance rule);
 * L. Kondaurova, V. L'vov, A. Pomyalov, I. Procaccia, Phys. Rev. B 89, 014502 (2014),
 * doi:10.1103/PhysRevB.89.014502 (comparison of reconnection criteria; length-decrease variant);
 * J. Koplik, H. Levine, Phys. Rev. Lett. 71, 1375 (1993), doi:10.1103/PhysRevLett.71.1375 (reconnection is
 * dissipative).
 *
 * @example
 * ```ts
 * import { Reconnector } from "./reconnect.ts";
 * const rc = new Reconnector();
 * // rc.run(state, geo, { distance: 0.5, boxSize: 0 }, relabel, (r) => console.log(r));
 * ```
 */
import type { Geometry } from "./geometry.ts";
import type { FilamentState } from "./state.ts";
import { CellHash, cellSlot, type CellTableView } from "./_cell_hash.ts";
import { SHARED } from "./_alloc.ts";
import type { ThreadPool } from "./thread_pool.ts";

export interface ReconnectOptions {
  /** Reconnection distance δ_r (length). */
  readonly distance: number;
  /** Periodic cube side, 0 for unbounded. */
  readonly boxSize: number;
}

/** One reconnection, as found (loop ids are those before the reconnection). */
export interface ReconnectionRecord {
  readonly idA: number;
  readonly idB: number;
  readonly loopA: number;
  readonly loopB: number;
  readonly separation: number;
  /** ΔL < 0 (length). */
  readonly lengthChange: number;
  /** Midpoint of the pair (unwrapped, length). */
  readonly x: number;
  readonly y: number;
  readonly z: number;
}

/** Points within this many links of a reconnected point cannot reconnect again in the same step. */
const BLOCK_RADIUS = 4;

function dist(s: FilamentState, a: number, b: number, L: number): number {
  let ex = s.x[b] - s.x[a], ey = s.y[b] - s.y[a], ez = s.z[b] - s.z[a];
  if (L > 0) {
    ex -= L * Math.round(ex / L);
    ey -= L * Math.round(ey / L);
    ez -= L * Math.round(ez / L);
  }
  return Math.sqrt(ex * ex + ey * ey + ez * ez);
}

/** Cell-list reconnection finder with reusable work arrays. */
export class Reconnector {
  private cap = 0;
  private cellNext = SHARED.i32(0);
  private loopPos = SHARED.i32(0);
  private loopIdx = SHARED.i32(0);
  /** Point count of each point's loop. */
  private loopSize = SHARED.i32(0);
  private used = new Uint8Array(0);
  private readonly cells = new CellHash();
  private pairCap = 0;
  private pa = SHARED.i32(0);
  private pb = SHARED.i32(0);
  private pd = SHARED.f64(0);
  private nPairs = 0;
  private pool: ThreadPool | null = null;
  private readonly fill = SHARED.i32(1);
  private readonly solo = new Int32Array(1);
  private readonly scratch = new PairScratch();

  constructor() {
    this.cells.alloc = SHARED;
  }

  /** Shares the candidate search with the pool's threads (null: the calling thread only). */
  usePool(pool: ThreadPool | null): void {
    this.pool = pool;
  }

  private ensure(n: number): void {
    if (n > this.cap) {
      let c = Math.max(64, this.cap);
      while (c < n) c *= 2;
      this.cellNext = SHARED.i32(c);
      this.loopPos = SHARED.i32(c);
      this.loopIdx = SHARED.i32(c);
      this.loopSize = SHARED.i32(c);
      this.used = new Uint8Array(c);
      this.cap = c;
    }
  }

  /** Grows the pair arrays to hold c pairs (keeping none). */
  private ensurePairs(c: number): void {
    if (c <= this.pairCap) return;
    this.pa = SHARED.i32(c);
    this.pb = SHARED.i32(c);
    this.pd = SHARED.f64(c);
    this.pairCap = c;
  }

  /**
   * Finds and performs reconnections on a compact state (geometry `geo` of the current positions). Slots whose
   * loops changed are flagged in `relabel` (length ≥ state.n, zeroed by the caller). Returns the count.
   */
  run(
    state: FilamentState,
    geo: Geometry,
    opts: ReconnectOptions,
    relabel: Uint8Array,
    onReconnect: (r: ReconnectionRecord) => void,
  ): number {
    const n = state.n;
    if (n === 0) return 0;
    this.ensure(n);
    const L = opts.boxSize;
    const dr = opts.distance;
    const dr2 = dr * dr;
    const { x, y, z } = state;
    for (let k = 0; k < state.nLoops; k++) {
      const s0 = state.loopStart[k];
      for (let q = 0; q < state.loopLen[k]; q++) {
        this.loopPos[s0 + q] = q;
        this.loopIdx[s0 + q] = k;
        this.loopSize[s0 + q] = state.loopLen[k];
      }
    }
    // Cell list. Periodic: nc cells per side of size L/nc ≥ δ_r; unbounded: cells of size δ_r, hashed.
    const nc = L > 0 ? Math.max(1, Math.floor(L / dr)) : 0;
    const cs = L > 0 ? L / nc : dr;
    const cells = this.cells, cellNext = this.cellNext;
    cells.reset(n, nc);
    const hHead = cells.head;
    for (let i = n - 1; i >= 0; i--) {
      const h = cells.slot(Math.floor(x[i] / cs), Math.floor(y[i] / cs), Math.floor(z[i] / cs), true);
      cells.claim(h);
      cellNext[i] = hHead[h];
      hHead[h] = i;
    }
    this.ensurePairs(Math.max(64, n >> 3));
    for (;;) {
      const task: ReconnectSearchTask = {
        kind: "reconnect-search",
        n,
        x,
        y,
        z,
        loopIdx: this.loopIdx,
        loopPos: this.loopPos,
        loopSize: this.loopSize,
        head: hHead,
        keys: cells.keys,
        mask: cells.mask,
        nc,
        cs,
        span: nc > 0 && nc < 3 ? 0 : 1, // tiny periodic boxes: one cell holds everything
        cellNext,
        boxSize: L,
        dr2,
        pa: this.pa,
        pb: this.pb,
        pd: this.pd,
        fill: this.fill,
      };
      this.fill[0] = 0;
      const pool = this.pool;
      if (pool === null) {
        this.solo[0] = 0;
        runReconnectSearch(task, this.solo, this.scratch);
      } else pool.run(task, () => runReconnectSearch(task, pool.control, this.scratch));
      this.nPairs = this.fill[0];
      if (this.nPairs <= this.pairCap) break;
      this.ensurePairs(Math.ceil(1.5 * this.nPairs));
    }
    if (nc > 0 && nc < 3) this.dedupePairs();
    if (this.nPairs === 0) return 0;
    // Deterministic order: distance, then smaller id, then larger id.
    if (this.order.length < this.nPairs) this.order = new Int32Array(this.pairCap);
    const order = this.order.subarray(0, this.nPairs);
    for (let k = 0; k < this.nPairs; k++) order[k] = k;
    this.sortIds = state.id;
    order.sort(this.comparePairs);
    const id = state.id, pa = this.pa, pb = this.pb, pd = this.pd;
    const used = this.used;
    used.fill(0, 0, n);
    const { tx, ty, tz } = geo;
    let count = 0;
    for (let k = 0; k < this.nPairs; k++) {
      const p = order[k];
      const i = pa[p], j = pb[p];
      if (used[i] || used[j]) continue;
      if (tx[i] * tx[j] + ty[i] * ty[j] + tz[i] * tz[j] >= 0) continue;
      // Segment pairs adjacent to i and j: (i, j), (i, prev j), (prev i, j); keep the largest decrease.
      let a = -1, b = -1, dL = 0;
      for (let v = 0; v < 3; v++) {
        const sa = v === 2 ? state.prev[i] : i;
        const sb = v === 1 ? state.prev[j] : j;
        const a1 = state.next[sa], b1 = state.next[sb];
        if (used[sa] || used[sb] || used[a1] || used[b1]) continue;
        if (sa === sb || a1 === sb || b1 === sa) continue;
        const d = dist(state, sa, b1, L) + dist(state, sb, a1, L) - dist(state, sa, a1, L) -
          dist(state, sb, b1, L);
        if (d < dL) {
          dL = d;
          a = sa;
          b = sb;
        }
      }
      if (a < 0) continue;
      const i1 = state.next[a], j1 = state.next[b];
      const loopA = state.loopOf[i], loopB = state.loopOf[j];
      state.next[a] = j1;
      state.prev[j1] = a;
      state.next[b] = i1;
      state.prev[i1] = b;
      this.block(state, a);
      this.block(state, b);
      this.block(state, i1);
      this.block(state, j1);
      relabel[a] =
        relabel[b] =
        relabel[i1] =
        relabel[j1] =
          1;
      count++;
      let ex = x[j] - x[i], ey = y[j] - y[i], ez = z[j] - z[i];
      if (L > 0) {
        ex -= L * Math.round(ex / L);
        ey -= L * Math.round(ey / L);
        ez -= L * Math.round(ez / L);
      }
      onReconnect({
        idA: id[i],
        idB: id[j],
        loopA,
        loopB,
        separation: pd[p],
        lengthChange: dL,
        x: x[i] + L * state.imx[i] + 0.5 * ex,
        y: y[i] + L * state.imy[i] + 0.5 * ey,
        z: z[i] + L * state.imz[i] + 0.5 * ez,
      });
    }
    return count;
  }

  private order = new Int32Array(0);
  private sortIds = new Int32Array(0);
  private readonly comparePairs = (p: number, q: number): number => {
    const pd = this.pd, pa = this.pa, pb = this.pb, id = this.sortIds;
    if (pd[p] !== pd[q]) return pd[p] - pd[q];
    const p0 = Math.min(id[pa[p]], id[pb[p]]), q0 = Math.min(id[pa[q]], id[pb[q]]);
    if (p0 !== q0) return p0 - q0;
    return Math.max(id[pa[p]], id[pb[p]]) - Math.max(id[pa[q]], id[pb[q]]);
  };

  /**
   * Marks point s and its neighbours up to BLOCK_RADIUS links away (both directions) as used this step, and
   * clears their integrator memory (their nonlocal velocity jumps with the new connectivity).
   */
  private block(state: FilamentState, s: number): void {
    const used = this.used, hc = state.histCount;
    used[s] = 1;
    hc[s] = 0;
    let a = s, b = s;
    for (let k = 0; k < BLOCK_RADIUS; k++) {
      a = state.next[a];
      b = state.prev[b];
      used[a] = 1;
      used[b] = 1;
      hc[a] = 0;
      hc[b] = 0;
    }
  }

  /** Removes duplicate pairs (possible when a periodic box has fewer than 3 cells per side). */
  private dedupePairs(): void {
    let w = 0;
    for (let k = 0; k < this.nPairs; k++) {
      let dup = false;
      for (let q = 0; q < w; q++) {
        if (this.pa[q] === this.pa[k] && this.pb[q] === this.pb[k]) {
          dup = true;
          break;
        }
      }
      if (dup) continue;
      this.pa[w] = this.pa[k];
      this.pb[w] = this.pb[k];
      this.pd[w] = this.pd[k];
      w++;
    }
    this.nPairs = w;
  }
}

/** Target points per chunk of the candidate search. */
const CHUNK = 512;

/** The candidate-pair search of one reconnection pass for the pool (typed arrays on SharedArrayBuffers). */
export interface ReconnectSearchTask extends CellTableView {
  readonly kind: "reconnect-search";
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly loopIdx: Int32Array;
  readonly loopPos: Int32Array;
  readonly loopSize: Int32Array;
  readonly dr2: number;
  /** Output pairs (i < j, distance), in no particular order (`Reconnector.run` sorts them). */
  readonly pa: Int32Array;
  readonly pb: Int32Array;
  readonly pd: Float64Array;
  /** [pairs reserved so far]; above pa.length the pairs did not fit (the search is repeated, larger). */
  readonly fill: Int32Array;
}

/** A thread's private pair buffer for `runReconnectSearch`. */
export class PairScratch {
  j = new Int32Array(256);
  d = new Float64Array(256);
}

/** Finds the candidate pairs (i, j > i) of the target chunks taken from `control[0]`. */
export function runReconnectSearch(t: ReconnectSearchTask, control: Int32Array, scratch: PairScratch): void {
  const { n, x, y, z, loopIdx, loopPos, loopSize, head, keys, mask, nc, cs, span, cellNext, dr2 } = t;
  const L = t.boxSize;
  for (;;) {
    const i0 = CHUNK * Atomics.add(control, 0, 1);
    if (i0 >= n) break;
    const i1 = Math.min(n, i0 + CHUNK);
    let count = 0;
    for (let i = i0; i < i1; i++) {
      const ix = Math.floor(x[i] / cs), iy = Math.floor(y[i] / cs), iz = Math.floor(z[i] / cs);
      for (let a = -span; a <= span; a++) {
        for (let b = -span; b <= span; b++) {
          for (let c = -span; c <= span; c++) {
            const h = cellSlot(head, keys, mask, nc, ix + a, iy + b, iz + c);
            if (h < 0) continue;
            for (let j = head[h]; j >= 0; j = cellNext[j]) {
              if (j <= i) continue;
              let dx = x[j] - x[i], dy = y[j] - y[i], dz = z[j] - z[i];
              if (L > 0) {
                dx -= L * Math.round(dx / L);
                dy -= L * Math.round(dy / L);
                dz -= L * Math.round(dz / L);
              }
              const d2 = dx * dx + dy * dy + dz * dz;
              if (d2 >= dr2) continue;
              if (loopIdx[i] === loopIdx[j]) {
                const dd = Math.abs(loopPos[i] - loopPos[j]);
                if (Math.min(dd, loopSize[i] - dd) < 4) continue;
              }
              if (2 * count + 2 > scratch.j.length) {
                const gj = new Int32Array(2 * scratch.j.length), gd = new Float64Array(2 * scratch.d.length);
                gj.set(scratch.j);
                gd.set(scratch.d);
                scratch.j = gj;
                scratch.d = gd;
              }
              scratch.j[2 * count] = i;
              scratch.j[2 * count + 1] = j;
              scratch.d[count++] = Math.sqrt(d2);
            }
          }
        }
      }
    }
    if (count === 0) continue;
    const base = Atomics.add(t.fill, 0, count);
    if (base + count > t.pa.length) continue; // does not fit: the caller grows the arrays and repeats
    for (let k = 0; k < count; k++) {
      t.pa[base + k] = scratch.j[2 * k];
      t.pb[base + k] = scratch.j[2 * k + 1];
      t.pd[base + k] = scratch.d[k];
    }
  }
}
