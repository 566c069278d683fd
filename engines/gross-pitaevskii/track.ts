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
 * Unmatched tracks end, but are held for `grace` detections: a leftover same-sign detection within
 * maxDisplacement revives one with its id (zeros of a pair at the annihilation threshold, or of a vortex at the
 * detection boundary, flicker). Unmatched detections start new tracks (ids from `nextId` up). Endings, emitted
 * when the grace runs out with the time the track vanished: a vortex and an antivortex that ended together with
 * last positions closer than `pairDistance` annihilated (event "annihilation", pairs taken greedily by
 * increasing separation, ties by id); an ending within `maxDisplacement` of the detection boundary (the wall
 * region) is "wall-exit"; others "disappearance". Starts mirror them: "pair-creation", "wall-entry",
 * "appearance".
 *
 * References: H.W. Kuhn, Naval Res. Logist. Q. 2, 83 (1955), doi:10.1002/nav.3800020109; J. Munkres,
 * J. SIAM 5, 32 (1957), doi:10.1137/0105003; gated nearest-neighbour linking as in J.C. Crocker, D.G. Grier,
 * J. Colloid Interface Sci. 179, 298 (1996), doi:10.1006/jcis.1996.0217.
 */
import munkres from "munkres";
import type { EngineEvent } from "../contract.ts";
import { Detections } from "./detect.ts";

export interface TrackerOptions {
  /** Largest displacement between detections that keeps an id (ξ). */
  readonly maxDisplacement: number;
  /** Largest last-position separation of an annihilating pair (ξ). */
  readonly pairDistance: number;
  /** Side of the periodic domain (ξ), 0 when not periodic. */
  readonly periodicSide: number;
  /** True when (x, y) lies within `maxDisplacement` of the detection boundary (the wall region). */
  readonly nearBoundary: (x: number, y: number) => boolean;
  /** Detections an ended track waits to be found again before its ending becomes an event (≥ 0). */
  readonly grace: number;
}

/** A track that ended and may be found again. */
interface Ghost {
  readonly id: number;
  readonly x: number;
  readonly y: number;
  readonly wx: number;
  readonly wy: number;
  readonly s: number;
  /** Time of the first detection that missed it. */
  readonly t: number;
  age: number;
  /** The opposite-sign track that ended with it within pairDistance, or null. */
  partner: Ghost | null;
  separation: number;
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
  #ghosts: Ghost[] = [];

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

