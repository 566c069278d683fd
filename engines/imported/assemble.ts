/**
 * The format-independent core of the imported-data engines: validated rows in, frames and events out.
 *
 * Readers (CSV/TSV, JSON lines, HDF5) turn each record into numbers by slot (`Slot.T`, `Slot.X`, …) in the
 * file's units and call {@link FrameAssembler.row}; the assembler
 *
 * 1. converts units and shifts the time origin, and checks every value (finite, integer ids, nonzero
 *    circulation, 0/1 markers, within run.maxDistance), naming file, row and column in every message;
 * 2. groups consecutive rows with the same time into a record group (rows must be sorted by time) and checks
 *    the group (unique ids; in 3D loops of ≥ 3 points, each loop contiguous or ordered by an order column);
 * 3. matches groups to the study's frame times t_k = k·Δt: frame k is the group nearest to t_k within
 *    matchTolerance·Δt; other groups are skipped; a frame time without a group in reach is an error;
 * 4. emits frame k to the sink (points of a filament loop by loop, in order) and a "track-end" event for every
 *    tracked id (2D: every vortex; 3D: every marker) present in the previous frame but not in this one;
 * 5. stops reading once frame K = ⌊duration/Δt⌋ is emitted, so the duration bounds what is read.
 *
 * Memory: three record groups (the one being read, the best candidate, a spare) plus the previous frame's
 * tracked ids, all grown by doubling and reused: O(objects per frame), independent of the file length.
 *
 * @example
 * ```ts
 * const asm = new FrameAssembler(config, sink);
 * const row = new Float64Array(SLOT_COUNT);
 * row[Slot.T] = 0; row[Slot.ID] = 1; row[Slot.X] = 0.5; row[Slot.Y] = -0.5; row[Slot.CIRCULATION] = 1;
 * asm.row(row, origin);               // false once no more rows are needed
 * const summary = asm.finish();       // emits the last frame, checks the duration was covered
 * ```
 */
import { EngineFailure, type FrameSink, type RunControls } from "../contract.ts";
import { fail } from "./_messages.ts";
import type { CirculationReading } from "./units.ts";

/** Positions of the values of one row. */
export const Slot = {
  T: 0,
  ID: 1,
  X: 2,
  Y: 3,
  Z: 4,
  CIRCULATION: 5,
  LOOP: 6,
  ORDER: 7,
  MARKER: 8,
} as const;
export type SlotIndex = typeof Slot[keyof typeof Slot];
export const SLOT_COUNT = 9;

/** Where the current row came from; used only to build messages. */
export interface RowOrigin {
  /** Reference of the current row (a line number, a dataset index, …). */
  readonly ref: number;
  /** Location of a value of row `ref` (slot null: the row itself), e.g. "run3.csv:17 column 'x'". */
  describe(ref: number, slot: SlotIndex | null): string;
}

export interface AssemblerConfig {
  readonly dimension: 2 | 3;
  readonly controls: RunControls;
  readonly timing: {
    readonly origin: "first-record" | "zero";
    readonly matchTolerance: number;
    readonly allowEarlyEnd: boolean;
  };
  /** Raw → study unit factors. */
  readonly factors: { readonly t: number; readonly x: number; readonly y: number; readonly z: number };
  /** 2D only. */
  readonly circulation: CirculationReading;
  /** Optional columns present in the data (2D: id is always present). */
  readonly has: { readonly id: boolean; readonly order: boolean; readonly marker: boolean };
  /** 3D without a marker column: the marker flag of every point. */
  readonly markerDefault: 0 | 1;
  /** The file, as shown in messages (e.g. "data/run3.csv"). */
  readonly source: string;
  /** Which rows of the file belong to this realisation, for messages (e.g. "rows with run = 3"), or null. */
  readonly selection: string | null;
}

