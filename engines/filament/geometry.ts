/**
 * Local geometry of filament loops: segment vectors and lengths, unit tangents s′ and curvature vectors s″,
 * by finite differences valid on non-uniform spacing.
 *
 * Method: at point i the curve is parametrised by cumulative chord length ξ over the five points i−2..i+2
 * (ξ_i = 0); derivative weights for these arbitrary nodes come from Fornberg's algorithm. The tangent is
 * t = s_ξ/|s_ξ| and the curvature vector the geometric one for an arbitrary parametrisation,
 * s″ = (s_ξξ − (s_ξξ·t)t)/|s_ξ|², which removes the chord-versus-arc bias of the parameter to leading order.
 * Loops with fewer than five points use the three-point stencil (they are about to be removed anyway).
 * Neighbour differences use the minimum image in a periodic box, so wrapped positions are fine.
 *
 * Folds: where the line turns back on itself within a few points (a hairpin left by a reconnection), the
 * stencil's first derivative s_ξ nearly vanishes and the formula above gives |s″| ∝ h/w² for a fold of width
 * w ≪ h — curvature radii far below the spacing, and speeds of hundreds of κ/δ that no resolved feature has.
 * No circle through the point and its two neighbours has a radius below half the longer of its two segments,
 * so |s″| is capped at 2/max(ℓ₋, ℓ₊) (direction kept). Resolved lines (curvature radius ≥ h/2, i.e. at least
 * about six points per turn) never reach the cap, so their geometry is unchanged bit for bit (our choice; the
 * bound is elementary geometry).
 *
 * References: B. Fornberg, "Generation of finite difference formulas on arbitrarily spaced grids", Math. Comp.
 * 51, 699 (1988), doi:10.1090/S0025-5718-1988-0935077-0; B. Fornberg, "Calculation of weights in finite
 * difference formulas", SIAM Rev. 40, 685 (1998), doi:10.1137/S0036144596322507; L. Gamet et al., Int. J.
 * Numer. Meth. Fluids 29, 159 (1999), doi:10.1002/(SICI)1097-0363(19990130)29:2<159::AID-FLD781>3.0.CO;2-9.
 *
 * @example
 * ```ts
 * import { computeGeometry, Geometry } from "./geometry.ts";
 * const g = new Geometry();
 * // computeGeometry(n, x, y, z, next, prev, 0, g); then g.tx[i], g.cx[i], g.len[i] …
 * ```
 */
import { type ArrayAllocator, PLAIN } from "./_alloc.ts";

/** Work arrays of the local geometry (length ≥ n; grown by doubling). */
export class Geometry {
  capacity = 0;
  /** How the arrays are allocated (SHARED when worker threads read them). */
  readonly alloc: ArrayAllocator;
  /** Unit tangent. */
  tx: Float64Array = new Float64Array(0);
  ty: Float64Array = new Float64Array(0);
  tz: Float64Array = new Float64Array(0);
  /** Curvature vector s″ (towards the centre of curvature, magnitude 1/R). */
  cx: Float64Array = new Float64Array(0);
  cy: Float64Array = new Float64Array(0);
  cz: Float64Array = new Float64Array(0);
  /** Segment vector from point i to next[i] (minimum image). */
  dx: Float64Array = new Float64Array(0);
  dy: Float64Array = new Float64Array(0);
  dz: Float64Array = new Float64Array(0);
  /** Segment length |d_i|. */
  len: Float64Array = new Float64Array(0);
  /** Fornberg scratch: 5 nodes and 5×3 weights. */
  readonly nodes = new Float64Array(5);
  readonly weights = new Float64Array(15);

  constructor(alloc: ArrayAllocator = PLAIN) {
    this.alloc = alloc;
  }

  ensure(n: number): void {
    if (n <= this.capacity) return;
    let c = Math.max(16, this.capacity);
    while (c < n) c *= 2;
    this.tx = this.alloc.f64(c);
    this.ty = this.alloc.f64(c);
    this.tz = this.alloc.f64(c);
    this.cx = this.alloc.f64(c);
    this.cy = this.alloc.f64(c);
    this.cz = this.alloc.f64(c);
    this.dx = this.alloc.f64(c);
    this.dy = this.alloc.f64(c);
    this.dz = this.alloc.f64(c);
    this.len = this.alloc.f64(c);
    this.capacity = c;
  }
}

