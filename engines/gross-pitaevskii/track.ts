/**
 * Vortex tracking between consecutive detections, with annihilation, wall and appearance events.
 *
 * Rule (documented in the study schema): vortices are matched separately per sign. Among all assignments
 * between the previous tracks and the new detections that only pair points closer than `maxDisplacement`
 * (minimum image in a periodic domain), the tracker takes one with the most pairs and, among those, the least
 * total squared displacement: the gated pairs form small connected groups, and each group is solved as a
 * rectangular assignment problem (Kuhn–Munkres, npm `munkres`) with cost d² for allowed pairs and a cost larger
 * than any sum of allowed costs for the others, which are then dropped. Matched tracks keep their id and advance
 * their unwrapped position by the minimum-image displacement.
 *
 * Unmatched tracks end; unmatched detections start new tracks (ids from `nextId` up). Endings: a vortex and an
 * antivortex that end together with last positions closer than `pairDistance` annihilated (event
 * "annihilation", pairs taken greedily by increasing separation, ties by id); an ending within `maxDisplacement`
 * of the detection boundary (the wall region) is "wall-exit"; others "disappearance". Starts mirror them:
 * "pair-creation", "wall-entry", "appearance".
 *
 * References: H.W. Kuhn, Naval Res. Logist. Q. 2, 83 (1955), doi:10.1002/nav.3800020109; J. Munkres,
 * J. SIAM 5, 32 (1957), doi:10.1137/0105003; gated nearest-neighbour linking as in J.C. Crocker, D.G. Grier,
 * J. Colloid Interface Sci. 179, 298 (1996), doi:10.1006/jcis.1996.0217.
 */
import munkres from "munkres";
import type { EngineEvent } from "../contract.ts";
import type { Detections } from "./detect.ts";

export interface TrackerOptions {
  /** Largest displacement between detections that keeps an id (ξ). */
  readonly maxDisplacement: number;
  /** Largest last-position separation of an annihilating pair (ξ). */
  readonly pairDistance: number;
  /** Side of the periodic domain (ξ), 0 when not periodic. */
  readonly periodicSide: number;
  /** True when (x, y) lies within `maxDisplacement` of the detection boundary (the wall region). */
  readonly nearBoundary: (x: number, y: number) => boolean;
}

/** What one update found, for scalars. */
export interface TrackCounts {
  annihilations: number;
  wallExits: number;
  disappearances: number;
  pairCreations: number;
  wallEntries: number;
  appearances: number;
  /** Sum of last-position separations of annihilating pairs (ξ). */
  annihilationSeparationSum: number;
}

export class Tracker {
  /** Live tracks (first `count` valid): id, unwrapped position, wrapped (detected) position, circulation. */
  count = 0;
  id = new Int32Array(0);
  x = new Float64Array(0);
  y = new Float64Array(0);
  wx = new Float64Array(0);
  wy = new Float64Array(0);
  s = new Float64Array(0);
  nextId = 0;
  readonly counts: TrackCounts = {
    annihilations: 0,
    wallExits: 0,
    disappearances: 0,
    pairCreations: 0,
    wallEntries: 0,
    appearances: 0,
    annihilationSeparationSum: 0,
  };
  readonly #opts: TrackerOptions;

  constructor(opts: TrackerOptions) {
    this.#opts = opts;
  }

  /**
   * Starts the tracks from the first detection, taking the ids of the nearest reference vortices (e.g. the
   * imprinted ones) under the same matching rule; detections without a reference get ids from `referenceCount`
   * up. Returns how many references were found.
   */
  start(
    det: Detections,
    ref: { n: number; x: Float64Array; y: Float64Array; s: Float64Array; id: Int32Array },
  ) {
    this.#resize(det.count);
    this.count = det.count;
    for (let k = 0; k < det.count; k++) {
      this.x[k] = this.wx[k] = det.x[k];
      this.y[k] = this.wy[k] = det.y[k];
      this.s[k] = det.s[k];
      this.id[k] = -1;
    }
    let maxId = -1;
    for (let r = 0; r < ref.n; r++) maxId = Math.max(maxId, ref.id[r]);
    this.nextId = maxId + 1;
    const match = this.#match(ref.n, ref.x, ref.y, ref.s, det);
    let found = 0;
    for (let r = 0; r < ref.n; r++) {
      const k = match[r];
      if (k >= 0) {
        this.id[k] = ref.id[r];
        found++;
      }
    }
    for (let k = 0; k < det.count; k++) if (this.id[k] < 0) this.id[k] = this.nextId++;
    return found;
  }

