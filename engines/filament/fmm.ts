/**
 * Fast multipole method (Cartesian Taylor expansions, dual-tree traversal) for the nonlocal Biot–Savart
 * velocity of filament segments in the unbounded domain, O(N) per evaluation after the O(N log N) tree build.
 *
 * Method. The velocity is the curl of the vector potential, v = (κ/4π)∇×A with A(x) = Σ_j ∫_seg j ds/|x − s|:
 * three Laplace potentials whose sources are straight segments. With b_γ(R) = ∂^γ(1/|R|)/γ! (Taylor
 * coefficients of 1/r, computed by the recurrence n r² b_γ + (2n − 1) Σ_i R_i b_{γ−e_i} + (n − 1) Σ_i b_{γ−2e_i}
 * = 0, n = |γ|), a source cell with centre X carries the exact segment moments M_γ = Σ_j ∫ (X − s)^γ ds
 * (Gauss–Legendre along each segment, exact to degree p − 1: degree-p moments reach only the potential, not
 * the velocity, and are neither formed nor shifted), and
 *   A(x) = Σ_α M_α b_α(x − X)                                         (multipole)
 *   ℓ_β = Σ_α C(α+β, α) M_α b_{α+β}(Z − X),   A(x) = Σ_β ℓ_β (x − Z)^β   (M2L into a local expansion about Z)
 * truncated at |α| + |β| ≤ p. Multipoles are shifted up the tree (M2M), local expansions down (L2L) with the
 * binomial formulas, and the velocity at a target point is ∇×(Σ_β ℓ_β (x − Z)^β) (L2P).
 *
 * Harmonic reduction of the M2L. Everything a multipole is contracted with is harmonic, so with M′_α = M_α/α!
 * a moment with α_z ≥ 2 can be folded into α − 2e_z + 2e_x and α − 2e_z + 2e_y (∂_z² = −∂_x² − ∂_y²), leaving
 * the (p + 1)² moments with α_z ≤ 1 per component (a harmonic polynomial of degree n has 2n + 1 independent
 * coefficients). The M2L then needs no coefficients, ℓ′_β = β!ℓ_β = Σ_α M′_α ∂^{α+β}(1/r)(Z − X), and only
 * for β_z ≤ 1; the local expansion is harmonic term by term, so the rest follows from
 * ℓ′_{γ+2e_z} = −ℓ′_{γ+2e_x} − ℓ′_{γ+2e_y} once per cell before L2L and L2P. Exact (the same truncation), and at
 * p = 5 it cuts the M2L from 1218 to 795 products plus one derivative tensor of 46 entries instead of 56.
 * The kernels are generated straight-line code (`_gen_fmm_kernels.ts`).
 *
 * Traversal: target and source cells are the cells of one octree (a point belongs to the cell of its segment
 * starting there). A pair (T, S) is accepted when r_T + b_S < θ·|X_T − X_S|, with r_T the radius about X_T of
 * T's target points and b_S the radius about X_S of the sphere holding every segment of S (end points
 * included); otherwise the cell with the larger radius is split; two leaves are summed segment by segment with
 * the exact straight-segment formula, skipping each point's own two segments. A cell holding one of a target's
 * own segments contains that target point, so the criterion can never accept it (θ < 1): the own segments are
 * excluded exactly. The traversal order is fixed by the tree, so results are deterministic.
 *
 * References: W. Dehnen, "A hierarchical O(N) force calculation algorithm", J. Comput. Phys. 179, 27 (2002),
 * doi:10.1006/jcph.2002.7026 (dual-tree traversal, Cartesian expansions, the opening criterion);
 * L. Greengard, V. Rokhlin, J. Comput. Phys. 73, 325 (1987), doi:10.1016/0021-9991(87)90140-9 (FMM);
 * P. Li, H. Johnston, R. Krasny, J. Comput. Phys. 228, 3858 (2009), doi:10.1016/j.jcp.2009.02.022 (recurrence
 * of the Taylor coefficients of 1/r); J. Applequist, J. Phys. A 22, 4303 (1989) (traceless Cartesian tensors:
 * 2n + 1 independent components of rank n; reference from memory); J. Katz, A. Plotkin, Low-Speed
 * Aerodynamics (2001) §2.3.2 (segment).
 *
 * @example
 * ```ts
 * import { SegmentFmm } from "./fmm.ts";
 * import { SegmentTree } from "./tree.ts";
 * const tree = new SegmentTree();
 * const fmm = new SegmentFmm(4);
 * // tree.build(n, x, y, z, g.dx, g.dy, g.dz, g.len, 0, 32);
 * // fmm.velocity(tree, n, x, y, z, prev, kappa / (4 * Math.PI), 0.5, vx, vy, vz);
 * ```
 */