const INT32_MIN = -2147483648;
const INT32_MAX = 2147483647;
/** Row indices below this fit beside a shifted int32 id in one exactly represented double sort key. */
const KEY_RADIX = 2097152; // 2^21
const EMPTY_DIAGNOSTICS: Readonly<Record<string, number>> = Object.freeze({});

/** Growable struct-of-arrays storage for the rows of one record time. */
class Group {
  n = 0;
  t = 0;
  rawT = 0;
  empty = false;
  emptyRef = 0;
  ref: Float64Array;
  id: Int32Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  circulation: Float64Array;
  loop: Int32Array;
  order: Int32Array;
  marker: Uint8Array;
  /** 3D: row indices loop by loop, in order along each loop (set by the loop check). */
  perm: Int32Array;
  readonly dimension: 2 | 3;

  constructor(dimension: 2 | 3, capacity: number) {
    this.dimension = dimension;
    const three = dimension === 3;
    this.ref = new Float64Array(capacity);
    this.id = new Int32Array(capacity);
    this.x = new Float64Array(capacity);
    this.y = new Float64Array(capacity);
    this.z = new Float64Array(three ? capacity : 0);
    this.circulation = new Float64Array(three ? 0 : capacity);
    this.loop = new Int32Array(three ? capacity : 0);
    this.order = new Int32Array(three ? capacity : 0);
    this.marker = new Uint8Array(three ? capacity : 0);
    this.perm = new Int32Array(three ? capacity : 0);
  }

  reset(t: number, rawT: number): void {
    this.n = 0;
    this.t = t;
    this.rawT = rawT;
    this.empty = false;
  }

  grow(): void {
    const cap = Math.max(16, this.ref.length * 2);
    const three = this.dimension === 3;
    this.ref = growF64(this.ref, cap);
    this.id = growI32(this.id, cap);
    this.x = growF64(this.x, cap);
    this.y = growF64(this.y, cap);
    if (three) {
      this.z = growF64(this.z, cap);
      this.loop = growI32(this.loop, cap);
      this.order = growI32(this.order, cap);
      const m = new Uint8Array(cap);
      m.set(this.marker);
      this.marker = m;
      this.perm = growI32(this.perm, cap);
    } else {
      this.circulation = growF64(this.circulation, cap);
    }
  }
}

function growF64(a: Float64Array, cap: number): Float64Array {
  const b = new Float64Array(cap);
  b.set(a);
  return b;
}

function growI32(a: Int32Array, cap: number): Int32Array {
  const b = new Int32Array(cap);
  b.set(a);
  return b;
}

/** Shows a number as written (NaN, Infinity, -0 included). */
function shown(v: number): string {
  return Object.is(v, -0) ? "-0" : String(v);
}

/** Turns validated rows into frames; see the module documentation. */
export class FrameAssembler {
  readonly #c: AssemblerConfig;
  readonly #sink: FrameSink;
  readonly #dt: number;
  readonly #eps: number;
  /** Index of the last frame the duration asks for. */
  readonly #lastK: number;
  readonly #maxR2: number;

  #cur: Group;
  #best: Group;
  #spare: Group;
  #open = false;
  #bestK = -1;
  #nextK = 0;
  #t0 = Number.NaN;
  #done = false;
  #rows = 0;
  #groups = 0;
  #lastGroupT = Number.NaN;
  #lastGroupRawT = Number.NaN;
  #lastGroupRef = 0;

  // Sorting scratch (reused).
  #keys = new Float64Array(0);
  #idOrder = new Int32Array(0);
  readonly #loopRuns = new Map<number, number>();

  // 3D output buffers (points loop by loop).
  #outId = new Int32Array(0);
  #outX = new Float64Array(0);
  #outY = new Float64Array(0);
  #outZ = new Float64Array(0);
  #outLoop = new Int32Array(0);
  #outMarker = new Uint8Array(0);