  /** Matches a new detection at time t to the tracks, emitting events; the tracks become the new set. */
  update(t: number, det: Detections, emit: (e: EngineEvent) => void): void {
    const o = this.#opts;
    const prevN = this.count;
    const match = this.#match(prevN, this.wx, this.wy, this.s, det);
    const taken = new Uint8Array(det.count);
    const ended: number[] = [];
    for (let k = 0; k < prevN; k++) {
      if (match[k] >= 0) taken[match[k]] = 1;
      else ended.push(k);
    }
    const started: number[] = [];
    for (let q = 0; q < det.count; q++) if (taken[q] === 0) started.push(q);

    // Endings and starts: pairs first, then the wall, then the rest.
    const side = o.periodicSide;
    const sep = (ax: number, ay: number, bx: number, by: number) => {
      let dx = ax - bx, dy = ay - by;
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      return Math.hypot(dx, dy);
    };
    const endPairs = greedyPairs(
      ended,
      (a, b) => {
        if (this.s[a] * this.s[b] >= 0) return Infinity;
        return sep(this.wx[a], this.wy[a], this.wx[b], this.wy[b]);
      },
      o.pairDistance,
      (k) => this.id[k],
    );
    const endPaired = new Set<number>();
    for (const [a, b, d] of endPairs) {
      endPaired.add(a).add(b);
      const [p, q] = this.id[a] < this.id[b] ? [a, b] : [b, a];
      emit({
        t,
        kind: "annihilation",
        ids: [this.id[p], this.id[q]],
        data: { x1: this.x[p], y1: this.y[p], x2: this.x[q], y2: this.y[q], separation: d },
      });
      this.counts.annihilations++;
      this.counts.annihilationSeparationSum += d;
    }
    for (const k of ended) {
      if (endPaired.has(k)) continue;
      const wall = o.nearBoundary(this.wx[k], this.wy[k]);
      emit({
        t,
        kind: wall ? "wall-exit" : "disappearance",
        ids: [this.id[k]],
        data: { x: this.x[k], y: this.y[k], circulation: this.s[k] },
      });
      if (wall) this.counts.wallExits++;
      else this.counts.disappearances++;
    }

    // New track arrays: matched tracks keep their order, new ones are appended in detection order.
    const id = new Int32Array(det.count), x = new Float64Array(det.count), y = new Float64Array(det.count);
    let w = 0;
    for (let k = 0; k < prevN; k++) {
      const q = match[k];
      if (q < 0) continue;
      let dx = det.x[q] - this.wx[k], dy = det.y[q] - this.wy[k];
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      id[w] = this.id[k];
      x[w] = this.x[k] + dx;
      y[w] = this.y[k] + dy;
      w++;
    }
    const startIndex = new Map<number, number>();
    for (const q of started) {
      startIndex.set(q, w);
      id[w] = this.nextId++;
      x[w] = det.x[q];
      y[w] = det.y[q];
      w++;
    }
    const order: number[] = [];
    for (let k = 0; k < prevN; k++) if (match[k] >= 0) order.push(match[k]);
    order.push(...started);
    this.#resize(det.count);
    this.count = det.count;
    for (let k = 0; k < det.count; k++) {
      const q = order[k];
      this.id[k] = id[k];
      this.x[k] = x[k];
      this.y[k] = y[k];
      this.wx[k] = det.x[q];
      this.wy[k] = det.y[q];
      this.s[k] = det.s[q];
    }

    const startPairs = greedyPairs(
      started,
      (a, b) => {
        if (det.s[a] * det.s[b] >= 0) return Infinity;
        return sep(det.x[a], det.y[a], det.x[b], det.y[b]);
      },
      o.pairDistance,
      (q) => id[startIndex.get(q)!],
    );
    const startPaired = new Set<number>();
    for (const [a, b, d] of startPairs) {
      startPaired.add(a).add(b);
      const ia = id[startIndex.get(a)!], ib = id[startIndex.get(b)!];
      const [p, q] = ia < ib ? [a, b] : [b, a];
      emit({
        t,
        kind: "pair-creation",
        ids: [Math.min(ia, ib), Math.max(ia, ib)],
        data: { x1: det.x[p], y1: det.y[p], x2: det.x[q], y2: det.y[q], separation: d },
      });
      this.counts.pairCreations++;
    }
    for (const q of started) {
      if (startPaired.has(q)) continue;
      const wall = o.nearBoundary(det.x[q], det.y[q]);
      emit({
        t,
        kind: wall ? "wall-entry" : "appearance",
        ids: [id[startIndex.get(q)!]],
        data: { x: det.x[q], y: det.y[q], circulation: det.s[q] },
      });
      if (wall) this.counts.wallEntries++;
      else this.counts.appearances++;
    }
  }