import { type ArrayAllocator, PLAIN, type SegmentTree } from "./tree.ts";
import { type FmmKernels, KERNELS } from "./_fmm_kernels.ts";
import { WasmP2P } from "./wasm_p2p.ts";
import { segmentVelocity } from "./biot_savart.ts";

/** Near-field (leaf pair) kernel: WebAssembly f32x4 SIMD, or f64 TypeScript. */
export type NearKernel = "simd-f32" | "f64";

/** Multi-index tables of an expansion order p (indices ordered by total degree). */
export class MultiIndex {
  readonly p: number;
  /** Number of multi-indices of total degree ≤ p. */
  readonly size: number;
  readonly ax: Int32Array;
  readonly ay: Int32Array;
  readonly az: Int32Array;
  /** Monomial recurrence: mono[k] = mono[parent[k]] · h[axis[k]] (k ≥ 1). */
  readonly parent: Int32Array;
  readonly axis: Int32Array;
  /** Recurrence of b_γ: for each γ, the indices γ − e_i (−1 if absent) and γ − 2e_i. */
  readonly m1: Int32Array;
  readonly m2: Int32Array;
  /** Total degree of each index. */
  readonly degree: Int32Array;
  private readonly lookup: Int32Array;

  constructor(p: number) {
    this.p = p;
    const list: [number, number, number][] = [];
    for (let n = 0; n <= p; n++) {
      for (let a = n; a >= 0; a--) for (let b = n - a; b >= 0; b--) list.push([a, b, n - a - b]);
    }
    const size = list.length;
    this.size = size;
    this.ax = Int32Array.from(list, (m) => m[0]);
    this.ay = Int32Array.from(list, (m) => m[1]);
    this.az = Int32Array.from(list, (m) => m[2]);
    this.degree = Int32Array.from(list, (m) => m[0] + m[1] + m[2]);
    const q = p + 1;
    this.lookup = new Int32Array(q * q * q).fill(-1);
    list.forEach((m, k) => this.lookup[(m[0] * q + m[1]) * q + m[2]] = k);
    this.parent = new Int32Array(size);
    this.axis = new Int32Array(size);
    this.m1 = new Int32Array(3 * size).fill(-1);
    this.m2 = new Int32Array(3 * size).fill(-1);
    for (let k = 0; k < size; k++) {
      const m = list[k];
      for (let i = 0; i < 3; i++) {
        if (m[i] >= 1) {
          const d = m.slice() as [number, number, number];
          d[i]--;
          this.m1[3 * k + i] = this.index(d[0], d[1], d[2]);
        }
        if (m[i] >= 2) {
          const d = m.slice() as [number, number, number];
          d[i] -= 2;
          this.m2[3 * k + i] = this.index(d[0], d[1], d[2]);
        }
      }
      if (k > 0) {
        const i = m[0] > 0 ? 0 : m[1] > 0 ? 1 : 2;
        this.axis[k] = i;
        this.parent[k] = this.m1[3 * k + i];
      }
    }
  }

  /** Index of (a, b, c), or −1 beyond the order. */
  index(a: number, b: number, c: number): number {
    const q = this.p + 1;
    if (a < 0 || b < 0 || c < 0 || a + b + c > this.p) return -1;
    return this.lookup[(a * q + b) * q + c];
  }

  /** Monomials h^γ for all γ (out length ≥ size). */
  monomials(hx: number, hy: number, hz: number, out: Float64Array): void {
    out[0] = 1;
    const { parent, axis } = this;
    for (let k = 1; k < this.size; k++) {
      const a = axis[k];
      out[k] = out[parent[k]] * (a === 0 ? hx : a === 1 ? hy : hz);
    }
  }