  /**
   * Matches a new detection at time t to the tracks, emitting events; the tracks become the new set. Tracks
   * that end are held as ghosts for `grace` more detections: a same-sign detection within maxDisplacement of a
   * ghost revives it with its id (no events), so a pair whose zeros flicker near the annihilation threshold, or
   * a vortex grazing the detection boundary, is not counted twice. A ghost that is not revived emits its ending
   * event, with the time it vanished, when its grace runs out (or at `finish`).
   */
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
    // Leftover detections revive ghosts.
    const revived = new Map<number, Ghost>();
    const ghosts = this.#ghosts;
    if (ghosts.length > 0) {
      const left = new Detections();
      const leftIndex: number[] = [];
      for (let q = 0; q < det.count; q++) {
        if (taken[q] === 0) {
          left.push(det.x[q], det.y[q], det.s[q]);
          leftIndex.push(q);
        }
      }
      const gm = this.#match(
        ghosts.length,
        Float64Array.from(ghosts, (g) => g.wx),
        Float64Array.from(ghosts, (g) => g.wy),
        Float64Array.from(ghosts, (g) => g.s),
        left,
      );
      gm.forEach((q, k) => {
        if (q < 0) return;
        const g = ghosts[k];
        revived.set(leftIndex[q], g);
        taken[leftIndex[q]] = 1;
        if (g.partner !== null) g.partner.partner = null;
        g.partner = null;
      });
    }
    const survivors = ghosts.filter((g) => ![...revived.values()].includes(g));
    // Ended tracks become ghosts; opposite signs that ended together close to each other are partners.
    const fresh: Ghost[] = ended.map((k) => ({
      id: this.id[k],
      x: this.x[k],
      y: this.y[k],
      wx: this.wx[k],
      wy: this.wy[k],
      s: this.s[k],
      t,
      age: 0,
      partner: null,
      separation: NaN,
    }));
    for (
      const [a, b, d] of greedyPairs(
        fresh.map((_, k) => k),
        (a, b) => fresh[a].s * fresh[b].s >= 0 ? Infinity : this.#separation(fresh[a], fresh[b]),
        o.pairDistance,
        (k) => fresh[k].id,
      )
    ) {
      fresh[a].partner = fresh[b];
      fresh[b].partner = fresh[a];
      fresh[a].separation = fresh[b].separation = d;
    }
    const keep: Ghost[] = [];
    const expire: Ghost[] = [];
    for (const g of survivors) (++g.age >= o.grace ? expire : keep).push(g);
    for (const g of fresh) (o.grace === 0 ? expire : keep).push(g);
    this.#expire(expire, emit);
    this.#ghosts = keep;

    // New track arrays: matched tracks keep their order, then revived ghosts, then new tracks.
    const side = o.periodicSide;
    const n = det.count;
    const id = new Int32Array(n), x = new Float64Array(n), y = new Float64Array(n), order: number[] = [];
    let w = 0;
    for (let k = 0; k < prevN; k++) {
      const q = match[k];
      if (q < 0) continue;
      let dx = det.x[q] - this.wx[k], dy = det.y[q] - this.wy[k];
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      [id[w], x[w], y[w]] = [this.id[k], this.x[k] + dx, this.y[k] + dy];
      order.push(q);
      w++;
    }
    for (const [q, g] of [...revived].sort((p, r) => p[0] - r[0])) {
      let dx = det.x[q] - g.wx, dy = det.y[q] - g.wy;
      if (side > 0) {
        dx -= side * Math.round(dx / side);
        dy -= side * Math.round(dy / side);
      }
      [id[w], x[w], y[w]] = [g.id, g.x + dx, g.y + dy];
      order.push(q);
      w++;
    }
    const started: number[] = [];
    const startIndex = new Map<number, number>();
    for (let q = 0; q < n; q++) {
      if (taken[q] === 1) continue;
      started.push(q);
      startIndex.set(q, w);
      [id[w], x[w], y[w]] = [this.nextId++, det.x[q], det.y[q]];
      order.push(q);
      w++;
    }
    this.#resize(n);
    this.count = n;
    for (let k = 0; k < n; k++) {
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
        return this.#separation({ wx: det.x[a], wy: det.y[a] }, { wx: det.x[b], wy: det.y[b] });
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

  /** Emits the ending events of every ghost still held (call once at the end of a run). */
  finish(emit: (e: EngineEvent) => void): void {
    this.#expire(this.#ghosts, emit);
    this.#ghosts = [];
  }

  /** Ending events of expiring ghosts: partners that expire together annihilated, others hit the wall or vanished. */
  #expire(list: readonly Ghost[], emit: (e: EngineEvent) => void): void {
    const o = this.#opts;
    const done = new Set<Ghost>();
    for (const g of list) {
      if (done.has(g)) continue;
      done.add(g);
      const p = g.partner;
      if (p !== null && list.includes(p)) {
        done.add(p);
        const [a, b] = g.id < p.id ? [g, p] : [p, g];
        emit({
          t: g.t,
          kind: "annihilation",
          ids: [a.id, b.id],
          data: { x1: a.x, y1: a.y, x2: b.x, y2: b.y, separation: g.separation },
        });
        this.counts.annihilations++;
        this.counts.annihilationSeparationSum += g.separation;
        continue;
      }
      const wall = o.nearBoundary(g.wx, g.wy);
      emit({
        t: g.t,
        kind: wall ? "wall-exit" : "disappearance",
        ids: [g.id],
        data: { x: g.x, y: g.y, circulation: g.s },
      });
      if (wall) this.counts.wallExits++;
      else this.counts.disappearances++;
    }
  }

  #separation(a: { wx: number; wy: number }, b: { wx: number; wy: number }): number {
    const side = this.#opts.periodicSide;
    let dx = a.wx - b.wx, dy = a.wy - b.wy;
    if (side > 0) {
      dx -= side * Math.round(dx / side);
      dy -= side * Math.round(dy / side);
    }
    return Math.hypot(dx, dy);
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
