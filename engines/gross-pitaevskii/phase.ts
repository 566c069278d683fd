/**
 * Phase patterns of point vortices for imprinting: Φ(r) such that e^{iΦ} winds by 2πs_j around each vortex and
 * the imprinted flow respects the domain.
 *
 * Method.
 *  - Disk of radius R: each vortex s at z_j gets an image −s at R²/z̄_j (circle theorem), Φ = Σ_j s_j[arg(z − z_j)
 *    − arg(z − R²/z̄_j)]; an image of a vortex within 1e-12 R of the centre is at infinity and is skipped.
 *  - Doubly periodic square of side L (ΣS_j = 0): Φ = Σ_j s_j arg θ₁(π(z − z_j)/L | i) − 2π(Σ_j s_j x_j)·y/L²,
 *    with θ₁(u) ∝ sin u Π_{n≥1}(1 − q^{2n}e^{2iu})(1 − q^{2n}e^{−2iu}), q = e^{−π}. θ₁ changes sign under
 *    u → u + π and gains −q^{−1}e^{−2iu} under u → u + iπ, so for a neutral set e^{iΦ} is periodic in x, and the
 *    linear term cancels the residual phase 2πΣs_j x_j/L picked up along y (derived here from those two rules;
 *    the tests check the periodicity and the windings). The flow is the periodic point-vortex flow plus the
 *    uniform flow a periodic phase must carry.
 *  - Square box of side S: the images of a vortex in four walls form a neutral lattice of period 2S (the vortex,
 *    its mirror images −s across x = S/2 and y = S/2, and +s across both); Φ is the periodic pattern of that
 *    lattice, so the flow through every wall vanishes by symmetry.
 * Output: cos Φ and sin Φ per grid point (products of unit complex factors, so no phase unwrapping is needed);
 * (0, 0) at a grid point that coincides with a vortex, where the phase is undefined (the amplitude vanishes).
 *
 * References: L.M. Milne-Thomson, Theoretical Hydrodynamics, 5th ed. (Macmillan 1968) §6.21 (circle theorem),
 * §13.71 (images); E.T. Whittaker, G.N. Watson, A Course of Modern Analysis, 4th ed. (CUP 1927) ch. 21 (theta
 * functions, product formula and quasi-periodicity).
 */
import type { Grid } from "./grid.ts";

/** Vortices to imprint: positions (ξ) and signs ±1. */
export interface VortexList {
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly s: Float64Array;
}

/** Number of theta-product factors: q^{2n}e^{2|Im u|} < 1e-17 for |Im u| < 2π. */
const THETA_TERMS = 12;
const Q = Math.exp(-Math.PI);

/** Writes cos Φ and sin Φ of the disk pattern (vortices plus images in the circle of radius R). */
export function diskPhase(
  grid: Grid,
  v: VortexList,
  radius: number,
  cos: Float64Array,
  sin: Float64Array,
): void {
  const n = grid.n;
  const src: { x: number; y: number; s: number }[] = [];
  for (let j = 0; j < v.n; j++) {
    src.push({ x: v.x[j], y: v.y[j], s: v.s[j] });
    const r2 = v.x[j] * v.x[j] + v.y[j] * v.y[j];
    if (r2 > 1e-24 * radius * radius) {
      const f = radius * radius / r2;
      src.push({ x: f * v.x[j], y: f * v.y[j], s: -v.s[j] });
    }
  }
  cos.fill(1);
  sin.fill(0);
  for (const { x, y, s } of src) {
    for (let jy = 0; jy < n; jy++) {
      const dy = s * (grid.coordinate(jy) - y);
      for (let ix = 0; ix < n; ix++) {
        const dx = grid.coordinate(ix) - x;
        const m = Math.hypot(dx, dy);
        multiplyUnit(cos, sin, jy * n + ix, m === 0 ? 0 : dx / m, m === 0 ? 0 : dy / m);
      }
    }
  }
  normalise(cos, sin);
}

/**
 * Writes cos Φ and sin Φ of the doubly periodic pattern with period `period` (ξ) of a neutral vortex set
 * (Σs = 0), including the linear correction.
 */