  /** Taylor coefficients b_γ(R) = ∂^γ(1/|R|)/γ! for all γ (out length ≥ size). */
  inverseDistance(Rx: number, Ry: number, Rz: number, out: Float64Array): void {
    const r2 = Rx * Rx + Ry * Ry + Rz * Rz;
    const ir2 = 1 / r2;
    out[0] = Math.sqrt(ir2);
    const { m1, m2, degree } = this;
    for (let k = 1; k < this.size; k++) {
      const n = degree[k];
      let s1 = 0, s2 = 0;
      const a = m1[3 * k], b = m1[3 * k + 1], c = m1[3 * k + 2];
      if (a >= 0) s1 += Rx * out[a];
      if (b >= 0) s1 += Ry * out[b];
      if (c >= 0) s1 += Rz * out[c];
      const d = m2[3 * k], e = m2[3 * k + 1], f = m2[3 * k + 2];
      if (d >= 0) s2 += out[d];
      if (e >= 0) s2 += out[e];
      if (f >= 0) s2 += out[f];
      out[k] = -((2 * n - 1) * s1 + (n - 1) * s2) * ir2 / n;
    }
  }
}

/** Largest number of target points of a work unit (see `SegmentFmm.units`). */
export const UNIT_TARGETS = 1024;

function binom(n: number, k: number): number {
  let r = 1;
  for (let i = 1; i <= k; i++) r = r * (n - k + i) / i;
  return r;
}

