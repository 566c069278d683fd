/**
 * The fast right-hand side of a multirate step (`simulation.ts`) by chunks of points, so that it runs on the
 * threads of a `ThreadPool`: for each point, tangent and curvature (from the segment vectors of all points,
 * computed beforehand), local term, windowed near field (`near.ts`), extrapolated far field, then external flow
 * and friction (`velocity.ts`). Each point's value is computed by one chunk with the same operations in the same
 * order whoever runs it, so results are bit-identical for any thread count.
 *
 * References: as in `simulation.ts` (multirate scheme), `biot_savart.ts` (local term), `geometry.ts`.
 */
import { addLocalTerm } from "./biot_savart.ts";
import { type GeometryArrays, tangentsAndCurvature } from "./geometry.ts";
import { nearAddRange, type NearAddTask } from "./near.ts";
import { applyFlowAndFriction, type FrictionSettings } from "./velocity.ts";

/** Points per chunk. */
const CHUNK = 256;

/** One evaluation of the fast right-hand side (typed arrays on SharedArrayBuffers). */
export interface FastRhsTask {
  readonly kind: "fast-rhs";
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array;
  readonly next: Int32Array;
  readonly prev: Int32Array;
  /** Geometry of the positions: segment vectors and lengths done; tangents and curvature filled here. */
  readonly geo: GeometryArrays;
  /** κ/4π and the core parameter a₀ of the local term. */
  readonly cf: number;
  readonly a0: number;
  /** The windowed near field (its outputs are vx, vy, vz below). */
  readonly near: NearAddTask;
  /** Integrator memory (`FilamentState.hist`, `histCount`), extrapolation weights by order and level slots. */
  readonly hist: Float64Array;
  readonly histCount: Uint8Array;
  readonly weights: Float64Array;
  readonly slot: Int32Array;
  readonly order: number;
  readonly levels: number;
  readonly stride: number;
  readonly friction: FrictionSettings;
  readonly vx: Float64Array;
  readonly vy: Float64Array;
  readonly vz: Float64Array;
}

/** A thread's scratch for the finite-difference weights. */
export class FastRhsScratch {
  readonly nodes = new Float64Array(5);
  readonly weights = new Float64Array(15);
}

/** Evaluates the chunks taken from `control[0]` (module doc of `thread_pool.ts`). */
export function runFastRhs(t: FastRhsTask, control: Int32Array, scratch: FastRhsScratch): void {
  const { n, x, y, next, prev, geo: g, hist: h, histCount: hc, weights: w, slot, vx, vy, vz } = t;
  const K = t.levels, stride = t.stride, order = t.order;
  for (;;) {
    const i0 = CHUNK * Atomics.add(control, 0, 1);
    if (i0 >= n) break;
    const i1 = Math.min(n, i0 + CHUNK);
    tangentsAndCurvature(i0, i1, next, prev, g, scratch.nodes, scratch.weights);
    for (let i = i0; i < i1; i++) vx[i] = vy[i] = vz[i] = 0;
    addLocalTerm(i0, i1, prev, g.tx, g.ty, g.tz, g.cx, g.cy, g.cz, g.len, t.cf, t.a0, vx, vy, vz);
    nearAddRange(i0, i1, t.near);
    for (let i = i0; i < i1; i++) {
      const o = Math.min(hc[i], order);
      let sx = 0, sy = 0, sz = 0;
      const b = i * stride;
      for (let j = 0; j < o; j++) {
        const wj = w[(o - 1) * K + j];
        const q = b + 3 * slot[j];
        sx += wj * h[q];
        sy += wj * h[q + 1];
        sz += wj * h[q + 2];
      }
      vx[i] += sx;
      vy[i] += sy;
      vz[i] += sz;
    }
    applyFlowAndFriction(i0, i1, t.friction, x, y, g.tx, g.ty, g.tz, vx, vy, vz);
  }
}