  #resize(m: number): void {
    if (this.id.length >= m) return;
    const cap = Math.max(m, 2 * this.id.length, 16);
    const grow = <T extends Float64Array | Int32Array>(a: T, make: (k: number) => T): T => {
      const b = make(cap);
      b.set(a);
      return b;
    };
    this.id = grow(this.id, (k) => new Int32Array(k));
    this.x = grow(this.x, (k) => new Float64Array(k));
    this.y = grow(this.y, (k) => new Float64Array(k));
    this.wx = grow(this.wx, (k) => new Float64Array(k));
    this.wy = grow(this.wy, (k) => new Float64Array(k));
    this.s = grow(this.s, (k) => new Float64Array(k));
  }

  /**
   * For each of the m previous points, the index of its new detection, or −1 (see the module comment: most
   * gated pairs, then least Σd², per sign and connected group).
   */
  #match(m: number, px: Float64Array, py: Float64Array, ps: Float64Array, det: Detections): Int32Array {
    const o = this.#opts, side = o.periodicSide, gate = o.maxDisplacement, gate2 = gate * gate;
    const out = new Int32Array(m).fill(-1);
    // Gated edges (brute force: detections number at most a few hundred).
    const edges: [number, number, number][] = [];
    for (let a = 0; a < m; a++) {
      for (let b = 0; b < det.count; b++) {
        if (ps[a] !== det.s[b]) continue;
        let dx = det.x[b] - px[a], dy = det.y[b] - py[a];
        if (side > 0) {
          dx -= side * Math.round(dx / side);
          dy -= side * Math.round(dy / side);
        }
        const d2 = dx * dx + dy * dy;
        if (d2 <= gate2) edges.push([a, b, d2]);
      }
    }
    if (edges.length === 0) return out;
    // Connected groups by union–find over previous (0..m−1) and new (m..m+count−1) nodes.
    const parent = Int32Array.from({ length: m + det.count }, (_, k) => k);
    const find = (k: number): number => {
      while (parent[k] !== k) {
        parent[k] = parent[parent[k]];
        k = parent[k];
      }
      return k;
    };
    for (const [a, b] of edges) {
      const ra = find(a), rb = find(m + b);
      if (ra !== rb) parent[Math.max(ra, rb)] = Math.min(ra, rb);
    }
    const groups = new Map<number, [number, number, number][]>();
    for (const e of edges) {
      const r = find(e[0]);
      let g = groups.get(r);
      if (!g) groups.set(r, g = []);
      g.push(e);
    }
    for (const g of groups.values()) {
      if (g.length === 1) {
        out[g[0][0]] = g[0][1];
        continue;
      }
      const rows = [...new Set(g.map((e) => e[0]))].sort((a, b) => a - b);
      const cols = [...new Set(g.map((e) => e[1]))].sort((a, b) => a - b);
      const big = (g.length + 1) * gate2 + 1;
      const cost = rows.map(() => new Float64Array(cols.length).fill(big));
      const ri = new Map(rows.map((r, k) => [r, k])), ci = new Map(cols.map((c, k) => [c, k]));
      for (const [a, b, d2] of g) cost[ri.get(a)!][ci.get(b)!] = d2;
      for (const [r, c] of munkres(cost)) {
        if (cost[r][c] < big) out[rows[r]] = cols[c];
      }
    }
    return out;
  }
}

/**
 * Greedy pairing of `items` by increasing `distance` below `limit` (Infinity = not allowed), each item at most
 * once, ties broken by the smaller key then the other; returns [a, b, distance] triples.
 */
function greedyPairs(
  items: readonly number[],
  distance: (a: number, b: number) => number,
  limit: number,
  key: (a: number) => number,
): [number, number, number][] {
  const cand: [number, number, number][] = [];
  for (let i = 0; i < items.length; i++) {
    for (let j = i + 1; j < items.length; j++) {
      const d = distance(items[i], items[j]);
      if (d < limit) cand.push([items[i], items[j], d]);
    }
  }
  cand.sort((p, q) =>
    p[2] - q[2] || Math.min(key(p[0]), key(p[1])) - Math.min(key(q[0]), key(q[1])) ||
    Math.max(key(p[0]), key(p[1])) - Math.max(key(q[0]), key(q[1]))
  );
  const used = new Set<number>();
  const out: [number, number, number][] = [];
  for (const c of cand) {
    if (used.has(c[0]) || used.has(c[1])) continue;
    used.add(c[0]).add(c[1]);
    out.push(c);
  }
  return out;
}