  // Tracked ids of the previous emitted frame, sorted, with their last positions.
  #prevN = 0;
  #prevT = 0;
  #prevId = new Int32Array(0);
  #prevX = new Float64Array(0);
  #prevY = new Float64Array(0);
  #prevZ = new Float64Array(0);
  #tracked = new Int32Array(0);

  constructor(config: AssemblerConfig, sink: FrameSink) {
    this.#c = config;
    this.#sink = sink;
    const { duration, sampleInterval, maxDistance } = config.controls;
    this.#dt = sampleInterval;
    this.#eps = config.timing.matchTolerance * sampleInterval;
    this.#lastK = Math.floor(duration / sampleInterval + 1e-9);
    this.#maxR2 = maxDistance * maxDistance;
    this.#cur = new Group(config.dimension, 64);
    this.#best = new Group(config.dimension, 64);
    this.#spare = new Group(config.dimension, 64);
  }

  /** True once every frame the duration asks for has been emitted: readers stop reading. */
  get done(): boolean {
    return this.#done;
  }

  /**
   * Adds one row (values by slot, in the file's units). Returns false when no more rows are needed.
   * Throws `EngineFailure` with the row's location for any invalid value.
   */
  row(v: Float64Array, origin: RowOrigin): boolean {
    if (this.#done) return false;
    const ref = origin.ref;
    if (!this.#time(v[Slot.T], origin)) return false;
    const g = this.#cur;
    if (g.empty) {
      const marker = origin.describe(g.emptyRef, null);
      const at = origin.describe(ref, null);
      fail(
        `${at}: a row with objects at t = ${shown(g.rawT)}, where ${marker} marks a frame with no ` +
          "objects; a time holds either the empty-frame row or object rows",
      );
    }
    const c = this.#c;
    const f = c.factors;
    const rx = v[Slot.X];
    const ry = v[Slot.Y];
    if (!Number.isFinite(rx)) this.#notFinite(origin, ref, Slot.X, rx);
    if (!Number.isFinite(ry)) this.#notFinite(origin, ref, Slot.Y, ry);
    const x = f.x === 1 ? rx : rx * f.x;
    const y = f.y === 1 ? ry : ry * f.y;
    let z = 0;
    if (c.dimension === 3) {
      const rz = v[Slot.Z];
      if (!Number.isFinite(rz)) this.#notFinite(origin, ref, Slot.Z, rz);
      z = f.z === 1 ? rz : rz * f.z;
    }
    const r2 = x * x + y * y + z * z;
    if (r2 > this.#maxR2) {
      const distance = Math.sqrt(r2).toPrecision(4);
      throw new EngineFailure(
        "blow-up",
        `${origin.describe(ref, Slot.X)}: the point is at distance ${distance} from the origin ` +
          `(study units), beyond run.maxDistance = ${c.controls.maxDistance}; check the columns' units`,
        g.t,
      );
    }
    const id = c.has.id ? this.#integer(v[Slot.ID], origin, ref, Slot.ID, "an integer id") : 0;
    if (g.n === g.ref.length) g.grow();
    const i = g.n;
    g.ref[i] = ref;
    g.id[i] = id;
    g.x[i] = x;
    g.y[i] = y;
    if (c.dimension === 2) {
      const raw = v[Slot.CIRCULATION];
      if (!Number.isFinite(raw)) this.#notFinite(origin, ref, Slot.CIRCULATION, raw);
      if (raw === 0) {
        const where = origin.describe(ref, Slot.CIRCULATION);
        fail(`${where}: got 0, expected a nonzero circulation (vortices have Γ ≠ 0)`);
      }
      const circ = c.circulation;
      g.circulation[i] = circ.asSign ? (raw > 0 ? 1 : -1) : circ.factor === 1 ? raw : raw * circ.factor;
    } else {
      g.z[i] = z;
      g.loop[i] = this.#integer(v[Slot.LOOP], origin, ref, Slot.LOOP, "an integer loop id");
      if (c.has.order) {
        const o = this.#integer(v[Slot.ORDER], origin, ref, Slot.ORDER, "an integer position ≥ 0");
        if (o < 0) fail(`${origin.describe(ref, Slot.ORDER)}: got ${o}, expected an integer position ≥ 0`);
        g.order[i] = o;
      }
      if (c.has.marker) {
        const m = v[Slot.MARKER];
        if (m !== 0 && m !== 1) {
          fail(`${origin.describe(ref, Slot.MARKER)}: got ${shown(m)}, expected 0 or 1`);
        }
        g.marker[i] = m;
      } else g.marker[i] = c.markerDefault;
    }
    g.n = i + 1;
    this.#rows++;
    return true;
  }

  /**
   * Adds an empty-frame row: a record time at which there are no objects (written by the exporter as a row with
   * only the time). Returns false when no more rows are needed.
   */
  emptyRow(rawT: number, origin: RowOrigin): boolean {
    if (this.#done) return false;
    if (!this.#time(rawT, origin)) return false;
    const g = this.#cur;
    if (g.n > 0) {
      const first = origin.describe(g.ref[0], null);
      const at = origin.describe(origin.ref, null);
      fail(
        `${at}: an empty-frame row (only the time) at t = ${shown(rawT)}, which already has object rows ` +
          `(e.g. ${first})`,
      );
    }
    g.empty = true;
    g.emptyRef = origin.ref;
    this.#rows++;
    return true;
  }

  /** Ends the input: emits the pending frame and checks that the duration was covered. */
  finish(): { scalars: Record<string, number> } {
    if (!this.#done) {
      if (this.#open) this.#closeGroup();
      if (this.#bestK >= 0) this.#emitBest();
    }
    const where = this.#c.selection === null ? this.#c.source : `${this.#c.source} (${this.#c.selection})`;
    if (this.#nextK === 0) {
      if (this.#rows === 0) fail(`${where}: no data rows`);
      fail(
        `${where}: no record within ${this.#toleranceText()} of t = 0 (the last record is at ` +
          `t = ${shown(this.#lastGroupT)}); with timing.origin 'zero' the data must reach t = 0`,
      );
    }
    if (this.#nextK <= this.#lastK && !this.#c.timing.allowEarlyEnd) {
      const end = shown(this.#lastGroupT);
      const next = this.#nextK;
      const nextT = shown(next * this.#dt);
      fail(
        `${where}: the data end at t = ${end} (${this.#lastGroupDescription()}), before run.duration = ` +
          `${this.#c.controls.duration}: frame ${next} (t = ${nextT}) has no record; shorten run.duration or ` +
          "set timing.allowEarlyEnd: true",
      );
    }
    return { scalars: { "import.rows": this.#rows, "import.record_times": this.#groups } };
  }

  // ---------------------------------------------------------------------------------------------------------

  /** Converts and checks a row's time, opening a new group when it changes; false when reading can stop. */
  #time(rawT: number, origin: RowOrigin): boolean {
    this.#lastOrigin = origin;
    const ref = origin.ref;
    if (!Number.isFinite(rawT)) this.#notFinite(origin, ref, Slot.T, rawT);
    const ft = this.#c.factors.t;
    let t = ft === 1 ? rawT : rawT * ft;
    if (Number.isNaN(this.#t0)) this.#t0 = this.#c.timing.origin === "first-record" ? t : 0;
    t = t - this.#t0;
    if (this.#open) {
      const g = this.#cur;
      if (t === g.t) return true;
      if (t < g.t) {
        const previous = origin.describe(g.n > 0 ? g.ref[g.n - 1] : g.emptyRef, null);
        fail(
          `${origin.describe(ref, Slot.T)}: got ${shown(rawT)}, expected ≥ ${shown(g.rawT)} (the time of ` +
            `${previous}): time goes backwards; rows must be sorted by time`,
        );
      }
      this.#closeGroup();
    }
    return this.#openGroup(t, rawT, ref);
  }

  #openGroup(t: number, rawT: number, ref: number): boolean {
    const dt = this.#dt;
    const eps = this.#eps;
    if (this.#bestK >= 0 && t > this.#bestK * dt + eps) this.#emitBest();
    if (this.#done) return false;
    const next = this.#nextK;
    if (t > next * dt + eps && this.#bestK !== next) {
      const where = this.#c.selection === null ? this.#c.source : `${this.#c.source} (${this.#c.selection})`;
      const before = Number.isNaN(this.#lastGroupT)
        ? "it is the first record"
        : `the records before it are at t = ${shown(this.#lastGroupT)}`;
      const row = this.#describeRef(ref);
      fail(
        `${where}: no record within ${this.#toleranceText()} of frame time t = ${shown(next * dt)} ` +
          `(frame ${next}): the record after it is at t = ${shown(t)} (raw ${shown(rawT)}, ${row}) and ` +
          `${before}. Make run.sampleInterval a multiple of the data's time step, or raise ` +
          "timing.matchTolerance (fraction of run.sampleInterval, < 0.5) to take the nearest record",
      );
    }
    const g = this.#cur;
    g.reset(t, rawT);
    this.#open = true;
    this.#lastGroupRef = ref;
    return true;
  }

  #lastOrigin: RowOrigin | null = null;

  #describeRef(ref: number): string {
    return this.#lastOrigin === null ? `row ${ref}` : this.#lastOrigin.describe(ref, null);
  }

  #closeGroup(): void {
    const g = this.#cur;
    this.#open = false;
    this.#groups++;
    this.#lastGroupT = g.t;
    this.#lastGroupRawT = g.rawT;
    this.#checkGroup(g);
    const dt = this.#dt;
    const k = Math.round(g.t / dt);
    if (k < this.#nextK || k > this.#lastK || Math.abs(g.t - k * dt) > this.#eps) return;
    if (this.#bestK === k) {
      if (Math.abs(g.t - k * dt) < Math.abs(this.#best.t - k * dt)) this.#swapCurBest();
    } else {
      this.#swapCurBest();
      this.#bestK = k;
    }
  }

  #swapCurBest(): void {
    const b = this.#best;
    this.#best = this.#cur;
    this.#cur = this.#spare;
    this.#spare = b;
  }

  #toleranceText(): string {
    const tol = this.#c.timing.matchTolerance;
    return `${shown(tol)}·Δt (Δt = run.sampleInterval = ${shown(this.#dt)})`;
  }

  #lastGroupDescription(): string {
    return `raw ${shown(this.#lastGroupRawT)}, ${this.#describeRef(this.#lastGroupRef)}`;
  }

  #notFinite(origin: RowOrigin, ref: number, slot: SlotIndex, v: number): never {
    fail(`${origin.describe(ref, slot)}: got ${shown(v)}, expected a finite number`);
  }

  #integer(v: number, origin: RowOrigin, ref: number, slot: SlotIndex, what: string): number {
    if (!Number.isInteger(v) || v < INT32_MIN || v > INT32_MAX) {
      fail(
        `${origin.describe(ref, slot)}: got ${shown(v)}, expected ${what} in [${INT32_MIN}, ${INT32_MAX}]`,
      );
    }
    return v;
  }

  /**
   * Writes into `out` the indices i < n (only those with filter[i] === 1 when a filter is given) sorted by
   * ids[i], ties by index; returns how many. Uses exactly represented double keys (shifted id · 2^21 + i) and
   * the native numeric sort when n < 2^21, a comparator sort otherwise.
   */
  #sortIndices(ids: Int32Array, n: number, filter: Uint8Array | null, out: Int32Array): number {
    if (this.#keys.length < n) this.#keys = new Float64Array(Math.max(n, this.#keys.length * 2));
    let m = 0;
    if (n < KEY_RADIX) {
      const keys = this.#keys;
      for (let i = 0; i < n; i++) {
        if (filter === null || filter[i] === 1) keys[m++] = (ids[i] - INT32_MIN) * KEY_RADIX + i;
      }
      keys.subarray(0, m).sort();
      for (let j = 0; j < m; j++) {
        const k = keys[j];
        out[j] = k - Math.floor(k / KEY_RADIX) * KEY_RADIX;
      }
    } else {
      for (let i = 0; i < n; i++) if (filter === null || filter[i] === 1) out[m++] = i;
      out.subarray(0, m).sort((a, b) => ids[a] - ids[b] || a - b);
    }
    return m;
  }

  #checkGroup(g: Group): void {
    const n = g.n;
    if (n === 0) return;
    if (this.#c.has.id) {
      if (this.#idOrder.length < n) this.#idOrder = new Int32Array(Math.max(n, this.#idOrder.length * 2));
      const perm = this.#idOrder;
      this.#sortIndices(g.id, n, null, perm);
      for (let i = 1; i < n; i++) {
        const a = perm[i - 1];
        const b = perm[i];
        if (g.id[a] === g.id[b]) {
          const first = Math.min(a, b);
          const second = Math.max(a, b);
          const at = this.#describe(g.ref[second], Slot.ID);
          const also = this.#describe(g.ref[first], null);
          fail(
            `${at}: id ${g.id[b]} appears twice at t = ${shown(g.rawT)} (also ${also}); ids must be unique ` +
              "within a frame",
          );
        }
      }
    }
    if (this.#c.dimension === 3) this.#checkLoops(g);
  }

  #describe(ref: number, slot: SlotIndex | null): string {
    return this.#lastOrigin === null ? `row ${ref}` : this.#lastOrigin.describe(ref, slot);
  }

  /** 3D: orders points loop by loop into g.perm and checks each loop (≥ 3 points, distinct orders/contiguous). */
  #checkLoops(g: Group): void {
    const n = g.n;
    const perm = g.perm;
    for (let i = 0; i < n; i++) perm[i] = i;
    const loop = g.loop;
    if (this.#c.has.order) {
      const order = g.order;
      perm.subarray(0, n).sort((a, b) => loop[a] - loop[b] || order[a] - order[b] || a - b);
      for (let i = 1; i < n; i++) {
        const a = perm[i - 1];
        const b = perm[i];
        if (loop[a] === loop[b] && order[a] === order[b]) {
          const at = this.#describe(g.ref[Math.max(a, b)], Slot.ORDER);
          const also = this.#describe(g.ref[Math.min(a, b)], null);
          const t = shown(g.rawT);
          fail(`${at}: loop ${loop[b]} has two points at position ${order[b]} at t = ${t} (also ${also})`);
        }
      }
    } else {
      const runs = this.#loopRuns;
      runs.clear();
      for (let i = 0; i < n; i++) {
        if (i > 0 && loop[i] === loop[i - 1]) continue;
        const seen = runs.get(loop[i]);
        if (seen !== undefined) {
          const at = this.#describe(g.ref[i], Slot.LOOP);
          const start = this.#describe(g.ref[seen], null);
          fail(
            `${at}: loop ${loop[i]} continues here at t = ${shown(g.rawT)} after other loops (it starts at ` +
              `${start}); without an order column each loop's points must be listed together, in order along ` +
              "the line",
          );
        }
        runs.set(loop[i], i);
      }
    }
    let start = 0;
    for (let i = 1; i <= n; i++) {
      if (i < n && loop[perm[i]] === loop[perm[start]]) continue;
      const count = i - start;
      if (count < 3) {
        fail(
          `${this.#describe(g.ref[perm[start]], Slot.LOOP)}: loop ${loop[perm[start]]} has ${count} point` +
            `${count === 1 ? "" : "s"} at t = ${shown(g.rawT)}; a closed filament loop needs at least 3`,
        );
      }
      start = i;
    }
  }

  #emitBest(): void {
    const g = this.#best;
    const k = this.#bestK;
    this.#bestK = -1;
    this.#nextK = k + 1;
    if (this.#nextK > this.#lastK) this.#done = true;
    const n = g.n;
    const three = this.#c.dimension === 3;
    let id = g.id;
    let x = g.x;
    let y = g.y;
    let z: Float64Array | null = null;
    let loop: Int32Array | null = null;
    let marker: Uint8Array | null = null;
    if (three) {
      this.#ensureOut(n);
      const perm = g.perm;
      for (let i = 0; i < n; i++) {
        const j = perm[i];
        this.#outId[i] = this.#c.has.id ? g.id[j] : i;
        this.#outX[i] = g.x[j];
        this.#outY[i] = g.y[j];
        this.#outZ[i] = g.z[j];
        this.#outLoop[i] = g.loop[j];
        this.#outMarker[i] = g.marker[j];
      }
      id = this.#outId;
      x = this.#outX;
      y = this.#outY;
      z = this.#outZ;
      loop = this.#outLoop;
      marker = this.#outMarker;
    }
    this.#trackEnds(g.t, n, id, x, y, z, marker);
    this.#sink.frame({
      index: k,
      t: g.t,
      n,
      id,
      x,
      y,
      z,
      circulation: three ? null : g.circulation,
      loop,
      marker,
      diagnostics: EMPTY_DIAGNOSTICS,
    });
  }

  #ensureOut(n: number): void {
    if (this.#outX.length >= n) return;
    const cap = Math.max(n, this.#outX.length * 2);
    this.#outId = new Int32Array(cap);
    this.#outX = new Float64Array(cap);
    this.#outY = new Float64Array(cap);
    this.#outZ = new Float64Array(cap);
    this.#outLoop = new Int32Array(cap);
    this.#outMarker = new Uint8Array(cap);
  }

  /**
   * Emits "track-end" for every tracked id of the previous frame missing from this one (at the previous frame's
   * time, with the last position), then remembers this frame's tracked ids.
   */
  #trackEnds(
    t: number,
    n: number,
    id: Int32Array,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array | null,
    marker: Uint8Array | null,
  ): void {
    if (!this.#c.has.id) return;
    if (this.#tracked.length < n) this.#tracked = new Int32Array(Math.max(n, this.#tracked.length * 2));
    const tracked = this.#tracked;
    const m = this.#sortIndices(id, n, marker, tracked);
    // Merge with the previous frame's sorted ids: every previous id absent now has ended.
    const prevN = this.#prevN;
    let q = 0;
    for (let p = 0; p < prevN; p++) {
      const pid = this.#prevId[p];
      while (q < m && id[tracked[q]] < pid) q++;
      if (q < m && id[tracked[q]] === pid) continue;
      const data: Record<string, number> = z === null
        ? { x: this.#prevX[p], y: this.#prevY[p] }
        : { x: this.#prevX[p], y: this.#prevY[p], z: this.#prevZ[p] };
      this.#sink.event({ t: this.#prevT, kind: "track-end", ids: [pid], data });
    }
    if (this.#prevId.length < m) {
      const cap = Math.max(m, this.#prevId.length * 2);
      this.#prevId = new Int32Array(cap);
      this.#prevX = new Float64Array(cap);
      this.#prevY = new Float64Array(cap);
      this.#prevZ = new Float64Array(cap);
    }
    for (let j = 0; j < m; j++) {
      const i = tracked[j];
      this.#prevId[j] = id[i];
      this.#prevX[j] = x[i];
      this.#prevY[j] = y[i];
      if (z !== null) this.#prevZ[j] = z[i];
    }
    this.#prevN = m;
    this.#prevT = t;
  }
}