export function periodicPhase(
  grid: Grid,
  v: VortexList,
  period: number,
  cos: Float64Array,
  sin: Float64Array,
): void {
  const n = grid.n;
  const k = Math.PI / period;
  const ca = new Float64Array(n),
    sa = new Float64Array(n),
    c2a = new Float64Array(n),
    s2a = new Float64Array(n);
  const chb = new Float64Array(n), shb = new Float64Array(n), e2b = new Float64Array(n);
  cos.fill(1);
  sin.fill(0);
  let dipole = 0;
  for (let j = 0; j < v.n; j++) {
    const s = v.s[j];
    dipole += s * v.x[j];
    for (let i = 0; i < n; i++) {
      const a = k * (grid.coordinate(i) - v.x[j]);
      ca[i] = Math.cos(a);
      sa[i] = Math.sin(a);
      c2a[i] = Math.cos(2 * a);
      s2a[i] = Math.sin(2 * a);
      const b = k * (grid.coordinate(i) - v.y[j]);
      chb[i] = Math.cosh(b);
      shb[i] = Math.sinh(b);
      e2b[i] = Math.exp(-2 * b);
    }
    for (let jy = 0; jy < n; jy++) {
      const ch = chb[jy], sh = shb[jy], em = e2b[jy], ep = 1 / em;
      for (let ix = 0; ix < n; ix++) {
        // sin u = sin a cosh b + i cos a sinh b
        let pr = sa[ix] * ch, pi = ca[ix] * sh;
        // e^{2iu} = e^{−2b}(cos 2a + i sin 2a), e^{−2iu} = e^{2b}(cos 2a − i sin 2a)
        const wr = em * c2a[ix], wi = em * s2a[ix], zr = ep * c2a[ix], zi = -ep * s2a[ix];
        let q2 = Q * Q;
        for (let t = 0; t < THETA_TERMS; t++) {
          // (1 − q^{2t} e^{2iu})(1 − q^{2t} e^{−2iu})
          const ar = 1 - q2 * wr, ai = -q2 * wi, br = 1 - q2 * zr, bi = -q2 * zi;
          const fr = ar * br - ai * bi, fi = ar * bi + ai * br;
          const nr = pr * fr - pi * fi;
          pi = pr * fi + pi * fr;
          pr = nr;
          q2 *= Q * Q;
        }
        const m = Math.hypot(pr, pi);
        multiplyUnit(cos, sin, jy * n + ix, m === 0 ? 0 : pr / m, m === 0 ? 0 : s * pi / m);
      }
    }
    normalise(cos, sin);
  }
  const slope = -2 * Math.PI * dipole / (period * period);
  if (slope !== 0) {
    for (let jy = 0; jy < n; jy++) {
      const c = Math.cos(slope * grid.coordinate(jy)), s = Math.sin(slope * grid.coordinate(jy));
      for (let ix = 0; ix < n; ix++) multiplyUnit(cos, sin, jy * n + ix, c, s);
    }
  }
}

/** Writes cos Φ and sin Φ of the square-box pattern (image lattice of period 2·side). */
export function boxPhase(
  grid: Grid,
  v: VortexList,
  side: number,
  cos: Float64Array,
  sin: Float64Array,
): void {
  const m = 4 * v.n;
  const x = new Float64Array(m), y = new Float64Array(m), s = new Float64Array(m);
  for (let j = 0; j < v.n; j++) {
    const mx = side - v.x[j], my = side - v.y[j];
    const set = (k: number, px: number, py: number, ps: number) => {
      x[k] = px;
      y[k] = py;
      s[k] = ps;
    };
    set(4 * j, v.x[j], v.y[j], v.s[j]);
    set(4 * j + 1, mx, v.y[j], -v.s[j]);
    set(4 * j + 2, v.x[j], my, -v.s[j]);
    set(4 * j + 3, mx, my, v.s[j]);
  }
  periodicPhase(grid, { n: m, x, y, s }, 2 * side, cos, sin);
}

function multiplyUnit(cos: Float64Array, sin: Float64Array, p: number, c: number, s: number): void {
  const a = cos[p], b = sin[p];
  cos[p] = a * c - b * s;
  sin[p] = a * s + b * c;
}

/** Rescales every nonzero (cos, sin) pair to unit length (the products drift from 1 by round-off). */
function normalise(cos: Float64Array, sin: Float64Array): void {
  for (let p = 0; p < cos.length; p++) {
    const m = Math.hypot(cos[p], sin[p]);
    if (m === 0) continue;
    cos[p] /= m;
    sin[p] /= m;
  }
}