/** The per-point arrays of a `Geometry` (what worker threads receive). */
export type GeometryArrays = Pick<
  Geometry,
  "tx" | "ty" | "tz" | "cx" | "cy" | "cz" | "dx" | "dy" | "dz" | "len"
>;

/**
 * Fornberg's weights for derivatives 0..2 at z from `np` nodes xs[0..np): out[j·3 + k] is the weight of node j
 * in the k-th derivative.
 */
export function fornbergWeights(np: number, xs: Float64Array, z: number, out: Float64Array): void {
  for (let q = 0; q < np * 3; q++) out[q] = 0;
  let c1 = 1;
  let c4 = xs[0] - z;
  out[0] = 1;
  for (let i = 1; i < np; i++) {
    const mn = i < 2 ? i : 2;
    let c2 = 1;
    const c5 = c4;
    c4 = xs[i] - z;
    for (let j = 0; j < i; j++) {
      const c3 = xs[i] - xs[j];
      c2 *= c3;
      if (j === i - 1) {
        for (let k = mn; k >= 1; k--) {
          out[i * 3 + k] = c1 * (k * out[(i - 1) * 3 + k - 1] - c5 * out[(i - 1) * 3 + k]) / c2;
        }
        out[i * 3] = -c1 * c5 * out[(i - 1) * 3] / c2;
      }
      for (let k = mn; k >= 1; k--) out[j * 3 + k] = (c4 * out[j * 3 + k] - k * out[j * 3 + k - 1]) / c3;
      out[j * 3] = c4 * out[j * 3] / c3;
    }
    c1 = c2;
  }
}

/**
 * Fills segment vectors/lengths, tangents and curvature vectors of the n points (links next/prev; boxSize > 0
 * for a periodic cube, 0 for unbounded).
 */
export function computeGeometry(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  next: Int32Array,
  prev: Int32Array,
  boxSize: number,
  g: Geometry,
): void {
  segmentVectors(n, x, y, z, next, boxSize, g);
  tangentsAndCurvature(0, n, next, prev, g, g.nodes, g.weights);
}

/** First pass of `computeGeometry`: segment vectors and lengths (grows g to n points). */
export function segmentVectors(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  next: Int32Array,
  boxSize: number,
  g: Geometry,
): void {
  g.ensure(n);
  const L = boxSize;
  const { dx, dy, dz, len } = g;
  for (let i = 0; i < n; i++) {
    const j = next[i];
    let ex = x[j] - x[i], ey = y[j] - y[i], ez = z[j] - z[i];
    if (L > 0) {
      ex -= L * Math.round(ex / L);
      ey -= L * Math.round(ey / L);
      ez -= L * Math.round(ez / L);
    }
    dx[i] = ex;
    dy[i] = ey;
    dz[i] = ez;
    len[i] = Math.sqrt(ex * ex + ey * ey + ez * ez);
  }
}

/**
 * Second pass of `computeGeometry` for points i0 … i1 − 1: tangents and curvature vectors from the segment
 * vectors of g (all points' segments must be done); `nodes` (5) and `weights` (15) are scratch.
 */