/** Gauss–Legendre nodes on [−½, ½] and weights summing to 1, exact for polynomials of degree ≤ 2q − 1. */
function gaussLegendre(q: number): { u: Float64Array; w: Float64Array } {
  const u = new Float64Array(q), w = new Float64Array(q);
  for (let i = 0; i < q; i++) {
    let x = Math.cos(Math.PI * (i + 0.75) / (q + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      let p0 = 1, p1 = x;
      for (let k = 2; k <= q; k++) {
        const p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = q * (x * p1 - p0) / (x * x - 1);
      const dx = p1 / dp;
      x -= dx;
      if (Math.abs(dx) < 1e-16) break;
    }
    u[i] = 0.5 * x;
    w[i] = 1 / ((1 - x * x) * dp * dp); // 2/((1−x²)P′²) on [−1, 1], halved
  }
  return { u, w };
}

/** FMM work arrays and tables for one expansion order (see module doc). */
export class SegmentFmm {
  readonly p: number;
  readonly mi: MultiIndex;
  /** Generated kernels of this order (`_fmm_kernels.ts`). */
  private readonly k: FmmKernels;
  /** Reduced multipole size per component, (p + 1)². */
  readonly reducedSize: number;
  // Shift tables (M2M: β ≤ α; L2L: γ ≥ β): (target, source, monomial, coefficient).
  private readonly shT: Int32Array;
  private readonly shS: Int32Array;
  private readonly shD: Int32Array;
  private readonly shC: Float64Array;
  private readonly l2T: Int32Array;
  private readonly l2S: Int32Array;
  private readonly l2D: Int32Array;
  private readonly l2C: Float64Array;
  private readonly gu: Float64Array;
  private readonly gw: Float64Array;
  private cellCap = 0;
  /** Multipoles, 3 components × size per cell (component-major within a cell). */
  mult: Float64Array = new Float64Array(0);
  /** Reduced multipoles (α_z ≤ 1), 3 × reducedSize per cell: what the M2L reads. */
  multR: Float64Array = new Float64Array(0);
  /** Local expansions, 3 × size per cell. */
  loc: Float64Array = new Float64Array(0);
  /** Target radius about X_c per cell. */
  rT: Float64Array = new Float64Array(0);
  private readonly deriv: Float64Array;
  private readonly mono: Float64Array;
  private stackA = new Int32Array(1024);
  private stackB = new Int32Array(1024);
  private stackC = new Int32Array(1024);
  /** How the shared arrays (multipoles, local expansions, radii) are allocated. */
  alloc: ArrayAllocator = PLAIN;
  /** Counts of the last evaluation. */
  m2lCount = 0;
  p2pPairs = 0;

  constructor(p: number, nearKernel: NearKernel = "f64") {
    this.p = p;
    const k = KERNELS[p];
    if (k === undefined) throw new RangeError(`FMM expansion order ${p} is not available (3–6)`);
    this.k = k;
    this.reducedSize = k.reducedSize;
    const mi = new MultiIndex(p);
    this.mi = mi;
    const sT: number[] = [], sS: number[] = [], sD: number[] = [], sC: number[] = [];
    for (let ia = 0; ia < mi.size; ia++) {
      for (let ib = 0; ib < mi.size; ib++) {
        const d = mi.index(mi.ax[ia] - mi.ax[ib], mi.ay[ia] - mi.ay[ib], mi.az[ia] - mi.az[ib]);
        if (d < 0) continue;
        sT.push(ia);
        sS.push(ib);
        sD.push(d);
        sC.push(binom(mi.ax[ia], mi.ax[ib]) * binom(mi.ay[ia], mi.ay[ib]) * binom(mi.az[ia], mi.az[ib]));
      }
    }
    // M2M only up to degree p − 1: degree-p moments would reach only the potential (β = 0), never needed.
    const low = sT.map((t) => mi.degree[t] < p);
    this.shT = Int32Array.from(sT.filter((_, e) => low[e]));
    this.shS = Int32Array.from(sS.filter((_, e) => low[e]));
    this.shD = Int32Array.from(sD.filter((_, e) => low[e]));
    this.shC = Float64Array.from(sC.filter((_, e) => low[e]));
    // L2L: ℓ′_β = Σ_{γ ≥ β} C(γ, β) d^{γ−β} ℓ_γ — the transpose pattern of M2M.
    this.l2T = Int32Array.from(sS);
    this.l2S = Int32Array.from(sT);
    this.l2D = Int32Array.from(sD);
    this.l2C = Float64Array.from(sC);
    const gl = gaussLegendre(Math.max(1, Math.ceil(p / 2))); // exact to degree p − 1 along a segment
    this.gu = gl.u;
    this.gw = gl.w;
    this.deriv = new Float64Array(mi.size);
    this.mono = new Float64Array(mi.size);
    this.wasm = nearKernel === "simd-f32" ? WasmP2P.load() : null;
  }

  private readonly segOut = new Float64Array(3);
  /** The f32x4 WebAssembly near-field kernel, or null for the f64 TypeScript loop. */
  private readonly wasm: WasmP2P | null;

  private ensure(nCell: number): void {
    if (nCell <= this.cellCap) return;
    let c = Math.max(256, this.cellCap);
    while (c < nCell) c *= 2;
    const k = 3 * this.mi.size;
    this.mult = this.alloc.f64(c * k);
    this.multR = this.alloc.f64(c * 3 * this.reducedSize);
    this.loc = this.alloc.f64(c * k);
    this.rT = this.alloc.f64(c);
    this.cellCap = c;
  }

  /**
   * Multipoles (P2M, folded) and target radii of the leaves among cells c0 … c1 − 1 (their multipoles must be
   * zero): each leaf depends only on its own segments and points.
   */
  leaves(t: SegmentTree, c0: number, c1: number, x: Float64Array, y: Float64Array, z: Float64Array): void {
    const K3 = 3 * this.mi.size;
    const M = this.mult, rT = this.rT;
    const { gu, gw } = this;
    const p2m = this.k.p2m;
    for (let c = c0; c < c1; c++) {
      if (t.nchild[c] !== 0) continue;
      const b = c * K3;
      const X = t.gx[c], Y = t.gy[c], Z = t.gz[c];
      const s0 = t.start[c], s1 = s0 + t.count[c];
      for (let k = s0; k < s1; k++) {
        const ex = t.sdx[k], ey = t.sdy[k], ez = t.sdz[k];
        const hx = X - t.smx[k], hy = Y - t.smy[k], hz = Z - t.smz[k];
        for (let q = 0; q < gu.length; q++) {
          const u = gu[q], w = gw[q];
          p2m(hx - u * ex, hy - u * ey, hz - u * ez, w * ex, w * ey, w * ez, M, b);
        }
      }
      this.k.fold(M, b, this.multR, 3 * this.reducedSize * c);
      let r2 = 0;
      for (let k = s0; k < s1; k++) {
        const i = t.perm[k];
        const q = (x[i] - X) ** 2 + (y[i] - Y) ** 2 + (z[i] - Z) ** 2;
        if (q > r2) r2 = q;
      }
      rT[c] = Math.sqrt(r2);
    }
  }

  /** Multipoles of the cells above the leaves (M2M upwards; children are numbered after their parent). */
  private upward(t: SegmentTree): void {
    const K = this.mi.size, K3 = 3 * K;
    const M = this.mult, mono = this.mono, mi = this.mi;
    const { shT, shS, shD, shC } = this;
    for (let c = t.nCell - 1; c >= 0; c--) {
      if (t.nchild[c] === 0) continue;
      const b = c * K3;
      const X = t.gx[c], Y = t.gy[c], Z = t.gz[c];
      const f = t.child0[c], nc = t.nchild[c];
      for (let ch = f; ch < f + nc; ch++) {
        const cb = ch * K3;
        mi.monomials(X - t.gx[ch], Y - t.gy[ch], Z - t.gz[ch], mono);
        for (let e = 0; e < shT.length; e++) {
          const w = shC[e] * mono[shD[e]];
          const tt = b + shT[e], ss = cb + shS[e];
          M[tt] += w * M[ss];
          M[tt + K] += w * M[ss + K];
          M[tt + 2 * K] += w * M[ss + 2 * K];
        }
      }
      this.k.fold(M, b, this.multR, 3 * this.reducedSize * c);
    }
  }

  /** Target radius about X_c of the points whose segments the cell holds, above the leaves. */
  private targetRadii(t: SegmentTree): void {
    const rT = this.rT;
    for (let c = t.nCell - 1; c >= 0; c--) {
      if (t.nchild[c] === 0) continue;
      const X = t.gx[c], Y = t.gy[c], Z = t.gz[c];
      let r = 0;
      for (let ch = t.child0[c]; ch < t.child0[c] + t.nchild[c]; ch++) {
        const q = rT[ch] + Math.hypot(t.gx[ch] - X, t.gy[ch] - Y, t.gz[ch] - Z);
        if (q > r) r = q;
      }
      rT[c] = r;
    }
  }

  /** Adds the local expansion about X_T of source cell S's multipole to cell T (M2L, slots β_z ≤ 1). */
  private m2l(t: SegmentTree, T: number, S: number): void {
    const D = this.deriv;
    this.m2lCount++;
    this.k.derivatives(t.gx[T] - t.gx[S], t.gy[T] - t.gy[S], t.gz[T] - t.gz[S], D);
    this.k.m2l(D, this.multR, 3 * this.reducedSize * S, this.loc, 3 * this.mi.size * T);
  }

  /**
   * Adds cf·(nonlocal velocity) at every point i (own segments i and prev[i] skipped) with opening parameter
   * θ. The tree must have been built over the same segments (unbounded domain). Returns the number of
   * point–segment and cell–cell interactions.
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
    this.prepare(t, x, y, z);
    const units = this.units(t);
    for (let u = 0; u < units.length; u++) this.runUnit(t, units[u], x, y, z, prev, cf, theta, vx, vy, vz);
    return this.p2pPairs + this.m2lCount;
  }

  /** Multipoles (P2M, M2M), target radii, cleared local expansions and counters: the serial first pass. */
  prepare(
    t: SegmentTree,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    runLeaves: (() => void) | null = null,
  ): void {
    this.ensure(t.nCell);
    this.mult.fill(0, 0, t.nCell * 3 * this.mi.size);
    // Leaves first (each on its own: `runLeaves` may share them out between threads), then the cells above.
    if (runLeaves === null) this.leaves(t, 0, t.nCell, x, y, z);
    else runLeaves();
    this.upward(t);
    this.targetRadii(t);
    this.loc.fill(0, 0, t.nCell * 3 * this.mi.size);
    this.m2lCount = 0;
    this.p2pPairs = 0;
  }

  /**
   * Work units: the cells holding at most UNIT_TARGETS points whose parent holds more (the root if it holds
   * fewer), in tree order. Each unit is traversed against the whole tree on its own, so the result of every
   * point depends only on its unit — the same whichever thread computes it, and however many threads run.
   */
  units(t: SegmentTree): Int32Array {
    let k = 0;
    const out = this.unitList.length >= t.nCell ? this.unitList : (this.unitList = new Int32Array(t.nCell));
    const stack = this.stackA;
    let top = 0;
    stack[top++] = 0;
    while (top > 0) {
      const c = stack[--top];
      if (t.count[c] <= UNIT_TARGETS || t.nchild[c] === 0) {
        out[k++] = c;
        continue;
      }
      for (let ch = t.child0[c] + t.nchild[c] - 1; ch >= t.child0[c]; ch--) stack[top++] = ch;
    }
    return out.subarray(0, k);
  }
  private unitList = new Int32Array(0);

  /** Dual traversal of unit U against the whole tree (M2L and P2P), then L2L and L2P inside U. */
  runUnit(
    t: SegmentTree,
    U: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    cf: number,
    theta: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const sa = this.stackA, sb = this.stackB, rT = this.rT;
    let top = 0;
    sa[top] = U;
    sb[top++] = 0;
    let p2p = 0;
    const th2 = theta * theta;
    while (top > 0) {
      const A = sa[--top], B = sb[top];
      const dx = t.gx[A] - t.gx[B], dy = t.gy[A] - t.gy[B], dz = t.gz[A] - t.gz[B];
      const rA = rT[A], rB = t.bmax[B];
      const s = rA + rB;
      if (s * s < th2 * (dx * dx + dy * dy + dz * dz)) {
        this.m2l(t, A, B);
        continue;
      }
      const leafA = t.nchild[A] === 0, leafB = t.nchild[B] === 0;
      if (leafA && leafB) {
        p2p += this.p2p(t, A, B, x, y, z, prev, vx, vy, vz, cf);
        continue;
      }
      if (top + 8 >= sa.length) this.growStacks();
      if (leafA || (!leafB && rB > rA)) {
        for (let ch = t.child0[B] + t.nchild[B] - 1; ch >= t.child0[B]; ch--) {
          sa[top] = A;
          sb[top++] = ch;
        }
      } else {
        for (let ch = t.child0[A] + t.nchild[A] - 1; ch >= t.child0[A]; ch--) {
          sa[top] = ch;
          sb[top++] = B;
        }
      }
    }
    this.p2pPairs += p2p;
    this.downward(t, U, x, y, z, cf, vx, vy, vz);
  }

  private growStacks(): void {
    const a = new Int32Array(2 * this.stackA.length), b = new Int32Array(2 * this.stackB.length);
    a.set(this.stackA);
    b.set(this.stackB);
    this.stackA = a;
    this.stackB = b;
  }

  /** L2L down the subtree of U and L2P at the points of its leaves. */
  private downward(
    t: SegmentTree,
    U: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    cf: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const K = this.mi.size, K3 = 3 * K;
    const Lc = this.loc, mono = this.mono, mi = this.mi;
    const { l2T, l2S, l2D, l2C } = this;
    const { complete, l2p } = this.k;
    const out = this.segOut;
    const stack = this.stackC;
    let top = 0;
    stack[top++] = U;
    complete(Lc, U * K3);
    while (top > 0) {
      const c = stack[--top];
      const lb = c * K3;
      if (t.nchild[c] > 0) {
        for (let ch = t.child0[c]; ch < t.child0[c] + t.nchild[c]; ch++) {
          const cb = ch * K3;
          complete(Lc, cb); // the child's own M2L part, before its parent's expansion is added
          mi.monomials(t.gx[ch] - t.gx[c], t.gy[ch] - t.gy[c], t.gz[ch] - t.gz[c], mono);
          for (let e = 0; e < l2T.length; e++) {
            const w = l2C[e] * mono[l2D[e]];
            const tt = cb + l2T[e], ss = lb + l2S[e];
            Lc[tt] += w * Lc[ss];
            Lc[tt + K] += w * Lc[ss + K];
            Lc[tt + 2 * K] += w * Lc[ss + 2 * K];
          }
          stack[top++] = ch; // depth-first: at most 8 per level of a tree ≤ 41 levels deep (< 1024)
        }
        continue;
      }
      for (let k = t.start[c]; k < t.start[c] + t.count[c]; k++) {
        const i = t.perm[k];
        l2p(x[i] - t.gx[c], y[i] - t.gy[c], z[i] - t.gz[c], Lc, lb, out);
        vx[i] += cf * out[0];
        vy[i] += cf * out[1];
        vz[i] += cf * out[2];
      }
    }
  }

  private p2p(
    t: SegmentTree,
    A: number,
    B: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
    cf: number,
  ): number {
    if (this.wasm !== null) return this.p2pSimd(this.wasm, t, A, B, x, y, z, prev, vx, vy, vz, cf);
    return this.p2pF64(t, A, B, x, y, z, prev, vx, vy, vz, cf);
  }

  /**
   * p2p through the WebAssembly kernel: coordinates relative to B's centroid in units of B's radius (f64,
   * rounded once to f32; see `wasm_p2p.ts`), own segments passed as indices among B's segments.
   */
  private p2pSimd(
    w: WasmP2P,
    t: SegmentTree,
    A: number,
    B: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
    cf: number,
  ): number {
    const nA = t.count[A], nB = t.count[B];
    const a0 = t.start[A], b0 = t.start[B];
    w.ensure(Math.max(nA, nB));
    const ox = t.gx[B], oy = t.gy[B], oz = t.gz[B];
    const inv = 1 / (t.bmax[B] > 0 ? t.bmax[B] : 1);
    const { tx, ty, tz, oa, ob, sx, sy, sz, hx, hy, hz } = w;
    for (let q = 0; q < nA; q++) {
      const i = t.perm[a0 + q];
      tx[q] = (x[i] - ox) * inv;
      ty[q] = (y[i] - oy) * inv;
      tz[q] = (z[i] - oz) * inv;
      const k1 = a0 + q - b0, k2 = t.pos[prev[i]] - b0;
      oa[q] = k1 >= 0 && k1 < nB ? k1 : -1;
      ob[q] = k2 >= 0 && k2 < nB ? k2 : -1;
    }
    const hi = 0.5 * inv;
    for (let k = 0; k < nB; k++) {
      sx[k] = (t.smx[b0 + k] - ox) * inv;
      sy[k] = (t.smy[b0 + k] - oy) * inv;
      sz[k] = (t.smz[b0 + k] - oz) * inv;
      hx[k] = t.sdx[b0 + k] * hi;
      hy[k] = t.sdy[b0 + k] * hi;
      hz[k] = t.sdz[b0 + k] * hi;
    }
    w.run(nA, nB);
    const f = cf * inv;
    const { ux, uy, uz } = w;
    for (let q = 0; q < nA; q++) {
      const i = t.perm[a0 + q];
      vx[i] += f * ux[q];
      vy[i] += f * uy[q];
      vz[i] += f * uz[q];
    }
    return nA * nB;
  }

  /** Exact segment sums (f64) of cell B at the points of cell A (own segments skipped); returns pair count. */
  private p2pF64(
    t: SegmentTree,
    A: number,
    B: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
    cf: number,
  ): number {
    const s0 = t.start[B], s1 = s0 + t.count[B];
    const a0 = t.start[A], a1 = a0 + t.count[A];
    const { smx, smy, smz, sdx, sdy, sdz } = t;
    const out = this.segOut;
    for (let ka = a0; ka < a1; ka++) {
      const i = t.perm[ka];
      const p1 = ka, p2 = t.pos[prev[i]];
      const px = x[i], py = y[i], pz = z[i];
      let ux = 0, uy = 0, uz = 0;
      for (let k = s0; k < s1; k++) {
        if (k === p1 || k === p2) continue;
        // segment from its start (midpoint − half vector) along its vector
        segmentVelocity(
          px,
          py,
          pz,
          smx[k] - 0.5 * sdx[k],
          smy[k] - 0.5 * sdy[k],
          smz[k] - 0.5 * sdz[k],
          sdx[k],
          sdy[k],
          sdz[k],
          out,
        );
        ux += out[0];
        uy += out[1];
        uz += out[2];
      }
      vx[i] += cf * ux;
      vy[i] += cf * uy;
      vz[i] += cf * uz;
    }
    return (a1 - a0) * (s1 - s0);
  }
}