export function tangentsAndCurvature(
  i0: number,
  i1: number,
  next: Int32Array,
  prev: Int32Array,
  g: GeometryArrays,
  nodes: Float64Array,
  weights: Float64Array,
): void {
  const { dx, dy, dz, len, tx, ty, tz, cx, cy, cz } = g;
  for (let i = i0; i < i1; i++) {
    const p1 = prev[i], n1 = next[i];
    const p2 = prev[p1], n2 = next[n1];
    let d1x: number, d1y: number, d1z: number, d2x: number, d2y: number, d2z: number;
    if (p2 === n2 || n2 === p1 || p1 === n1) {
      // Three-point stencil (loops of < 5 points): nodes ξ = −ℓ₋, 0, ℓ₊.
      nodes[0] = -len[p1];
      nodes[1] = 0;
      nodes[2] = len[i];
      fornbergWeights(3, nodes, 0, weights);
      const wm1 = weights[1], wp1 = weights[7], wm2 = weights[2], wp2 = weights[8];
      d1x = -wm1 * dx[p1] + wp1 * dx[i];
      d1y = -wm1 * dy[p1] + wp1 * dy[i];
      d1z = -wm1 * dz[p1] + wp1 * dz[i];
      d2x = -wm2 * dx[p1] + wp2 * dx[i];
      d2y = -wm2 * dy[p1] + wp2 * dy[i];
      d2z = -wm2 * dz[p1] + wp2 * dz[i];
    } else {
      nodes[0] = -len[p1] - len[p2];
      nodes[1] = -len[p1];
      nodes[2] = 0;
      nodes[3] = len[i];
      nodes[4] = len[i] + len[n1];
      fornbergWeights(5, nodes, 0, weights);
      // Positions relative to point i (derivative weights sum to zero, so the centre drops out).
      const rm1x = -dx[p1], rm1y = -dy[p1], rm1z = -dz[p1];
      const rm2x = rm1x - dx[p2], rm2y = rm1y - dy[p2], rm2z = rm1z - dz[p2];
      const rp1x = dx[i], rp1y = dy[i], rp1z = dz[i];
      const rp2x = rp1x + dx[n1], rp2y = rp1y + dy[n1], rp2z = rp1z + dz[n1];
      const a0 = weights[1], a1 = weights[4], a3 = weights[10], a4 = weights[13];
      const b0 = weights[2], b1 = weights[5], b3 = weights[11], b4 = weights[14];
      d1x = a0 * rm2x + a1 * rm1x + a3 * rp1x + a4 * rp2x;
      d1y = a0 * rm2y + a1 * rm1y + a3 * rp1y + a4 * rp2y;
      d1z = a0 * rm2z + a1 * rm1z + a3 * rp1z + a4 * rp2z;
      d2x = b0 * rm2x + b1 * rm1x + b3 * rp1x + b4 * rp2x;
      d2y = b0 * rm2y + b1 * rm1y + b3 * rp1y + b4 * rp2y;
      d2z = b0 * rm2z + b1 * rm1z + b3 * rp1z + b4 * rp2z;
    }
    const s2 = d1x * d1x + d1y * d1y + d1z * d1z;
    const inv = 1 / Math.sqrt(s2);
    const ux = d1x * inv, uy = d1y * inv, uz = d1z * inv;
    tx[i] = ux;
    ty[i] = uy;
    tz[i] = uz;
    const dot = d2x * ux + d2y * uy + d2z * uz;
    let qx = (d2x - dot * ux) / s2, qy = (d2y - dot * uy) / s2, qz = (d2z - dot * uz) / s2;
    // Fold cap (module doc): |s″| ≤ 2/ℓ with ℓ the longer adjacent segment.
    const lm = len[p1] > len[i] ? len[p1] : len[i];
    const k2 = qx * qx + qy * qy + qz * qz;
    if (k2 * lm * lm > 4) {
      const f = 2 / (lm * Math.sqrt(k2));
      qx *= f;
      qy *= f;
      qz *= f;
    }
    cx[i] = qx;
    cy[i] = qy;
    cz[i] = qz;
  }
}

/** Tangents and curvature of n points by chunks on worker threads (segment vectors done; shared arrays). */
export interface GeometryTask {
  readonly kind: "geometry";
  readonly n: number;
  readonly next: Int32Array;
  readonly prev: Int32Array;
  readonly geo: GeometryArrays;
}

/** Runs the chunks of a `GeometryTask` taken from `control[0]` (module doc of `thread_pool.ts`). */
export function runGeometry(
  t: GeometryTask,
  control: Int32Array,
  nodes: Float64Array,
  weights: Float64Array,
): void {
  for (;;) {
    const i0 = GEOMETRY_CHUNK * Atomics.add(control, 0, 1);
    if (i0 >= t.n) break;
    tangentsAndCurvature(i0, Math.min(t.n, i0 + GEOMETRY_CHUNK), t.next, t.prev, t.geo, nodes, weights);
  }
}

/** Points per chunk of a `GeometryTask`. */
const GEOMETRY_CHUNK = 512;

/** The arrays of g as a plain object (what a task message carries). */
export function geometryArrays(g: GeometryArrays): GeometryArrays {
  return {
    tx: g.tx,
    ty: g.ty,
    tz: g.tz,
    cx: g.cx,
    cy: g.cy,
    cz: g.cz,
    dx: g.dx,
    dy: g.dy,
    dz: g.dz,
    len: g.len,
  };
}
